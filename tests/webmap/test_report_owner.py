"""The report an engineer signs and an owner reads (issue 14), read back as text.

The PDF is read with ``pdftotext`` (poppler-utils), the HTML with :mod:`html.parser`, the
drawings with ezdxf.  Expected values come from the site file written here and from the
run's own ``run.json``; owner words are written out in this file, not read from
:mod:`geo_corrosion.vocabulary`, so a changed label fails a test.

The fast run is the synthetic site of :mod:`geo_corrosion.testing` (US units) with a
``[project]`` table and survey details added; the checks on the sample site are ``slow``.
"""

from __future__ import annotations

import json
import re
import shutil
import subprocess
from html.parser import HTMLParser
from pathlib import Path
from typing import Any

import pytest

PROJECT = {"number": "P-7781", "revision": "C", "date": "2026-11-30",
           "engineer": "R. Signer, P.E.", "firm": "Deck Condition Engineers"}
DETAILS = {"crew": "Crew Nine", "instrument": "voltmeter HV-22 serial 0815",
           "weather": "overcast and dry", "surface_condition": "swept, oil stains",
           "prewetting": "misted 10 min before reading"}

#: Internal identifiers that must never reach an owner document (issue 14): snake_case keys,
#: dotted site-file keys and table names, file and entity strings of messages.
SNAKE = re.compile(r"\b[a-z][a-z0-9]*(?:_[a-z0-9]+)+\b")
DOTTED = re.compile(r"\[\[?(?:site|project|run|levels|surveys|zoning|condition|webmap)"
                    r"[\].]|\b(?:site|project|run|levels|surveys|zoning|condition|webmap)"
                    r"\.[a-z_]+\b")
ENTITY = re.compile(r"entity #\d+|\bhandle [0-9A-F]+\b|\b(?:line|row|feature) \d+:"
                    r"|\b\w+\.(?:csv|dxf|gpkg|geojson|json|shp|toml|py|md|tif)\b"
                    r"(?:\s+line|\s+layer)?")
#: Citations of anything outside the repository: a web address, a document of the
#: project's notes (REFERENCE.md), a file of the docs.
OUTSIDE = re.compile(r"https?://|www\.|\b[\w.-]+\.(?:com|org|net|edu)\b|REFERENCE\.md|"
                     r"\bdocs/|\.md\b")


class _Text(HTMLParser):
    """The text of an HTML page, without its style sheet."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.chunks: list[str] = []
        self._skip = 0

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self._skip += tag in ("style", "script")

    def handle_endtag(self, tag: str) -> None:
        self._skip -= tag in ("style", "script")

    def handle_data(self, data: str) -> None:
        if not self._skip:
            self.chunks.append(data)


def html_text(html: str) -> str:
    p = _Text()
    p.feed(html)
    return " ".join(" ".join(p.chunks).split())


def pdf_text(path: Path) -> str:
    if shutil.which("pdftotext") is None:
        pytest.skip("pdftotext (poppler-utils) is not installed")
    out = subprocess.run(["pdftotext", "-layout", str(path), "-"], check=True,
                         capture_output=True, text=True).stdout
    return " ".join(out.split())


def dxf_texts(run_dir: Path) -> list[str]:
    import ezdxf

    texts = []
    for f in sorted((run_dir / "drawings").glob("*.dxf")):
        doc = ezdxf.readfile(f)
        for layout in (doc.modelspace(), *doc.blocks):
            for e in layout.query("TEXT MTEXT ATTDEF ATTRIB"):
                texts.append(e.plain_text() if e.dxftype() == "MTEXT" else e.dxf.text)
    return texts


def section(html: str, ident: str) -> str:
    """The HTML of the section (or level section) with this id, up to its end."""
    start = html.index(f'id="{ident}"')
    return html[start:html.index("</section>", start)]


def internal_identifiers(text: str, allowed: set[str]) -> list[str]:
    """Every internal identifier of a text that is not in ``allowed``."""
    found = [m.group(0) for rx in (SNAKE, DOTTED, ENTITY) for m in rx.finditer(text)]
    return sorted({f for f in found if f not in allowed})


def reader_file_names(man: dict[str, Any]) -> set[str]:
    """The file names a reader needs: the site file and the survey data files.

    They are printed once each, in the survey table ("Data file") and the record of the
    run, so that a reviewer can trace every map to the file it came from; nothing else
    about a file (a line, a layer, an entity or a handle) is printed.
    """
    return {man["site"]["site_file"], *(s["file"] for s in man["surveys"])}


# --------------------------------------------------------------------------- the fast run


@pytest.fixture(scope="module")
def project_run(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The synthetic site (US units) with a [project] table and survey details, run."""
    from geo_corrosion.pipeline import run
    from geo_corrosion.testing import make_synthetic_site

    root = tmp_path_factory.mktemp("report_owner")
    # an Ag/AgCl electrode: converted to CSE, with no temperature coefficient (so no
    # temperature correction) [IJCorros-2010 Table 2; ASTM-C876-22a §5.1.1.2]
    site = make_synthetic_site(root / "site", electrode="ag_agcl_sat_kcl", temperature_c=30.0)
    text = site.read_text(encoding="utf-8")
    project = "\n[project]\n" + "".join(f'{k} = "{v}"\n' for k, v in PROJECT.items())
    text = text.replace("\n[run]\n", project + "\n[run]\n", 1)
    details = "".join(f'{k} = "{v}"\n' for k, v in DETAILS.items()) + 'date = "2026-09-14"\n'
    text = text.replace('path = "readings/potential.csv"\n',
                        'path = "readings/potential.csv"\n' + details, 1)
    site.write_text(text, encoding="utf-8")
    out = root / "out"
    run(site, out)
    return out


def _man(run_dir: Path) -> dict[str, Any]:
    return json.loads((run_dir / "run.json").read_text(encoding="utf-8"))


def test_title_block_holds_the_project(project_run: Path) -> None:
    # issue 14 (common practice, no source): the project number, revision, date, engineer
    # and firm of the site file's [project] table, with a seal and signature area
    html = (project_run / "report.html").read_text(encoding="utf-8")
    for text in (html_text(html), pdf_text(project_run / "report.pdf")):
        for key, label in (("number", "Project number"), ("revision", "Revision"),
                           ("date", "Date"), ("engineer", "Engineer"), ("firm", "Firm")):
            assert f"{label} {PROJECT[key]}" in text, (key, text[:600])
        assert "Seal" in text and "Signature" in text
    assert _man(project_run)["site"]["project"] == PROJECT


def test_survey_details_are_shown(project_run: Path) -> None:
    # issue 14: crew, instrument, weather, surface condition and pre-wetting from the site file
    man = _man(project_run)
    sv = next(s for s in man["surveys"] if s["kind"] == "potential")
    assert {k: sv[k] for k in DETAILS} == DETAILS
    text = html_text(section((project_run / "report.html").read_text(encoding="utf-8"),
                             "inputs"))
    for value in DETAILS.values():
        assert value in text, value
    assert f"{sv['id']} " in text and "2026-09-14" in text


def test_a_variogram_table_per_level_and_kind(project_run: Path) -> None:
    # issue 14: model, nugget share, range, RMSE, MSSE and the variance factor of run.json,
    # for every kriged kind of every level, with a sentence reading each
    man = _man(project_run)
    html = (project_run / "report.html").read_text(encoding="utf-8")
    labels = {"potential": "Half-cell potential", "resistivity": "Resistivity",
              "corrosion_rate": "Corrosion rate", "cover": "Concrete cover"}
    n = 0
    for lid, info in man["levels"].items():
        lv = section(html, f"level-{lid}")
        table = lv[lv.index('<table class="variogram">'):]
        table = table[:table.index("</table>")]
        text = html_text(table)
        readings = html_text(lv[lv.index('<table class="variogram">'):
                                lv.index('<h3 class="classes">')])
        for kind, rec in info["kinds"].items():
            sf = rec.get("surface")
            if not sf:
                continue
            m, cv, vf = sf["variogram"]["model"], sf["cross_validation"], \
                sf["variogram"]["variance_factor"]
            share = 100 * m["nugget"] / m["sill"]
            row = (f"{labels[kind]} {m['model'].capitalize()} {share:.1f} % "
                   f"{m['range']:.1f} {m['range_unit']}")
            assert row in text, (lid, kind, row, text)
            assert f"{vf:.3g}" in text and str(cv["n_tested"]) in text
            assert f"{labels[kind]}: a {m['model']} model" in readings, (lid, kind)
            n += 1
    assert n >= 2  # the synthetic site krigs potential and resistivity


def test_corrections_are_claimed_only_where_applied(project_run: Path) -> None:
    # issue 14 / trial §2 #3: a temperature correction is stated only for a survey whose
    # record has a non-zero coefficient [ASTM-C876-22a §5.1.1.2]
    man = _man(project_run)
    html = (project_run / "report.html").read_text(encoding="utf-8")
    table = html[html.index('<table class="applied">'):]
    table = table[:table.index("</table>")]
    rows = {html_text(r).split(" ")[0]: html_text(r) for r in table.split("<tr>")[2:]}
    uncorrected = 0
    for sv in man["surveys"]:
        k = [c for c in sv["corrections"] if c.get("correction") ==
             "electrode temperature to reference"]
        says = "electrode temperature corrected" in rows[sv["id"]]
        assert says == bool(k and k[0]["k_mv_per_c"]), (sv["id"], rows[sv["id"]])
        if k and not k[0]["k_mv_per_c"]:
            uncorrected += 1
            assert "converted from Ag/AgCl in saturated KCl to CSE" in rows[sv["id"]]
    assert uncorrected == 1  # the Ag/AgCl survey: the case the trial found wrong


def test_class_and_expected_areas_are_reconciled(project_run: Path) -> None:
    # issue 14: the class table's area beyond the threshold and the statement's expected
    # area are related in one sentence wherever both are given
    man = _man(project_run)
    html = (project_run / "report.html").read_text(encoding="utf-8")
    for lid, info in man["levels"].items():
        text = html_text(section(html, f"level-{lid}"))
        if "potential_area_beyond_threshold" in (info.get("condition") or {}):
            assert "The class table gives" in text and "the sum of each cell's probability" \
                in text


def test_no_internal_identifier_in_the_report_or_drawings(project_run: Path) -> None:
    # issue 14 (common practice, no source): owners read labels, not identifiers
    man = _man(project_run)
    allowed = reader_file_names(man)
    html = html_text((project_run / "report.html").read_text(encoding="utf-8"))
    for what, text in (("report.html", html),
                       ("report.pdf", pdf_text(project_run / "report.pdf")),
                       ("drawings", " | ".join(dxf_texts(project_run)))):
        assert internal_identifiers(text, allowed) == [], what
    # the data files are named only in the survey table and the record of the run
    for name in allowed:
        assert html.count(name) <= 2, name


def test_no_citation_outside_the_repository(project_run: Path) -> None:
    # issue 14: sources only from the project's bibliography, no web page, no notes file
    for text in (html_text((project_run / "report.html").read_text(encoding="utf-8")),
                 pdf_text(project_run / "report.pdf")):
        assert not OUTSIDE.findall(text), OUTSIDE.findall(text)[:5]
        assert "from memory" not in text.split("Assumptions to confirm")[0]
        assert "Assumptions to confirm" in text


def test_the_scan_finds_what_it_is_for() -> None:
    # the scan itself, on strings of the trial (issue 14): each kind of identifier is caught
    bad = ("depth partial_below_bars", "key [run].cell_size", "surveys.options",
           "L2.dxf layer COLUMNS entity #9 (LWPOLYLINE, handle 3D)", "readings/x.csv line 57",
           "at line 57: value implausible")
    for text in bad:
        assert internal_identifiers(text, set()), text
    assert internal_identifiers("Partial depth, below bars; 1,825 ft²; -350 mV vs CSE",
                                set()) == []
    assert OUTSIDE.findall("see REFERENCE.md §1.4") and OUTSIDE.findall("a firm.com page")


@pytest.mark.slow
def test_sample_report_has_no_internal_identifier(sample_run: Path) -> None:
    # issue 14, on the sample site (two levels, US units, every kind)
    man = _man(sample_run)
    allowed = reader_file_names(man)
    for what, text in (("report.html", html_text((sample_run / "report.html").read_text(
                            encoding="utf-8"))),
                       ("report.pdf", pdf_text(sample_run / "report.pdf")),
                       ("drawings", " | ".join(dxf_texts(sample_run)))):
        assert internal_identifiers(text, allowed) == [], what
        assert not OUTSIDE.findall(text), what
    # the sample's L2 potential nugget (6e-17 mV2) and its variance factor are shown
    text = pdf_text(sample_run / "report.pdf")
    vf = man["levels"]["L2"]["kinds"]["potential"]["surface"]["variogram"]["variance_factor"]
    assert f"{vf:.3g}" in text and "practically zero" in text

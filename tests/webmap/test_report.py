"""The report of a run: report.pdf read back with pypdf, report.html parsed with html.parser.

Expected values come from the run's own ``run.json`` and ``survey.gpkg``, converted here with
exact factors [NIST-SP811-2008 App. B] (1 ft = 0.3048 m, 1 ft2 = 0.09290304 m2, 1 in = 25.4 mm),
never through ``geo_corrosion.units``.  The tests on the sample site (US units, two levels)
are marked ``slow``; the synthetic run (metric, a script tag in its level name and in an
overlay label) is fast.
"""

from __future__ import annotations

import html
import importlib.abc
import json
import re
import shutil
import sys
from html.parser import HTMLParser
from pathlib import Path
from typing import Any

import pytest

from geo_corrosion.cautions import SHORT_CAUTION
from tests.webmap.conftest import XSS, XSS_IMG

M2_PER_FT2 = 0.09290304  # exact: 0.3048 m squared [NIST-SP811-2008 App. B]
MM_PER_IN = 25.4  # exact [NIST-SP811-2008 App. B]
PT_PER_IN = 72.0  # default PDF user space unit is 1/72 in (ISO 32000-1, user space)

RUNS = [pytest.param("xss_run", id="synthetic-metric"),
        pytest.param("sample_run", id="sample-us", marks=pytest.mark.slow)]


@pytest.fixture(params=RUNS)
def any_run(request: pytest.FixtureRequest) -> Path:
    """Each run of tests/webmap/conftest.py in turn (the sample site's only with -m slow)."""
    return request.getfixturevalue(request.param)


def _manifest(run_dir: Path) -> dict[str, Any]:
    return json.loads((run_dir / "run.json").read_text(encoding="utf-8"))


def _norm(text: str) -> str:
    return " ".join(text.split())


def _pdf_pages(run_dir: Path) -> list[str]:
    from pypdf import PdfReader

    return [_norm(p.extract_text() or "") for p in PdfReader(run_dir / "report.pdf").pages]


class _Doc(HTMLParser):
    """Start tags with their attributes, and the text of the page (entities decoded)."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.tags: list[tuple[str, dict[str, str | None]]] = []
        self.chunks: list[str] = []

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.tags.append((tag, dict(attrs)))

    def handle_data(self, data: str) -> None:
        self.chunks.append(data)

    @property
    def text(self) -> str:
        return _norm(" ".join(self.chunks))


def _parse(text: str) -> _Doc:
    doc = _Doc()
    doc.feed(text)
    doc.close()
    return doc


def _report_html(run_dir: Path) -> str:
    return (run_dir / "report.html").read_text(encoding="utf-8")


def _level_html(text: str, lid: str) -> str:
    """Return the HTML of one level's section (sections are not nested)."""
    start = text.index(f'<section class="level" id="level-{html.escape(lid)}">')
    return text[start:text.index("</section>", start)]


def _area(a_m2: float, system: str) -> tuple[str, str]:
    """Format an area as the statements print it: whole ft2 (US), m2 to 0.1 (metric)."""
    # common practice, no source: the rounding is the report's own choice, documented in
    # docs/file-formats.md; the factor is exact [NIST-SP811-2008 App. B]
    if system == "us":
        return f"{a_m2 / M2_PER_FT2:,.0f}", "ft2"
    return f"{a_m2:,.1f}", "m2"


# --------------------------------------------------------------------------- report.pdf


@pytest.mark.parametrize(("run_name", "size_in"), [
    # ISO 216: A4 is 210 x 297 mm
    pytest.param("xss_run", (210.0 / MM_PER_IN, 297.0 / MM_PER_IN), id="synthetic-metric-A4"),
    # ANSI/ASME Y14.1 letter size: 8.5 x 11 in
    pytest.param("sample_run", (8.5, 11.0), id="sample-us-letter", marks=pytest.mark.slow),
])
def test_pdf_page_size_follows_the_unit_system(request: pytest.FixtureRequest, run_name: str,
                                               size_in: tuple[float, float]) -> None:
    """A4 pages for metric reporting units, US letter for US units (1 pt = 1/72 in, ISO 32000-1)."""
    from pypdf import PdfReader

    run_dir = request.getfixturevalue(run_name)
    system = _manifest(run_dir)["site"]["report_units"]
    assert system == ("metric" if run_name == "xss_run" else "us")
    size_pt = tuple(v * PT_PER_IN for v in size_in)
    for page in PdfReader(run_dir / "report.pdf").pages:
        box = page.mediabox
        assert (float(box.width), float(box.height)) == pytest.approx(size_pt, abs=0.5)


def test_pdf_page_count_matches_its_footer(any_run: Path) -> None:
    """Enough pages, and every footer says "page N of M" with M the page count."""
    man = _manifest(any_run)
    pages = _pdf_pages(any_run)
    # title page with the cautions, at least a page per level, the quantities and the
    # methods each start a page (common practice, no source: the report's layout)
    assert len(pages) > len(man["levels"]) + 2
    for number, text in enumerate(pages, start=1):
        found = re.findall(r"page (\d+) of (\d+)", text)
        assert found == [(str(number), str(len(pages)))], (number, found)


def test_pdf_has_the_short_caution_on_every_page(any_run: Path) -> None:
    """The short caution is in the footer of every page."""
    # the short caution is printed on every product (geo_corrosion.cautions, wording ours);
    # the footer wraps it, so whitespace is normalised
    first_words = _norm(SHORT_CAUTION.split(";")[0])
    for number, text in enumerate(_pdf_pages(any_run), start=1):
        assert first_words in text, f"page {number} lacks the caution"
        assert _norm(SHORT_CAUTION) in text, f"page {number}: caution incomplete"


def test_pdf_holds_every_bid_item_and_the_site_totals(any_run: Path) -> None:
    """Every bid item code, and each site-total base quantity as the table prints it."""
    man = _manifest(any_run)
    text = " ".join(_pdf_pages(any_run))
    schedule = man["schedule"]
    assert schedule
    for code in {r["item"] for r in schedule}:
        assert code in text, code
    base_all = [r for r in schedule if r["level_id"] == "ALL" and r["line"] == "base"]
    assert base_all
    for r in base_all:
        # as in quantities.csv (docs/file-formats.md §3.3): the bid quantity with its unit's
        # decimals (whole ft2, LF, EA, LS; 0.1 CY, m2, m; 0.01 m3), with thousands
        # separators in the report (common practice, no source)
        q = float(r["quantity"])
        nd = {"CY": 1, "m2": 1, "m": 1, "m3": 2}.get(r["unit"], 0)
        base = f"{q:,.{nd}f}"
        row = rf"ALL {re.escape(r['item'])} .*? {re.escape(r['unit'])} {re.escape(base)} "
        assert re.search(row, text), (r["item"], base)


# --------------------------------------------------------------------------- report.html


def test_html_has_a_section_per_level_and_the_site_sections(any_run: Path) -> None:
    """A section per level of run.json, the site sections, and every caution."""
    man = _manifest(any_run)
    doc = _parse(_report_html(any_run))
    sections = [a for t, a in doc.tags if t == "section"]
    # one section per level of run.json, in its order (common practice, no source)
    assert [a.get("id") for a in sections if a.get("class") == "level"] == [
        f"level-{lid}" for lid in man["levels"]]
    ids = {a.get("id") for a in sections}
    assert {"cautions", "quantities", "methods", "parameters"} <= ids
    for caution in man["cautions"]:
        # every caution of the run (geo_corrosion.cautions)
        assert _norm(caution) in doc.text, caution[:40]


def test_html_is_self_contained(any_run: Path) -> None:
    """Images are data: URLs and links are anchors: the file makes no request."""
    doc = _parse(_report_html(any_run))
    links = [(t, k, v) for t, a in doc.tags for k, v in a.items() if k in ("src", "href")]
    assert any(t == "img" for t, _k, _v in links)
    # no request leaves the file: images are data: URLs, links are in-page anchors
    # (common practice, no source)
    for tag, key, value in links:
        assert value is not None and value.startswith(("data:", "#")), (tag, key, value[:60])
    assert not [t for t, _a in doc.tags if t in ("script", "link", "iframe", "object")]


def test_html_escapes_input_texts(xss_run: Path) -> None:
    """The script tag of the level name is shown escaped, never as markup."""
    text = _report_html(xss_run)
    # the level name holds a script tag: only its escaped form is in the page (OWASP XSS
    # prevention cheat sheet, rule 1: HTML-escape untrusted data); common practice
    assert html.escape(XSS) in text
    assert "&lt;script&gt;" in text
    assert "<script>alert" not in text and "<script" not in text.lower()
    doc = _parse(text)
    assert f"Level D1: {XSS}" in doc.text  # shown as text, not run
    assert f"Deck {XSS_IMG}" in doc.text and f"Owner {XSS_IMG}" in doc.text
    assert "<img src=x" not in text  # the site name and owner: escaped too


def test_condition_statements_match_run_json(any_run: Path) -> None:
    """The numbers of the condition statements are run.json's, in the report unit."""
    man = _manifest(any_run)
    system = man["site"]["report_units"]
    text = _report_html(any_run)
    checked = 0
    for lid, info in man["levels"].items():
        level_text = _parse(_level_html(text, lid)).text
        assert "Condition statements" in level_text
        cond = info.get("condition") or {}
        for key, st in cond.items():
            if not key.endswith("_area_beyond_threshold"):
                continue
            # expected area and its interval, converted with the exact factors and rounded as
            # printed (common practice, no source)
            exp, unit = _area(st["expected_m2"], system)
            lo, _u = _area(st["lower_m2"], system)
            hi, _u = _area(st["upper_m2"], system)
            tot, _u = _area(st["mapped_area_m2"], system)
            level = f"{100 * st['interval_level']:.0f} %"
            want = (f"({key.split('_area_')[0].replace('_', ' ')} {st['meaning']})"
                    if key.startswith("potential_") else st["meaning"])
            sentence = (f"{want} is {exp} {unit} ({level} interval {lo} to {hi} {unit}) "
                        f"of {tot} {unit} mapped.")
            assert sentence in level_text, (lid, sentence)
            checked += 1
        thr = cond.get("site_threshold") or {}
        if "threshold_mv" in thr:
            # the mixture threshold after [Gulikers-Elsener-2008]
            assert f"is {thr['threshold_mv']:.0f} mV CSE." in level_text
            below = f"{100 * thr['fraction_readings_below']:.0f} % of the readings"
            assert f"More negative: {below}" in level_text
        elif "not_available" in thr:
            assert _norm(thr["not_available"]) in level_text
        for row in cond.get("combined_classes") or []:
            a = f"{row['area_m2'] / (M2_PER_FT2 if system == 'us' else 1.0):,.2f}"
            assert f"{row['class']} {a}" in level_text, (lid, row)
        for sid, life in (cond.get("life") or {}).items():
            # issue 12: a range (10th to 90th percentile) with its basis, never one figure
            def rng(r: dict[str, float] | None) -> str:
                return "not given" if r is None else f"{r['p10']:.1f} to {r['p90']:.1f}"

            assert (f"{sid} {life['readings_used']} {life['readings_needing_bar_review']} "
                    f"{rng(life['time_to_cracking_yr'])} {rng(life['section_loss_pct'])}"
                    in level_text), (lid, sid)
            assert _norm(life["time_to_cracking_meaning"]) in level_text
            assert _norm(life["basis"]) in level_text
            assert "median time to cracking" not in level_text.lower()
    assert checked >= len(man["levels"])  # at least the potential statement per level


def test_repair_list_matches_the_geopackage(any_run: Path) -> None:
    """Every repair of survey.gpkg is listed with its depth class and area."""
    import geopandas as gpd
    import pyogrio

    man = _manifest(any_run)
    us = man["site"]["report_units"] == "us"
    text = _report_html(any_run)
    layers = {str(n) for n, _t in pyogrio.list_layers(any_run / "survey.gpkg")}
    seen = 0
    for lid in man["levels"]:
        level_text = _parse(_level_html(text, lid)).text
        assert "Repair list" in level_text
        if f"{lid}_repairs" not in layers:
            continue
        rep = gpd.read_file(any_run / "survey.gpkg", layer=f"{lid}_repairs")
        for r in rep.itertuples():
            # area in the reporting unit (exact factor), depth class as in the layer; repair
            # sides rounded to 3 in make half-cent ties (2'-6" x 3'-3" = 8.125 ft2), which
            # float noise sends either way
            a = r.area_m2 / (M2_PER_FT2 if us else 1.0)
            areas = "|".join(re.escape(f"{v:,.2f}") for v in {a - 1e-9, a, a + 1e-9})
            assert re.search(rf"{re.escape(r.repair_id)} {re.escape(r.depth_class)} "
                             rf".*?(?:{areas})", level_text), (r.repair_id, areas)
            seen += 1
    assert seen == sum(int(info.get("repairs") or 0) for info in man["levels"].values())


# --------------------------------------------------------------------------- without pango


class _NoPango(importlib.abc.MetaPathFinder):
    """Make ``import weasyprint`` fail as it does when the pango library is missing."""

    def find_spec(self, name: str, path: Any = None, target: Any = None) -> None:
        if name == "weasyprint" or name.startswith("weasyprint."):
            # WeasyPrint loads pango through cffi at import time and raises OSError
            raise OSError("cannot load library 'libpango-1.0-0': libpango-1.0-0: cannot open "
                          "shared object file: No such file or directory")
        return None


@pytest.fixture
def no_pango(monkeypatch: pytest.MonkeyPatch) -> None:
    """WeasyPrint cannot be imported for the duration of the test."""
    for name in [m for m in sys.modules if m == "weasyprint" or m.startswith("weasyprint.")]:
        monkeypatch.delitem(sys.modules, name)
    monkeypatch.setattr(sys, "meta_path", [_NoPango(), *sys.meta_path])


def _leftovers(folder: Path) -> list[str]:
    """Temporary files of atomic_write (``.<stem>.*.tmp<suffix>``) and partial folders."""
    return sorted(p.name for p in folder.iterdir() if ".tmp" in p.name or ".partial" in p.name)


def test_write_report_without_pango_says_what_to_install(xss_run: Path, tmp_path: Path,
                                                         no_pango: None) -> None:
    """Asked for a PDF without pango, write_report names what to install and writes nothing."""
    from geo_corrosion.errors import ExportError
    from geo_corrosion.exporters.report import write_report

    out = tmp_path / "run"
    shutil.copytree(xss_run, out)
    for name in ("report.html", "report.pdf"):
        (out / name).unlink()
    with pytest.raises(ExportError) as info:
        write_report(out, pdf=True)
    msg = str(info.value)
    # what to install: the Python package and Debian's pango packages (WeasyPrint's
    # installation notes; common practice)
    for what in ("pip install weasyprint", "libpango-1.0-0", "libpangoft2-1.0-0", "--no-pdf"):
        assert what in msg, what
    assert not (out / "report.pdf").exists()
    assert not (out / "report.html").exists()  # refused before writing anything
    assert _leftovers(out) == []
    # html only still works (common practice, no source)
    assert [p.name for p in write_report(out, pdf=False)] == ["report.html"]


def test_run_without_pango_writes_the_html_and_a_note(tmp_path: Path, no_pango: None,
                                                     monkeypatch: pytest.MonkeyPatch) -> None:
    """A run without pango writes report.html and a note, not report.pdf; a rebuild adds it."""
    from geo_corrosion.exporters.report import write_report
    from geo_corrosion.pipeline import run
    from geo_corrosion.testing import make_synthetic_site

    site = make_synthetic_site(tmp_path / "site")
    out = tmp_path / "out"
    said: list[str] = []
    result = run(site, out, exporters=("geopackage", "plots", "report"), progress=said.append)
    # the run does not fail for a missing system library: report.html is written, the PDF
    # is not, and the note says what to install and how to rebuild (common practice)
    assert (out / "report.html").is_file()
    assert not (out / "report.pdf").exists()
    notes = [w for w in result.warnings if w.startswith("report.pdf not written")]
    assert len(notes) == 1
    for what in ("libpango-1.0-0", "pip install weasyprint", "geo-corrosion report RUN_DIR"):
        assert what in notes[0], what
    assert f"note: {notes[0]}" in said  # shown to the user at the end of the run
    man = _manifest(out)
    assert notes[0] in man["warnings"]
    assert "report.html" in man["files"] and "report.pdf" not in man["files"]
    assert _norm(notes[0]) in _parse(_report_html(out)).text  # listed in the report's notes
    assert _leftovers(out) == [] and _leftovers(tmp_path) == []
    # once pango is there, the rebuild the note advises writes the PDF, and the rebuilt
    # report no longer carries the outdated note (common practice, no source)
    monkeypatch.undo()
    assert [p.name for p in write_report(out)] == ["report.html", "report.pdf"]
    assert "report.pdf not written" not in _report_html(out)

"""The site file and the bad-input cases of issue 2.

Each bad input: a clear message, a non-zero exit, nothing written.
"""

from __future__ import annotations

import json
import re
import warnings
from pathlib import Path

import pytest
from click.testing import CliRunner

from geo_corrosion.cli.main import cli
from geo_corrosion.crs import LocalGrid
from geo_corrosion.errors import GeoCorrosionError
from geo_corrosion.pipeline import run
from geo_corrosion.stages.open_site import open_site
from geo_corrosion.stages.read_site import read_site
from tests.core.conftest import edit


def test_reads_synthetic_site(site_dir: Path) -> None:
    cfg = read_site(site_dir)
    assert cfg.name == "Synthetic test deck"
    assert cfg.crs_unit == "m" and cfg.units == "us"
    assert cfg.run.cell_size_m == pytest.approx(0.3048)
    assert [s.kind for s in cfg.surveys] == ["potential", "resistivity"]


def _fails(site_dir: Path, *patterns: str) -> str:
    """Run `check` and `run`: both must fail with a message and no traceback; nothing written."""
    runner = CliRunner()
    out = site_dir.parent / "out"
    before = {p: p.stat().st_mtime_ns for p in site_dir.rglob("*") if p.is_file()}
    for args in (["check", str(site_dir)], ["run", str(site_dir), "--out", str(out)]):
        res = runner.invoke(cli, args)
        assert res.exit_code != 0, res.output
        assert "Traceback" not in res.output
        for pat in patterns:
            assert pat in res.output, res.output
    assert not out.exists()
    assert not list(site_dir.parent.glob(".out.partial-*"))
    after = {p: p.stat().st_mtime_ns for p in site_dir.rglob("*") if p.is_file()}
    assert before == after  # no input file changed
    return res.output


def test_missing_file(site_dir: Path) -> None:
    (site_dir / "readings" / "resistivity.csv").unlink()
    _fails(site_dir, "survey file not found", "resistivity.csv")


def test_unknown_key_is_named_with_hint(site_dir: Path) -> None:
    edit(site_dir / "site.toml", 'kind = "resistivity"', 'kind = "resistivity"\ntemprature_c = 3')
    _fails(site_dir, "unknown key 'temprature_c'", "did you mean 'temperature_c'")


def test_wrong_unit_string(site_dir: Path) -> None:
    edit(site_dir / "site.toml", 'unit = "kohm.cm"', 'unit = "kohm/cm"')
    _fails(site_dir, "unknown unit 'kohm/cm'")


def test_unit_of_the_wrong_kind(site_dir: Path) -> None:
    edit(site_dir / "site.toml", 'unit = "kohm.cm"', 'unit = "mV"')
    _fails(site_dir, "not accepted here", "resistivity")


@pytest.mark.parametrize(("unit", "why"), [("ohm", "unknown unit 'ohm'"),
                                         ("kohm.cm", "unit 'kohm.cm' is not accepted here")])
def test_survey_unit_refused_at_read_time_with_key_file_and_column(site_dir: Path, unit: str,
                                                                   why: str) -> None:
    # the contract of issue 11: an unknown unit, or one of another quantity, is refused when
    # the site file is read, naming the dotted key, the file, the column and the accepted units
    edit(site_dir / "site.toml", 'unit = "mV"', f'unit = "{unit}"')
    with pytest.raises(GeoCorrosionError) as err:
        read_site(site_dir)
    assert str(err.value).startswith(f"{site_dir / 'site.toml'}: [[surveys]][0].unit: {why}; "
                                     "expected one of: mV, V (the unit of column 'value' of "
                                     "readings/potential.csv, potential readings)")
    _fails(site_dir, "[[surveys]][0].unit", why, "expected one of: mV, V")


def test_missing_column(site_dir: Path) -> None:
    p = site_dir / "readings" / "resistivity.csv"
    p.write_text(p.read_text().replace("point_id,x,y,value", "point_id,x,y,rho", 1))
    _fails(site_dir, "column 'value' (for value) is missing", "point_id, x, y, rho")


@pytest.mark.parametrize("header", ["point_id,x,y,x", "point_id,value,x,y,value"])
def test_repeated_header_is_refused(site_dir: Path, header: str) -> None:
    # the contract of issue 11: pandas would rename the second column 'x.1' and read the first
    p = site_dir / "readings" / "resistivity.csv"
    lines = p.read_text().splitlines()
    lines[0] = header
    if header.count(",") == 4:
        lines[1:] = [ln.split(",")[3] + "," + ln for ln in lines[1:]]
    p.write_text("\n".join(lines) + "\n")
    name, first, second = ("'x'", 2, 4) if header.endswith(",x") else ("'value'", 2, 5)
    _fails(site_dir, "resistivity.csv line 1", f"the header {name} is given twice",
           f"columns {first} and {second}", "Rename or remove one")


def test_text_where_numbers_belong(site_dir: Path) -> None:
    p = site_dir / "readings" / "potential.csv"
    lines = p.read_text().splitlines()
    parts = lines[5].split(",")
    parts[3] = "n/a?"
    lines[5] = ",".join(parts)
    p.write_text("\n".join(lines) + "\n")
    _fails(site_dir, "potential.csv line 6", "'n/a?'", "where a number belongs")


def test_empty_file(site_dir: Path) -> None:
    (site_dir / "readings" / "resistivity.csv").write_text("")
    _fails(site_dir, "resistivity.csv", "empty")


def test_geographic_crs(site_dir: Path) -> None:
    edit(site_dir / "site.toml", 'crs = "EPSG:26918"', 'crs = "EPSG:4326"')
    _fails(site_dir, "geographic")


def test_unknown_crs(site_dir: Path) -> None:
    edit(site_dir / "site.toml", 'crs = "EPSG:26918"', 'crs = "EPSG:12345678"')
    _fails(site_dir, "unknown CRS")


def test_invalid_slab_outline(site_dir: Path) -> None:
    # a bow-tie: self-intersecting outline
    (site_dir / "plans" / "slab.geojson").write_text(
        '{"type":"FeatureCollection","features":[{"type":"Feature","properties":{},'
        '"geometry":{"type":"Polygon","coordinates":[[[0,0],[60,40],[60,0],[0,40],[0,0]]]}}]}')
    _fails(site_dir, "slab", "outline is not a valid polygon", "Self-intersection")


def test_slab_of_two_parts_refused_at_check(site_dir: Path) -> None:
    """A slab of two separate polygons is refused by `check`, naming the parts and what to draw.

    Before, it passed `check` and was zoned on its largest part only (a latent bug: a level is
    laid out as one continuous slab).  Two 30 x 40 ft decks 2 ft apart; the readings cover both.
    """
    import json

    parts = [[[0, 0], [29, 0], [29, 40], [0, 40], [0, 0]],
             [[31, 0], [60, 0], [60, 40], [31, 40], [31, 0]]]
    (site_dir / "plans" / "slab.geojson").write_text(json.dumps({
        "type": "FeatureCollection", "features": [
            {"type": "Feature", "properties": {}, "geometry": {"type": "Polygon",
                                                                "coordinates": [ring]}}
            for ring in parts]}))
    msg = _fails(site_dir, "slab", "2 separate parts", "its own level", "1,160 ft2")
    assert "part 2: 1,160 ft2" in msg


def test_readings_all_outside_level(site_dir: Path) -> None:
    p = site_dir / "readings" / "resistivity.csv"
    lines = p.read_text().splitlines()
    out = [lines[0]] + [",".join([a, str(float(x) + 500), y, v])
                        for a, x, y, v in (ln.split(",") for ln in lines[1:])]
    p.write_text("\n".join(out) + "\n")
    _fails(site_dir, "cannot be run", "outside")


def test_dxf_with_no_closed_shapes(site_dir: Path) -> None:
    import ezdxf

    doc = ezdxf.new("R2010")
    doc.header["$INSUNITS"] = 2
    doc.layers.add("DELAM")
    doc.layers.add("SPALL")
    doc.modelspace().add_line((0, 0), (5, 5), dxfattribs={"layer": "DELAM"})
    doc.saveas(site_dir / "sounding" / "sounding.dxf")
    _fails(site_dir, "no closed delamination outlines", "DELAM")


def test_dxf_in_unknown_units(site_dir: Path) -> None:
    import ezdxf

    doc = ezdxf.readfile(site_dir / "sounding" / "sounding.dxf")
    doc.header["$INSUNITS"] = 0
    doc.saveas(site_dir / "sounding" / "sounding.dxf")
    _fails(site_dir, "does not say its drawing unit", 'unit = "ft"')


def test_dxf_unknown_layer(site_dir: Path) -> None:
    edit(site_dir / "site.toml", 'layer = "DELAM"', 'layer = "DELAMS"')
    _fails(site_dir, "has no layer 'DELAMS'", "DELAM")


def test_too_few_control_points(site_dir: Path) -> None:
    text = (site_dir / "site.toml").read_text()
    start = text.index("control_points = [")
    end = text.index("]\n", text.index("}", text.index("CP1"))) + 2
    (site_dir / "site.toml").write_text(
        text[:start] + 'control_points = [ { id = "CP1", local = [0.0, 0.0], '
        'site = [583100.0, 4507200.0] } ]\n' + text[end:])
    _fails(site_dir, "at least 2")


def test_duplicate_control_point_id(site_dir: Path) -> None:
    # common practice: one id per control point of a grid; a repeated id is refused when the
    # site file is read, naming the file, the dotted key and the id
    edit(site_dir / "site.toml", 'id = "CP3"', 'id = "CP1"')
    with pytest.raises(GeoCorrosionError) as err:
        read_site(site_dir)
    msg = str(err.value)
    assert msg.startswith(f"{site_dir / 'site.toml'}: [[levels]][0].grid.control_points[2].id: "
                          "control point id 'CP1' is already used by control_points[0]")
    _fails(site_dir, "control point id 'CP1' is already used")


def test_distinct_control_point_ids_are_read(site_dir: Path) -> None:
    # the other side: three points, three ids
    cps = read_site(site_dir).levels[0].grid.control_points
    assert [c.id for c in cps] == ["CP1", "CP2", "CP3"]


def _five_control_points(site_dir: Path, centre_shift_m: float) -> None:
    """Add CP4 at the far corner and CP5 at the centre to the synthetic grid.

    Both are exact on the synthetic tie, CP5 then moved east by ``centre_shift_m``; CP5 is
    the centroid of the five points.
    """
    cfg = read_site(site_dir)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        g = LocalGrid.from_config(cfg.levels[0].grid, cfg.crs_unit)
    text = (site_dir / "site.toml").read_text()
    start = text.index("control_points = [")
    end = text.index("]\n", text.index("}", text.index("CP3"))) + 2
    extra = []
    for name, (x, y), shift in (("CP4", (60.0, 40.0), 0.0), ("CP5", (30.0, 20.0), centre_shift_m)):
        X, Y = (float(v) for v in g.to_site(x, y))
        extra.append(f'{{ id = "{name}", local = [{x}, {y}], site = [{X + shift:.4f}, {Y:.4f}] }}')
    body = text[start:end].rstrip().removesuffix("]").rstrip()
    (site_dir / "site.toml").write_text(
        text[:start] + body + ", " + ", ".join(extra) + " ]\n" + text[end:])


def test_control_point_residual_shown_by_check_and_recorded_by_run(site_dir: Path) -> None:
    # hand computation: CP5 is the centroid of the five points, so a shift d of it leaves a
    # residual of 0.8 d on it and 0.2 d on each corner; d = 0.25 m -> 0.200 m, above the
    # 0.1 m tolerance (common practice), and 0.05 m on the corners, below it
    _five_control_points(site_dir, 0.25)
    res = CliRunner().invoke(cli, ["check", str(site_dir)])
    assert res.exit_code == 0, res.output  # a warning, not an error
    line = ("  WARNING level D1: control point residual(s) above the 0.100 m tolerance (0.1 m, "
            "common practice): 'CP5' 0.200 m (RMS ")
    assert line in res.output, res.output
    assert "'CP1'" not in res.output.split(line, 1)[1].split("\n", 1)[0].split("(RMS", 1)[0]
    assert "note: " not in res.output  # shown once, with its level, not again as a note
    r = run(site_dir, site_dir.parent / "out", exporters=("geopackage",))
    geo = [w for w in r.warnings if w.startswith("GeoreferenceWarning: ")]
    assert len(geo) == 1 and "level 'D1' grid: control point residual(s)" in geo[0]
    assert "'CP5' 0.200 m" in geo[0]
    manifest = json.loads((site_dir.parent / "out" / "run.json").read_text())
    assert geo[0] in manifest["warnings"]


def test_control_point_residual_within_tolerance_and_two_points(site_dir: Path) -> None:
    # the other side: d = 0.1 m -> 0.080 m on CP5, below the 0.1 m tolerance: no warning
    _five_control_points(site_dir, 0.1)
    res = CliRunner().invoke(cli, ["check", str(site_dir)])
    assert res.exit_code == 0 and "control point residual(s)" not in res.output, res.output
    assert "RMS control-point residual 0.0" in res.output
    # two control points: no redundancy, said in words instead of "RMS 0.0000"
    text = (site_dir / "site.toml").read_text()
    start = text.index("control_points = [")
    end = text.index("]\n", text.index("}", text.index("CP3"))) + 2
    body = text[start:end]
    (site_dir / "site.toml").write_text(
        text[:start] + body[:body.index(", { id = \"CP3\"")] + " ]\n" + text[end:])
    res = CliRunner().invoke(cli, ["check", str(site_dir)])
    assert res.exit_code == 0, res.output
    assert ("2 control points: no redundancy, the residuals are 0 by construction (a third "
            "point would check the tie)") in res.output
    assert "RMS control-point residual" not in res.output


def test_potential_survey_needs_electrode(site_dir: Path) -> None:
    edit(site_dir / "site.toml", 'electrode = "cse"\n', "")
    _fails(site_dir, "must name their reference electrode")


def test_survey_of_undeclared_level(site_dir: Path) -> None:
    edit(site_dir / "site.toml", 'level = "D1"\nkind = "resistivity"',
         'level = "D9"\nkind = "resistivity"')
    _fails(site_dir, "no level 'D9'")


def test_suspicious_reading_is_flagged_not_dropped(site_dir: Path) -> None:
    p = site_dir / "readings" / "potential.csv"
    lines = p.read_text().splitlines()
    a, x, y, _v = lines[10].split(",")
    lines[10] = ",".join([a, x, y, "-1250.0"])  # implausible (range -1000 to +200, common practice)
    p.write_text("\n".join(lines) + "\n")
    site = open_site(site_dir)
    from geo_corrosion.stages.check_site import check_site

    flags = check_site(site)
    hit = flags[flags["reading_id"] == "D1-hcp:11"]
    assert "QA-RANGE-LOW" in set(hit["rule"])
    assert len(site.surveys[0].frame) == 600  # kept in the record
    res = CliRunner().invoke(cli, ["check", str(site_dir)])
    assert res.exit_code == 0 and "QA-RANGE-LOW" in res.output


def test_refuses_to_overwrite(site_dir: Path, tmp_path: Path) -> None:
    out = tmp_path / "out"
    out.mkdir()
    (out / "keep.txt").write_text("previous run")
    with pytest.raises(GeoCorrosionError, match="already exists"):
        run(site_dir, out)
    assert (out / "keep.txt").read_text() == "previous run"


def test_init_writes_template_that_parses(tmp_path: Path) -> None:
    res = CliRunner().invoke(cli, ["init", str(tmp_path / "new")])
    assert res.exit_code == 0, res.output
    import tomllib

    data = tomllib.loads((tmp_path / "new" / "site.toml").read_text())
    assert data["site"]["crs"] == "EPSG:26918"
    res = CliRunner().invoke(cli, ["init", str(tmp_path / "new")])
    assert res.exit_code != 0 and "already exists" in res.output


def test_quantities_without_a_run_says_so(tmp_path: Path) -> None:
    res = CliRunner().invoke(cli, ["quantities", str(tmp_path)])
    assert res.exit_code == 1 and "holds no run.json" in res.output
    assert "internal error" not in res.output


def test_contour_interval_over_100_mv_refused(site_dir: Path) -> None:
    # ASTM C876 maximum contour interval 0.10 V [ASTM-C876-91 §6.2, from memory]
    edit(site_dir / "site.toml", '[run]\n', '[run]\ncontour_interval_mv = 150\n')
    _fails(site_dir, "contour_interval_mv")


def _sounding(site_dir: Path, draw) -> None:  # type: ignore[no-untyped-def]
    import ezdxf

    doc = ezdxf.new("R2010")
    doc.header["$INSUNITS"] = 2
    for name in ("DELAM", "SPALL"):
        doc.layers.add(name)
    msp = doc.modelspace()
    msp.add_lwpolyline([(12, 8), (18, 8), (18, 12), (12, 12)], close=True,
                       dxfattribs={"layer": "DELAM"})
    msp.add_circle((15, 10), 0.8, dxfattribs={"layer": "SPALL"})
    draw(msp)
    doc.saveas(site_dir / "sounding" / "sounding.dxf")


def test_open_delamination_outline_is_reported(site_dir: Path) -> None:
    _sounding(site_dir, lambda msp: msp.add_lwpolyline([(30, 5), (36, 5), (36, 9)],
                                                       dxfattribs={"layer": "DELAM"}))
    _fails(site_dir, "open line(s)", "DELAM", "Close each outline")


def test_nearly_closed_and_self_intersecting_outlines_repaired(site_dir: Path,
                                                               tmp_path: Path) -> None:
    from geo_corrosion.errors import GeometryWarning

    def draw(msp) -> None:  # type: ignore[no-untyped-def]
        # ends 0.01 ft apart on a 20 ft outline: closed; a bow-tie: split in two
        msp.add_lwpolyline([(30, 5), (35, 5), (35, 10), (30, 10), (30, 5.01)],
                           dxfattribs={"layer": "DELAM"})
        msp.add_lwpolyline([(45, 5), (50, 10), (50, 5), (45, 10)], close=True,
                           dxfattribs={"layer": "DELAM"})
        msp.add_lwpolyline([(500, 500), (502, 500), (502, 502), (500, 502)], close=True,
                           dxfattribs={"layer": "DELAM"})  # far outside the slab

    _sounding(site_dir, draw)
    with pytest.warns(GeometryWarning) as rec:
        site = open_site(site_dir)
    msgs = " ".join(str(w.message) for w in rec)
    assert "closed it" in msgs and "self-intersecting outline" in msgs
    assert len(site.levels["D1"].overlays["delamination"]) == 5  # 1 + 1 + 2 halves + 1
    r = run(site_dir, tmp_path / "out", exporters=("geopackage",))
    assert any("outside the slab" in w for w in r.warnings)
    assert any("self-intersecting" in w for w in r.warnings)


def test_decimal_comma_file_with_a_stray_point(site_dir: Path) -> None:
    p = site_dir / "readings" / "resistivity.csv"
    lines = p.read_text().splitlines()
    out = [lines[0].replace(",", ";")] + [
        ";".join(v.replace(".", ",") for v in ln.split(",")) for ln in lines[1:]]
    out[3] = out[3].rsplit(";", 1)[0] + ";12.5"  # a '.' in a decimal-comma file: ambiguous
    p.write_text("\n".join(out) + "\n")
    edit(site_dir / "site.toml", 'unit = "kohm.cm"',
         'unit = "kohm.cm"\nseparator = ";"\ndecimal = ","')
    _fails(site_dir, "resistivity.csv line 4", "'12.5'", "decimal separator is ','")
    out[3] = out[3].rsplit(";", 1)[0] + ";1.234,5"  # a thousands mark is fine
    p.write_text("\n".join(out) + "\n")
    from geo_corrosion.stages.open_site import open_site

    f = open_site(site_dir).surveys[1].frame
    assert f["raw_value"].iloc[2] == 1234.5


@pytest.mark.parametrize(("given", "read"), [("1.234", None), ("-0.400", None), ("0.234,5", None),
                                             ("12.34,5", None), ("1.234,5", 1234.5),
                                             ("-1.234.567", -1234567.0), ("1234,5", 1234.5)])
def test_decimal_comma_dots_read_unambiguously_or_refused(site_dir: Path, given: str,
                                                          read: float | None) -> None:
    # the contract of issue 11: '1.234' in a decimal-comma file may be 1234 (thousands mark)
    # or 1.234 (a decimal point typed by mistake); only groups of three after a non-zero
    # lead with a decimal comma, or two or more groups, are a thousands mark (common practice)
    p = site_dir / "readings" / "resistivity.csv"
    lines = p.read_text().splitlines()
    out = [lines[0].replace(",", ";")] + [
        ";".join(v.replace(".", ",") for v in ln.split(",")) for ln in lines[1:]]
    out[3] = out[3].rsplit(";", 1)[0] + ";" + given
    p.write_text("\n".join(out) + "\n")
    edit(site_dir / "site.toml", 'unit = "kohm.cm"',
         'unit = "kohm.cm"\nseparator = ";"\ndecimal = ","')
    if read is None:
        _fails(site_dir, "resistivity.csv line 4", repr(given), "cannot be told",
               'set decimal = "."')
    else:
        assert open_site(site_dir).surveys[1].frame["raw_value"].iloc[2] == read


# --------------------------------------------------------------------------- the init template

DOCS = Path(__file__).resolve().parents[2] / "docs" / "site-file.md"

#: Sections of docs/site-file.md whose key tables describe site-file keys -> the table they are in.
_DOC_SECTIONS = {
    "`[site]`": "site",
    "`[run]`": "run",
    "`[run.variogram.<kind>]`": "run.variogram.<kind>",
    "`[[levels]]`": "levels",
    "Layer references": "levels",
    "`[levels.grid]`": "levels.grid",
    "`[[surveys]]`": "surveys",
    "`[condition.combined]`": "condition.combined",
    "`[webmap]`": "webmap",
}


def _template_text() -> str:
    from importlib.resources import files

    return files("geo_corrosion").joinpath("templates/site.toml").read_text(encoding="utf-8")


def _documented() -> tuple[list[str], dict[str, set[str]]]:
    """Top-level tables (level-2 headings) and the keys of each key table in docs/site-file.md."""
    import re

    tables: list[str] = []
    keys: dict[str, set[str]] = {}
    current = None
    for line in DOCS.read_text(encoding="utf-8").splitlines():
        if line.startswith("#"):
            title = line.lstrip("#").strip()
            m = re.match(r"`\[\[?([a-z_.]+)\]?\]`", title)
            if line.startswith("## ") and m:
                tables.append(m.group(1))
            current = next((t for h, t in _DOC_SECTIONS.items() if title.startswith(h)), None)
            continue
        m = re.match(r"\| ((?:`[a-z_]+`(?:, )?)+) \|", line)
        if current and m:
            keys.setdefault(current, set()).update(re.findall(r"`([a-z_]+)`", m.group(1)))
    return tables, keys


def test_template_shows_every_documented_key() -> None:
    # common practice, no source: `geo-corrosion init` shows every key the reference documents
    import re

    text = _template_text()
    tables, keys = _documented()
    assert {"site", "run", "levels", "surveys", "zoning", "condition.combined",
            "webmap"} <= set(tables)
    assert {"bar_diameter", "max_aggregate", "slab_thickness", "sawcut_depth", "axis_angle_deg",
            "anode_spacing", "min_zone_area", "zone_smoothing"} <= keys["run"]
    for table in tables:  # as a table header, commented out or not
        assert re.search(rf"(?m)^(# )?\[\[?{re.escape(table)}[\].]", text), table
    assert re.search(r"(?m)^(# )?\[run\.variogram\.[a-z_]+\]", text)
    missing = []
    for table, names in keys.items():
        prefix = table.removesuffix(".<kind>").replace(".variogram", ".variogram.[a-z_]+")
        for key in sorted(names):
            as_key = re.search(rf"(?m)(^(# )?|[{{,] |\(or ){key} = ", text)
            as_table = re.search(rf"(?m)^(# )?\[\[?{prefix}\.{key}[\].]", text)
            if not (as_key or as_table):
                missing.append(f"[{table}] {key}")
    assert not missing, f"documented in docs/site-file.md but not in the template: {missing}"


def test_template_shows_every_plugin_parameter() -> None:
    # common practice, no source: every zoning-rule parameter and kind option is shown
    import re

    from geo_corrosion.measurements import BUILTIN_KINDS
    from geo_corrosion.zoning import BUILTIN_ZONING_RULES

    text = _template_text()
    for name, rule in BUILTIN_ZONING_RULES.items():
        assert f'rule = "{name}"' in text, name
        for p in rule.parameters():
            assert re.search(rf"\b{p} = ", text), (name, p)
    for kind in BUILTIN_KINDS.values():
        for opt in kind.option_keys:
            assert re.search(rf"\b{opt} = ", text), (kind.name, opt)


def test_template_is_read_as_is_and_with_every_key_uncommented(tmp_path: Path) -> None:
    # common practice, no source: the template's own values, and every commented example, are valid
    import re

    text = _template_text()
    (tmp_path / "site.toml").write_text(text)
    cfg = read_site(tmp_path)  # notes = "" used to be refused by read_site itself
    assert cfg.notes == "" and cfg.run.basemap_url is None and cfg.zoning == ()
    full = re.sub(r"(?m)^# (\[.*|[a-z_]+ = .*)$", r"\1", text)
    assert full.count("\n[") > text.count("\n[") + 5  # the commented tables did come in
    (tmp_path / "site.toml").write_text(full)
    try:
        cfg = read_site(tmp_path)
    except GeoCorrosionError as err:
        pytest.fail(f"an example in the template is refused: {err}")
    # 0.75 in = 19.05 mm exactly (1 in = 25.4 mm by definition)
    assert cfg.layout.sawcut_depth_mm == 19.05
    assert cfg.run.min_zone_area_m2 == 0.5 and cfg.layout.slab_thickness_mm == pytest.approx(152.4)
    assert set(cfg.run.variogram) == {"potential"}
    assert cfg.run.basemap_url == "https://tile.example.org/{z}/{x}/{y}.png"
    assert [r for r, _ in cfg.zoning] == ["repair", "active_corrosion", "low_cover", "no_action"]
    assert cfg.combined_rules is not None and len(cfg.combined_rules["rules"]) == 4
    assert [s.kind for s in cfg.surveys] == ["potential", "resistivity", "corrosion_rate"]
    assert cfg.surveys[1].options["probe_spacing_mm"] == 50.0


# ----------------------------------------------------------------------- messages that say where


def test_unknown_variogram_kind_is_refused(site_dir: Path) -> None:
    # common practice, no source: a misspelt table name must not be ignored silently
    p = site_dir / "site.toml"
    p.write_text(p.read_text() + '\n[run.variogram.potentail]\nmodel = "spherical"\n')
    out = _fails(site_dir, "site.toml: [run.variogram.potentail]: unknown measurement kind",
                 "did you mean 'potential'?", "corrosion_rate, cover, potential, resistivity")
    assert "Traceback" not in out


def test_variogram_kind_comes_from_the_registry(site_dir: Path) -> None:
    # common practice, no source: a kind added by a plugin may have its own variogram table
    from geo_corrosion.measurements import MEASUREMENTS, MeasurementKind

    class Chloride(MeasurementKind):
        name = "chloride"

    p = site_dir / "site.toml"
    p.write_text(p.read_text() + '\n[run.variogram.chloride]\nrange = "20 ft"\n')
    with pytest.raises(GeoCorrosionError, match="unknown measurement kind 'chloride'"):
        read_site(site_dir)
    with MEASUREMENTS.registered("chloride", Chloride):
        assert read_site(site_dir).run.variogram["chloride"]["range_m"] == pytest.approx(6.096)


@pytest.mark.parametrize(("table", "pattern"), [
    ("sill = 100", "[run.variogram.potential]: unknown key 'sill'; did you mean 'psill'?"),
    ("nugget = -100", "[run.variogram.potential].nugget: expected a number of 0 or more"),
    ("psill = nan", "[run.variogram.potential].psill: expected a number, got nan"),
    ("nugget = 0\npsill = 0", "[run.variogram.potential]: nugget and psill are both 0"),
    ("anisotropy_ratio = 2.0",
     "[run.variogram.potential].anisotropy_ratio: expected the minor/major"),
    ('model = "gaussian"\nshape = 1.5', "[run.variogram.potential].shape: shape is the Matern"),
    ("shape = 9.0", "[run.variogram.potential].shape: expected a Matern shape from 0.2 to 5"),
    ("range = 30", "[run.variogram.potential].range: expected a length with its unit"),
])
def test_bad_variogram_parameters_name_the_key(site_dir: Path, table: str, pattern: str) -> None:
    # ranges as in surfaces.variogram.VariogramModel (nugget, psill >= 0; ratio in (0, 1]; Matern
    # shape bounds); before, values out of range only dropped the surface at run time
    p = site_dir / "site.toml"
    p.write_text(p.read_text() + f"\n[run.variogram.potential]\n{table}\n")
    with pytest.raises(GeoCorrosionError) as err:
        read_site(site_dir)
    assert "site.toml: " in str(err.value) and pattern in str(err.value)


def test_zoning_written_as_a_table_is_named(site_dir: Path) -> None:
    # common practice, no source: [zoning] for [[zoning]] is the likely slip
    p = site_dir / "site.toml"
    p.write_text(p.read_text() + '\n[zoning]\nrule = "repair"\n')
    _fails(site_dir, "site.toml: [[zoning]]: expected an array of tables",
           "got a table [zoning]", "double brackets")


@pytest.mark.parametrize("text", ['cell_size = "1e999 m"', "cse_reference_c = nan",
                                  "resistivity_reference_c = inf"])
def test_non_finite_run_values_refused(site_dir: Path, text: str) -> None:
    # common practice, no source: nan and inf are valid TOML but no usable parameter
    key = text.split(" =")[0]
    edit(site_dir / "site.toml", "[run]\n", f"[run]\n{text}\n")
    if key == "cell_size":
        edit(site_dir / "site.toml", 'cell_size = "1 ft"\n', "")
    with pytest.raises(GeoCorrosionError, match=rf"site.toml: \[run\]\.{key}: "):
        read_site(site_dir)


@pytest.mark.parametrize("value", ["inf", "-inf", "nan"])
@pytest.mark.parametrize(("old", "new", "key"), [
    ("control_points = [", "origin = [{v}, 0.0]\ncontrol_points = [",
     r"\[\[levels\]\]\[0\]\.grid\.origin: expected two finite numbers"),
    ("local = [0.0, 0.0]", "local = [0.0, {v}]",
     r"\[\[levels\]\]\[0\]\.grid\.control_points\[0\]\.local: expected two finite"),
    ("site = [", "site = [{v}, 0.0], x = [",
     r"\[\[levels\]\]\[0\]\.grid\.control_points\[0\]\.site: expected two finite"),
    ('temperature_c = 20.0', 'temperature_c = 20.0\n[surveys.options]\n'
     'polarized_area_cm2 = {v}\nb_mv = 26', r"\[\[surveys\]\]\[1\]\.options\.polarized_area"),
    ('temperature_c = 20.0', 'temperature_c = 20.0\n[surveys.options]\nb_mv = {v}',
     r"\[\[surveys\]\]\[1\]\.options\.b_mv: expected a finite number"),
])
def test_non_finite_coordinates_and_options_refused(site_dir: Path, value: str, old: str,
                                                    new: str, key: str) -> None:
    # the contract of issue 11: nan and inf are TOML numbers but no coordinate, area or
    # Stern-Geary constant; refused when the site file is read, naming the dotted key
    text = (site_dir / "site.toml").read_text()
    if "options" in new:  # the resistivity survey becomes a corrosion-rate one
        text = text.replace('kind = "resistivity"', 'kind = "corrosion_rate"').replace(
            'unit = "kohm.cm"', 'unit = "uA/cm2"')
    if old == "site = [":  # the first control point's site coordinates
        text = re.sub(r"site = \[[^\]]*\]", f"site = [{value}, 0.0]", text, count=1)
    else:
        text = text.replace(old, new.format(v=value), 1)
    (site_dir / "site.toml").write_text(text)
    with pytest.raises(GeoCorrosionError, match=rf"site.toml: {key}"):
        read_site(site_dir)


def test_two_levels_with_one_name_are_refused(site_dir: Path) -> None:
    # every map, drawing and report section is named after its level (common practice)
    text = (site_dir / "site.toml").read_text()
    start = text.index("[[levels]]")
    end = text.index("[[surveys]]")
    copy = text[start:end].replace('id = "D1"', 'id = "D2"')
    (site_dir / "site.toml").write_text(text[:end] + copy + text[end:])
    _fails(site_dir, "names must differ")


def test_stability_series_flags_unstable_readings(site_dir: Path) -> None:
    # [ASTM-C876-15 procedure, from memory]: [-250, -262, -271] over 5 min
    # spans 21 mV > 20 mV -> unstable, "pre-wet required"; [-250, -255, -270] spans 20: stable
    p = site_dir / "readings" / "potential.csv"
    lines = p.read_text().splitlines()
    lines[0] += ",stability"
    lines[1:] = [ln + "," for ln in lines[1:]]
    lines[5] = lines[5][:-1] + ",-250 -262 -271"
    lines[6] = lines[6][:-1] + ",-250|-255|-270"
    p.write_text("\n".join(lines) + "\n")
    from geo_corrosion.stages.check_site import check_site

    site = open_site(site_dir)
    frame = site.surveys[0].frame
    assert frame["stability_range"].iloc[4] == pytest.approx(21.0)
    assert frame["stability_range"].iloc[5] == pytest.approx(20.0)
    assert frame["stability_range"].iloc[6:].isna().all()  # empty cells: no series
    flags = check_site(site)
    hit = flags[flags["rule"] == "QA-UNSTABLE"]
    assert list(hit["reading_id"]) == ["D1-hcp:6"]  # ids carry the file line
    assert "potential.csv line 6" in hit["message"].iloc[0]
    assert "pre-wet required" in hit["message"].iloc[0]
    # a series that is not numbers is refused with its line
    lines[7] = lines[7][:-1] + ",-250 abc"
    p.write_text("\n".join(lines) + "\n")
    _fails(site_dir, "line 8: stability series")


def test_stability_series_with_a_dot_in_a_decimal_comma_file(site_dir: Path) -> None:
    # the contract of issue 11: as for the value column, a '.' in a decimal-comma file is
    # not silently taken as a decimal point
    p = site_dir / "readings" / "potential.csv"
    lines = p.read_text().splitlines()
    lines[0] = lines[0].replace(",", ";") + ";stability"
    lines[1:] = [";".join(v.replace(".", ",") for v in ln.split(",")) + ";" for ln in lines[1:]]
    lines[5] += "-250,5 -262.5"
    p.write_text("\n".join(lines) + "\n")
    edit(site_dir / "site.toml", 'path = "readings/potential.csv"',
         'path = "readings/potential.csv"\nseparator = ";"\ndecimal = ","')
    _fails(site_dir, "potential.csv line 6: stability series '-250,5 -262.5' holds a '.'",
           'set decimal = "."')


@pytest.mark.parametrize(("file_sep", "site_sep", "advice"),
                         [(";", ",", "set separator = ';'"), (",", ";", "set separator = ','"),
                          ("\t", ",", 'set separator = "\\t"')])
def test_wrong_separator_names_the_column_and_the_setting(site_dir: Path, file_sep: str,
                                                          site_sep: str, advice: str) -> None:
    # the contract of issue 11: the message names the missing column, the header and what to
    # set, not a bare "column missing" nor the decimal setting
    p = site_dir / "readings" / "resistivity.csv"
    p.write_text(p.read_text().replace(",", file_sep))
    if site_sep != ",":
        edit(site_dir / "site.toml", 'unit = "kohm.cm"',
             f'unit = "kohm.cm"\nseparator = "{site_sep}"')
    out = _fails(site_dir, "resistivity.csv line 1: column 'x' (for x) is missing",
                 f"is separated by {file_sep!r}, not {site_sep!r}", advice,
                 "site.toml: [[surveys]][1].separator")
    assert "decimal" not in out


def test_decimal_comma_with_the_default_separator_says_to_set_it(site_dir: Path) -> None:
    # the contract of issue 11: decimal = "," with separator left at "," says what to set
    edit(site_dir / "site.toml", 'unit = "kohm.cm"', 'unit = "kohm.cm"\ndecimal = ","')
    _fails(site_dir, "site.toml: [[surveys]][1].separator: separator and decimal cannot both "
           "be ','", "set separator = ';'")

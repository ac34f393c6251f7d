"""The site file and the bad-input cases of issue 2: clear message, non-zero exit, nothing written."""

from __future__ import annotations

from pathlib import Path

import pytest
from click.testing import CliRunner

from geo_corrosion.cli.main import cli
from geo_corrosion.config import read_site
from geo_corrosion.errors import GeoCorrosionError
from geo_corrosion.pipeline import run
from geo_corrosion.site import open_site

from .conftest import edit


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


def test_missing_column(site_dir: Path) -> None:
    p = site_dir / "readings" / "resistivity.csv"
    p.write_text(p.read_text().replace("point_id,x,y,value", "point_id,x,y,rho", 1))
    _fails(site_dir, "column 'value' (for value) is missing", "point_id, x, y, rho")


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


def test_potential_survey_needs_electrode(site_dir: Path) -> None:
    edit(site_dir / "site.toml", 'electrode = "cse"\n', "")
    _fails(site_dir, "must name their reference electrode")


def test_survey_of_undeclared_level(site_dir: Path) -> None:
    edit(site_dir / "site.toml", 'level = "D1"\nkind = "resistivity"', 'level = "D9"\nkind = "resistivity"')
    _fails(site_dir, "no level 'D9'")


def test_suspicious_reading_is_flagged_not_dropped(site_dir: Path) -> None:
    p = site_dir / "readings" / "potential.csv"
    lines = p.read_text().splitlines()
    a, x, y, _v = lines[10].split(",")
    lines[10] = ",".join([a, x, y, "-1250.0"])  # implausible (REFERENCE HCP-13 range [-1000, +200])
    p.write_text("\n".join(lines) + "\n")
    site = open_site(site_dir)
    from geo_corrosion.pipeline import check_site

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
    # ASTM C876 maximum contour interval 0.10 V (REFERENCE.md §1.8, from memory)
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


def test_nearly_closed_and_self_intersecting_outlines_repaired(site_dir: Path, tmp_path: Path) -> None:
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
    edit(site_dir / "site.toml", 'unit = "kohm.cm"', 'unit = "kohm.cm"\nseparator = ";"\ndecimal = ","')
    _fails(site_dir, "resistivity.csv line 4", "'12.5'", "decimal separator is ','")
    out[3] = out[3].rsplit(";", 1)[0] + ";1.234,5"  # a thousands mark is fine
    p.write_text("\n".join(out) + "\n")
    from geo_corrosion.site import open_site

    f = open_site(site_dir).surveys[1].frame
    assert f["raw_value"].iloc[2] == 1234.5

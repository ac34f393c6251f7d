"""The whole run on the synthetic site, and its outputs read back with reference libraries."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pyogrio
import pytest
import rasterio
from click.testing import CliRunner

from geo_corrosion.cli.main import cli
from geo_corrosion.testing import SYNTHETIC_TIE


@pytest.fixture(scope="module")
def run_out(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    from geo_corrosion.testing import make_synthetic_site

    root = tmp_path_factory.mktemp("runsite")
    site = root / "site"
    make_synthetic_site(site, electrode="ag_agcl_sat_kcl", temperature_c=30.0)
    out = root / "out"
    res = CliRunner().invoke(cli, ["run", str(site), "--out", str(out), "-q"])
    assert res.exit_code == 0, res.output
    (root / "run_output.txt").write_text(res.output)
    return site, out


def test_outputs_exist(run_out: tuple[Path, Path]) -> None:
    _site, out = run_out
    for name in ("survey.gpkg", "run.json", "webmap.html", "quantities.csv", "quantities.xlsx",
                 "condition_areas.csv",
                 "rasters/D1_potential.tif", "rasters/D1_potential_variance.tif"):
        assert (out / name).is_file(), name
    assert not list(out.parent.glob(".out.partial-*"))


def test_run_ends_with_the_qa_counts(run_out: tuple[Path, Path], tmp_path: Path) -> None:
    # issue 14 item 4: `run` ends with a one-line QA summary (counts by severity, where to
    # read them); the counts are those of the qa_flags layer read back with pyogrio
    _site, out = run_out
    last = (out.parent / "run_output.txt").read_text().strip().splitlines()[-1]
    assert last == "no QA flags"  # the plain synthetic site is clean
    from geo_corrosion.testing import make_synthetic_site

    site = tmp_path / "site"
    make_synthetic_site(site)
    csv = site / "readings" / "potential.csv"
    rows = csv.read_text().splitlines()
    # one reading beyond the plausible range of a CSE potential, one taken twice
    rows[5] = ",".join([*rows[5].split(",")[:3], "-1250.0"])
    rows.append(rows[10])
    csv.write_text("\n".join(rows) + "\n")
    res = CliRunner().invoke(cli, ["run", str(site), "--out", str(tmp_path / "o"), "-q"])
    assert res.exit_code == 0, res.output
    last = res.output.strip().splitlines()[-1]
    flags = pyogrio.read_dataframe(tmp_path / "o" / "survey.gpkg", layer="qa_flags")
    sev = flags["severity"].value_counts()
    n = len(flags)
    assert n >= 2
    assert last.startswith(f"{n} QA flags: {sev.get('error', 0)} error"), last
    w, i = sev.get("warning", 0), sev.get("info", 0)
    assert f" {w} warning{'' if w == 1 else 's'}, {i} note" in last, last
    assert "qa_flags layer of survey.gpkg" in last


def test_manifest(run_out: tuple[Path, Path]) -> None:
    site, out = run_out
    man = json.loads((out / "run.json").read_text())
    import hashlib

    inputs = {i["path"]: i["sha256"] for i in man["inputs"]}
    assert inputs["readings/potential.csv"] == hashlib.sha256(
        (site / "readings/potential.csv").read_bytes()).hexdigest()
    assert man["parameters"]["contour_interval_mv"] == 50.0
    assert man["versions"]["numpy"] == np.__version__
    lv = man["levels"]["D1"]
    assert lv["georeference"]["rotation_deg"] == pytest.approx(SYNTHETIC_TIE["rotation_deg"],
                                                               abs=1e-3)
    pot = lv["kinds"]["potential"]
    assert pot["readings"] == 600
    # class areas add up to the mapped area
    total = sum(c["area_m2"] for c in pot["class_areas"])
    assert total == pytest.approx(pot["surface"]["mapped_area_m2"], rel=0.02)
    assert man["cautions"] and "licensed" in man["cautions"][0]


def test_corrections_recorded_and_recover_field(run_out: tuple[Path, Path]) -> None:
    _site, out = run_out
    df = pyogrio.read_dataframe(out / "survey.gpkg", layer="readings_potential")
    # Ag/AgCl(sat KCl) to CSE is -119 mV [IJCorros-2010 Table 2]; no temperature coefficient is
    # applied to a non-CSE electrode by default
    assert set(df["electrode_offset_mv"].round(6)) == {-119.0}
    np.testing.assert_allclose(df["potential_mv"], df["raw_value"] - 119.0)


def test_raster_georeferenced_and_matches_readings(run_out: tuple[Path, Path]) -> None:
    _site, out = run_out
    df = pyogrio.read_dataframe(out / "survey.gpkg", layer="readings_potential")
    with rasterio.open(out / "rasters/D1_potential.tif") as src:
        assert src.crs.to_epsg() == 26918
        assert src.descriptions[0] == "potential_mv"
        vals = np.array([v[0] for v in src.sample(zip(df.geometry.x, df.geometry.y, strict=True))])
        ok = vals != src.nodata
        assert ok.mean() > 0.9
        # kriged surface at the readings is close to the readings (nugget-smoothed)
        assert np.median(np.abs(vals[ok] - df["potential_mv"].to_numpy()[ok])) < 15.0


def test_gpkg_layers_in_site_crs(run_out: tuple[Path, Path]) -> None:
    _site, out = run_out
    layers = {name for name, _ in pyogrio.list_layers(out / "survey.gpkg")}
    for name in ("D1_slab", "D1_delaminations", "D1_classes_potential", "D1_contours_potential",
                 "D1_repairs", "readings_potential"):
        assert name in layers, layers
    slab = pyogrio.read_dataframe(out / "survey.gpkg", layer="D1_slab")
    assert slab.crs.to_epsg() == 26918
    # 60 ft x 40 ft slab -> 2400 ft2 = 222.967 m2 (1 ft = 0.3048 m)
    assert slab.geometry.area.iloc[0] == pytest.approx(2400 * 0.3048**2, rel=1e-5)


def test_quantities_command_reprints(run_out: tuple[Path, Path]) -> None:
    _site, out = run_out
    res = CliRunner().invoke(cli, ["quantities", str(out)])
    assert res.exit_code == 0, res.output
    assert "ft2" in res.output


def test_overwrite_replaces_only_when_asked(run_out: tuple[Path, Path]) -> None:
    site, out = run_out
    res = CliRunner().invoke(cli, ["run", str(site), "--out", str(out), "-q"])
    assert res.exit_code != 0 and "already exists" in res.output


def test_webmap_is_self_contained(run_out: tuple[Path, Path]) -> None:
    # the owner opens it with no network: no script, stylesheet or image is fetched
    import re

    html = (run_out[1] / "webmap.html").read_text()
    assert "L.map(" in html or "L.map" in html
    assert not re.findall(r'<script[^>]+src="http', html)
    assert not re.findall(r'<link[^>]+href="http', html)
    assert "licensed professional engineer" in html


def test_plots_written(run_out: tuple[Path, Path]) -> None:
    out = run_out[1]
    pngs = sorted(p.name for p in (out / "plots").glob("*.png"))
    assert "D1_potential_cumulative.png" in pngs and "D1_potential_histogram.png" in pngs
    assert (out / "plots/D1_potential_cumulative.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_condition_in_manifest(run_out: tuple[Path, Path]) -> None:
    man = json.loads((run_out[1] / "run.json").read_text())
    cond = man["levels"]["D1"]["condition"]
    a = cond["potential_area_beyond_threshold"]
    assert a["lower_m2"] <= a["expected_m2"] <= a["upper_m2"] <= a["mapped_area_m2"]
    assert "Gaussian" in a["assumption"]
    assert {c["class"] for c in cond["combined_classes"]}
    d = man["levels"]["D1"]["kinds"]["potential"]["surface"]["directional_variograms"]
    assert d["along_x"]["direction_deg"] == 0.0 and d["along_y"]["direction_deg"] == 90.0


def test_fixed_variogram_from_site_file(tmp_path: Path) -> None:
    from geo_corrosion.pipeline import run
    from geo_corrosion.testing import make_synthetic_site

    site = make_synthetic_site(tmp_path / "s")
    text = site.read_text().replace(
        '[run]\n', '[run]\nvariogram.potential = { model = "exponential", nugget = 50.0, '
        'range = "20 ft" }\n', 1)
    site.write_text(text)
    r = run(site, tmp_path / "out", exporters=("geopackage",))
    m = r.levels["D1"].surfaces["potential"].fit.model
    assert m.name == "exponential" and m.nugget == 50.0 and m.range == pytest.approx(20.0)


def test_zones_partition_the_deck_and_schedule_adds_up(run_out: tuple[Path, Path]) -> None:
    import pandas as pd

    man = json.loads((run_out[1] / "run.json").read_text())
    lv = man["levels"]["D1"]
    # zones never overlap and together cover the slab minus exclusions (issue 5)
    assert sum(z["area_m2"] for z in lv["zones"]) == pytest.approx(lv["deck_area_m2"], rel=1e-6)
    sched = pd.read_csv(run_out[1] / "quantities.csv")
    per_level = sched[sched["level_id"] != "ALL"].groupby(["item", "line"])["quantity"].sum()
    total = sched[sched["level_id"] == "ALL"].set_index(["item", "line"])["quantity"]
    pd.testing.assert_series_equal(per_level.sort_index(), total.sort_index(), check_names=False)


def test_every_delamination_inside_a_repair(run_out: tuple[Path, Path]) -> None:
    import shapely

    gpkg = run_out[1] / "survey.gpkg"
    rep = shapely.union_all(list(pyogrio.read_dataframe(gpkg, layer="D1_repairs").geometry))
    for g in pyogrio.read_dataframe(gpkg, layer="D1_delaminations").geometry:
        assert rep.buffer(1e-6).contains(g)

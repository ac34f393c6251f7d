"""Every reading is shown; each kind has its own neighbourhood (issue 12 items 2 and 3).

A synthetic site with a spot corrosion-rate survey of 18 readings (a normal survey, too few
for a surface) and no site-wide ``max_distance``: the kind appears as classed points in the
GeoPackage, the plots and the report, with the reason; the surfaced kinds record their own
search radius and mask distance.
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

import geopandas as gpd
import numpy as np
import pyogrio
import pytest
from click.testing import CliRunner

from geo_corrosion.cli.main import cli
from geo_corrosion.condition.classes import get_class_set
from geo_corrosion.errors import SiteFileError
from geo_corrosion.stages.read_site import read_site
from geo_corrosion.testing import make_synthetic_site

#: the override of one kind: resistivity masked at 4 ft
OVERRIDE = '[run.kinds.resistivity]\nmax_distance = "4 ft"\n'


def _site(root: Path, n: int, extra: str = "") -> Path:
    site = make_synthetic_site(root, sparse_readings=n, max_distance=None)
    if extra:
        site.write_text(site.read_text().replace("[[levels]]", extra + "\n[[levels]]", 1))
    return site


@pytest.fixture(scope="module")
def sparse(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    """(site file, output folder) of the synthetic site with 18 rate readings."""
    from geo_corrosion.pipeline import run

    root = tmp_path_factory.mktemp("sparse")
    site = _site(root / "site", 18, OVERRIDE)
    run(site, root / "out")
    return site, root / "out"


def _kinds(out: Path) -> dict[str, Any]:
    kinds: dict[str, Any] = json.loads((out / "run.json").read_text())["levels"]["D1"]["kinds"]
    return kinds


def test_run_json_records_representation_and_reason(sparse: tuple[Path, Path]) -> None:
    kinds = _kinds(sparse[1])
    rate = kinds["corrosion_rate"]
    # our rule (surfaces/density.py): 18 < 30 readings -> points, with the reason
    assert rate["representation"] == "points"
    assert rate["representation_reason"].startswith("18 usable readings, fewer than the 30")
    assert rate["surface"] is None and rate["points"]["points"] == 18
    # shares of READINGS (hand computation: counts / 18), summing to 1
    counts = rate["points"]["class_counts"]
    assert sum(c["readings"] for c in counts) == 18
    assert sum(c["share_of_readings"] for c in counts) == pytest.approx(1.0)
    assert rate["class_share_of_readings"] == {c["class"]: pytest.approx(c["readings"] / 18)
                                               for c in counts}
    assert kinds["potential"]["representation"] == "surface"


def test_per_kind_radii_in_run_json(sparse: tuple[Path, Path]) -> None:
    kinds = _kinds(sparse[1])
    pot = kinds["potential"]
    s = pot["spacing"]["median_nearest_neighbour"]
    r = pot["surface"]["variogram"]["model"]["range"]
    # hand computation of the rule on the recorded spacing and range: mask =
    # max(2.5 s, min(R, 5 s)), search = max(mask, R)
    mask = max(2.5 * s, min(r, 5 * s))
    hood = pot["neighbourhood"]
    assert s == pytest.approx(2.0)  # the synthetic grid spacing (testing.py)
    assert hood["mask_distance"] == pytest.approx(mask)
    assert hood["search_radius"] == pytest.approx(max(mask, r))
    assert hood["basis"] == "derived" and hood["unit"] == "ft"
    # the per-kind override (4 ft) sets the mask; the search radius is never less
    res = kinds["resistivity"]["neighbourhood"]
    assert res["basis"] == "[run.kinds.resistivity] max_distance"
    assert res["mask_distance"] == pytest.approx(4.0)
    assert res["search_radius"] >= 4.0
    assert "neighbourhood" not in kinds["corrosion_rate"]  # points: no surface, no radius


def test_points_in_the_geopackage(sparse: tuple[Path, Path]) -> None:
    site, out = sparse
    gpkg = out / "survey.gpkg"
    names = {n for n, _t in pyogrio.list_layers(gpkg)}
    assert {"D1_points_corrosion_rate", "D1_thiessen_corrosion_rate"} <= names
    pts = gpd.read_file(gpkg, layer="D1_points_corrosion_rate")
    assert len(pts) == 18 and set(pts["representation"]) == {"points"}
    # the class of each point is the rate class set's class of its value [RILEM-TC154-2003]
    cs = get_class_set("rilem_rate")
    assert list(pts["class"]) == list(cs.classify(pts["value"].to_numpy(float)))
    assert list(pts["color"]) == [cs.colors[cs.labels.index(c)] for c in pts["class"]]
    # shapely: the Thiessen cells tile the deck (site CRS, metres)
    cells = gpd.read_file(gpkg, layer="D1_thiessen_corrosion_rate")
    deck_m2 = json.loads((out / "run.json").read_text())["levels"]["D1"]["deck_area_m2"]
    assert cells["area_m2"].sum() == pytest.approx(deck_m2, rel=1e-9)
    assert cells.geometry.area.sum() == pytest.approx(deck_m2, rel=1e-5)
    assert set(cells["label"]) == {"Thiessen (nearest-reading) cells, not a surface"}


def test_points_in_the_plot(sparse: tuple[Path, Path], monkeypatch: pytest.MonkeyPatch,
                            tmp_path: Path) -> None:
    from geo_corrosion.condition import plots

    out = sparse[1]
    assert (out / "plots" / "D1_corrosion_rate_classes.png").stat().st_size > 10_000
    assert (out / "plots" / "D1_corrosion_rate_histogram.png").is_file()
    pts = gpd.read_file(out / "survey.gpkg", layer="D1_points_corrosion_rate")
    seen: list[Any] = []
    monkeypatch.setattr(plots, "_finish", lambda fig, path, dpi: seen.append(fig) or path)
    rng = np.random.default_rng(0)
    x, y = rng.uniform(0, 60, 18), rng.uniform(0, 40, 18)
    v = pts["value"].to_numpy(float)
    cs = get_class_set("rilem_rate")
    plots.plot_class_points(x, y, v, tmp_path / "p.png", class_set=cs, reason="test")
    ax = seen[0].axes[0]
    scatter = ax.collections[-1]
    # the artist's data are the readings, coloured by class (matplotlib's own colours)
    assert np.allclose(scatter.get_offsets(), np.column_stack([x, y]))
    from matplotlib.colors import to_rgba

    want = [to_rgba(cs.colors[c]) for c in cs.codes(v)]
    assert np.allclose(scatter.get_facecolors(), want)


def test_report_says_why_there_is_no_surface(sparse: tuple[Path, Path]) -> None:
    text = (sparse[1] / "report.html").read_text()
    # one sentence, from run.json's reason
    assert ("No corrosion rate surface: 18 usable readings, fewer than the 30 a surface needs "
            "(min_readings_for_surface), so the readings are shown as points.") in text
    assert "share of readings (%)" in text
    assert "They do not use rate: corrosion_rate has no surface" in text
    assert "D1_corrosion_rate_classes" not in text or "points, no surface" in text
    combined = json.loads((sparse[1] / "run.json").read_text())["levels"]["D1"]["condition"]
    assert combined["combined_kinds"]["rate"].startswith("not used")
    assert combined["combined_kinds"]["potential"].startswith("used")


def test_check_lists_surface_or_points_per_kind(sparse: tuple[Path, Path]) -> None:
    res = CliRunner().invoke(cli, ["check", str(sparse[0]), "--quiet"])
    assert res.exit_code == 0, res.output
    assert "level D1: what will be mapped" in res.output
    assert "  corrosion_rate: points: 18 usable readings, fewer than the 30" in res.output
    assert "  potential: surface: 600 usable readings" in res.output


def test_one_reading_is_one_point(tmp_path: Path) -> None:
    from geo_corrosion.pipeline import run

    out = tmp_path / "out"
    run(_site(tmp_path / "site", 1), out)
    pts = gpd.read_file(out / "survey.gpkg", layer="D1_points_corrosion_rate")
    assert len(pts) == 1
    rate = _kinds(out)["corrosion_rate"]
    assert rate["representation"] == "points" and rate["spacing"]["median_nearest_neighbour"] \
        is None
    assert "No corrosion rate surface: 1 usable reading," in (out / "report.html").read_text()
    cells = gpd.read_file(out / "survey.gpkg", layer="D1_thiessen_corrosion_rate")
    assert len(cells) == 1 and math.isclose(cells["area_m2"].sum(),
                                            json.loads((out / "run.json").read_text())
                                            ["levels"]["D1"]["deck_area_m2"], rel_tol=1e-9)


@pytest.mark.parametrize(("value", "expect"), [
    ('"-3 ft"', "expected a length of more than 0"), ('"0 ft"', "expected a length of more than 0"),
    ("5", "expected a length with its unit"), ('"5 furlongs"', "unknown unit 'furlongs'")])
def test_a_per_kind_radius_that_is_not_a_positive_length(tmp_path: Path, value: str,
                                                         expect: str) -> None:
    site = _site(tmp_path / "site", 0, f"[run.kinds.cover]\nmax_distance = {value}\n")
    with pytest.raises(SiteFileError) as err:
        read_site(site)
    # the message names the file and the dotted key (house rule)
    assert str(site) in str(err.value) or site.name in str(err.value)
    assert "[run.kinds.cover].max_distance" in str(err.value)
    assert expect in str(err.value)


def test_an_unknown_kind_table_is_refused(tmp_path: Path) -> None:
    site = _site(tmp_path / "site", 0, '[run.kinds.rate]\nmin_readings_for_surface = 10\n')
    with pytest.raises(SiteFileError, match=r"\[run.kinds.rate\]: unknown measurement kind"):
        read_site(site)

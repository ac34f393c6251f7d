"""`geo-corrosion portfolio`: many sites on Dask, one broken, the summary read back.

The fast tests find and name sites and run broken sites one after another (they fail at
once); the slow ones run three small synthetic sites on a LocalCluster of two worker
processes and compare with a plain `geo-corrosion run` of the same site.
"""

from __future__ import annotations

import csv
import re
from pathlib import Path

import pytest
from click.testing import CliRunner

from geo_corrosion.cli.main import cli
from geo_corrosion.errors import SiteFileError
from geo_corrosion.portfolio import find_sites, plan_sites, site_slug
from tests.compare_runs_script import load_compare_runs as _compare_runs
from tests.portfolio.conftest import BAD_ROW, SITES, PortfolioRun, make_sites


def _rows(path: Path) -> list[dict[str, str]]:
    with path.open(newline="", encoding="utf-8") as f:
        return list(csv.DictReader(f))


# ----------------------------------------------------------------------------- fast


def test_sites_found_from_folders_and_lists(tmp_path: Path) -> None:
    """Every way of naming sites finds the same site files, each once (common practice)."""
    sites = make_sites(tmp_path)
    expected = [sites / f / "site.toml" for f, _n, _o in SITES]
    assert find_sites([sites]) == expected  # a folder of site folders, in name order
    (tmp_path / "list.txt").write_text("# the portfolio\nsites/s0\n\n" f"{sites / 's1'}\n"
                                       "sites/s2/site.toml\nsites/s0\n")
    assert find_sites([tmp_path / "list.txt"]) == expected  # relative to the list, once
    (tmp_path / "list.csv").write_text("name,site\na,sites/s1\nb,sites/s0\n")
    assert find_sites([tmp_path / "list.csv"]) == [expected[1], expected[0]]


def test_a_bad_list_line_is_named(tmp_path: Path) -> None:
    """A list line that is no site names the list and the line (house rule on bad input)."""
    make_sites(tmp_path)
    (tmp_path / "list.txt").write_text("sites/s0\nsites/nowhere\n")
    with pytest.raises(SiteFileError, match=r"list\.txt, line 2: 'sites/nowhere'"):
        find_sites([tmp_path / "list.txt"])
    (tmp_path / "list.csv").write_text("where\nsites/s0\n")
    with pytest.raises(SiteFileError, match="column named 'site'"):
        find_sites([tmp_path / "list.csv"])


def test_site_ids_are_unique_and_safe(tmp_path: Path) -> None:
    """Ids come from the site name, safe on any file system, repeated names numbered."""
    from geo_corrosion.testing import make_synthetic_site

    for folder in ("a", "b"):
        make_synthetic_site(tmp_path / folder, width_ft=30, depth_ft=20,
                            name="Deck <img src=x> Zürich/Nord")
    plan = plan_sites(find_sites([tmp_path]), tmp_path / "out")
    assert [s.id for s in plan] == ["deck-img-src-x-zurich-nord", "deck-img-src-x-zurich-nord-2"]
    assert plan[1].run_dir == tmp_path / "out" / "sites" / "deck-img-src-x-zurich-nord-2"
    assert site_slug("../..") == "site"  # never a path out of sites/
    assert all(re.fullmatch(r"[a-z0-9-]+", s.id) for s in plan)


def test_failed_sites_are_reported_and_exit_non_zero(tmp_path: Path) -> None:
    """Two broken sites both fail with their own message, and nothing stops.

    A bad TOML and a bad reading; the summary lists them and the last line says so (issue
    16, item 4).
    """
    sites = make_sites(tmp_path)
    (sites / "s1" / "site.toml").write_text("[site\nname = 1\n")  # not TOML
    out = tmp_path / "out"
    res = CliRunner().invoke(cli, ["portfolio", str(sites / "s1"), str(sites / "s2"),
                                   "--out", str(out), "--serial"])
    assert res.exit_code == 1, res.output
    last = res.output.strip().splitlines()[-1]
    assert last.startswith("Error: 2 of 2 site(s) failed"), last
    assert re.search(r"\[\d/2\] east-deck: FAILED: readings/potential.csv line 6", res.output)
    rows = {r["site_id"]: r for r in _rows(out / "portfolio_sites.csv")}
    assert rows["s1"]["status"] == "failed" and "site.toml" in rows["s1"]["message"]
    assert rows["east-deck"]["status"] == "failed"
    assert f"line {BAD_ROW}" in rows["east-deck"]["message"]
    assert "Traceback" not in res.output


# ----------------------------------------------------------------------------- on Dask


@pytest.mark.slow
def test_dask_portfolio_reports_the_broken_site(portfolio_run: PortfolioRun) -> None:
    """One line per finished site (n/N), the broken one with its message; exit code 1."""
    res = portfolio_run.result
    if res is None:
        pytest.skip("GC_PORTFOLIO_RUN: the summary was rebuilt, the command did not run")
    assert res.exit_code == 1, res.output
    done = re.findall(r"^\[(\d)/3\] (\S+): (done|FAILED)", res.output, re.M)
    assert sorted(n for n, _s, _st in done) == ["1", "2", "3"]
    assert {s: st for _n, s, st in done} == {"north-deck": "done", "south-deck": "done",
                                              "east-deck": "FAILED"}
    assert "on 2 local worker process(es)" in res.output
    assert res.output.strip().splitlines()[-1].startswith("Error: 1 of 3 site(s) failed")
    assert not (portfolio_run.out / "sites" / "east-deck").exists()  # nothing half-written
    from geo_corrosion.exporters.portfolio import run_folders

    assert run_folders(portfolio_run.out) == [portfolio_run.out / "sites" / s
                                              for s in ("north-deck", "south-deck")]


@pytest.mark.slow
def test_dask_site_equals_a_plain_run(portfolio_run: PortfolioRun) -> None:
    """A site run as a Dask task writes what `geo-corrosion run` writes.

    Compared by .ci/compare_runs.py: every file by content, time stamps and versions masked.
    """
    cmp = _compare_runs()
    got = portfolio_run.out / "sites" / "north-deck"
    results = cmp.compare_runs(portfolio_run.plain, got, cmp.Options())
    bad = [line for rel, r in results if not r.ok for line in cmp.format_result(rel, r)]
    assert len(results) > 20 and not bad, "\n".join(bad)
    assert (portfolio_run.out / "sites" / "south-deck" / "run.json").is_file()


@pytest.mark.slow
def test_summary_equals_the_sites_own_tables(portfolio_run: PortfolioRun) -> None:
    """The summary CSVs hold the sites' own quantities.csv and condition_areas.csv values.

    Source: the plain single-site run of the same site.
    """
    out, plain = portfolio_run.out, portfolio_run.plain
    q_site = _rows(plain / "quantities.csv")  # level rows, then the site's ("ALL")
    q_port = [r for r in _rows(out / "portfolio_quantities.csv") if r["site_id"] == "north-deck"]
    assert len(q_port) == len(q_site) > 0
    for a, b in zip(q_site, q_port, strict=True):
        assert (a["level_id"], a["item"], a["unit"], a["line"]) == (
            b["level_id"], b["item"], b["unit"], b["line"])
        assert float(a["quantity"]) == float(b["quantity_[unit]"])
    c_site = _rows(plain / "condition_areas.csv")
    c_port = [r for r in _rows(out / "portfolio_class_areas.csv")
              if r["site_id"] == "north-deck"]
    assert len(c_port) == len(c_site) > 0
    with_interval = 0
    for a, b in zip(c_site, c_port, strict=True):
        assert (a["level_id"], a["what"], a["class"]) == (b["level_id"], b["what"], b["class"])
        assert float(a["area_ft2"]) == pytest.approx(float(b["area_ft2"]), abs=1e-9)
        for side in ("low", "high"):
            if a[f"interval_90pct_{side}_ft2"]:
                with_interval += 1
                assert float(a[f"interval_90pct_{side}_ft2"]) == pytest.approx(
                    float(b[f"interval_90pct_{side}_ft2"]), abs=1e-9)
    assert with_interval > 0  # the area intervals are carried over
    lv = {r["site_id"]: r for r in _rows(out / "portfolio_levels.csv")}
    st = {r["site_id"]: r for r in _rows(out / "portfolio_sites.csv")}
    for where, row in (("D1", lv["north-deck"]), ("ALL", st["north-deck"])):
        item_total: dict[str, float] = {}
        for r in q_site:
            if r["level_id"] == where:
                key = f"{r['item']}_{r['unit']}"
                item_total[key] = item_total.get(key, 0.0) + float(r["quantity"])
        assert item_total
        for key, total in item_total.items():  # base + contingency, by bid item
            assert float(row[key]) == pytest.approx(total), (where, key)
    assert lv["east-deck"]["status"] == "failed" and "line 6" in lv["east-deck"]["message"]


@pytest.mark.slow
def test_summary_geopackage(portfolio_run: PortfolioRun) -> None:
    """One point per site in WGS84, where the site is, inside its slab outline (geopandas)."""
    import geopandas as gpd
    import pyogrio

    gpkg = portfolio_run.out / "portfolio.gpkg"
    names = {str(n) for n, _t in pyogrio.list_layers(gpkg)}
    assert {"sites", "site_outlines", "levels", "class_areas", "quantities"} <= names
    pts = gpd.read_file(gpkg, layer="sites")
    assert pts.crs.to_epsg() == 4326 and len(pts) == 3
    assert len({(round(p.x, 6), round(p.y, 6)) for p in pts.geometry}) == 3  # 3 places
    # where each site is, by pyproj from the synthetic tie (UTM 18N origin + the site's
    # offset): a deck of 30 x 20 ft lies within 0.0005 degrees (about 50 m) of it
    from pyproj import Transformer

    from geo_corrosion.testing import SYNTHETIC_TIE

    to_wgs84 = Transformer.from_crs(SYNTHETIC_TIE["crs"], "EPSG:4326", always_xy=True)
    ox, oy = SYNTHETIC_TIE["origin"]
    ids = {"North deck": "north-deck", "South deck": "south-deck", "East deck": "east-deck"}
    at = pts.set_index("site_id").geometry
    for _f, name, (dx, dy) in SITES:
        lon, lat = to_wgs84.transform(ox + dx, oy + dy)
        assert abs(at[ids[name]].x - lon) < 5e-4 and abs(at[ids[name]].y - lat) < 5e-4, name
    outl = gpd.read_file(gpkg, layer="site_outlines").set_index("site_id")
    for _i, p in pts[pts["status"] == "done"].iterrows():
        assert outl.loc[p["site_id"]].geometry.contains(p.geometry)


def test_an_existing_cluster_by_its_address(tmp_path: Path) -> None:
    """`--scheduler ADDRESS` sends the tasks to that cluster (Dask's own LocalCluster here)."""
    from distributed import LocalCluster

    sites = make_sites(tmp_path)
    out = tmp_path / "out"
    with LocalCluster(n_workers=1, threads_per_worker=1, processes=False,
                      dashboard_address=None) as cluster:
        res = CliRunner().invoke(cli, ["portfolio", str(sites / "s2"), "--out", str(out),
                                       "--scheduler", cluster.scheduler_address])
    assert res.exit_code == 1, res.output
    assert f"on the cluster at {cluster.scheduler_address}" in res.output
    assert re.search(r"\[1/1\] east-deck: FAILED: readings/potential.csv line 6", res.output)
    rows = _rows(out / "portfolio_sites.csv")
    assert [(r["site_id"], r["status"]) for r in rows] == [("east-deck", "failed")]

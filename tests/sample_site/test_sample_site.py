"""Tests of the sample-site generator ``sample_sites/make_sample_sites.py``.

The site is invented, so the "realism" checks below test properties we built into
the invented data (said so beside each), not facts about real decks.  Conversions
back to mV vs CSE use published constants (cited by bibliography key), written out here
rather than taken from geo_corrosion, so these tests stay independent of the
package the sample site is meant to exercise.
"""

from __future__ import annotations

import csv
import importlib.util
import json
import math
import subprocess
import sys
import tomllib
from collections.abc import Iterator
from pathlib import Path
from types import ModuleType

import ezdxf
import numpy as np
import pytest
import shapely
from shapely.geometry import LineString, Point, Polygon

REPO = Path(__file__).resolve().parents[2]
SCRIPT = REPO / "sample_sites" / "make_sample_sites.py"
COMMITTED = REPO / "sample_sites" / "millbrook_garage"

# [IJCorros-2010 Table 2], derived: add to a reading vs the electrode to get mV vs CSE
TO_CSE_MV = {"cse": 0.0, "ag_agcl_sat_kcl": -119.0}
T_REF_C = 22.2  # [ASTM-C876-22a §4.7]
K_MV_PER_C = 0.9  # [ASTM-C876-22a §5.1.1.2]


def _load_script() -> ModuleType:
    spec = importlib.util.spec_from_file_location("make_sample_sites", SCRIPT)
    assert spec is not None and spec.loader is not None
    mod = importlib.util.module_from_spec(spec)
    sys.modules["make_sample_sites"] = mod
    spec.loader.exec_module(mod)
    return mod


@pytest.fixture(scope="module")
def mk() -> ModuleType:
    """Load the generator script as a module."""
    return _load_script()


@pytest.fixture(scope="module")
def runs(mk: ModuleType, tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path, object]:
    """Two runs: one in-process, one through the command line with --out."""
    a = tmp_path_factory.mktemp("site_a") / "millbrook"
    b = tmp_path_factory.mktemp("site_b") / "millbrook"
    manifest = mk.generate(a)
    proc = subprocess.run([sys.executable, str(SCRIPT), "--out", str(b)], cwd=REPO,
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr
    return a, b, manifest


@pytest.fixture(scope="module")
def site(runs: tuple[Path, Path, object]) -> Path:
    """Return the in-process run's folder."""
    return runs[0]


@pytest.fixture(scope="module")
def cfg(site: Path) -> dict:
    """Parse the generated site file with tomllib."""
    return tomllib.loads((site / "site.toml").read_text(encoding="utf-8"))


def _rel_files(root: Path) -> list[str]:
    return sorted(str(p.relative_to(root)) for p in root.rglob("*") if p.is_file())


# ---------------------------------------------------------------------------------- helpers


def _surveys(cfg: dict, kind: str, level: str | None = None) -> Iterator[dict]:
    for s in cfg["surveys"]:
        if s["kind"] == kind and (level is None or s["level"] == level):
            yield s


def _read_csv_survey(site: Path, s: dict) -> list[tuple[str, float, float, float]]:
    """(point_id, x, y, value) as written, honouring separator, decimal and column mapping."""
    sep, dec = s.get("separator", ","), s.get("decimal", ".")
    cols = {"point_id": "point_id", "x": "x", "y": "y", "value": "value", **s.get("columns", {})}
    with (site / s["path"]).open(encoding="utf-8", newline="") as fh:
        rows = list(csv.DictReader(fh, delimiter=sep))
    assert rows, s["path"]

    def num(t: str) -> float:
        return float(t.replace(",", ".") if dec == "," else t)

    return [(r[cols["point_id"]], num(r[cols["x"]]), num(r[cols["y"]]), num(r[cols["value"]]))
            for r in rows]


def _potentials_cse(site: Path, cfg: dict, level: str) -> dict[str, np.ndarray]:
    """All potentials of a level in mV vs CSE at 22.2 degC, by survey id."""
    out = {}
    for s in _surveys(cfg, "potential", level):
        rows = _read_csv_survey(site, s)
        v = np.array([r[3] for r in rows]) * (1000.0 if s["unit"] == "V" else 1.0)
        k_default = K_MV_PER_C if s["electrode"] == "cse" else 0.0
        k = s.get("temperature_coefficient_mv_per_c", k_default)
        v = v + TO_CSE_MV[s["electrode"]] + k * (s["temperature_c"] - T_REF_C)
        out[s["id"]] = np.c_[[r[1] for r in rows], [r[2] for r in rows], v]
    return out


def _layer_entities(path: Path, layer: str) -> list:
    doc = ezdxf.readfile(path)
    return [e for e in doc.modelspace() if e.dxf.layer == layer]


def _polygons(path: Path, layer: str) -> list[Polygon]:
    out = []
    for e in _layer_entities(path, layer):
        if e.dxftype() == "LWPOLYLINE":
            assert e.closed, f"{path.name} {layer}: open polyline"
            out.append(Polygon([p[:2] for p in e.get_points()]))
        elif e.dxftype() == "CIRCLE":
            out.append(Point(e.dxf.center.x, e.dxf.center.y).buffer(e.dxf.radius, quad_segs=32))
        else:
            raise AssertionError(f"{path.name} {layer}: unexpected {e.dxftype()}")
    return out


def _flaw_ids(manifest: object) -> set[str]:
    return {f.point_id for f in manifest.flaws}


# ------------------------------------------------------------------------------------ tests


def test_two_runs_are_byte_identical(runs: tuple[Path, Path, object]) -> None:
    """An in-process run and a command-line run give byte-identical files."""
    a, b, _ = runs
    assert _rel_files(a) == _rel_files(b)
    for rel in _rel_files(a):
        assert (a / rel).read_bytes() == (b / rel).read_bytes(), rel  # determinism of the script


def test_committed_site_matches_the_script(site: Path) -> None:
    """The committed folder is what the script writes (DXF compared by entity, not bytes)."""
    assert _rel_files(COMMITTED) == _rel_files(site), "run python sample_sites/make_sample_sites.py"
    for rel in _rel_files(site):
        if rel.endswith(".dxf"):
            def ents(p: Path) -> list:
                return [(e.dxftype(), e.dxf.layer, str(e.dxfattribs().get("center", "")),
                         [tuple(round(c, 3) for c in q[:2]) for q in e.get_points()]
                         if e.dxftype() == "LWPOLYLINE" else None)
                        for e in ezdxf.readfile(p).modelspace()]
            assert ents(COMMITTED / rel) == ents(site / rel), rel
        else:
            assert (COMMITTED / rel).read_bytes() == (site / rel).read_bytes(), rel


def test_file_set_and_formats(site: Path, cfg: dict) -> None:
    """Every file exists and parses in the layout the site file declares."""
    for rel in ("site.toml", "README.md", "plans/L2.dxf", "plans/RF.dxf", "sounding/L2.dxf",
                "sounding/RF.dxf"):
        assert (site / rel).is_file(), rel
    assert cfg["site"]["crs"] == "EPSG:26918" and cfg["site"]["units"] == "us"
    assert [lv["id"] for lv in cfg["levels"]] == ["L2", "RF"]
    refs = [cfg["levels"][i]["slab"] for i in range(2)]
    # joints: one layer reference, or a list of them (RF: construction and expansion joints)
    refs += [j for lv in cfg["levels"]
             for j in (lv["joints"] if isinstance(lv["joints"], list) else [lv["joints"]])]
    refs += [r for lv in cfg["levels"] for r in (*lv["exclusions"], *lv["overlays"])]
    for ref in refs:
        assert (site / ref["path"]).is_file(), ref
    for s in cfg["surveys"]:
        assert (site / s["path"]).is_file(), s["id"]
        if s["path"].endswith(".csv"):
            assert _read_csv_survey(site, s)
    # the different-layout file: semicolons and decimal commas, volts
    north = next(s for s in cfg["surveys"] if s["id"] == "RF-hcp-north")
    assert (north["separator"], north["decimal"], north["unit"]) == (";", ",", "V")
    head = (site / north["path"]).read_text(encoding="utf-8").splitlines()[:2]
    assert head[0] == "Station;GridX;GridY;Reading" and "," in head[1] and "." not in head[1]
    # our own layout
    east = (site / "readings/L2_potential_east.csv").read_text(encoding="utf-8").splitlines()[0]
    assert east == "point_id,x,y,value,note"
    for lid in ("L2", "RF"):
        for rel in (f"plans/{lid}.dxf", f"sounding/{lid}.dxf"):
            doc = ezdxf.readfile(site / rel)
            assert doc.dxfversion == "AC1024"  # R2010
            assert doc.header["$INSUNITS"] == 2  # feet
        gj = json.loads((site / f"readings/{lid}_cover.geojson").read_text(encoding="utf-8"))
        assert gj["crs"]["properties"]["name"] == "urn:ogc:def:crs:EPSG::26918"
        assert {"point_id", "cover_in"} <= set(gj["features"][0]["properties"])


def test_plan_layers(site: Path) -> None:
    """Plans: one slab outline, closed columns and openings, open joints, drain circles."""
    for lid in ("L2", "RF"):
        p = site / f"plans/{lid}.dxf"
        slab = _polygons(p, "SLAB")
        assert len(slab) == 1 and slab[0].is_valid and 20000 < slab[0].area < 23000  # ~180x120 ft
        cols, opens = _polygons(p, "COLUMNS"), _polygons(p, "OPENINGS")
        assert cols and opens
        assert all(math.isclose(c.area, 4.0) for c in cols)  # 2 ft x 2 ft
        assert all(slab[0].contains(g) for g in cols + opens)
        joints = _layer_entities(p, "JOINTS") + _layer_entities(p, "EXP-JOINTS")
        assert joints and all(e.dxftype() in ("LINE", "LWPOLYLINE") for e in joints)
        assert all(not e.closed for e in joints if e.dxftype() == "LWPOLYLINE")
        drains = _layer_entities(p, "DRAINS")
        assert drains and all(e.dxftype() == "CIRCLE" and e.dxf.radius == 0.5 for e in drains)
    assert len(_polygons(site / "plans/RF.dxf", "OPENINGS")) == 3  # stair, elevator, ramp
    # RF's expansion joint on a layer of its own, across the deck (through the ramp opening)
    (exp,) = _layer_entities(site / "plans/RF.dxf", "EXP-JOINTS")
    ys = [q[1] for q in exp.get_points()]
    assert (min(ys), max(ys)) == (0.0, 120.0)


def test_sounding_layers(site: Path) -> None:
    """Sounding: closed irregular delaminations and spalls, one RF circle, all on the deck."""
    for lid in ("L2", "RF"):
        p = site / f"sounding/{lid}.dxf"
        delam_ents = _layer_entities(p, "DELAM")
        circles = [e for e in delam_ents if e.dxftype() == "CIRCLE"]
        assert len(circles) == (1 if lid == "RF" else 0)
        for e in delam_ents:
            if e.dxftype() == "LWPOLYLINE":
                assert e.closed and 8 <= len(e) <= 20
        delams = _polygons(p, "DELAM")
        assert 15 <= len(delams) <= 30
        assert all(g.is_valid and 2.0 <= g.area <= 40.0 for g in delams)  # sq ft
        assert shapely.union_all(delams).area == pytest.approx(sum(g.area for g in delams))
        spalls = _polygons(p, "SPALL")
        assert 3 <= len(spalls) <= 8 and all(g.is_valid and g.area < 5.0 for g in spalls)
        inside = sum(any(d.contains(s) for d in delams) for s in spalls)
        assert 1 <= inside < len(spalls)  # some spalls inside delaminations, some not
        plan = site / f"plans/{lid}.dxf"
        excl = shapely.union_all(_polygons(plan, "COLUMNS") + _polygons(plan, "OPENINGS"))
        slab = _polygons(plan, "SLAB")[0]
        assert all(slab.contains(g) and not g.intersects(excl) for g in delams + spalls)


def test_counts_per_level(site: Path, cfg: dict) -> None:
    """Reading counts per level within the ranges of the brief."""
    for lid in ("L2", "RF"):
        n_pot = sum(len(_read_csv_survey(site, s)) for s in _surveys(cfg, "potential", lid))
        assert 4000 <= n_pot <= 6000
        assert len(list(_surveys(cfg, "potential", lid))) >= 2
        (res,) = _surveys(cfg, "resistivity", lid)
        assert 250 <= len(_read_csv_survey(site, res)) <= n_pot / 12  # every 4th station
        (cr,) = _surveys(cfg, "corrosion_rate", lid)
        assert 40 <= len(_read_csv_survey(site, cr)) <= 60
        (cov,) = _surveys(cfg, "cover", lid)
        feats = json.loads((site / cov["path"]).read_text(encoding="utf-8"))["features"]
        assert 200 <= len(feats) <= 400


def _fit_similarity(local_m: np.ndarray, site_m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Least squares X = tx + a x - b y, Y = ty + b x + a y; returns (params, residuals)."""
    n = len(local_m)
    A = np.zeros((2 * n, 4))
    A[0::2] = np.c_[np.ones(n), np.zeros(n), local_m[:, 0], -local_m[:, 1]]
    A[1::2] = np.c_[np.zeros(n), np.ones(n), local_m[:, 1], local_m[:, 0]]
    p, *_ = np.linalg.lstsq(A, site_m.ravel(), rcond=None)
    return p, (A @ p - site_m.ravel()).reshape(-1, 2)


def test_control_points_fit_a_similarity(cfg: dict, mk: ModuleType) -> None:
    """Control points fit a similarity transform with small non-zero residuals (numpy lstsq)."""
    for lv in cfg["levels"]:
        cps = lv["grid"]["control_points"]
        assert len(cps) == 3
        local = np.array([c["local"] for c in cps]) * 0.3048  # ft -> m, exact
        p, res = _fit_similarity(local, np.array([c["site"] for c in cps]))
        norm = np.hypot(res[:, 0], res[:, 1])
        assert norm.max() < 0.05  # brief: a few mm of survey noise
        assert norm.max() > 1e-4  # not an exact transform: residuals are non-zero
        assert math.degrees(math.atan2(p[3], p[2])) == pytest.approx(mk.ROTATION_DEG, abs=0.05)
        assert math.hypot(p[2], p[3]) == pytest.approx(1.0, abs=1e-3)
        assert (p[0], p[1]) == pytest.approx(mk.ORIGIN_EN_M, abs=0.05)


@pytest.mark.parametrize("survey_id", ["L2-hcp-west", "L2-hcp-east", "RF-hcp-south",
                                       "RF-hcp-north"])
def test_corrections_recover_the_latent_field(
    site: Path, cfg: dict, mk: ModuleType, runs: tuple[Path, Path, object], survey_id: str
) -> None:
    """Written value + electrode offset + 0.9 mV/degC (T - 22.2) = latent CSE field + noise.

    Ag/AgCl (sat. KCl) to CSE -119 mV [IJCorros-2010 Table 2]; 0.9 mV/degC [ASTM-C876-22a §5.1.1.2].
    """
    (s,) = (s for s in cfg["surveys"] if s["id"] == survey_id)
    level = s["level"]
    xyv = _potentials_cse(site, cfg, level)[survey_id]
    ids = [r[0] for r in _read_csv_survey(site, s)]
    ok = np.array([i not in _flaw_ids(runs[2]) for i in ids])
    latent = mk.build_models()[level].potential_cse_mv(xyv[ok, 0], xyv[ok, 1])
    diff = xyv[ok, 2] - latent
    assert abs(diff.mean()) < 1.0  # no leftover offset (a wrong sign would leave 2 x 119 mV)
    assert 3.5 < diff.std() < 7.0  # the 5 mV noise plus 1 mV rounding
    if s["electrode"] != "cse":  # as measured vs Ag/AgCl: about 119 mV more positive
        raw = np.array([r[3] for r in _read_csv_survey(site, s)])[ok]
        assert np.mean(raw - latent) == pytest.approx(119.0 - 0.9 * (s["temperature_c"] - 22.2),
                                                      abs=1.0)


def test_potentials_look_like_a_deck(site: Path, cfg: dict, runs: tuple[Path, Path, object]
                                     ) -> None:
    """Potential range, delaminations on the most negative readings, roof worse than L2."""
    flaws = _flaw_ids(runs[2])
    means = {}
    for lid in ("L2", "RF"):
        v_all, xy_all, ids = [], [], []
        for sid, arr in _potentials_cse(site, cfg, lid).items():
            (s,) = (s for s in cfg["surveys"] if s["id"] == sid)
            ids += [r[0] for r in _read_csv_survey(site, s)]
            xy_all.append(arr[:, :2])
            v_all.append(arr[:, 2])
        xy, v = np.vstack(xy_all), np.concatenate(v_all)
        ok = np.array([i not in flaws for i in ids])
        xy, v = xy[ok], v[ok]
        # invented-data property (brief): about -120 passive to -550 active, mV vs CSE
        assert -600 < v.min() and v.max() < -100
        assert np.percentile(v, 2) < -350 < np.percentile(v, 98)
        delams = shapely.union_all(_polygons(site / f"sounding/{lid}.dxf", "DELAM"))
        inside = shapely.contains_xy(delams, xy[:, 0], xy[:, 1])
        assert inside.sum() >= 20
        # invented-data property: delaminations sit where potentials are most negative
        assert v[~inside].mean() - v[inside].mean() > 100.0
        means[lid] = v.mean()
    assert means["RF"] < means["L2"] - 30.0  # invented: the exposed roof is worse


def test_corrosion_clusters_near_drains_and_joints(site: Path, cfg: dict, mk: ModuleType) -> None:
    """Invented-data property (issue 2 item 8): more negative near drains and joints."""
    for lid in ("L2", "RF"):
        xyv = np.vstack(list(_potentials_cse(site, cfg, lid).values()))
        xyv = xyv[(xyv[:, 2] > -1000) & (xyv[:, 2] < 200)]
        pts = shapely.points(xyv[:, 0], xyv[:, 1])
        plan = site / f"plans/{lid}.dxf"
        drains = shapely.union_all([Point(e.dxf.center.x, e.dxf.center.y)
                                    for e in _layer_entities(plan, "DRAINS")])
        joints = []
        for e in _layer_entities(plan, "JOINTS") + _layer_entities(plan, "EXP-JOINTS"):
            if e.dxftype() == "LINE":
                a, b = e.dxf.start, e.dxf.end
                joints.append(LineString([(a.x, a.y), (b.x, b.y)]))
            else:
                joints.append(LineString([q[:2] for q in e.get_points()]))
        d_drain = shapely.distance(pts, drains)
        d_joint = shapely.distance(pts, shapely.union_all(joints))
        far = (d_drain > 30) & (d_joint > 15)
        assert xyv[d_drain < 8, 2].mean() < xyv[far, 2].mean() - 80
        assert xyv[d_joint < 3, 2].mean() < xyv[(d_joint > 10) & (d_drain > 30), 2].mean() - 10


def test_natural_adjacent_differences_stay_under_150_mv(
    site: Path, cfg: dict, runs: tuple[Path, Path, object]
) -> None:
    """Only planted flaws break C876's 150 mV adjacent rule [ASTM-C876-91 §5.1, from memory]."""
    flaws = runs[2].flaws
    planted = {f.point_id for f in flaws}
    for lid in ("L2", "RF"):
        grid: dict[tuple[int, int], tuple[str, float]] = {}
        for s in _surveys(cfg, "potential", lid):
            arr = _potentials_cse(site, cfg, lid)[s["id"]]
            for (pid, *_), (x, y, v) in zip(_read_csv_survey(site, s), arr, strict=True):
                grid.setdefault((round(x * 10), round(y * 10)), (pid, v))
        bad_pairs = set()
        for (ix, iy), (pid, v) in grid.items():
            for nb in ((ix + 20, iy), (ix, iy + 20)):
                if nb in grid and abs(grid[nb][1] - v) > 150.0:
                    bad_pairs.add((pid, grid[nb][0]))
        assert all(a in planted or b in planted for a, b in bad_pairs), bad_pairs
        spikes = [f for f in flaws if f.kind.startswith("adjacent") and f.point_id.startswith(lid)]
        if lid == "L2":
            assert len(spikes) == 1
            assert sum(spikes[0].point_id in p for p in bad_pairs) >= 1


def test_planted_flaws_are_in_the_files(site: Path, cfg: dict, runs: tuple[Path, Path, object]
                                        ) -> None:
    """Each planted flaw is in its file as documented; ordinary stations are clean."""
    flaws = runs[2].flaws
    kinds = {f.kind for f in flaws}
    assert {"implausible value", "duplicate location", "reading outside the slab",
            "reading inside an exclusion", "adjacent readings > 150 mV apart",
            "repeat readings at a control station"} <= kinds
    readme = (site / "README.md").read_text(encoding="utf-8")
    by_path = {s["path"]: s for s in cfg["surveys"]}
    for f in flaws:
        assert f.point_id in readme and f.file in readme
        rows = _read_csv_survey(site, by_path[f.file])
        mine = [r for r in rows if r[0] == f.point_id]
        if f.kind == "repeat readings at a control station":
            assert len(mine) == 2 and mine[0][1:3] == mine[1][1:3]
            assert abs(mine[0][3] - mine[1][3]) == 15.0  # [ASTM-C876-15, from memory]
        else:
            assert len(mine) == 1
        pid, x, y, v = mine[0]
        if f.kind == "implausible value":
            v_mv = v * (1000.0 if by_path[f.file]["unit"] == "V" else 1.0)
            assert v_mv < -1000 or v_mv > 200  # plausible range (common practice)
        elif f.kind == "duplicate location":
            assert sum(1 for r in rows if r[1:3] == (x, y) and r[0] != pid) == 1
        elif f.kind == "reading outside the slab":
            assert not (0 <= x <= 180 and 0 <= y <= 120)
        elif f.kind == "reading inside an exclusion":
            cols = _polygons(site / f"plans/{by_path[f.file]['level']}.dxf", "COLUMNS")
            assert any(c.contains(Point(x, y)) for c in cols)
    # ordinary stations are never inside exclusions or outside the slab
    for lid in ("L2", "RF"):
        plan = site / f"plans/{lid}.dxf"
        excl = shapely.union_all(_polygons(plan, "COLUMNS") + _polygons(plan, "OPENINGS"))
        xy = np.vstack([a[:, :2] for a in _potentials_cse(site, cfg, lid).values()])
        n_bad = (shapely.intersects_xy(excl, xy[:, 0], xy[:, 1])
                 | ~shapely.contains_xy(_polygons(plan, "SLAB")[0], xy[:, 0], xy[:, 1])).sum()
        assert n_bad == sum(1 for f in flaws if f.point_id.startswith(lid) and "reading" in f.kind
                            and ("slab" in f.kind or "exclusion" in f.kind))


def test_resistivity_corrosion_rate_and_cover(site: Path, cfg: dict, mk: ModuleType) -> None:
    """Ranges, units and (invented) relations of resistivity, corrosion rate and cover."""
    models = mk.build_models()
    for lid in ("L2", "RF"):
        act = models[lid].activity
        (res,) = _surveys(cfg, "resistivity", lid)
        r = np.array([row[1:] for row in _read_csv_survey(site, res)])
        assert res["unit"] == "kohm.cm" and "temperature_c" in res
        assert 5.0 <= r[:, 2].min() and r[:, 2].max() <= 80.0  # brief's range, kOhm.cm
        # invented: low resistivity where active (negative rank correlation)
        assert np.corrcoef(act(r[:, 0], r[:, 1]), np.log(r[:, 2]))[0, 1] < -0.5
        assert len(np.unique(r[:, 0])) > 15 and set(np.diff(np.unique(r[:, 0]))) == {8.0}
        (cr,) = _surveys(cfg, "corrosion_rate", lid)
        c = np.array([row[1:] for row in _read_csv_survey(site, cr)])
        assert cr["unit"] == "uA/cm2"
        assert 0.05 <= c[:, 2].min() and c[:, 2].max() <= 3.0
        assert np.corrcoef(act(c[:, 0], c[:, 1]), np.log(c[:, 2]))[0, 1] > 0.6  # invented
        (cov,) = _surveys(cfg, "cover", lid)
        assert (cov["coords"], cov["unit"], cov["columns"]["value"]) == ("site", "in", "cover_in")
        feats = json.loads((site / cov["path"]).read_text(encoding="utf-8"))["features"]
        mm = np.array([f["properties"]["cover_in"] for f in feats]) * 25.4
        assert 45.0 < np.median(mm) < 55.0 and 7.0 < np.std(mm) < 14.0  # ~50 mm, sd 8 + patches
        en = np.array([f["geometry"]["coordinates"] for f in feats])
        # back to the local grid with the exact inverse transform: inside the slab, 8 ft grid
        a = math.radians(mk.ROTATION_DEG)
        de, dn = en[:, 0] - mk.ORIGIN_EN_M[0], en[:, 1] - mk.ORIGIN_EN_M[1]
        x = (math.cos(a) * de + math.sin(a) * dn) / 0.3048
        y = (-math.sin(a) * de + math.cos(a) * dn) / 0.3048
        assert np.all((x > 0) & (x < 180) & (y > 0) & (y < 120))
        assert np.allclose((x - 4.0) / 8.0, np.round((x - 4.0) / 8.0), atol=0.01)
        low = models[lid].low_cover_weight(x, y).max(axis=0) > 0.5
        assert low.sum() >= 3 and mm[low].mean() < mm[~low].mean() - 8.0  # invented patches


def test_refuses_to_clear_a_foreign_folder(mk: ModuleType, tmp_path: Path) -> None:
    """A non-empty folder the script did not write is left alone."""
    (tmp_path / "precious.txt").write_text("keep me", encoding="utf-8")
    with pytest.raises(SystemExit, match="not written by"):
        mk.generate(tmp_path)
    assert (tmp_path / "precious.txt").read_text(encoding="utf-8") == "keep me"

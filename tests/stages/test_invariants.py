"""Invariants of the pipeline's stages, checked on the files a real run writes.

Each test reads one run's output folder (``survey.gpkg``, ``rasters/*.tif``,
``run.json``, ``quantities.csv``) with reference libraries (pyogrio, rasterio,
shapely) and checks a property that must hold whatever the code inside the package
looks like: the mapping stage masks its surfaces to the deck, the layout keeps its
repairs on the deck, the zones partition the deck, the class areas add up, and every
bid quantity is the sum of the shapes it is measured on.
"""

from __future__ import annotations

import math
from collections import defaultdict
from itertools import combinations

import geopandas as gpd
import numpy as np
import pytest
import rasterio
import rasterio.features
import shapely
from shapely import affinity
from shapely.geometry import shape

from tests.stages.outputs import M_PER_UNIT, RunOutputs

#: Bid item of each repair depth class (``geo_corrosion/quantities.py``; common practice).
DEPTH_CLASS_ITEMS = {"partial_above_bars": "REP-PD-SURF", "partial_below_bars": "REP-PD-BARS",
                     "full_depth": "REP-FD"}


def _level_of(out: RunOutputs, stem: str) -> str:
    """Level id of a raster named ``<level>_<kind>[_suffix]`` (the longest matching id)."""
    ids = sorted((lid for lid in out.levels if stem.startswith(f"{lid}_")), key=len)
    assert ids, f"{out.name}: raster {stem}.tif names no level of the run"
    return ids[-1]


def _to_crs(out: RunOutputs, lid: str, geoms: list, crs: object) -> list:
    """Geometries of level ``lid`` from the GeoPackage's CRS to ``crs``."""
    src = out.layer(f"{lid}_slab").crs
    if not geoms:
        return []
    return list(gpd.GeoSeries(geoms, crs=src).to_crs(crs))


def _cell_geometry(t: rasterio.Affine) -> tuple[float, float]:
    """Cell area and half cell diagonal of a (possibly rotated) affine transform."""
    w, h = math.hypot(t.a, t.d), math.hypot(t.b, t.e)
    return abs(t.a * t.e - t.b * t.d), 0.5 * math.hypot(w, h)


def _valid(src: rasterio.DatasetReader, band: int) -> np.ndarray:
    """Cells holding a value: not nodata and finite (GDAL's nodata, NaN otherwise)."""
    a = src.read(band)
    ok = np.isfinite(a)
    if src.nodata is not None:
        ok &= a != src.nodata
    return ok


def test_kriged_rasters_are_nodata_off_the_deck(out: RunOutputs) -> None:
    """Guards the surface mask: no raster value outside the slab or inside an exclusion."""
    rdir = out.root / "rasters"
    tifs = sorted(rdir.glob("*.tif"))
    expected = {f"{lid}_{kind}{suffix}.tif" for lid, lv in out.manifest["levels"].items()
                for kind, e in lv["kinds"].items() if e.get("surface")
                for suffix in ("", "_variance")}
    assert expected and expected <= {p.name for p in tifs}, sorted(expected)
    checked: dict[str, int] = defaultdict(int)
    for path in tifs:
        lid = _level_of(out, path.stem)
        with rasterio.open(path) as src:
            t, shp = src.transform, src.shape
            cell_area, hd = _cell_geometry(t)
            slab = _to_crs(out, lid, [out.slab(lid)], src.crs)[0]
            excl = _to_crs(out, lid, out.exclusions(lid), src.crs)
            # definition: geometry_mask is True where the cell centre is outside the shapes
            # (all_touched=False); a centre more than half a cell diagonal off the slab, or
            # that far inside an exclusion, belongs to a cell wholly off the deck
            off_slab = rasterio.features.geometry_mask([slab.buffer(hd)], shp, t)
            deep = [g for g in (e.buffer(-hd) for e in excl) if not g.is_empty]
            in_excl = (~rasterio.features.geometry_mask(deep, shp, t) if deep
                       else np.zeros(shp, bool))
            must_be_nodata = off_slab | in_excl
            # self-check of the rasterisation with a rotated transform: cells centred in the
            # slab cover its area to within a band of half a cell diagonal along its outline
            inside = ~rasterio.features.geometry_mask([slab], shp, t)
            assert abs(inside.sum() * cell_area - slab.area) <= slab.length * hd, path.name
            for b in range(1, src.count + 1):
                bad = _valid(src, b) & must_be_nodata
                assert not bad.any(), (
                    f"{out.name}: {path.name} band {b}: {int(bad.sum())} cell(s) with a value "
                    f"off the deck of level {lid} (off the slab: {int((bad & off_slab).sum())}, "
                    f"in an exclusion: {int((bad & in_excl).sum())})")
            checked[lid] += int(must_be_nodata.sum())
    # not vacuous: every level has cells wholly off its deck that the check looked at
    assert all(checked[lid] > 0 for lid in out.levels), dict(checked)


def test_repairs_lie_on_the_deck(out: RunOutputs) -> None:
    """Guards the repair layout's clip: repairs inside the slab, outside exclusions, no joint."""
    tol = 1e-3 / M_PER_UNIT[out.manifest["site"]["crs_unit"]]  # 1 mm in the CRS unit
    n = 0
    for lid in out.levels:
        reps = out.layer(f"{lid}_repairs")
        if reps.empty:
            continue
        slab = out.slab(lid).buffer(tol)
        excl = [g for g in (e.buffer(-tol) for e in out.exclusions(lid)) if not g.is_empty]
        joints = out.joints(lid)
        for rid, g in zip(reps["repair_id"], reps.geometry, strict=True):
            n += 1
            # shapely: containment in the slab grown by 1 mm
            assert slab.contains(g), (
                f"{out.name}: {rid} leaves the slab by {g.difference(slab).area:.4g} CRS unit2")
            for e in excl:  # shapely: no overlap with an exclusion shrunk by 1 mm
                assert not g.intersects(e), (
                    f"{out.name}: {rid} covers {g.intersection(e).area:.4g} CRS unit2 "
                    "of an exclusion")
            inner = g.buffer(-tol)
            for j in joints:  # repair.layout_repairs: a repair never crosses a joint
                assert not inner.intersects(j), f"{out.name}: {rid} crosses a joint"
    assert n > 0, f"{out.name}: no repair to check"


def test_zones_partition_the_deck(out: RunOutputs) -> None:
    """Guards zoning: the zones of a level cover the slab minus exclusions, without overlap."""
    for lid in out.levels:
        deck = out.deck(lid)
        zones = out.layer(f"{lid}_zones")
        assert len(zones), f"{out.name}: level {lid} has no zones"
        geoms = list(zones.geometry)
        names = list(zones["zone"])
        # shapely: every zone lies in the deck, and their union equals the deck.  Tolerance
        # 1 ppm of the deck (the noise is ~1e-12): at 0.1 % a repair zone reaching 0.19 m2
        # into an opening of the synthetic deck (0.09 % of it) went unseen
        for name, g in zip(names, geoms, strict=True):
            off = g.difference(deck).area
            assert off <= 1e-6 * deck.area, (
                f"{out.name}: level {lid}: zone {name} reaches {off:.4g} CRS unit2 off the deck")
        gap = shapely.union_all(geoms).symmetric_difference(deck).area
        assert gap <= 1e-6 * deck.area, (
            f"{out.name}: level {lid}: zones differ from the deck by {gap / deck.area:.3%}")
        # shapely: pairwise overlaps ~0 (numerical noise, under 1 ppm of the deck)
        for (na, a), (nb, b) in combinations(zip(names, geoms, strict=True), 2):
            ov = a.intersection(b).area
            assert ov <= 1e-6 * deck.area, (
                f"{out.name}: level {lid}: zones {na} and {nb} overlap by {ov:.4g} CRS unit2")
        # the area attributes add up to the deck's plan area too (shapely area over scale^2)
        assert zones["area_m2"].sum() == pytest.approx(out.plan_area_m2(lid, deck), rel=1e-3)


def _drawn_area_in_deck(out: RunOutputs, lid: str, kind: str) -> tuple[float, float]:
    """Plan area (m2) of the cells with a value of ``<lid>_<kind>.tif``, whole and in the deck.

    Returns ``(cells, in_deck)``: the number of drawn cells times the cell area, and the
    area of the union of those cells clipped to the slab minus exclusions.
    """
    with rasterio.open(out.root / "rasters" / f"{lid}_{kind}.tif") as src:
        ok = _valid(src, 1)
        cell_area, _ = _cell_geometry(src.transform)
        # rasterio.features.shapes: polygons of the drawn cells, in the raster's CRS
        polys = [shape(g) for g, v in rasterio.features.shapes(
            ok.astype(np.uint8), mask=ok, transform=src.transform) if v == 1]
        deck = _to_crs(out, lid, [out.deck(lid)], src.crs)[0]
    drawn = shapely.union_all(polys)
    return (out.plan_area_m2(lid, float(ok.sum()) * cell_area),
            out.plan_area_m2(lid, drawn.intersection(deck)))


def _layer_class_areas(out: RunOutputs, lid: str, layer: str) -> dict[str, float]:
    df = out.layer(f"{lid}_{layer}")
    return {str(c): sum(out.plan_area_m2(lid, g) for g in grp.geometry)
            for c, grp in df.groupby("class")} if len(df) else {}


def test_class_areas_add_up_to_the_mapped_area(out: RunOutputs) -> None:
    """Guards class areas: per level and kind they add up to the mapped area of the surface."""
    n = 0
    for lid, lv in out.manifest["levels"].items():
        drawn: dict[str, tuple[float, float]] = {}
        for kind, e in lv["kinds"].items():
            if not e.get("surface"):
                continue
            drawn[kind] = _drawn_area_in_deck(out, lid, kind)
            cells, in_deck = drawn[kind]
            mapped = e["surface"]["mapped_area_m2"]
            # the mapped area is the drawn cells of the raster (count times cell area)
            assert mapped == pytest.approx(cells, rel=1e-9), (lid, kind)
            if not e.get("class_areas"):
                continue
            n += 1
            areas = {c["class"]: c["area_m2"] for c in e["class_areas"]}
            # sum over classes = mapped area, less the parts of edge cells off the deck
            # (class polygons are clipped to the deck; zero when cells do not straddle it)
            assert sum(areas.values()) == pytest.approx(mapped - (cells - in_deck), rel=1e-6), (
                f"{out.name}: {lid} {kind}: classes {areas} add up to "
                f"{sum(areas.values()):.4f} m2, mapped {mapped:.4f} m2")
            # and the class polygons of the GeoPackage are those areas (shapely area)
            assert _layer_class_areas(out, lid, f"classes_{kind}") == pytest.approx(
                areas, rel=1e-6), (lid, kind)
        combined = lv.get("condition", {}).get("combined_classes")
        if combined and "potential" in drawn:
            n += 1
            # the combined classes are drawn on the cells of the potential surface
            cells, in_deck = drawn["potential"]
            mapped = lv["kinds"]["potential"]["surface"]["mapped_area_m2"]
            areas = {c["class"]: c["area_m2"] for c in combined}
            assert sum(areas.values()) == pytest.approx(mapped - (cells - in_deck), rel=1e-6), (
                f"{out.name}: {lid} combined classes {areas} vs mapped {mapped:.4f} m2")
            assert _layer_class_areas(out, lid, "combined_classes") == pytest.approx(
                areas, rel=1e-6), lid
    assert n > 0, f"{out.name}: no class areas to check"


def _expected_base_quantities(out: RunOutputs, lid: str) -> dict[str, float]:
    """Recompute the base quantities of a level from its repairs and zones (report units)."""
    k = out.plan_m_per_crs_unit(lid)  # plan m per CRS unit (unit factor over fitted scale)
    f = out.report_per_m  # exact unit factor: 1 ft = 0.3048 m (NIST SP 811)
    exp: dict[str, float] = defaultdict(float)
    reps = out.layer(f"{lid}_repairs")
    if len(reps):
        # the repair's bid item (overhead repairs: REP-OVH), else that of its depth class
        key = "bid_item" if "bid_item" in reps else "depth_class"
        for cls, g in reps.groupby(key):
            item = str(cls) if key == "bid_item" else DEPTH_CLASS_ITEMS[str(cls)]
            areas = g.geometry.area.to_numpy()
            # quantities.py: measured on the union of the item's polygons (shapely area)
            union = shapely.union_all(g.geometry.to_numpy()).area
            exp[item] += union * k**2 * f**2
            # volume = area x removal depth (definition), on the same union
            vol = float((areas * k**2 * g["depth_mm"].to_numpy(float) / 1000.0).sum())
            exp["REP-VOL"] += vol * (union / areas.sum()) * f**3
        # saw cut: the outline less the parts on the slab edge, an exclusion's boundary or a
        # joint (repair.layout_repairs docstring), measured with shapely
        # (moved next to the origin and buffered line by line by 1 um: GEOS buffers of tiny
        # width at UTM-size coordinates lose the lines)
        tol = 1e-6 / M_PER_UNIT[out.manifest["site"]["crs_unit"]]
        x0, y0 = out.slab(lid).bounds[:2]
        lines = [out.slab(lid).boundary, *[e.boundary for e in out.exclusions(lid)],
                 *out.joints(lid)]
        nocut = shapely.union_all([affinity.translate(ln, -x0, -y0).buffer(tol) for ln in lines])
        cut_m = [affinity.translate(g.boundary, -x0, -y0).difference(nocut).length * k
                 for g in reps.geometry]
        exp["SAWCUT"] = sum(cut_m) * f
        spacing = out.manifest["parameters"].get("anode_spacing_mm")
        if spacing:  # common practice: ceil(perimeter / spacing) anodes per repair
            exp["ANODE"] = float(sum(math.ceil(c * 1000.0 / spacing - 1e-9) for c in cut_m))
        # joint seal or header: the outline on a joint (repair.tender.joint_edge_length)
        on_joint = shapely.union_all([affinity.translate(ln, -x0, -y0).buffer(tol)
                                      for ln in out.joints(lid)]) if out.joints(lid) else None
        if on_joint is not None:
            jl = sum(affinity.translate(g.boundary, -x0, -y0).intersection(on_joint).length * k
                     for g in reps.geometry)
            if jl > 0:
                exp["JOINT-RPR"] = jl * f
        # bar allowance: share x area of the repairs exposing the bars x 2 / spacing
        # (repair.tender.bar_replacement_length, common practice)
        prm = out.manifest["parameters"]
        exposed = reps[reps["depth_class"].isin(["partial_below_bars", "full_depth"])]
        bars = (float(exposed.geometry.area.sum()) * k**2 * prm["bar_replacement_share"] * 2.0
                / (prm["bar_spacing_mm"] / 1000.0))
        if bars > 0:
            exp["BAR-REPL"] = bars * f
    pay = out.layer(f"{lid}_pay_areas")
    zones = pay if len(pay) else out.layer(f"{lid}_zones")
    if len(pay) or out.manifest["parameters"].get("pay_area", "zone") == "zone":
        priced = zones[zones["bid_item"].notna() & (zones["bid_item"].astype(str) != "")]
        for item, g in priced.groupby("bid_item"):
            # zone treatments by area: shapely area of the union of the item's zones
            exp[str(item)] += shapely.union_all(g.geometry.to_numpy()).area * k**2 * f**2
    return dict(exp)


#: Bid increment of each unit (common practice, no source: whole ft2, LF and EA, 0.1 CY,
#: 0.1 m2 and 0.1 m, 0.01 m3; docs/file-formats.md).
BID_INCREMENT = {"ft2": 1.0, "LF": 1.0, "EA": 1.0, "LS": 1.0, "CY": 0.1, "m2": 0.1, "m": 0.1,
                 "m3": 0.01}


def test_bid_quantities_are_sums_over_repairs_and_zones(out: RunOutputs) -> None:
    """Guards quantities: each base quantity is the sum over its repairs, zones or pay areas.

    The unrounded quantity (run.json) is the sum; quantities.csv holds it rounded up to
    its unit's bid increment.
    """
    q = out.quantities
    assert len(q), f"{out.name}: empty quantities.csv"
    contingency = float(out.manifest["parameters"]["contingency"])
    exact = {(r["level_id"], r["item"], r["line"]): r["quantity_unrounded"]
             for r in out.manifest["schedule"]}
    for r in q.itertuples():  # rounded up to the increment; float noise is no increment
        inc = BID_INCREMENT[r.unit]
        x = exact[(r.level_id, r.item, r.line)]
        if r.level_id != "ALL":
            assert r.quantity == pytest.approx(math.ceil(x / inc - 1e-6) * inc), r
    for lid in out.levels:
        exp = _expected_base_quantities(out, lid)
        rows = q[q["level_id"] == lid]
        base = rows[rows["line"] == "base"].set_index("item")["quantity"]
        units = rows[rows["line"] == "base"].set_index("item")["unit"]
        assert sorted(base.index) == sorted(exp), (out.name, lid)
        for item, want in exp.items():
            if units[item] == "CY":
                want /= 27.0  # 1 yd3 = 27 ft3 [NIST-SP811-2008 App. B]
            got = exact[(lid, item, "base")]
            # the joint length is recomputed through a buffer of the joint lines (a tolerance
            # band), so it agrees to about 1e-6 of the plan unit per vertex, not exactly
            r = 2e-6 if item == "JOINT-RPR" else 1e-6
            assert got == pytest.approx(want, abs=1e-6, rel=r), (
                f"{out.name}: {lid} {item}: {got} in run.json, {want:.4f} from the "
                "repairs and zones")
        for item in base.index:  # contingency line = fraction x base (common practice)
            want = exact[(lid, item, "base")] * contingency
            if item == "ANODE":
                want = math.ceil(want - 1e-9)
            assert exact[(lid, item, "contingency")] == pytest.approx(want, abs=1e-6), (
                lid, item)
    # level ALL holds the sums of the levels' rounded lines (a schedule adds up as printed)
    per_level = q[q["level_id"] != "ALL"].groupby(["item", "line"])["quantity"].sum()
    total = q[q["level_id"] == "ALL"].set_index(["item", "line"])["quantity"]
    assert sorted(per_level.index) == sorted(total.index)
    for key, v in per_level.items():
        assert total[key] == pytest.approx(v, abs=1e-9), key

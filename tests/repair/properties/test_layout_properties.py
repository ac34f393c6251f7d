"""Properties of the repair layout that always hold (issue 5 "Shown by"; [UFGS-03931])."""

from __future__ import annotations

import warnings

import geopandas as gpd
import pandas as pd
import shapely
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from shapely import affinity
from shapely.geometry import LineString, Point, Polygon, box

from geo_corrosion.errors import GeometryWarning
from geo_corrosion.quantities import ALL_LEVELS, bid_schedule
from geo_corrosion.repair import LayoutParams, layout_repairs
from geo_corrosion.units import LENGTH_TO_M, report_units
from repair.helpers import interior_angles_deg, sources


def _r(v: float) -> float:
    """Round to 0.1 mm as survey coordinates are."""
    return round(v, 4)


def fl(lo: float, hi: float) -> st.SearchStrategy[float]:
    """Finite floats in [lo, hi], rounded to 0.1 mm."""
    return st.floats(lo, hi, allow_nan=False, allow_subnormal=False).map(_r)


SETTINGS = settings(max_examples=50, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow])
W, H = 20.0, 12.0
SLAB = box(0, 0, W, H)

coord = fl(-1.0, 21.0)
size = fl(0.01, 3.0)


@st.composite
def delamination(draw: st.DrawFn) -> Polygon:
    x, y = draw(coord), draw(fl(-1.0, 13.0))
    kind = draw(st.sampled_from(["box", "circle", "triangle", "rotated"]))
    w, h = draw(size), draw(size)
    if kind == "box":
        return box(x, y, x + w, y + h)
    if kind == "circle":
        return Point(x, y).buffer(w / 2)
    if kind == "triangle":
        return Polygon([(x, y), (x + w, y), (x + w / 3, y + h)])
    return affinity.rotate(box(x, y, x + w, y + h), draw(fl(0, 90)), origin="centroid")


@st.composite
def case(draw: st.DrawFn):
    delams = draw(st.lists(delamination(), min_size=1, max_size=7))
    excl = [box(x, y, x + 0.6, y + 0.6) for x, y in
            draw(st.lists(st.tuples(fl(0, W - 0.6), fl(0, H - 0.6)), max_size=2))]
    joints = [LineString([(x, -1), (x, H + 1)]) for x in
              draw(st.lists(fl(1, W - 1), max_size=2))]
    params = LayoutParams(margin_mm=draw(fl(0, 300)), merge_gap_mm=draw(fl(0, 600)),
                          merge_max_extra=draw(fl(0, 1)),
                          min_size_mm=draw(fl(0, 500)),
                          min_reentrant_mm=draw(fl(0, 500)),
                          extend_to_edge=draw(st.booleans()))
    return delams, excl, joints, params


def quiet_layout(src, **kw):
    """Call layout_repairs, allowing its one expected warning on random cases.

    A sounded piece squeezed below the minimum size by a joint, an exclusion or the slab
    edge is kept and reported; test_layout.py checks that warning itself.
    """
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message=r".*below the minimum repair size",
                                category=GeometryWarning)
        return layout_repairs(src, **kw)


def layout(delams, excl, joints, params, unit="m"):
    inside = [d for d in delams if d.intersects(SLAB)]
    src = sources(inside)
    return inside, quiet_layout(src, slab=SLAB, exclusions=excl, joints=joints, unit=unit,
                                params=params, level_id="L1")


@SETTINGS
@given(case())
def test_outlines_have_only_right_angles(c) -> None:
    # rectangles, common practice; "no perimeter angles < 90 degrees" [UFGS-03931 Perimeter Saw Cut]
    _, rep = layout(*c)
    for g in rep.geometry:
        ang = interior_angles_deg(g)
        assert ((abs(ang - 90) < 1e-6) | (abs(ang - 270) < 1e-6)).all(), (g.wkt, ang)


@SETTINGS
@given(case())
def test_every_delamination_inside_a_repair(c) -> None:
    # issue 5: every delamination lies inside a repair, unless clipped by slab edge or exclusion
    delams, rep = layout(*c)
    excl = c[1]
    covered = shapely.union_all([*rep.geometry, *excl, box(-5, -5, W + 5, H + 5).difference(SLAB)])
    for d in delams:
        assert d.difference(covered).area <= 1e-9 * max(d.area, 1.0), d.wkt


@SETTINGS
@given(case())
def test_repairs_disjoint_inside_slab_and_clear_of_exclusions(c) -> None:
    # common practice, no source: no area counted twice, nothing outside the slab or in a column
    _, rep = layout(*c)
    geoms = list(rep.geometry)
    for i, a in enumerate(geoms):
        assert a.difference(SLAB).area < 1e-9
        for e in c[1]:
            assert a.intersection(e).area < 1e-9
        for b in geoms[i + 1:]:
            assert a.intersection(b).area < 1e-9
    assert (rep.perimeter_m <= rep.outline_m + 1e-9).all()
    assert list(rep.repair_id) == [f"L1-R{n:03d}" for n in range(1, len(rep) + 1)]


@SETTINGS
@given(case(), st.sampled_from(["m", "ft"]), st.sampled_from(["metric", "us"]))
def test_quantities_never_below_polygon_area(c, unit, system) -> None:
    # STYLE.md §8 example property: repair quantities never below the area of their polygons
    _, rep = layout(*c, unit=unit)
    if rep.empty:
        return
    u = report_units(system)
    s = bid_schedule(rep, None, units=u, contingency=0.15)
    area_items = s[(s.unit_kind == "area") & (s.level_id == ALL_LEVELS)]
    base = area_items.loc[area_items.line == "base", "quantity_unrounded"].sum()
    poly_area = float(u.area_from_m2(shapely.union_all(list(rep.geometry)).area
                                     * LENGTH_TO_M[unit] ** 2))
    assert base >= poly_area * (1 - 1e-9)
    assert base <= poly_area * (1 + 1e-9) + 1e-12  # and not counted twice
    cont = area_items.loc[area_items.line == "contingency", "quantity_unrounded"].sum()
    assert cont >= 0.15 * poly_area * (1 - 1e-9)
    # the bid quantity is rounded up, by less than one increment per line (common practice:
    # whole ft2 or 0.1 m2)
    inc = 1.0 if system == "us" else 0.1
    for line, exact in (("base", base), ("contingency", cont)):
        rows = area_items[area_items.line == line]
        bid = rows["quantity"].sum()
        assert exact * (1 - 1e-9) - 1e-9 <= bid < exact + inc * len(rows) + 1e-9, line


@SETTINGS
@given(st.lists(case(), min_size=1, max_size=3), st.sampled_from(["metric", "us"]),
       st.one_of(st.none(), fl(300, 900)))
def test_totals_equal_sum_of_levels(cases, system, spacing) -> None:
    # issue 5 "Shown by": totals equal the sum of the parts
    frames = []
    for k, c in enumerate(cases):
        inside = [d for d in c[0] if d.intersects(SLAB)]
        frames.append(quiet_layout(sources(inside), slab=SLAB, exclusions=c[1], joints=c[2],
                                   unit="m", params=c[3], level_id=f"L{k}"))
    rep = gpd.GeoDataFrame(pd.concat(frames, ignore_index=True), geometry="geometry")
    s = bid_schedule(rep, None, units=report_units(system), anode_spacing_mm=spacing)
    parts = s[s.level_id != ALL_LEVELS].groupby(["item", "line"]).quantity.sum()
    total = s[s.level_id == ALL_LEVELS].set_index(["item", "line"]).quantity
    pd.testing.assert_series_equal(parts.sort_index(), total.sort_index(), check_names=False,
                                   rtol=1e-12)


@SETTINGS
@given(case(), st.sampled_from([76.2, 50.0, 152.4]))
def test_rounding_covers_what_it_covered_and_crosses_no_joint(c, inc) -> None:
    # issue 13 item 2 (common practice, no source): rounding up never gives up an area the
    # unrounded layout covered, never crosses a joint, never enters an exclusion or leaves
    # the slab, and leaves no two repairs overlapping
    delams, excl, joints, params = c
    _, before = layout(delams, excl, joints, params, unit="ft")
    rounded = LayoutParams(**{**params.__dict__, "round_increment_mm": inc})
    _, after = layout(delams, excl, joints, rounded, unit="ft")
    assert len(after) == len(before)
    covered = shapely.union_all(list(after.geometry)) if len(after) else Polygon()
    for g in before.geometry:
        assert g.difference(covered).area <= 1e-9 * max(g.area, 1.0), g.wkt
    geoms = list(after.geometry)
    for i, a in enumerate(geoms):
        assert a.difference(SLAB).area < 1e-9
        for e in excl:
            assert a.intersection(e).area < 1e-9
        for j in joints:
            # a joint may bound a repair but never run through its inside
            assert j.intersection(a.buffer(-1e-6)).length < 1e-9, (a.wkt, j.wkt)
        for b in geoms[i + 1:]:
            assert a.intersection(b).area < 1e-9
    inc_ft = inc / 304.8
    for sx, sy, note in zip(after.size_x_m, after.size_y_m, after.rounding_note, strict=True):
        if not note:  # every side rounded: a multiple of the increment
            for v in (sx / 0.3048, sy / 0.3048):
                assert abs(v / inc_ft - round(v / inc_ft)) < 1e-6

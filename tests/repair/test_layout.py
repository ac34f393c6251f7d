"""Repair layout against hand-worked cases (common practice, built on [ICRI-310.1R-2008])."""

from __future__ import annotations

import pytest
from shapely import affinity
from shapely.geometry import LinearRing, LineString, Point, Polygon, box

from geo_corrosion.errors import GeometryWarning, RepairError
from geo_corrosion.repair import (
    REPAIR_COLUMNS,
    LayoutParams,
    clean_outlines,
    layout_repairs,
    n_reentrant_corners,
)
from geo_corrosion.units import M_PER_FT
from repair.helpers import interior_angles_deg, sources

FT2 = M_PER_FT**2
SLAB_M = box(0, 0, 20, 20)


def run(geoms, *, slab=SLAB_M, unit="m", exclusions=(), joints=(), **params):
    return layout_repairs(sources(geoms), slab=slab, exclusions=exclusions, joints=joints,
                          unit=unit, params=LayoutParams(**params), level_id="P1")


def test_rep01_circle_grown_to_saw_cut_square() -> None:
    # r = 12 in, offset 6 in [ICRI-310.1R-2008, from memory] -> 36 x 36 in = 9.00 ft2, 12 ft
    # (M for the 6 in, D)
    r = run([Point(0, 0).buffer(1.0)], slab=box(-20, -20, 20, 20), unit="ft", margin_mm=152.4)
    assert len(r) == 1
    assert r.area_m2.iloc[0] / FT2 == pytest.approx(9.0, abs=1e-6)
    assert r.area_m2.iloc[0] == pytest.approx(0.8361, abs=1e-4)
    assert r.perimeter_m.iloc[0] / M_PER_FT == pytest.approx(12.0, abs=1e-6)
    assert r.geometry.iloc[0].bounds == pytest.approx((-1.5, -1.5, 1.5, 1.5), abs=1e-9)
    assert list(r.columns) == list(REPAIR_COLUMNS)


def test_rep02_rectangle_grown_by_six_inches() -> None:
    # 24 x 12 in, offset 6 in [ICRI-310.1R-2008, from memory] -> 36 x 24 in = 6.00 ft2, 10 ft
    r = run([box(5, 5, 7, 6)], unit="ft", margin_mm=152.4)
    assert r.area_m2.iloc[0] / FT2 == pytest.approx(6.0, abs=1e-6)
    assert r.area_m2.iloc[0] == pytest.approx(0.5574, abs=1e-4)
    assert r.perimeter_m.iloc[0] / M_PER_FT == pytest.approx(10.0, abs=1e-6)
    assert r.n_reentrant_corners.iloc[0] == 0


def test_two_nearby_repairs_merged_into_bounding_rectangle() -> None:
    # hand-worked: 1 x 1 m delaminations 0.4 m apart, margin 0.15 m -> rectangles 0.1 m apart
    # (< 0.3 m gap); bounding rectangle 2.7 x 1.3 m = 3.51 m2 adds 3.8 % < 25 %
    # (common practice)
    r = run([box(5, 5, 6, 6), box(6.4, 5, 7.4, 6)])
    assert len(r) == 1
    assert r.area_m2.iloc[0] == pytest.approx(3.51, abs=1e-9)
    assert r.source_ids.iloc[0] == "d0,d1"
    assert r.perimeter_m.iloc[0] == pytest.approx(2 * (2.7 + 1.3), abs=1e-9)


def test_overlapping_repairs_not_counted_twice() -> None:
    # hand-worked: grown rectangles 1.3 x 1.3 m overlap by 0.1 m; merged 2.5 x 1.3 = 3.25 m2,
    # not 2 x 1.69 = 3.38 m2 (common practice, no source)
    r = run([box(5, 5, 6, 6), box(6.2, 5, 7.2, 6)])
    assert len(r) == 1
    assert r.area_m2.sum() == pytest.approx(3.25, abs=1e-9)


def test_far_apart_repairs_stay_separate_and_are_numbered_top_down() -> None:
    # common practice, no source: ids by centroid, top row first, then left to right
    r = run([box(2, 2, 3, 3), box(10, 15, 11, 16), box(2, 15, 3, 16)])
    assert list(r.repair_id) == ["P1-R001", "P1-R002", "P1-R003"]
    assert list(r.source_ids) == ["d2", "d1", "d0"]
    assert r.area_m2.tolist() == pytest.approx([1.69] * 3, abs=1e-9)


def test_merge_kept_as_l_shape_when_bounding_rectangle_costs_too_much() -> None:
    # hand-worked: rectangles 4.3 x 1.3 and 1.3 x 3.8 m, 0.2 m apart; bounding rectangle
    # 4.3 x 5.3 = 22.79 m2 is +116 % -> L shape; the 0.2 m strip (< 0.3 m re-entrant minimum)
    # is filled across the whole width: 4.3 x 1.5 + 1.3 x 3.8 = 11.39 m2 (common practice)
    r = run([box(5, 5, 9, 6), box(5, 6.5, 6, 10)])
    assert len(r) == 1
    g = r.geometry.iloc[0]
    assert r.area_m2.iloc[0] == pytest.approx(11.39, abs=1e-9)
    assert r.n_reentrant_corners.iloc[0] == 1
    assert sorted(interior_angles_deg(g).round(6)) == [90.0] * 5 + [270.0]
    assert g.covers(box(5, 5, 9, 6)) and g.covers(box(5, 6.5, 6, 10))


def test_repair_next_to_exclusion_stops_at_it() -> None:
    # hand-worked: 1.3 x 1.3 m repair cut by a column face at x = 6.05 -> 1.2 x 1.3 = 1.56 m2;
    # no saw cut along the column face: 5.0 - 1.3 = 3.7 m (common practice)
    column = box(6.05, 4, 7, 7)
    r = run([box(5, 5, 6, 6)], exclusions=[column])
    assert r.area_m2.iloc[0] == pytest.approx(1.56, abs=1e-9)
    assert r.geometry.iloc[0].intersection(column).area == pytest.approx(0.0, abs=1e-12)
    assert r.perimeter_m.iloc[0] == pytest.approx(3.7, abs=1e-6)
    assert r.outline_m.iloc[0] == pytest.approx(5.0, abs=1e-9)


def test_repair_across_joint_is_split() -> None:
    # hand-worked: 2 x 1 m delamination across a joint at x = 6 -> two 1.15 x 1.3 m pieces,
    # each 1.495 m2 with a 3.6 m saw cut (no cut along the joint) (common practice)
    r = run([box(5, 5, 7, 6)], joints=[LineString([(6, 0), (6, 20)])])
    assert len(r) == 2
    assert r.area_m2.tolist() == pytest.approx([1.495, 1.495], abs=1e-9)
    assert r.perimeter_m.tolist() == pytest.approx([3.6, 3.6], abs=1e-6)
    assert all(not g.crosses(LineString([(6, 0), (6, 20)])) for g in r.geometry)
    assert list(r.source_ids) == ["d0", "d0"]


def test_repair_extends_to_free_edge_within_margin() -> None:
    # hand-worked: rectangle side 0.05 m from the slab edge (< 0.15 m margin) goes to the edge:
    # 1.15 x 1.3 = 1.495 m2 instead of 1.1 x 1.3 = 1.43 m2; no cut on the edge
    # (common practice)
    r = run([box(0.2, 5, 1, 6)])
    assert r.area_m2.iloc[0] == pytest.approx(1.495, abs=1e-9)
    assert r.perimeter_m.iloc[0] == pytest.approx(2 * 1.15 + 1.3, abs=1e-6)
    r2 = run([box(0.2, 5, 1, 6)], extend_to_edge=False)
    assert r2.area_m2.iloc[0] == pytest.approx(1.43, abs=1e-9)


def test_minimum_size_enforced() -> None:
    # common practice: 10 mm spot + 50 mm margin = 110 mm -> 300 x 300 mm minimum
    r = run([box(5, 5, 5.01, 5.01)], margin_mm=50.0)
    assert r.area_m2.iloc[0] == pytest.approx(0.09, abs=1e-9)


def test_rotated_axes() -> None:
    # hand-worked: 2 x 1 m delamination at 30 degrees laid out on 30-degree axes:
    # 2.3 x 1.3 = 2.99 m2, square corners (common practice, user-selected angle)
    d = affinity.rotate(box(8, 8, 10, 9), 30, origin=(9, 8.5))
    r = run([d], axis_angle_deg=30.0)
    assert r.area_m2.iloc[0] == pytest.approx(2.99, abs=1e-9)
    assert interior_angles_deg(r.geometry.iloc[0]) == pytest.approx([90.0] * 4, abs=1e-6)


def test_depth_class_from_source_columns() -> None:
    # common practice: plane above the bars -> partial above; the deepest source
    # governs a merged repair
    src = sources([box(5, 5, 6, 6), box(6.2, 5, 7.2, 6)], cover_mm=[50.0, 50.0],
                  delam_depth_mm=[25.0, None])
    r = layout_repairs(src, slab=SLAB_M, unit="m", params=LayoutParams(), level_id="P1")
    assert r.depth_class.iloc[0] == "partial_below_bars"
    assert r.volume_m3.iloc[0] == pytest.approx(r.area_m2.iloc[0] * r.depth_mm.iloc[0] / 1000)
    one = layout_repairs(src.iloc[:1], slab=SLAB_M, unit="m", params=LayoutParams(),
                         level_id="P1")
    assert (one.depth_class.iloc[0], one.depth_mm.iloc[0]) == ("partial_above_bars", 25.0)


def test_source_outside_slab_warns_and_is_ignored() -> None:
    with pytest.warns(GeometryWarning, match="outside the slab"):
        r = run([box(5, 5, 6, 6), box(30, 30, 31, 31)])
    assert len(r) == 1


def test_empty_sources_give_empty_frame() -> None:
    r = run([])
    assert len(r) == 0 and list(r.columns) == list(REPAIR_COLUMNS)


@pytest.mark.parametrize(("name", "value"), [("margin_mm", -1.0), ("margin_mm", 5000.0),
                                             ("merge_gap_mm", 20000.0), ("min_size_mm", -5.0),
                                             ("merge_max_extra", -0.1)])
def test_absurd_parameters_rejected(name: str, value: float) -> None:
    # issue 5 "Bad input": a margin or gap that is negative or absurd gives a clear message
    with pytest.raises(RepairError, match=name):
        LayoutParams(**{name: value})


def test_bad_unit_and_frame_rejected() -> None:
    with pytest.raises(RepairError, match="plan unit"):
        run([box(5, 5, 6, 6)], unit="mm")
    with pytest.raises(RepairError, match="source_id"):
        layout_repairs(sources([box(0, 0, 1, 1)]).drop(columns="source_id"), slab=SLAB_M,
                       unit="m", params=LayoutParams(), level_id="P1")
    with pytest.raises(RepairError, match="kind"):
        layout_repairs(sources([box(0, 0, 1, 1)], kind="crack"), slab=SLAB_M, unit="m",
                       params=LayoutParams(), level_id="P1")


def test_clean_outlines_repairs_bowtie_with_warning() -> None:
    bowtie = Polygon([(0, 0), (2, 2), (2, 0), (0, 2)])
    with pytest.warns(GeometryWarning, match="'b1'.*invalid"):
        polys, ids = clean_outlines([bowtie], ["b1"], source="delam.geojson")
    assert len(polys) == 2 and ids == ["b1", "b1"]
    assert sum(p.area for p in polys) == pytest.approx(2.0)  # two triangles of 1 m2 each


def test_clean_outlines_closed_ring_taken_as_polygon() -> None:
    with pytest.warns(GeometryWarning, match="closed line"):
        polys, _ = clean_outlines([LinearRing([(0, 0), (1, 0), (1, 1)])], ["r"], source="x.dxf")
    assert polys[0].area == pytest.approx(0.5)


@pytest.mark.parametrize(("geom", "msg"), [
    (LineString([(0, 0), (1, 0), (1, 1)]), "open line"),
    (Polygon([(0, 0), (1, 0), (2, 0)]), "cannot be repaired|zero area"),
    (Point(0, 0), "not a polygon"),
    (None, "no shape"),
])
def test_clean_outlines_reports_unrepairable(geom, msg: str) -> None:
    with pytest.raises(RepairError, match=msg):
        clean_outlines([geom], ["bad-1"], source="delam.geojson")


def test_reentrant_corner_count() -> None:
    l_shape = Polygon([(0, 0), (2, 0), (2, 1), (1, 1), (1, 2), (0, 2)])
    assert n_reentrant_corners(l_shape) == 1
    assert n_reentrant_corners(box(0, 0, 4, 4).difference(box(1, 1, 2, 2))) == 4


def test_cheap_pair_merged_first_then_l_shape() -> None:
    # hand-worked: A, B 1 x 1 m side by side (rectangles 0.1 m apart) merge into 2.7 x 1.3 m
    # (+3.8 %); the long strip C (rectangle 0.8 x 3.9 m, 0.1 m above) would cost +120 % as one
    # rectangle, so an L: 2.7 x 1.4 (0.1 m strip filled) + 0.8 x 3.9 = 6.90 m2 (common practice)
    r = run([box(5, 5, 6, 6), box(6.4, 5, 7.4, 6), box(5, 6.4, 5.5, 10)])
    assert len(r) == 1
    assert r.area_m2.iloc[0] == pytest.approx(6.90, abs=1e-9)
    assert r.n_reentrant_corners.iloc[0] == 1
    assert r.source_ids.iloc[0] == "d0,d1,d2"


def test_sound_islands_inside_a_repair_filled_when_small_or_narrow() -> None:
    # common practice, no source: a narrow (0.2 m < 0.3 m) or small (9 m2 <= 25 % of 100 m2)
    # island is removed with the repair; a large one (49 m2) stays
    from geo_corrosion.repair.layout import _fill_holes

    outer = box(0, 0, 10, 10)
    assert _fill_holes(outer.difference(box(4, 4, 4.2, 6)), 0.25, 0.3).area == 100.0
    assert _fill_holes(outer.difference(box(2, 2, 5, 5)), 0.25, 0.3).area == 100.0
    assert _fill_holes(outer.difference(box(1, 1, 8, 8)), 0.25, 0.3).area == 51.0


# Minimum size after clipping.  Sources: [ICRI-310.1R-2008, from memory] for the margin;
# minimum size: common practice, no source.  In feet: 6 in margin = 152.4 mm, 12 in minimum
# = 304.8 mm (the template's values); in metres: the defaults, 150 mm and 300 mm.

def test_sliver_across_joint_widened_away_from_it_other_side_unchanged() -> None:
    # hand-worked, feet, joint at x = 5 ft 10 in (5.8333 ft):
    # (i) 1 x 1 ft delamination at x 5..6 ft with the joint at x = 6 ft 4 in: the 6 in margin
    #     crosses the joint by 2 in, but the far panel holds no sounded area, so no piece is
    #     laid out there; the repair stops at the joint: (6.3333 - 4.5) x 2 = 1.8333 x 2 ft
    #     = 3.6667 ft2, saw cut 1.8333 + 2 + 1.8333 = 5.6667 LF (none on the joint).
    joint = 6 + 4 / 12
    r = run([box(5, 5, 6, 6)], slab=box(0, 0, 40, 40), unit="ft", margin_mm=152.4,
            min_size_mm=304.8, joints=[LineString([(joint, 0), (joint, 40)])])
    assert len(r) == 1
    assert r.area_m2.iloc[0] / FT2 == pytest.approx(11 / 6 * 2, abs=1e-6)
    assert r.perimeter_m.iloc[0] / M_PER_FT == pytest.approx(2 * 11 / 6 + 2, abs=1e-6)
    # (ii) joint at x = 5 ft 10 in: the delamination itself crosses it by 2 in.  Near side:
    #     4.5 .. 5.8333 = 1 ft 4 in x 2 ft = 2.6667 ft2, cut 1.3333 + 2 + 1.3333 = 4.6667 LF.
    #     Far side: 2 in of delamination + 6 in margin = 8 in (203 mm < 12 in), 2 in x 1 ft of
    #     it sounded; was kept 8 in wide (1.3333 ft2).  Now widened away from the joint to
    #     12 in: x 5.8333 .. 6.8333, 1 x 2 ft = 2.0 ft2, cut 1 + 2 + 1 = 4.0 LF.
    joint = 6 - 2 / 12
    jl = LineString([(joint, 0), (joint, 40)])
    r = run([box(5, 5, 6, 6)], slab=box(0, 0, 40, 40), unit="ft", margin_mm=152.4,
            min_size_mm=304.8, joints=[jl])
    assert list(r.repair_id) == ["P1-R001", "P1-R002"]
    near, far = r.geometry.iloc[0], r.geometry.iloc[1]
    assert near.bounds == pytest.approx((4.5, 4.5, joint, 6.5), abs=1e-9)  # unchanged
    assert r.area_m2.iloc[0] / FT2 == pytest.approx(4 / 3 * 2, abs=1e-6)
    assert r.perimeter_m.iloc[0] / M_PER_FT == pytest.approx(2 * 4 / 3 + 2, abs=1e-6)
    assert far.bounds == pytest.approx((joint, 4.5, joint + 1, 6.5), abs=1e-9)
    assert r.area_m2.iloc[1] / FT2 == pytest.approx(2.0, abs=1e-6)
    assert r.perimeter_m.iloc[1] / M_PER_FT == pytest.approx(4.0, abs=1e-6)
    assert far.intersection(box(0, 0, joint, 40)).area == pytest.approx(0.0, abs=1e-9)  # its side


def test_margin_only_sliver_beyond_exclusion_dropped_other_side_unchanged() -> None:
    # hand-worked, metres: 1 x 1 m delamination at x 5..6, grown by 150 mm to x 4.85..6.15;
    # a 100 mm trench drain (exclusion) at x 6.03..6.13 cuts off x 6.13..6.15: a 20 mm x 1.3 m
    # strip (0.026 m2) of margin only, which was priced as a repair; now dropped.  The main
    # piece is unchanged: 1.18 x 1.3 = 1.534 m2, cut 1.18 + 1.3 + 1.18 = 3.66 m (none on the
    # drain edge).
    drain = box(6.03, 0, 6.13, 20)
    r = run([box(5, 5, 6, 6)], exclusions=[drain])
    assert list(r.repair_id) == ["P1-R001"]
    assert r.geometry.iloc[0].bounds == pytest.approx((4.85, 4.85, 6.03, 6.15), abs=1e-9)
    assert r.area_m2.sum() == pytest.approx(1.534, abs=1e-9)
    assert r.perimeter_m.iloc[0] == pytest.approx(3.66, abs=1e-6)


def test_sounded_sliver_past_column_widened_to_minimum() -> None:
    # hand-worked, metres: 1.9 x 1 m delamination at x 5..6.9 sounded past a column at
    # x 6.0..6.8 (the column is an exclusion): the repair x 4.85..7.05 is cut in two.  West
    # piece 1.15 x 1.3 = 1.495 m2 (unchanged); east piece x 6.8..7.05 = 250 mm < 300 mm, holding
    # 0.1 x 1 m of delamination: widened away from the column face to x 6.8..7.1,
    # 0.3 x 1.3 = 0.39 m2 (was 0.325 m2), cut 0.3 + 1.3 + 0.3 = 1.9 m (none on the column face)
    column = box(6.0, 4, 6.8, 7)
    r = run([box(5, 5, 6.9, 6)], exclusions=[column])
    assert list(r.repair_id) == ["P1-R001", "P1-R002"]
    assert r.area_m2.tolist() == pytest.approx([1.495, 0.39], abs=1e-9)
    assert r.geometry.iloc[1].bounds == pytest.approx((6.8, 4.85, 7.1, 6.15), abs=1e-9)
    assert r.perimeter_m.iloc[1] == pytest.approx(1.9, abs=1e-6)
    assert all(g.intersection(column).area == pytest.approx(0.0, abs=1e-12) for g in r.geometry)


def test_sounded_sliver_between_column_and_slab_edge_kept_with_warning() -> None:
    # hand-worked, metres: 1.9 x 1 m delamination at x 18..19.9 past a column at x 19.0..19.8,
    # 0.2 m from the slab edge at x = 20: the east piece x 19.8..20.0 is 200 mm < 300 mm and
    # holds 0.1 x 1 m of delamination; it cannot widen (column on one side, slab edge on the
    # other), so it is kept, 0.2 x 1.3 = 0.26 m2, cut only at its two ends 2 x 0.2 = 0.4 m,
    # and reported by id
    column = box(19.0, 4, 19.8, 7)
    with pytest.warns(GeometryWarning, match=r"repair P1-R002 is only 200 mm .*minimum repair"):
        r = run([box(18, 5, 19.9, 6)], exclusions=[column])
    assert list(r.repair_id) == ["P1-R001", "P1-R002"]
    assert r.area_m2.tolist() == pytest.approx([1.495, 0.26], abs=1e-9)
    assert r.perimeter_m.iloc[1] == pytest.approx(0.4, abs=1e-6)
    assert r.geometry.iloc[1].covers(box(19.8, 5, 19.9, 6))

"""What a tender needs of each repair, and pay areas (issue 13 item 3).

Every expected value is worked by hand on invented geometry in feet; the rules are
common practice with no published source (docs/methods.md, repair section).
"""

from __future__ import annotations

import geopandas as gpd
import pytest
from shapely.geometry import LineString, box

from geo_corrosion.errors import RepairError
from geo_corrosion.quantities import DEFAULT_BID_ITEMS, bid_schedule
from geo_corrosion.repair import LayoutParams, layout_repairs
from geo_corrosion.repair.tender import (
    anode_count,
    bar_replacement_length,
    bays,
    joint_edge_length,
    pay_areas,
    sounding_labels,
    tender_columns,
)
from geo_corrosion.units import report_units
from repair.helpers import sources

FT = 0.3048


def test_sounding_numbers_run_from_top_left_to_bottom_right() -> None:
    # issue 13: numbered north-west to south-east (grid y up), in a stable order; by hand:
    # top row (y centre 9.5) left to right, then the middle (y 5.5), then the bottom (y 0.5)
    geoms = [box(8, 0, 9, 1), box(0, 9, 1, 10), box(4, 5, 5, 6), box(8, 9, 9, 10),
             box(0, 0, 1, 1)]
    assert sounding_labels(geoms, "D") == ["D5", "D1", "D3", "D2", "D4"]
    # stable: the same shapes in another input order get the same numbers
    rev = list(reversed(geoms))
    assert sounding_labels(rev, "D") == list(reversed(["D5", "D1", "D3", "D2", "D4"]))


def test_repairs_name_the_sounded_areas_they_hold() -> None:
    # two delaminations 0.5 ft apart merge (300 mm gap), so the repair holds D1 and D2
    src = sources([box(10, 10, 11, 11), box(11.5, 10, 12.5, 11), box(30, 30, 31, 31)])
    src["label"] = ["D2", "D10", "S1"]
    rep = layout_repairs(src, slab=box(0, 0, 50, 50), unit="ft", params=LayoutParams(),
                         level_id="L1")
    assert sorted(rep["sounded"]) == ["D2, D10", "S1"]  # sorted by number, not as text


@pytest.mark.parametrize(("kind", "depth", "cls"), [
    ("delamination", None, "partial_below_bars"),  # at the bars: below the bars
    ("spall", None, "partial_above_bars"),         # shallower than the cover: above the bars
    ("spall", 60.0, "partial_below_bars"),         # a measured depth beyond the 38 mm cover
    ("delamination", 20.0, "partial_above_bars"),  # a measured depth within the cover
])
def test_the_depth_rule(kind, depth, cls) -> None:
    # docs/methods.md repair section: a depth attribute wins; else a delamination is at the
    # bars (below the bars) and a spall at half the cover (above the bars); cover 38 mm
    src = sources([box(10, 10, 12, 12)], kind=kind,
                  delam_depth_mm=[float("nan") if depth is None else depth])
    rep = layout_repairs(src, slab=box(0, 0, 50, 50), unit="ft", params=LayoutParams(),
                         level_id="L1")
    assert list(rep["depth_class"]) == [cls]


def test_full_depth_with_the_slab_thickness() -> None:
    # hand computation: 38 + 16 + 19.05 = 73.05 mm removal > 0.5 x 140 mm: full depth
    src = sources([box(10, 10, 12, 12)])
    rep = layout_repairs(src, slab=box(0, 0, 50, 50), unit="ft",
                         params=LayoutParams(slab_thickness_mm=140.0), level_id="L1")
    assert list(rep["depth_class"]) == ["full_depth"]
    assert rep["depth_mm"].iloc[0] == 140.0


def test_anode_count_by_hand() -> None:
    # ceil(perimeter / spacing): a 2.5 x 4.5 ft repair has 14 ft of saw cut; at 24 in: 7
    assert anode_count(14.0, 2.0) == 7
    assert anode_count(14.01, 2.0) == 8
    assert anode_count(0.0, 2.0) == 0
    with pytest.raises(RepairError):
        anode_count(14.0, 0.0)


def test_bar_replacement_by_hand() -> None:
    # two-way mat at 12 in: 2 LF of bar per ft2; 10 % of a 40 ft2 repair: 8 LF
    assert bar_replacement_length(40.0, share=0.1, bar_spacing=1.0) == pytest.approx(8.0)
    with pytest.raises(RepairError):
        bar_replacement_length(40.0, share=1.5, bar_spacing=1.0)


def test_joint_edge_length_by_hand() -> None:
    # a 3 x 4 ft repair whose right side (4 ft) lies on the joint x = 13
    j = [LineString([(13, -1), (13, 60)])]
    assert joint_edge_length(box(10, 10, 13, 14), j, 1e-9) == pytest.approx(4.0)
    assert joint_edge_length(box(10, 10, 12, 14), j, 1e-9) == pytest.approx(0.0)


def test_tender_columns_and_schedule_items() -> None:
    # a delamination against the joint x = 13: the repair stops there, 3 in rounding;
    # by hand: box(10.5, 10.5, 12.5, 13.5) + 6 in margin -> 10..13 (3 ft, cut at the joint)
    # by 10..14 (4 ft): dimensions 3'-0" x 4'-0"; 4 ft on the joint; saw cut 3 + 4 + 3 = 10 ft;
    # anodes at 24 in: ceil(10 / 2) = 5; bars: 12 ft2 x 10 % x 2 /ft = 2.4 LF
    j = [LineString([(13, -1), (13, 60)])]
    src = sources([box(10.5, 10.5, 12.5, 13.5)])
    p = LayoutParams(margin_mm=152.4, round_increment_mm=76.2)
    rep = layout_repairs(src, slab=box(0, 0, 50, 50), joints=j, unit="ft", params=p,
                         level_id="L1")
    rep = tender_columns(rep, joints=j, unit="ft", units="us", anode_spacing_mm=609.6,
                         bar_share=0.1, bar_spacing_mm=304.8)
    r = rep.iloc[0]
    assert r["dimensions"] == "3'-0\" x 4'-0\""
    assert r["location"] == "grid x 11.50 ft, y 12.00 ft"
    assert r["joint_edge_m"] == pytest.approx(4 * FT)
    assert r["perimeter_m"] == pytest.approx(10 * FT)
    assert r["anodes"] == 5
    assert r["bar_replacement_m"] == pytest.approx(2.4 * FT)
    s = bid_schedule(rep, None, units=report_units("us"), contingency=0.0,
                     anode_spacing_mm=609.6)
    rows = s[(s.level_id == "L1") & (s.line == "base")].set_index("item")
    base, bid = rows["quantity_unrounded"], rows["quantity"]
    assert base["JOINT-RPR"] == pytest.approx(4.0)
    assert base["BAR-REPL"] == pytest.approx(2.4)
    assert bid["BAR-REPL"] == 3  # bid in whole LF, rounded up (common practice)
    assert base["ANODE"] == 5
    assert DEFAULT_BID_ITEMS["JOINT-RPR"].unit(report_units("us")) == "LF"
    assert DEFAULT_BID_ITEMS["REP-OVH"].unit(report_units("metric")) == "m2"


def test_pay_areas_by_bay_on_a_slab_with_two_joints() -> None:
    # hand-drawn slab 60 x 20 ft, joints at x = 20 and x = 40: three bays of 400 ft2; a
    # 2 x 2 ft column in the middle bay leaves 396 ft2 of deck there.  A zone of 40 ft2 in
    # bay 1 (10 %, not more than the 10 % share: not paid), 60 ft2 in bay 2 (60 / 396 =
    # 15.2 %: paid whole, 396 ft2), 10 ft2 in bay 3 (2.5 %: not paid)
    slab = box(0, 0, 60, 20)
    joints = [LineString([(20, -1), (20, 21)]), LineString([(40, -1), (40, 21)])]
    bl = bays(slab, joints, 1e-9)
    assert sorted(b.area for b in bl) == [400.0, 400.0, 400.0]
    assert [round(b.centroid.x) for b in bl] == [10, 30, 50]  # left to right
    deck = slab.difference(box(29, 9, 31, 11))
    zone = box(0, 0, 8, 5).union(box(22, 0, 34, 5)).union(box(45, 0, 47, 5))
    paid = pay_areas(zone, bl, share=0.10, deck=deck)
    assert [i for i, _, _ in paid] == [1]
    assert paid[0][1].area == pytest.approx(396.0)
    assert paid[0][2] == pytest.approx(60.0 / 396.0)
    # the whole level: every bay with any of it
    assert sum(p.area for _, p, _ in pay_areas(zone, bl, share=0.0, deck=deck)) == (
        pytest.approx(1196.0))


def test_pay_areas_refuse_a_bad_share() -> None:
    with pytest.raises(RepairError, match="share"):
        pay_areas(box(0, 0, 1, 1), [box(0, 0, 2, 2)], share=1.0)


def test_frames_without_tender_columns_still_schedule() -> None:
    # a library caller's frame without the new columns gets no joint or bar item
    rep = gpd.GeoDataFrame({"level_id": ["L1"], "area_m2": [1.0],
                            "depth_class": ["partial_below_bars"]}, geometry=[box(0, 0, 1, 1)])
    s = bid_schedule(rep, None, units=report_units("metric"))
    assert set(s["item"]) == {"REP-PD-BARS"}


def test_grid_intersections_and_location_by_hand() -> None:
    # lines 3 (x = 0) and C (y = 30) cross at (0, 30), named letter first: C/3; a repair
    # 10..12.5 x 20..24.5 has its centre at (11.25, 22.25): +11.25 ft x, -7.75 ft y of it
    from geo_corrosion.repair.tender import column_location, grid_intersections

    cross = grid_intersections([(LineString([(0, -9), (0, 99)]), "3"),
                                (LineString([(-9, 30), (99, 30)]), "C"),
                                (LineString([(50, -9), (50, 99)]), "4")])
    assert sorted(n for _, n in cross) == ["C/3", "C/4"]
    assert column_location(box(10, 20, 12.5, 24.5), cross, "ft") == "C/3 +11.25 ft x, -7.75 ft y"
    assert column_location(box(40, 20, 42.5, 24.5), cross, "ft") == "C/4 -8.75 ft x, -7.75 ft y"


def test_station_and_offset_by_hand() -> None:
    # stations along grid x from 12+50 at x = 0 (US: hundreds of feet); a repair centred
    # at (11.25, 22.25) with the centreline at y = 20: 12+61.25, 2.25 ft left (+y)
    from geo_corrosion.repair.tender import format_station, station_location

    assert station_location(box(10, 20, 12.5, 24.5), start=1250.0, centerline_y=20.0,
                            unit="ft") == "Sta. 12+61.25, 2.25 ft Lt"
    assert station_location(box(10, 10, 12.5, 14.5), start=1250.0, centerline_y=20.0,
                            unit="ft") == "Sta. 12+61.25, 7.75 ft Rt"
    # metric stations in thousands of metres: 1+261.25
    assert format_station(1261.25, "m") == "1+261.25"
    assert format_station(99.999, "ft") == "1+00.00"

"""Repair sides rounded up to a cutting increment (issue 13 item 2; common practice, no source).

Every expected value below is worked by hand, in feet, with 3 in = 0.25 ft increments.
"""

from __future__ import annotations

import warnings

import pytest
from shapely.geometry import LineString, box

from geo_corrosion.errors import RepairError
from geo_corrosion.repair import LayoutParams, layout_repairs
from geo_corrosion.repair.rounding import (
    default_increment_mm,
    format_length,
    round_up,
    round_up_outlines,
)
from repair.helpers import sources

FT = 0.3048
SLAB = box(0, 0, 50, 50)
INC_FT = 0.25  # 3 in
#: no margin and no minimum size, so the repair before rounding is the sounded area itself
P = LayoutParams(margin_mm=0, min_size_mm=0, round_increment_mm=76.2)
DELAM = box(10, 10, 12.43, 14.41)  # the 2.43 ft x 4.41 ft repair of issue 13


def _lay(joints=(), exclusions=(), delams=(DELAM,), params=P):
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        return layout_repairs(sources(list(delams)), slab=SLAB, joints=list(joints),
                              exclusions=list(exclusions), unit="ft", params=params,
                              level_id="L1")


def test_default_increments() -> None:
    # common practice, no source: 3 in on US sites, 0.05 m on metric sites
    assert default_increment_mm("us") == pytest.approx(76.2)
    assert default_increment_mm("metric") == 50.0
    with pytest.raises(RepairError, match="reporting system"):
        default_increment_mm("imperial")


def test_round_up_by_hand() -> None:
    # hand computation: ceil(2.43 / 0.25) = 10 -> 2.5; ceil(4.41 / 0.25) = 18 -> 4.5
    assert round_up(2.43, INC_FT) == pytest.approx(2.5)
    assert round_up(4.41, INC_FT) == pytest.approx(4.5)
    assert round_up(2.5, INC_FT) == pytest.approx(2.5)  # already a multiple: unchanged


def test_243_by_441_becomes_25_by_45_and_covers_the_sounded_area() -> None:
    # issue 13: "a 2.43 x 4.41 ft repair becomes 2.5 x 4.5 ft and still covers the sounded
    # area"; hand computation: extra 0.07 ft and 0.09 ft, half to each side
    rep = _lay()
    assert len(rep) == 1
    g = rep.geometry.iloc[0]
    assert g.bounds == pytest.approx((9.965, 9.955, 12.465, 14.455))
    assert rep.size_x_m.iloc[0] == pytest.approx(2.5 * FT)
    assert rep.size_y_m.iloc[0] == pytest.approx(4.5 * FT)
    assert rep.area_m2.iloc[0] == pytest.approx(2.5 * 4.5 * FT * FT)
    assert rep.area_before_rounding_m2.iloc[0] == pytest.approx(2.43 * 4.41 * FT * FT)
    assert DELAM.difference(g).area == pytest.approx(0.0, abs=1e-12)  # shapely
    assert rep.rounding_note.iloc[0] == ""


def test_rounding_next_to_a_joint_grows_away_from_it() -> None:
    # hand computation: the joint at x = 12.45 leaves 0.02 ft on the right, less than the
    # 0.035 ft half-extra, so the whole 0.07 ft goes left: x from 9.93 to 12.43
    rep = _lay(joints=[LineString([(12.45, -1), (12.45, 60)])])
    g = rep.geometry.iloc[0]
    assert g.bounds == pytest.approx((9.93, 9.955, 12.43, 14.455))
    assert g.bounds[2] <= 12.45  # never crosses the joint
    assert rep.rounding_note.iloc[0] == ""


def test_rounding_next_to_an_exclusion_stays_out_of_it() -> None:
    # hand computation: a column from y = 14.43 up leaves 0.02 ft above, so the 0.09 ft
    # extra goes down: y from 9.91 to 14.41
    col = box(9, 14.43, 14, 16)
    rep = _lay(exclusions=[col])
    g = rep.geometry.iloc[0]
    assert g.bounds == pytest.approx((9.965, 9.91, 12.465, 14.41))
    assert g.intersection(col).area == pytest.approx(0.0, abs=1e-12)


def test_rounding_between_two_joints_is_clipped_with_a_note() -> None:
    # joints at x = 9.99 and 12.45: 2.46 ft between them, no 2.5 ft repair fits, so the width
    # is clipped at both joints (2.46 ft) and the repair says so; the height is still rounded
    rep = _lay(joints=[LineString([(9.99, -1), (9.99, 60)]),
                       LineString([(12.45, -1), (12.45, 60)])])
    g = rep.geometry.iloc[0]
    assert g.bounds == pytest.approx((9.99, 9.955, 12.45, 14.455))
    assert "left side" in rep.rounding_note.iloc[0]
    assert "right side" in rep.rounding_note.iloc[0]
    assert "joint" in rep.rounding_note.iloc[0]
    assert DELAM.difference(g).area == pytest.approx(0.0, abs=1e-12)


def test_l_shaped_outline_every_side_a_multiple() -> None:
    # hand computation: an L of 2.1 x 1.0 plus 1.0 x 2.1 (corner at the origin); overall
    # 2.1 -> 2.25 (extra 0.15, half each side, lattice from -0.075): the inner corner at
    # 1.0 snaps out to -0.075 + 5 x 0.25 = 1.175
    ell = box(0, 0, 2.1, 1.0).union(box(0, 0, 1.0, 2.1))
    r = round_up_outlines([ell], [box(-10, -10, 10, 10)], increment=INC_FT)[0]
    assert ell.difference(r.geom).area == pytest.approx(0.0, abs=1e-12)
    xs = sorted({round(x, 9) for x, _ in r.geom.exterior.coords})
    assert xs == pytest.approx([-0.075, 1.175, 2.175])
    assert r.geom.area == pytest.approx(2.25 * 1.25 + 1.25 * 1.0)


def test_rounded_repairs_never_overlap() -> None:
    # two repairs 0.02 ft apart: the second grows away from the first, never into it
    a, b = box(0, 0, 2.43, 2), box(2.45, 0, 4.88, 2)
    out = round_up_outlines([a, b], [box(-10, -10, 10, 10)] * 2, increment=INC_FT)
    assert out[0].geom.intersection(out[1].geom).area == pytest.approx(0.0, abs=1e-12)
    assert a.difference(out[0].geom).area == pytest.approx(0.0, abs=1e-12)
    assert b.difference(out[1].geom).area == pytest.approx(0.0, abs=1e-12)


def test_zero_increment_leaves_outlines_alone() -> None:
    rep = _lay(params=LayoutParams(margin_mm=0, min_size_mm=0, round_increment_mm=0))
    assert rep.geometry.iloc[0].bounds == pytest.approx(DELAM.bounds)
    with pytest.raises(RepairError, match="increment"):
        round_up_outlines([DELAM], [SLAB], increment=-1)


def test_format_length() -> None:
    # how contractors write sizes (common practice): feet-inches, metres to 0.01 m
    assert format_length(2.5 * FT, "us") == "2'-6\""
    assert format_length(4.5 * FT, "us") == "4'-6\""
    assert format_length(2.46 * FT, "us") == "2'-5 1/2\""  # 29.52 in -> 29 1/2 in
    assert format_length(0.75, "metric") == "0.75 m"
    assert format_length(1.4, "metric") == "1.40 m"
    assert format_length(2.466, "metric") == "2.466 m"


def test_clipped_repair_stays_off_its_neighbour_across_the_joint() -> None:
    # Found on the 300,000-reading synthetic garage (benchmarks/synthetic_garage.py): a repair
    # clipped at a joint at x = 480 ft was snapped to a 6.72e-10 ft precision grid, which moved
    # that edge to 480.000000000192 ft, over the repair on the other side of the joint
    # (1.3e-9 ft2, more than check_no_overlap's tolerance). Hand geometry: both panels meet at
    # x = 480; the left repair's width (39.187 ft) cannot round up to 39.25 ft inside its
    # panel, which ends at both of its sides, so it is clipped.
    tol = 6.72e-7  # the tolerance layout_repairs derives for a plan of this size
    right = box(480.0, 410.36317161871995, 482.3111807218673, 417.2675961391813)
    left = box(440.8132569773394, 381.5264749872105, 480.0, 433.4827348924219)
    panels = [box(480.0, 300.0, 560.0, 500.0), box(440.8132569773394, 300.0, 480.0, 500.0)]
    out = round_up_outlines([right, left], panels, increment=INC_FT, tol=tol)
    assert out[1].clipped  # clipped at both panel edges
    assert out[0].geom.intersection(out[1].geom).area <= tol * 1e-3
    assert out[1].geom.bounds[2] <= 480.0
    assert left.difference(out[1].geom).area == pytest.approx(0.0, abs=1e-9)

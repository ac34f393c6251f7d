"""Depth classes (common practice) and undercut clearance [ICRI-310.1R-2008; UFGS-03931]."""

from __future__ import annotations

import pytest

from geo_corrosion.errors import RepairError
from geo_corrosion.repair import depth_class, undercut_clearance_mm
from geo_corrosion.units import MM_PER_INCH as IN


def test_rep04_icri_undercut() -> None:
    # [ICRI-310.1R-2008], to confirm: 3/8 in aggregate -> max(3/4, 5/8) = 3/4 in; 3/4 in -> 1.0 in
    assert undercut_clearance_mm(0.375 * IN) / IN == pytest.approx(0.75, abs=1e-12)
    assert undercut_clearance_mm(0.75 * IN) / IN == pytest.approx(1.0, abs=1e-12)


def test_rep04_ufgs_undercut() -> None:
    # [UFGS-03931 §3.3.1.4]: 3/8 in aggregate -> max(1, 5/8) = 1 in
    assert undercut_clearance_mm(0.375 * IN, rule="ufgs") / IN == pytest.approx(1.0, abs=1e-12)
    assert undercut_clearance_mm(1.0 * IN, rule="ufgs") / IN == pytest.approx(1.25, abs=1e-12)


def test_undercut_bad_input() -> None:
    with pytest.raises(RepairError, match="max_aggregate_mm"):
        undercut_clearance_mm(-1.0)
    with pytest.raises(RepairError, match="rule"):
        undercut_clearance_mm(9.5, rule="aci")  # type: ignore[arg-type]


def test_depth_classes() -> None:
    # common practice: plane above the bars -> partial above, at least the saw-cut depth
    # (the saw cut is 3/4 in = 19.05 mm, [ICRI-310.1R-2008]; the library default since
    # tests/core/test_site_options.py::test_library_sawcut_depth_defaults_are_three_quarter_inch)
    assert depth_class(cover_mm=50, bar_diameter_mm=16, delam_depth_mm=10,
                       sawcut_depth_mm=19.05) == ("partial_above_bars", 19.05)
    # bars exposed: cover + bar + ICRI clearance = 38.1 + 15.9 + 19.05 = 73.05 mm (derived)
    assert depth_class(cover_mm=38.1, bar_diameter_mm=15.9, max_aggregate_mm=9.525) == (
        "partial_below_bars", pytest.approx(73.05))
    # delamination deeper than that: removal follows it
    assert depth_class(cover_mm=38, bar_diameter_mm=16, delam_depth_mm=90)[1] == 90.0
    # 150 mm slab: 50 + 16 + 19.05 = 85.05 > 0.5 x 150 -> full depth (common practice)
    assert depth_class(cover_mm=50, bar_diameter_mm=16, slab_thickness_mm=150) == (
        "full_depth", 150.0)
    assert depth_class(cover_mm=30, bar_diameter_mm=10, slab_thickness_mm=250)[0] == (
        "partial_below_bars")


def test_depth_class_bad_input() -> None:
    with pytest.raises(RepairError, match="cover_mm"):
        depth_class(cover_mm=-5, bar_diameter_mm=16)

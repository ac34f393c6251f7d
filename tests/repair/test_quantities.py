"""Bid items and the schedule (common practice)."""

from __future__ import annotations

import geopandas as gpd
import pandas as pd
import pytest
from shapely.geometry import box

from geo_corrosion.errors import ExportError, RepairError
from geo_corrosion.quantities import (
    ALL_LEVELS,
    BidItem,
    bid_schedule,
    roll_up,
    schedule_table,
    write_quantities_csv,
)
from geo_corrosion.units import M_PER_FT, report_units

US, SI = report_units("us"), report_units("metric")
FT2 = M_PER_FT**2


def repairs_ft(boxes_ft, level="P1", depth_class="partial_below_bars", depth_mm=75.0):
    """Repairs frame built by hand from rectangles in feet."""
    rows = []
    for i, b in enumerate(boxes_ft):
        g = box(*b)
        a = g.area * FT2
        rows.append({"repair_id": f"{level}-R{i + 1:03d}", "level_id": level, "area_m2": a,
                     "perimeter_m": g.length * M_PER_FT, "depth_class": depth_class,
                     "depth_mm": depth_mm, "volume_m3": a * depth_mm / 1000, "geometry": g})
    return gpd.GeoDataFrame(rows, geometry="geometry")


def q(schedule, level, item, line):
    s = schedule[(schedule.level_id == level) & (schedule["item"] == item)
                 & (schedule.line == line)]
    assert len(s) == 1, s
    return float(s.quantity_unrounded.iloc[0])  # the computation, before bid rounding


def test_bid01_contingency_as_separate_line() -> None:
    # common practice: 500 ft2 + 20 % -> 600 ft2, reported as 500 + 100
    s = bid_schedule(repairs_ft([(0, 0, 20, 25)]), None, units=US, contingency=0.20)
    assert q(s, "P1", "REP-PD-BARS", "base") == pytest.approx(500.0, abs=1e-6)
    assert q(s, "P1", "REP-PD-BARS", "contingency") == pytest.approx(100.0, abs=1e-6)
    t = schedule_table(s)
    row = t[(t.level_id == ALL_LEVELS) & (t["item"] == "REP-PD-BARS")].iloc[0]
    assert (row.unit, row.total) == ("ft2", pytest.approx(600.0, abs=1e-6))
    assert q(s, "P1", "SAWCUT", "base") == pytest.approx(90.0, abs=1e-6)  # 2 x (20 + 25) LF
    assert set(s.loc[s["item"] == "SAWCUT", "unit"]) == {"LF"}


def test_bid01_metric_conversion() -> None:
    # 6.00 ft2 -> 0.5574 m2 [NIST-SP811-2008 App. B]
    s = bid_schedule(repairs_ft([(0, 0, 3, 2)]), None, units=SI, contingency=0.0)
    assert q(s, "P1", "REP-PD-BARS", "base") == pytest.approx(0.5574, abs=1e-4)
    assert q(s, "P1", "REP-PD-BARS", "contingency") == 0.0
    assert set(s.loc[s["item"] == "REP-PD-BARS", "unit"]) == {"m2"}


def test_overlapping_repairs_counted_once() -> None:
    # common practice, no source: 2 x 4 ft and 2 x 4 ft overlapping by 1 x 4 ft -> 12 ft2, not 16
    s = bid_schedule(repairs_ft([(0, 0, 2, 4), (1, 0, 3, 4)]), None, units=US, contingency=0.0)
    assert q(s, "P1", "REP-PD-BARS", "base") == pytest.approx(12.0, abs=1e-9)


def test_bid03_roll_up_by_item_and_levels() -> None:
    # common practice: quantities roll up by item and unit; totals = sum of levels
    r = pd.concat([repairs_ft([(0, 0, 10, 10)], level="P1"),
                   repairs_ft([(0, 0, 5, 4)], level="P2"),
                   repairs_ft([(20, 20, 22, 22)], level="P2", depth_class="full_depth")])
    s = bid_schedule(gpd.GeoDataFrame(r, geometry="geometry"), None, units=US)
    assert q(s, ALL_LEVELS, "REP-PD-BARS", "base") == pytest.approx(120.0, abs=1e-9)
    assert q(s, ALL_LEVELS, "REP-FD", "base") == pytest.approx(4.0, abs=1e-9)
    assert q(s, "P2", "REP-PD-BARS", "contingency") == pytest.approx(4.0, abs=1e-9)
    assert list(dict.fromkeys(s.level_id)) == ["P1", "P2", ALL_LEVELS]


def test_bid03_mixed_units_in_one_item_raise() -> None:
    # common practice: mixing units in one item raises an error
    items = {"REP-PD-BARS": BidItem("REP-PD-BARS", "repair counted by the each", "count")}
    with pytest.raises(RepairError, match="REP-PD-BARS.*mixes units"):
        bid_schedule(repairs_ft([(0, 0, 2, 2)]), None, units=US, items=items)
    lines = pd.DataFrame({"level_id": ["P1", "P1"], "item": ["X", "X"],
                          "unit_kind": ["area", "length"], "q": [1.0, 2.0]})
    with pytest.raises(RepairError, match="mixes units"):
        roll_up(lines, units=US, items={"X": BidItem("X", "x", "area")})


def test_anodes_by_perimeter_spacing() -> None:
    # common practice: count = ceil(perimeter / spacing) per repair.
    # 3 x 3 ft repair: 12 ft perimeter; 24 in spacing -> 6; 500 mm -> ceil(7.315) = 8
    r = repairs_ft([(0, 0, 3, 3), (10, 10, 13, 13)])
    s = bid_schedule(r, None, units=US, anode_spacing_mm=609.6, contingency=0.2)
    assert q(s, "P1", "ANODE", "base") == 12.0
    assert q(s, "P1", "ANODE", "contingency") == 3.0  # ceil(2.4), whole anodes
    assert set(s.loc[s["item"] == "ANODE", "unit"]) == {"EA"}
    s2 = bid_schedule(r.iloc[:1], None, units=US, anode_spacing_mm=500.0)
    assert q(s2, "P1", "ANODE", "base") == 8.0
    assert "ANODE" not in set(bid_schedule(r, None, units=US)["item"])


def test_zones_priced_by_bid_item_and_no_action_not_priced() -> None:
    z = gpd.GeoDataFrame({"level_id": ["P1", "P1", "P1"],
                          "zone": ["active_corrosion", "low_cover", "no_action"],
                          "treatment": ["anodes", "membrane", "none"],
                          "bid_item": ["TREAT-ACTIVE", "PROTECT-LOWCOVER", None],
                          "area_m2": [10.0, 4.0, 86.0]},
                         geometry=[box(0, 0, 5, 2), box(5, 0, 7, 2), box(0, 2, 10, 10)])
    s = bid_schedule(None, z, units=SI, contingency=0.1)
    assert q(s, "P1", "TREAT-ACTIVE", "base") == pytest.approx(10.0)
    assert q(s, "P1", "PROTECT-LOWCOVER", "contingency") == pytest.approx(0.4)
    assert set(s["item"]) == {"TREAT-ACTIVE", "PROTECT-LOWCOVER"}


def test_bad_contingency_and_columns() -> None:
    with pytest.raises(RepairError, match="contingency"):
        bid_schedule(repairs_ft([(0, 0, 1, 1)]), None, units=US, contingency=20)
    with pytest.raises(RepairError, match="level_id"):
        bid_schedule(repairs_ft([(0, 0, 1, 1)]).drop(columns="level_id"), None, units=US)
    with pytest.raises(RepairError, match="unit kind"):
        BidItem("X", "x", "tonnes")  # type: ignore[arg-type]


def test_empty_schedule() -> None:
    s = bid_schedule(None, None, units=US)
    assert s.empty and schedule_table(s).empty


def test_csv_written_atomically(tmp_path) -> None:
    s = bid_schedule(repairs_ft([(0, 0, 20, 25)]), None, units=US, anode_spacing_mm=600.0)
    out = write_quantities_csv(s, tmp_path / "q" / "quantities.csv")
    back = pd.read_csv(out)
    # the unrounded quantity goes to run.json only
    assert list(back.columns) == [c for c in s.columns if c != "quantity_unrounded"]
    assert back.loc[(back["item"] == "REP-PD-BARS") & (back.level_id == "ALL"),
                    "quantity"].tolist() == [500.0, 100.0]
    assert [p.name for p in out.parent.iterdir()] == ["quantities.csv"]
    (tmp_path / "dir.csv").mkdir()
    with pytest.raises(ExportError, match="dir.csv"):
        write_quantities_csv(s, tmp_path / "dir.csv")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["dir.csv", "q"]

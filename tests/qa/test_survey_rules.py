"""Tests of the reading- and survey-level QA rules of geo_corrosion.qa.check_survey."""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd
import pytest
import shapely

from geo_corrosion import qa
from geo_corrosion.errors import QAError

PLAUSIBLE_MV = (-1000.0, 200.0)  # common practice


def grid_xy(nx: int, ny: int, spacing: float = 1.0) -> list[tuple[float, float]]:
    """Points of an nx x ny grid, row by row."""
    return [(i * spacing, j * spacing) for j in range(ny) for i in range(nx)]


def check(frame: Any, **kw: Any) -> pd.DataFrame:
    """check_survey with potential defaults."""
    args: dict[str, Any] = dict(kind="potential", value_column="potential_mv",
                                plausible_range=PLAUSIBLE_MV, slab_local=None)
    args.update(kw)
    return qa.check_survey(frame, **args)


def rows_of(flags: pd.DataFrame, rule: str) -> list[str]:
    """Return the reading ids flagged by one rule, sorted."""
    return sorted(flags.loc[flags["rule"] == rule, "reading_id"].tolist())


def test_catalogue_names_sources() -> None:
    # common practice, no source: every rule is documented, with a severity and a source
    assert qa.FLAG_COLUMNS == ["reading_id", "survey_id", "level_id", "where", "rule",
                               "severity", "message", "value"]
    assert len(qa.QA_RULES) >= 18
    for code, rule in qa.QA_RULES.items():
        assert rule.code == code
        assert rule.severity in {"info", "warning", "error"}
        assert rule.description and rule.source
    # [ASTM-C876-91 §5.1, from memory]: the adjacent-difference rule
    assert "C876" in qa.QA_RULES["QA-ADJ-150"].source
    assert qa.QA_RULES["QA-OPEN-LEAD"].severity == "error"
    assert qa.QA_RULES["QA-REVERSED-LEADS"].severity == "error"
    for code in ("QA-OPEN-LEAD", "QA-REVERSED-LEADS"):
        assert "common practice" in qa.QA_RULES[code].source
        assert "[ASTM-C876-22a]" in qa.QA_RULES[code].source
    assert qa.QA_RULES["QA-ALL-OUTSIDE"].severity == "error"


def test_hcp13_plausible_range(make_frame: Any) -> None:
    # common practice, after [RILEM-TC154-2003 Table 1, from memory]
    f = make_frame([-1200.0, -450.0, 0.0, 350.0])
    flags = check(f)
    assert rows_of(flags, "QA-RANGE-LOW") == ["S1:0"]
    assert rows_of(flags, "QA-RANGE-HIGH") == ["S1:3"]
    low = flags[flags["rule"] == "QA-RANGE-LOW"].iloc[0]
    assert low["message"].startswith("readings/L1_east.csv line 2:")
    assert "check connection, electrode or units" in low["message"]
    # common practice: more negative than -1000 mV may be cathodic protection / stray current
    assert "cathodic protection or stray current" in low["message"]
    assert low["value"] == -1200.0
    high = flags[flags["rule"] == "QA-RANGE-HIGH"].iloc[0]
    assert "check connection, electrode or units" in high["message"]
    assert "cathodic" not in high["message"]
    assert len(f) == 4  # flagged, not dropped


def test_plausible_range_bounds_are_plausible(make_frame: Any) -> None:
    # "outside [-1000, +200]" -> the bounds themselves pass (common practice)
    f = make_frame([-1000.0, 200.0, -1000.1, 200.1])
    flags = check(f)
    assert rows_of(flags, "QA-RANGE-LOW") == ["S1:2"]
    assert rows_of(flags, "QA-RANGE-HIGH") == ["S1:3"]


def test_nan_value_flagged_with_where(make_frame: Any) -> None:
    # common practice, no source: a missing value is flagged, not silently dropped
    f = make_frame([-300.0, np.nan, -310.0])
    flags = check(f)
    nan = flags[flags["rule"] == "QA-NAN-VALUE"]
    assert nan["reading_id"].tolist() == ["S1:1"]
    assert "readings/L1_east.csv line 3" in nan["message"].iloc[0]
    assert rows_of(flags, "QA-RANGE-LOW") == rows_of(flags, "QA-RANGE-HIGH") == []


def test_nan_location_flagged(make_frame: Any) -> None:
    # common practice, no source
    f = make_frame([-300.0, -310.0], xy=[(0.0, 0.0), (np.nan, 1.0)])
    flags = check(f, slab_local=shapely.box(-1, -1, 5, 5))
    assert rows_of(flags, "QA-NAN-XY") == ["S1:1"]
    assert rows_of(flags, "QA-OUTSIDE-SLAB") == []


def test_open_lead_survey(make_frame: Any) -> None:
    # common practice: more than 90 % within +-5 mV of 0 and an IQR of 5 mV or less
    f = make_frame([0.0, 1.5, -2.0, 5.0, -5.0, 3.1])
    flags = check(f)
    lead = flags[flags["rule"] == "QA-OPEN-LEAD"]
    assert len(lead) == 1
    assert lead["reading_id"].iloc[0] == ""
    assert lead["severity"].iloc[0] == "error"
    msg = lead["message"].iloc[0]
    assert msg.startswith("readings/L1_east.csv: open lead: 100% of the readings")
    assert "median 0.8 mV" in msg and "interquartile range" in msg
    assert "connection to the reinforcement" in msg
    assert lead["where"].iloc[0] == "readings/L1_east.csv"
    assert lead["value"].iloc[0] == pytest.approx(0.75)  # median, by hand
    assert not qa.runnable(flags)


def test_open_lead_noise_with_a_few_stray_readings(make_frame: Any) -> None:
    # the fuzz case of issue 11: noise around 0 mV with a few readings beyond +-5 mV (common
    # practice: "nearly all", not "every", reading in the band)
    rng = np.random.default_rng(3)
    vals = rng.normal(0.0, 1.5, 200)
    vals[::25] = [-30.0, 12.0, -7.0, 25.0, 8.0, -9.0, 40.0, -6.0]  # 4 % outside the band
    flags = check(make_frame(vals.tolist()))
    lead = flags[flags["rule"] == "QA-OPEN-LEAD"]
    assert len(lead) == 1
    assert "96% of the readings are within +-5 mV" in lead["message"].iloc[0]


def test_open_lead_other_side(make_frame: Any) -> None:
    # common practice: 9 of 10 in the band is not more than 90 % -> no flag
    flags = check(make_frame([0.0, 1.5, -2.0, 4.0, -4.0, 3.1, 0.5, -0.5, 1.0, -250.0]))
    assert "QA-OPEN-LEAD" not in set(flags["rule"])
    # 19 of 20 in the band (95 %) -> flag
    band = [0.0, 1.5, -2.0, 4.0, -4.0, 3.1, 0.5, -0.5, 1.0, -1.0]
    flags = check(make_frame((band * 2)[:19] + [-250.0]))
    assert "QA-OPEN-LEAD" in set(flags["rule"])
    assert qa.runnable(check(make_frame([0.0, 1.5, -2.0, 5.0, -5.1, 3.1, -250.0])))


def test_open_lead_needs_a_small_spread(make_frame: Any) -> None:
    # common practice: all within +-5 mV but spread out (IQR > 5 mV) is not flat at 0 mV
    spread = [-5.0, -5.0, -5.0, -4.0, 4.0, 5.0, 5.0, 5.0]  # IQR 10 mV by hand
    assert "QA-OPEN-LEAD" not in set(check(make_frame(spread))["rule"])
    narrow = [-2.5, -2.5, -2.5, 2.5, 2.5, 2.5, 2.5, -2.5]  # IQR 5.0 mV: still an open lead
    assert "QA-OPEN-LEAD" in set(check(make_frame(narrow))["rule"])


def test_reversed_leads_survey(make_frame: Any) -> None:
    # common practice: a survey read with the leads swapped, +150 to +420 mV CSE
    vals = [250.0, 310.0, 180.0, 420.0, 350.0, 290.0, 205.0, 330.0, 260.0, 300.0]
    flags = check(make_frame(vals))
    inv = flags[flags["rule"] == "QA-REVERSED-LEADS"]
    assert len(inv) == 1 and inv["severity"].iloc[0] == "error"
    msg = inv["message"].iloc[0]
    assert msg.startswith("readings/L1_east.csv: leads reversed: 100% of the readings are "
                          "above +100 mV CSE")
    assert "100% of the 10 readings positive, median 295.0 mV" in msg  # median by hand
    assert "positive terminal" in msg
    assert inv["value"].iloc[0] == pytest.approx(float(np.median(vals)))
    assert not qa.runnable(flags)
    # the same survey read the right way round is fine
    flags = check(make_frame([-v for v in vals]))
    assert "QA-REVERSED-LEADS" not in set(flags["rule"])


def test_reversed_leads_thresholds(make_frame: Any) -> None:
    # thresholds chosen here (common practice): more than 90 % of the readings above +100 mV
    nine_of_ten = [150.0] * 9 + [-300.0]  # exactly 90 %: not more than 90 %
    assert "QA-REVERSED-LEADS" not in set(check(make_frame(nine_of_ten))["rule"])
    nineteen_of_twenty = [150.0] * 19 + [-300.0]  # 95 %
    assert "QA-REVERSED-LEADS" in set(check(make_frame(nineteen_of_twenty))["rule"])
    at_100 = [100.0] * 20  # exactly +100 mV: not above +100 mV
    assert "QA-REVERSED-LEADS" not in set(check(make_frame(at_100))["rule"])
    at_101 = [101.0] * 20
    assert "QA-REVERSED-LEADS" in set(check(make_frame(at_101))["rule"])


def test_outside_slab_and_boundary(make_frame: Any) -> None:
    # common practice, no source: points on the outline are inside
    f = make_frame([-300.0] * 4, xy=[(1.0, 1.0), (4.0, 2.0), (5.0, 5.0), (-0.1, 2.0)])
    flags = check(f, slab_local=shapely.box(0, 0, 4, 4))
    assert rows_of(flags, "QA-OUTSIDE-SLAB") == ["S1:2", "S1:3"]
    msg = flags.loc[flags["reading_id"] == "S1:2", "message"].iloc[0]
    assert msg.startswith("readings/L1_east.csv line 4:") and "outside the slab" in msg
    assert "QA-ALL-OUTSIDE" not in set(flags["rule"])
    assert qa.runnable(flags)


def test_all_outside_slab_is_error(make_frame: Any) -> None:
    # issue 2 "readings that all fall outside their level" -> the site cannot be run
    f = make_frame([-300.0] * 3, xy=[(10.0, 10.0), (11.0, 10.0), (12.0, 10.0)])
    flags = check(f, slab_local=shapely.box(0, 0, 4, 4))
    assert rows_of(flags, "QA-OUTSIDE-SLAB") == ["S1:0", "S1:1", "S1:2"]
    survey = flags[flags["rule"] == "QA-ALL-OUTSIDE"]
    assert len(survey) == 1 and survey["reading_id"].iloc[0] == ""
    assert not qa.runnable(flags)


def test_inside_exclusion_names_index(make_frame: Any) -> None:
    # common practice, no source: strictly inside an exclusion (boundary is not inside)
    f = make_frame([-300.0] * 4, xy=[(0.5, 0.5), (5.5, 5.5), (5.0, 5.5), (3.0, 3.0)])
    excl = [shapely.box(10, 10, 11, 11), shapely.box(5, 5, 6, 6), shapely.box(2.5, 2.5, 3.5, 3.5)]
    flags = check(f, slab_local=shapely.box(0, 0, 20, 20), exclusions_local=excl)
    assert rows_of(flags, "QA-IN-EXCLUSION") == ["S1:1", "S1:3"]
    sev = flags.loc[flags["rule"] == "QA-IN-EXCLUSION", "severity"]
    assert set(sev) == {"warning"}
    msgs = dict(zip(flags["reading_id"], flags["message"], strict=False))
    assert "exclusion #1" in msgs["S1:1"] and "exclusion #2" in msgs["S1:3"]


def test_overlapping_exclusions_and_names(make_frame: Any) -> None:
    # common practice, no source
    f = make_frame([-300.0], xy=[(1.0, 1.0)])
    excl = [shapely.box(0, 0, 2, 2), shapely.box(0.5, 0.5, 3, 3)]
    flags = check(f, exclusions_local=excl, exclusion_names=["column C3", "core 7"])
    msg = flags.loc[flags["rule"] == "QA-IN-EXCLUSION", "message"].tolist()
    assert len(msg) == 1 and "column C3, core 7" in msg[0]
    with pytest.raises(QAError, match="exclusion_names"):
        check(f, exclusions_local=excl, exclusion_names=["only one"])


def test_duplicate_locations(make_frame: Any) -> None:
    # common practice, no source: tolerance 0.1 x spacing
    xy = [(0.0, 0.0), (0.05, 0.0), (3.0, 0.0), (3.15, 0.0), (6.0, 0.0)]
    f = make_frame([-300.0, -301.0, -302.0, -303.0, -304.0], xy=xy,
                   point_ids=["A", "B", "", "", ""])
    flags = check(f, spacing=1.0)
    assert rows_of(flags, "QA-DUPLICATE") == ["S1:0", "S1:1"]  # 0.15 > 0.1 is not a duplicate
    msgs = dict(zip(flags["reading_id"], flags["message"], strict=False))
    assert "same location as readings/L1_east.csv line 3" in msgs["S1:0"]
    assert "same location as readings/L1_east.csv line 2" in msgs["S1:1"]


def test_duplicate_default_tolerance_without_spacing(make_frame: Any) -> None:
    # common practice, no source: 1e-6 local units when no spacing is known
    xy = [(0.0, 0.0), (0.0, 5e-7), (4.0, 0.0), (4.0, 1e-3)]
    f = make_frame([-300.0] * 4, xy=xy)
    assert rows_of(check(f), "QA-DUPLICATE") == ["S1:0", "S1:1"]
    # an explicit tolerance takes precedence
    assert rows_of(check(f, duplicate_tolerance=0.01), "QA-DUPLICATE") == [
        "S1:0", "S1:1", "S1:2", "S1:3"]


def test_same_point_id_is_a_repeat_not_a_duplicate(make_frame: Any) -> None:
    # common practice: repeats at control points are intended
    f = make_frame([-300.0, -305.0], xy=[(0.0, 0.0), (0.0, 0.0)], point_ids=["CP1", "CP1"])
    flags = check(f, spacing=1.0)
    assert rows_of(flags, "QA-DUPLICATE") == []


def test_hcp08_repeatability_pass(make_frame: Any) -> None:
    # [ASTM-C876-15 precision section, from memory]: (-300, -305) passes 10 mV
    f = make_frame([-300.0, -305.0, -250.0], xy=[(0, 0), (0, 0), (1, 0)],
                   point_ids=["CP1", "CP1", ""])
    flags = check(f, spacing=1.0)
    assert rows_of(flags, "QA-REPEATABILITY") == []
    rep = flags[flags["rule"] == "QA-REPEAT"]
    assert sorted(rep["reading_id"]) == ["S1:0", "S1:1"]
    assert set(rep["severity"]) == {"info"}
    assert all("5.0 mV" in m for m in rep["message"])


def test_hcp08_repeatability_fail(make_frame: Any) -> None:
    # [ASTM-C876-15 precision section, from memory]: (-300, -315) fails 10 mV,
    # and the message says it is within the 20 mV reproducibility
    f = make_frame([-300.0, -315.0], xy=[(0, 0), (0, 0)], point_ids=["CP1", "CP1"])
    flags = check(f, spacing=1.0)
    rep = flags[flags["rule"] == "QA-REPEATABILITY"]
    assert sorted(rep["reading_id"]) == ["S1:0", "S1:1"]
    assert set(rep["severity"]) == {"warning"}
    m0 = rep.loc[rep["reading_id"] == "S1:0", "message"].iloc[0]
    assert "15.0 mV" in m0 and "> 10 mV repeatability" in m0
    assert "within the 20 mV reproducibility" in m0
    assert "(also readings/L1_east.csv line 3)" in m0  # names the other reading, not itself
    assert qa.runnable(flags)  # suspicious, not fatal


def test_repeatability_beyond_reproducibility(make_frame: Any) -> None:
    # ASTM C876 precision (from memory): 25 mV fails both 10 mV and 20 mV; exactly 20 is within
    f = make_frame([-300.0, -325.0], xy=[(0, 0), (0, 0)], point_ids=["CP1", "CP1"])
    msgs = check(f).loc[lambda d: d["rule"] == "QA-REPEATABILITY", "message"].tolist()
    assert len(msgs) == 2 and all("also beyond the 20 mV reproducibility" in m for m in msgs)
    f = make_frame([-300.0, -320.0], xy=[(0, 0), (0, 0)], point_ids=["CP1", "CP1"])
    msgs = check(f).loc[lambda d: d["rule"] == "QA-REPEATABILITY", "message"].tolist()
    assert len(msgs) == 2 and all("within the 20 mV reproducibility" in m for m in msgs)


def test_repeatability_boundary(make_frame: Any) -> None:
    # ASTM C876 precision (from memory): "not more than 10 mV" -> exactly 10 passes
    f = make_frame([-300.0, -310.0], xy=[(0, 0), (0, 0)], point_ids=["CP1", "CP1"])
    assert rows_of(check(f), "QA-REPEATABILITY") == []
    f = make_frame([-300.0, -310.5], xy=[(0, 0), (0, 0)], point_ids=["CP1", "CP1"])
    assert rows_of(check(f), "QA-REPEATABILITY") == ["S1:0", "S1:1"]


def test_repeat_of_other_kind_has_no_tolerance(make_frame: Any) -> None:
    # common practice, no source: the 10 mV rule is for potentials only
    f = make_frame([10.0, 40.0], xy=[(0, 0), (0, 0)], point_ids=["P", "P"],
                   value_column="resistivity_kohm_cm")
    flags = qa.check_survey(f, kind="resistivity", value_column="resistivity_kohm_cm",
                            plausible_range=(0.5, 2000.0), slab_local=None)
    assert rows_of(flags, "QA-REPEATABILITY") == []
    msg = flags.loc[flags["rule"] == "QA-REPEAT", "message"].tolist()
    assert len(msg) == 2 and "30.0 kOhm.cm" in msg[0]


def test_point_moved(make_frame: Any) -> None:
    # common practice, no source: one point_id read at two places
    f = make_frame([-300.0, -302.0, -250.0], xy=[(0, 0), (3, 0), (1, 0)],
                   point_ids=["CP1", "CP1", ""])
    assert rows_of(check(f, spacing=1.0), "QA-POINT-MOVED") == ["S1:0", "S1:1"]
    f = make_frame([-300.0, -302.0], xy=[(0, 0), (0.3, 0)], point_ids=["CP1", "CP1"])
    assert rows_of(check(f, spacing=1.0), "QA-POINT-MOVED") == []


def _spike_grid(make_frame: Any, centre_mv: float) -> Any:
    vals = np.full(25, -200.0)
    vals[12] = centre_mv  # centre of a 5 x 5 grid
    return make_frame(vals, xy=grid_xy(5, 5))


def test_adjacent_spike(make_frame: Any) -> None:
    # [ASTM-C876-91 §5.1, from memory]: |dE| > 150 mV between adjacent readings
    flags = check(_spike_grid(make_frame, -360.0), spacing=1.0)
    spike = flags[flags["rule"] == "QA-ADJ-SPIKE"]
    assert spike["reading_id"].tolist() == ["S1:12"]
    assert spike["severity"].iloc[0] == "warning"
    assert "160.0 mV" in spike["message"].iloc[0]
    assert "4 of 4" in spike["message"].iloc[0]  # diagonals are not axis neighbours
    # the four axis neighbours get the info flag, the diagonal ones nothing
    assert rows_of(flags, "QA-ADJ-150") == ["S1:11", "S1:13", "S1:17", "S1:7"]
    assert set(flags.loc[flags["rule"] == "QA-ADJ-150", "severity"]) == {"info"}
    assert "grid too coarse here or local spike" in flags.loc[
        flags["rule"] == "QA-ADJ-150", "message"].iloc[0]


def test_adjacent_limit_boundary(make_frame: Any) -> None:
    # ASTM C876-91 §5.1 (from memory): "< 150 mV" wanted; exactly 150 is not flagged here
    flags = check(_spike_grid(make_frame, -350.0), spacing=1.0)
    assert not {"QA-ADJ-150", "QA-ADJ-SPIKE"} & set(flags["rule"])
    # a configurable limit
    flags = check(_spike_grid(make_frame, -350.0), spacing=1.0, adjacent_limit_mv=100.0)
    assert rows_of(flags, "QA-ADJ-SPIKE") == ["S1:12"]


def test_adjacent_spacing_estimated(make_frame: Any) -> None:
    # common practice, no source: without a spacing it is the median nearest-neighbour distance
    f = _spike_grid(make_frame, -400.0)
    f["x_local"] *= 0.5
    f["y_local"] *= 0.5
    assert rows_of(check(f), "QA-ADJ-SPIKE") == ["S1:12"]


def test_adjacent_gradient_is_info(make_frame: Any) -> None:
    # [ASTM-C876-91 §5.1, from memory]: a step between two zones is "grid too coarse", no spike
    xy = grid_xy(6, 3)
    vals = [-200.0 if x < 3 else -400.0 for x, _ in xy]
    flags = check(make_frame(vals, xy=xy), spacing=1.0)
    assert rows_of(flags, "QA-ADJ-SPIKE") == []
    ids = rows_of(flags, "QA-ADJ-150")
    expect = sorted(f"S1:{k}" for k, (x, _) in enumerate(xy) if x in (2, 3))
    assert ids == expect


def test_single_neighbour_is_not_a_spike(make_frame: Any) -> None:
    # [ASTM-C876-91 §5.1, from memory]; spike criterion (two or more neighbours) common practice
    flags = check(make_frame([-200.0, -400.0, -390.0], xy=[(0, 0), (1, 0), (2, 0)]), spacing=1.0)
    assert rows_of(flags, "QA-ADJ-SPIKE") == []
    assert rows_of(flags, "QA-ADJ-150") == ["S1:0", "S1:1"]


def test_adjacent_only_for_potentials(make_frame: Any) -> None:
    # ASTM C876 rule is a potential rule; resistivity gets no adjacency flags (our choice)
    vals = np.full(25, 20.0)
    vals[12] = 400.0
    f = make_frame(vals, xy=grid_xy(5, 5), value_column="resistivity_kohm_cm")
    flags = qa.check_survey(f, kind="resistivity", value_column="resistivity_kohm_cm",
                            plausible_range=(0.5, 2000.0), slab_local=None, spacing=1.0)
    assert not {"QA-ADJ-150", "QA-ADJ-SPIKE", "QA-OPEN-LEAD"} & set(flags["rule"])


def test_few_and_no_readings(make_frame: Any) -> None:
    # common practice, no source: fewer than min_readings usable readings -> warning
    few = check(make_frame([-300.0] * 9))
    assert few.loc[few["rule"] == "QA-FEW-READINGS", "reading_id"].tolist() == [""]
    assert qa.runnable(few)
    assert "QA-FEW-READINGS" not in set(check(make_frame([-300.0] * 10))["rule"])
    none = check(make_frame([np.nan] * 3))
    assert "QA-NO-VALUES" in set(none["rule"]) and not qa.runnable(none)


def test_frame_is_not_modified(make_frame: Any) -> None:
    # issue 2: a suspicious reading is flagged, never dropped
    f = make_frame([-1200.0, -450.0, 0.0, 350.0, np.nan], point_ids=["A", "A", "", "", ""])
    before = f.copy()
    check(f, slab_local=shapely.box(0, -1, 15, 1))
    pd.testing.assert_frame_equal(f, before)


def test_flag_table_dtypes_when_clean(make_frame: Any) -> None:
    # common practice, no source: an empty flag table still has the columns
    flags = check(make_frame([-300.0 - k for k in range(12)]))
    assert list(flags.columns) == qa.FLAG_COLUMNS
    assert flags.empty
    assert qa.runnable(flags)


@pytest.mark.parametrize(
    ("mutate", "match"),
    [
        (lambda f: f.drop(columns="where"), "where"),
        (lambda f: f.drop(columns="potential_mv"), "potential_mv"),
        (lambda f: f.assign(potential_mv=["a", "b", "c"]), "non-numeric"),
        (lambda f: f.assign(survey_id=["S1", "S2", "S1"]), "several surveys"),
    ],
)
def test_bad_frames(make_frame: Any, mutate: Any, match: str) -> None:
    # issue 2 "Bad input": a clear message naming what is wrong
    with pytest.raises(QAError, match=match):
        check(mutate(make_frame([-300.0, -310.0, -320.0])))


@pytest.mark.parametrize(
    ("kw", "match"),
    [
        ({"plausible_range": (200.0, -1000.0)}, "plausible_range"),
        ({"spacing": 0.0}, "spacing"),
        ({"adjacent_limit_mv": -1.0}, "adjacent_limit_mv"),
        ({"duplicate_tolerance": -0.1}, "duplicate_tolerance"),
    ],
)
def test_bad_parameters(make_frame: Any, kw: dict[str, Any], match: str) -> None:
    # common practice, no source
    with pytest.raises(QAError, match=match):
        check(make_frame([-300.0, -310.0]), **kw)


def test_control_point_drift_over_the_shift(make_frame: Any) -> None:
    # common practice: flag a survey when a control point drifts by more than
    # 20 mV between the start and the end of a shift (20 mV: C876 stability/reproducibility,
    # from memory). CP1 is read first, in the middle and last: -300 ... -322 is 22 mV of drift
    # (the middle reading does not count); CP2 drifts 20 mV exactly, which is within.
    f = make_frame([-300.0, -250.0, -290.0, -240.0, -322.0, -260.0],
                   xy=[(0, 0), (5, 5), (0, 0), (1, 1), (0, 0), (5, 5)],
                   point_ids=["CP1", "CP2", "CP1", "", "CP1", "CP2"])
    flags = check(f, spacing=1.0)
    drift = flags[flags["rule"] == "QA-DRIFT"]
    assert len(drift) == 1  # one flag for the survey
    row = drift.iloc[0]
    assert row["reading_id"] == "" and row["severity"] == "warning"
    assert "'CP1' -22.0 mV" in row["message"] and "CP2" not in row["message"]
    assert "line 2 to readings/L1_east.csv line 6" in row["message"]
    assert row["value"] == pytest.approx(-22.0)
    assert qa.runnable(flags)
    # within 20 mV everywhere: no flag
    f = make_frame([-300.0, -319.0], xy=[(0, 0), (0, 0)], point_ids=["CP1", "CP1"])
    assert check(f, spacing=1.0)["rule"].eq("QA-DRIFT").sum() == 0

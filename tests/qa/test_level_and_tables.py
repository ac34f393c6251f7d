"""Tests of geo_corrosion.qa.check_level, the flag tables, the map layer and scale."""

from __future__ import annotations

from typing import Any

import geopandas as gpd
import numpy as np
import pandas as pd
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st

from geo_corrosion import qa
from geo_corrosion.errors import QAError

LEVEL = {"kind": "potential", "value_column": "potential_mv"}


def two_surveys(make_frame: Any, a_mv: float, b_mv: float) -> list[Any]:
    """Surveys S1 and S2 of level L1, both reading control point CP1."""
    s1 = make_frame([a_mv, -250.0], xy=[(0, 0), (5, 0)], point_ids=["CP1", ""],
                    survey_id="S1", file="readings/L1_am.csv")
    s2 = make_frame([b_mv, -260.0], xy=[(0, 0), (5, 5)], point_ids=["CP1", ""],
                    survey_id="S2", file="readings/L1_pm.csv")
    return [s1, s2]


def test_hcp08_reproducibility_pass(make_frame: Any) -> None:
    # [ASTM-C876-15 precision section, from memory]: (-300, -315) passes 20 mV
    flags = qa.check_level(two_surveys(make_frame, -300.0, -315.0), **LEVEL, spacing=1.0)
    assert "QA-REPRODUCIBILITY" not in set(flags["rule"])
    rep = flags[flags["rule"] == "QA-REPRO"]
    assert sorted(rep["reading_id"]) == ["S1:0", "S2:0"]
    assert set(rep["severity"]) == {"info"}
    assert all("15.0 mV" in m for m in rep["message"])
    m1 = rep.loc[rep["reading_id"] == "S1:0", "message"].iloc[0]
    assert m1.startswith("readings/L1_am.csv line 2:") and "survey(s) 'S2';" in m1
    # the same pair in ONE survey fails repeatability (10 mV, the other half)
    one = make_frame([-300.0, -315.0], xy=[(0, 0), (0, 0)], point_ids=["CP1", "CP1"])
    single = qa.check_survey(one, **LEVEL, plausible_range=(-1000, 200), slab_local=None)
    assert "QA-REPEATABILITY" in set(single["rule"])


def test_reproducibility_fail_and_boundary(make_frame: Any) -> None:
    # ASTM C876 precision (from memory): > 20 mV between surveys fails; exactly 20 passes
    flags = qa.check_level(two_surveys(make_frame, -300.0, -321.0), **LEVEL)
    bad = flags[flags["rule"] == "QA-REPRODUCIBILITY"]
    assert sorted(bad["reading_id"]) == ["S1:0", "S2:0"]
    assert set(bad["severity"]) == {"warning"}
    assert "21.0 mV" in bad["message"].iloc[0] and "> 20 mV reproducibility" in bad[
        "message"].iloc[0]
    flags = qa.check_level(two_surveys(make_frame, -300.0, -320.0), **LEVEL)
    assert "QA-REPRODUCIBILITY" not in set(flags["rule"])
    flags = qa.check_level(two_surveys(make_frame, -300.0, -320.0), **LEVEL,
                           reproducibility_mv=15.0)
    assert "QA-REPRODUCIBILITY" in set(flags["rule"])


def test_reproducibility_uses_survey_means(make_frame: Any) -> None:
    # common practice, no source: repeats inside a survey are averaged before comparing
    s1 = make_frame([-300.0, -310.0], xy=[(0, 0), (0, 0)], point_ids=["CP1", "CP1"],
                    survey_id="S1")
    s2 = make_frame([-322.0], xy=[(0, 0)], point_ids=["CP1"], survey_id="S2")
    flags = qa.check_level([s1, s2], **LEVEL)
    # means -305 vs -322 -> 17 mV passes, although -300 vs -322 alone would be 22 mV
    assert set(flags["rule"]) == {"QA-REPRO"}
    assert len(flags) == 3
    assert all("17.0 mV" in m for m in flags["message"])


def test_near_duplicates_across_surveys(make_frame: Any) -> None:
    # common practice, no source: two surveys read one location under different point_ids
    s1 = make_frame([-300.0, -250.0], xy=[(0, 0), (5, 0)], survey_id="S1",
                    file="readings/a.csv")
    s2 = make_frame([-305.0, -255.0], xy=[(0.05, 0), (5.5, 0)], survey_id="S2",
                    file="readings/b.csv")
    flags = qa.check_level([s1, s2], **LEVEL, spacing=1.0)
    dup = flags[flags["rule"] == "QA-DUP-SURVEYS"]
    assert sorted(dup["reading_id"]) == ["S1:0", "S2:0"]
    assert "readings/b.csv line 2" in dup.loc[dup["reading_id"] == "S1:0", "message"].iloc[0]
    # readings of one survey near each other are check_survey's business, not check_level's
    s3 = make_frame([-300.0, -301.0], xy=[(0, 0), (0.01, 0)], survey_id="S3")
    s4 = make_frame([-300.0], xy=[(9, 9)], survey_id="S4")
    assert qa.check_level([s3, s4], **LEVEL, spacing=1.0).empty


def test_check_level_bad_input(make_frame: Any) -> None:
    # issue 2 "Bad input": clear messages
    a = make_frame([-300.0], survey_id="S1", level_id="L1")
    b = make_frame([-300.0], survey_id="S2", level_id="L2")
    with pytest.raises(QAError, match="several levels"):
        qa.check_level([a, b], **LEVEL)
    with pytest.raises(QAError, match="one frame per survey"):
        qa.check_level([a, a.copy()], **LEVEL)
    with pytest.raises(QAError, match="sequence"):
        qa.check_level(a, **LEVEL)
    assert qa.check_level([a], **LEVEL).empty  # one survey: nothing to compare


def test_summarize_and_runnable(make_frame: Any) -> None:
    # common practice, no source: counts by level, survey, rule, severity; errors first
    s1 = make_frame([-1200.0, -450.0, 0.0, 350.0, -1300.0], survey_id="S1")
    s2 = make_frame([0.0, 1.0, -1.0, 2.0], survey_id="S2")
    kw: dict[str, Any] = dict(**LEVEL, plausible_range=(-1000.0, 200.0), slab_local=None)
    flags = pd.concat([qa.check_survey(s1, **kw), qa.check_survey(s2, **kw)],
                      ignore_index=True)
    summ = qa.summarize(flags)
    assert list(summ.columns) == ["level_id", "survey_id", "rule", "severity", "count"]
    got = {(r.survey_id, r.rule): r.count for r in summ.itertuples()}
    assert got[("S1", "QA-RANGE-LOW")] == 2
    assert got[("S1", "QA-RANGE-HIGH")] == 1
    assert got[("S2", "QA-OPEN-LEAD")] == 1
    assert summ["count"].sum() == len(flags)
    s2_rows = summ[summ["survey_id"] == "S2"]
    assert s2_rows["severity"].iloc[0] == "error"
    assert not qa.runnable(flags)
    assert qa.runnable(flags[flags["survey_id"] == "S1"])
    assert qa.summarize(flags.iloc[:0]).empty
    with pytest.raises(QAError, match="severity"):
        qa.runnable(pd.DataFrame({"x": [1]}))


def test_flag_points_layer(make_frame: Any) -> None:
    # common practice, no source: the map layer puts each reading-level flag at its reading
    f = make_frame([-1200.0, -300.0, 0.0, 1.0], xy=[(0, 0), (1, 0), (2, 0), (3, 0)])
    flags = qa.check_survey(f, **LEVEL, plausible_range=(-1000.0, 200.0),
                            slab_local=shapely.box(0, -1, 2.5, 1))
    layer = qa.flag_points(flags, [f])
    assert isinstance(layer, gpd.GeoDataFrame)
    assert layer.crs == f.crs
    assert "" not in set(layer["reading_id"])  # survey-level rows have no place
    assert len(layer) == int((flags["reading_id"] != "").sum()) > 0
    row = layer[layer["rule"] == "QA-RANGE-LOW"].iloc[0]
    assert row.geometry.equals(f.geometry.iloc[0])
    out = layer[layer["rule"] == "QA-OUTSIDE-SLAB"]
    assert out.geometry.iloc[0].equals(f.geometry.iloc[3])


def test_format_flags(make_frame: Any) -> None:
    # common practice, no source: the text listing for `geo-corrosion check`
    f = make_frame([0.0, 1.0, -1.0, 2.0])
    flags = qa.check_survey(f, **LEVEL, plausible_range=(-1000.0, 200.0), slab_local=None)
    text = qa.format_flags(flags)
    assert text.splitlines()[0].startswith("ERROR")
    assert "open lead" in text and "cannot be run" in text
    assert "can be run" in qa.format_flags(flags.iloc[:0])


def test_hundred_thousand_readings() -> None:
    # common practice, no source: a 316 x 316 grid at 0.5 m with injected faults is found
    # exactly (no timing assertion; about a quarter of a second on a laptop)
    n_side, s = 316, 0.5
    j, i = np.divmod(np.arange(n_side * n_side), n_side)
    x, y = i * s, j * s
    rng = np.random.default_rng(42)
    v = -250.0 + rng.uniform(-20.0, 20.0, len(x))
    spikes = np.arange(1000, len(x) - 1000, 7919)
    spikes = spikes[(i[spikes] > 0) & (i[spikes] < n_side - 1)]
    v[spikes] = -1200.0
    n = len(x)
    f = gpd.GeoDataFrame({
        "reading_id": [f"S1:{k}" for k in range(n)], "survey_id": "S1", "level_id": "L1",
        "row": np.arange(n), "where": [f"big.csv line {k + 2}" for k in range(n)],
        "point_id": "", "x_local": x, "y_local": y, "potential_mv": v, "raw_value": v},
        geometry=gpd.points_from_xy(x, y), crs="EPSG:32618")
    flags = qa.check_survey(f, **LEVEL, plausible_range=(-1000.0, 200.0),
                            slab_local=shapely.box(0, 0, 150.0, 200.0),
                            exclusions_local=[shapely.box(10.2, 10.2, 11.2, 11.2)], spacing=s)
    assert n == 99856
    expect = sorted(f"S1:{k}" for k in spikes)
    assert sorted(flags.loc[flags["rule"] == "QA-RANGE-LOW", "reading_id"]) == expect
    assert sorted(flags.loc[flags["rule"] == "QA-ADJ-SPIKE", "reading_id"]) == expect
    assert int((flags["rule"] == "QA-OUTSIDE-SLAB").sum()) == int((x > 150.0).sum())
    assert int((flags["rule"] == "QA-IN-EXCLUSION").sum()) == 4  # 10.5 and 11.0 squared
    assert qa.runnable(flags)


@settings(max_examples=30, deadline=None)
@given(st.lists(st.floats(-1500.0, 500.0), min_size=1, max_size=40),
       st.integers(0, 2**31 - 1))
def test_flags_refer_to_readings(values: list[float], seed: int) -> None:
    # property (common practice): every reading-level flag names a reading of the frame,
    # and a reading is flagged by the range rules exactly when it is outside the range
    rng = np.random.default_rng(seed)
    n = len(values)
    xy = np.round(rng.uniform(0, 5, (n, 2)), 1)
    f = gpd.GeoDataFrame({
        "reading_id": [f"S1:{k}" for k in range(n)], "survey_id": "S1", "level_id": "L1",
        "row": np.arange(n), "where": [f"p.csv line {k + 2}" for k in range(n)],
        "point_id": [rng.choice(["", "CP1", "CP2"]) for _ in range(n)],
        "x_local": xy[:, 0], "y_local": xy[:, 1], "potential_mv": values, "raw_value": values},
        geometry=gpd.points_from_xy(xy[:, 0], xy[:, 1]), crs="EPSG:32618")
    flags = qa.check_survey(f, **LEVEL, plausible_range=(-1000.0, 200.0),
                            slab_local=shapely.box(0, 0, 4, 4), spacing=0.5)
    ids = set(flags.loc[flags["reading_id"] != "", "reading_id"])
    assert ids <= set(f["reading_id"])
    rng_ids = set(flags.loc[flags["rule"].isin(["QA-RANGE-LOW", "QA-RANGE-HIGH"]), "reading_id"])
    v = np.asarray(values)
    assert rng_ids == {f"S1:{k}" for k in np.flatnonzero((v < -1000.0) | (v > 200.0))}


def test_refusal_names_each_error_once_with_its_file(make_frame: Any) -> None:
    # the contract of issue 11: the message that stops a run names the file of each QA error
    # once (the flags' messages start with it), the rule, and reads well for a single error
    from geo_corrosion.stages.check_site import MAX_LISTED_ERRORS, refuse_unrunnable

    far = [(10.0, 10.0), (11.0, 10.0), (12.0, 10.0)]
    one = qa.check_survey(make_frame([-300.0] * 3, xy=far, file="readings/L1_east.csv"),
                          **LEVEL, plausible_range=(-1000.0, 200.0),
                          slab_local=shapely.box(0, 0, 4, 4))
    with pytest.raises(QAError) as err:
        refuse_unrunnable(one)
    text = str(err.value)
    assert text.startswith("the site cannot be run: readings/L1_east.csv: every reading is "
                           "outside the slab outline")
    assert text.count("readings/L1_east.csv") == 1 and "(QA-ALL-OUTSIDE)" in text
    assert "error(s)" not in text and "\n" not in text
    files = [f"readings/L1_{i}.csv" for i in range(MAX_LISTED_ERRORS + 2)]
    many = pd.concat([qa.check_survey(make_frame([-300.0] * 3, xy=far, file=f, survey_id=f[9:-4]),
                                      **LEVEL, plausible_range=(-1000.0, 200.0),
                                      slab_local=shapely.box(0, 0, 4, 4))
                      for f in files], ignore_index=True)
    many.loc[many["rule"] == "QA-ALL-OUTSIDE", "where"] = ""  # a flag without a place
    with pytest.raises(QAError) as err:
        refuse_unrunnable(many)
    lines = str(err.value).splitlines()
    assert lines[0] == (f"the site cannot be run; QA found {len(files)} errors. Fix them and "
                        "run again:")
    assert lines[1] == ("  - survey L1_0: readings/L1_0.csv: every reading is outside the slab "
                        "outline: check the local grid origin, rotation and units of the survey "
                        "(QA-ALL-OUTSIDE)")
    assert len(lines) == MAX_LISTED_ERRORS + 2 and lines[-1].startswith("  ... and 2 more")

"""The stage and exporter timings of a run (run.json ``timings``) and their comparison."""

from __future__ import annotations

import time

import pytest

from geo_corrosion._timing import Timings, rounded, timed
from tests.compare_runs_script import load_compare_runs as _compare_runs


def test_timed_adds_up_per_name_and_records_a_failing_block() -> None:
    """A stage timed twice adds up; a block that raises is still recorded (hand check)."""
    t: Timings = {}
    for _ in range(2):
        with timed(t, "stages", "surfaces"):
            time.sleep(0.01)
    with pytest.raises(ValueError), timed(t, "exporters", "report"):
        raise ValueError("boom")
    assert set(t) == {"stages", "exporters"}
    # two sleeps of 10 ms: at least 20 ms (time.sleep sleeps at least the time asked)
    assert t["stages"]["surfaces"] >= 0.02
    assert t["exporters"]["report"] >= 0.0
    assert rounded({"stages": {"a": 1.23456}}) == {"stages": {"a": 1.235}}


def test_compare_runs_ignores_the_timings() -> None:
    """Timings differ from run to run like elapsed_s: not a difference (common practice)."""
    cr = _compare_runs()
    opts = cr.Options()
    ignore = cr.VOLATILE_JSON_PATHS
    before = {"elapsed_s": 1.0, "files": ["a"]}
    after = {"elapsed_s": 2.0, "files": ["a"], "timings": {"stages": {"surfaces": 3.0}}}
    assert cr.json_diff(before, after, opts, ignore=ignore) == []
    with_t = {**before, "timings": {"stages": {"surfaces": 1.0}}}
    assert cr.json_diff(with_t, after, opts, ignore=ignore) == []
    # a real difference is still found, and so is a changed key order outside the timings
    assert cr.json_diff(before, {**after, "files": ["b"]}, opts, ignore=ignore)
    two = {"files": ["a"], "warnings": []}
    assert cr.json_diff(two, {"warnings": [], "files": ["a"]}, opts, ignore=ignore)

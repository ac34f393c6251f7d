"""Time the stages and exporters of a run, for run.json's ``timings`` record.

The record is additive and small: ``{"stages": {name: s}, "exporters": {name: s}}``; a
stage timed more than once (a stage of every level) adds up.  It feeds the whole-run
benchmark (``benchmarks/bench_run.py``); nothing in a run depends on it.
"""

from __future__ import annotations

import time
from collections.abc import Iterator
from contextlib import contextmanager

__all__ = ["Timings", "timed", "rounded"]

#: group ("stages" or "exporters") -> name -> seconds
Timings = dict[str, dict[str, float]]


@contextmanager
def timed(timings: Timings, group: str, name: str) -> Iterator[None]:
    """Add the wall time of the ``with`` block to ``timings[group][name]``, s.

    Parameters
    ----------
    timings : Timings
        The record to add to (changed in place).
    group : str
        ``"stages"`` or ``"exporters"``.
    name : str
        The stage or exporter.

    Examples
    --------
    >>> t: Timings = {}
    >>> with timed(t, "stages", "surfaces"):
    ...     pass
    >>> sorted(t["stages"])
    ['surfaces']
    """
    t0 = time.perf_counter()
    try:
        yield
    finally:
        g = timings.setdefault(group, {})
        g[name] = g.get(name, 0.0) + time.perf_counter() - t0


def rounded(timings: Timings) -> Timings:
    """Return the record with every time rounded to 1 ms (as run.json holds it)."""
    return {g: {k: round(v, 3) for k, v in names.items()} for g, names in timings.items()}

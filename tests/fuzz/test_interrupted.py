"""Interrupted runs: SIGKILL at moments drawn with a fixed seed never loses output (issue 11).

Item 6 of issue 11: after a run killed at any moment into an ``--overwrite`` folder, the folder
holds the previous complete output or the new one (or, killed between the two renames of the
swap, the previous one waits as ``.out.old-*`` for the next run to restore), and the next run
removes every leftover.  ``tests/core/test_run_safety.py::test_soak_sigkill_never_loses_output``
kills at six chosen moments (the fuzz summary reports it); this case kills at moments drawn
with a fixed seed, so CI is reproducible.  Each is a child process (``geo-corrosion run``).
"""

from __future__ import annotations

import random
import time
from pathlib import Path

import pytest

from tests.core.test_run_safety import cli_run, complete, kill_when, leftovers
from tests.fuzz.contract import TALLY, snapshot

GROUP = "interrupted"
SEED = 20261203
KILLS = 2  # each costs about a run: the slow part stays under 3 minutes


@pytest.mark.slow
def test_kill_at_random_moments_leaves_previous_or_new_output(site: Path, tmp_path: Path
                                                              ) -> None:
    """Each kill leaves a complete output (or a restorable one); the next run cleans up."""
    before = snapshot(site)
    out, log = tmp_path / "out", tmp_path / "run.log"
    t0 = time.monotonic()
    first = cli_run(site, out, log)
    assert first.wait(timeout=300) == 0, log.read_text()
    duration = time.monotonic() - t0
    current = complete(out)["created_utc"]
    rng = random.Random(SEED)
    tally = TALLY.setdefault(GROUP, [0, 0])
    for _ in range(KILLS):
        tally[0] += 1
        frac = rng.uniform(0.05, 1.1)  # past 1: the kill may come after the run ended
        start = time.monotonic()
        proc = cli_run(site, out, log)
        kill_when(proc, lambda s=start, f=frac: time.monotonic() - s > f * duration, 0.0)
        proc.wait(timeout=120)
        left = leftovers(out)
        if out.exists():
            current = complete(out)["created_utc"]  # previous or new: complete either way
        else:  # killed between the renames: the previous output waits, complete, as .old
            olds = [tmp_path / n for n in left if n.startswith(".out.old-")]
            assert len(olds) == 1, f"kill at {frac:.2f} of a run: {left}"
            assert complete(olds[0])["created_utc"] == current
        tally[1] += 1
    final = cli_run(site, out, log)
    assert final.wait(timeout=300) == 0, log.read_text()
    assert "Traceback" not in log.read_text()
    complete(out)
    assert leftovers(out) == [], log.read_text()  # the next run cleaned every leftover
    assert snapshot(site) == before  # inputs only read (issue 11)

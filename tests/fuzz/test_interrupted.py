"""Interrupted runs: SIGKILL at moments drawn with a fixed seed never loses output (issue 11).

Item 6 of issue 11: after a run killed at any moment into an ``--overwrite`` folder, the folder
holds the previous complete output or the new one (or, killed between the two renames of the
swap, the previous one waits as ``.out.old-*`` for the next run to restore), and the next run
removes every leftover.  ``tests/core/test_run_safety.py::test_soak_sigkill_never_loses_output``
kills whole CLI runs at six chosen moments (the fuzz summary reports it); this case kills at
moments drawn with a fixed seed, so CI is reproducible.  The previous output and the run that
cleans up are ``pipeline.run`` with one small exporter, as in that module, to keep it short;
the killed runs are ``geo-corrosion run`` child processes.
"""

from __future__ import annotations

import random
import time
from pathlib import Path

import pytest

from geo_corrosion.pipeline import run
from tests.core.test_run_safety import FAST, cli_run, complete, kill_when, leftovers
from tests.fuzz.contract import TALLY, snapshot

GROUP = "interrupted"
SEED = 20261203
KILLS = 2


@pytest.mark.slow
def test_kill_at_random_moments_leaves_previous_or_new_output(site: Path, tmp_path: Path
                                                              ) -> None:
    """Each kill leaves a complete output (or a restorable one); the next run cleans up."""
    before = snapshot(site)
    out, log = tmp_path / "out", tmp_path / "run.log"
    t0 = time.monotonic()
    run(site, out, exporters=FAST)
    fast = time.monotonic() - t0  # the computing part of a run, and one exporter
    current = complete(out)["created_utc"]
    rng = random.Random(SEED)
    tally = TALLY.setdefault(GROUP, [0, 0])
    killed = []
    for _ in range(KILLS):
        tally[0] += 1
        after = rng.uniform(0.1, 1.5) * fast  # from reading the site to the first exports
        start = time.monotonic()
        proc = cli_run(site, out, log)
        killed.append(kill_when(proc, lambda s=start, a=after: time.monotonic() - s > a, 0.0))
        proc.wait(timeout=120)
        left = leftovers(out)
        if out.exists():
            current = complete(out)["created_utc"]  # previous or new: complete either way
        else:  # killed between the renames: the previous output waits, complete, as .old
            olds = [tmp_path / n for n in left if n.startswith(".out.old-")]
            assert len(olds) == 1, f"kill {after:.1f} s into a run: {left}"
            assert complete(olds[0])["created_utc"] == current
        tally[1] += 1
    # the full run (every exporter) outlasts the fast one: a kill lands (else this test could
    # not fail)
    assert any(killed), "every run ended before its kill"
    run(site, out, exporters=FAST, overwrite=True)  # the next run repairs and cleans
    complete(out)
    assert leftovers(out) == []
    assert "Traceback" not in log.read_text()
    assert snapshot(site) == before  # inputs only read (issue 11)

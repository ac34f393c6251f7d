"""Benchmark: a whole ``geo-corrosion run`` with ``--jobs 1`` against ``--jobs N``.

Runs the command in a fresh process per run (imports included, as a user runs it), one
job count after the other, ``--repeat`` times, and prints per job count the median wall
time (``time.perf_counter``) and the median CPU time of the run and its workers
(``resource.getrusage(RUSAGE_CHILDREN)``, user + system), then the ratio of wall times.
It reports the load average before and after, since the figures depend on it.

Run from the repository root, for example::

    python benchmarks/bench_jobs.py sample_sites/millbrook_garage --jobs 2 --repeat 3

The output folders are written under ``--work`` (default a temporary folder) and removed.
This is a benchmark, not a test.
"""

from __future__ import annotations

import argparse
import os
import resource
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path


def one_run(site: str, out: Path, jobs: int) -> tuple[float, float]:
    """Run the command once; return (wall s, CPU s of the run and its workers)."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t = time.perf_counter()
    subprocess.run([sys.executable, "-m", "geo_corrosion.cli.main", "run", site, "--out",
                    str(out), "--jobs", str(jobs), "-q"], check=True,
                   stdout=subprocess.DEVNULL)
    wall = time.perf_counter() - t
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    shutil.rmtree(out)
    return wall, cpu


def main() -> None:
    """Parse arguments, run, print the table."""
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("site")
    ap.add_argument("--jobs", type=int, default=2, help="the job count set against 1")
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--work", default=None, help="folder for the output folders")
    a = ap.parse_args()
    work = Path(a.work or tempfile.mkdtemp(prefix="bench_jobs-"))
    print(f"load average before: {os.getloadavg()}")
    times: dict[int, list[tuple[float, float]]] = {1: [], a.jobs: []}
    for r in range(a.repeat):  # alternate, so a change of load hits both alike
        for j in times:
            times[j].append(one_run(a.site, work / f"run-j{j}-{r}", j))
    print(f"load average after: {os.getloadavg()}")
    print(f"{'jobs':>5}{'wall_s':>10}{'cpu_s':>10}  runs (wall s)")
    for j, rows in times.items():
        print(f"{j:>5}{statistics.median(w for w, _ in rows):>10.1f}"
              f"{statistics.median(c for _, c in rows):>10.1f}  "
              + ", ".join(f"{w:.1f}" for w, _ in rows))
    ratio = (statistics.median(w for w, _ in times[1])
             / statistics.median(w for w, _ in times[a.jobs]))
    print(f"wall time --jobs 1 / --jobs {a.jobs}: {ratio:.2f}")


if __name__ == "__main__":
    main()

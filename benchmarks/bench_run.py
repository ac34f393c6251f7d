"""Benchmark the whole run, ``geo-corrosion run``, on synthetic garages of growing size.

A benchmark, not a test: it prints tables and asserts nothing.  Per size (total potential
readings over ``--levels`` levels, written by ``benchmarks/synthetic_garage.py`` from a fixed
seed) it runs ``geo-corrosion run`` ``--repeat`` times, each in its own subprocess so that
the peak memory is that process's (``os.wait4``'s ``ru_maxrss``), and prints the medians of:
wall time, CPU time (user + system of the child), peak memory, the output sizes (survey.gpkg,
webmap.html, report.pdf, report.html) and the time of each stage and exporter (run.json
``timings``).  Then it fits how the cost grows: the log-log slope of wall time against n,
beside the slope n log n has over the same sizes.

``--sample`` adds the sample-site target: the whole run of ``sample_sites/millbrook_garage``
against its own variogram fitting plus kriging (the time spent in ``fit_variogram``,
``krige_grid`` and ``krige_regions`` called by the surfaces stage, measured in this process
by wrapping those three functions; target at most 5x, and the whole run under 10 s unloaded).

Run from the repository root::

    python benchmarks/bench_run.py                         # 10k and 30k, once each
    python benchmarks/bench_run.py --sizes 10k,30k,100k --repeat 3 --sample
    python benchmarks/bench_run.py --sizes 100k --with-300k
"""

from __future__ import annotations

import argparse
import json
import math
import os
import statistics
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

import numpy as np

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
SAMPLE = ROOT / "sample_sites" / "millbrook_garage"
OUTPUTS = ("survey.gpkg", "webmap.html", "report.pdf", "report.html")
sys.path.insert(0, str(HERE))

from synthetic_garage import make_garage  # noqa: E402


def parse_size(text: str) -> int:
    """``10k`` -> 10000, ``1.5M`` -> 1500000, ``30000`` -> 30000."""
    t = text.strip().lower()
    mult = {"k": 1_000, "m": 1_000_000}.get(t[-1:], 1)
    return int(float(t[:-1] if mult > 1 else t) * mult)


def run_once(site: Path, out: Path, log: Path) -> dict[str, Any]:
    """Run ``geo-corrosion run`` in a subprocess; wall, CPU, peak RSS, timings, file sizes."""
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join(p for p in (str(ROOT), env.get("PYTHONPATH")) if p)
    # a site inside the repository by its relative path, as a run from the root names it (the
    # outputs then compare equal with such a run's, e.g. /work/runs/base16)
    where = str(site.relative_to(ROOT)) if site.resolve().is_relative_to(ROOT) else str(site)
    cmd = [sys.executable, "-m", "geo_corrosion.cli.main", "run", where, "--out", str(out),
           "--overwrite"]
    with log.open("w") as fh:
        t0 = time.perf_counter()
        p = subprocess.Popen(cmd, stdout=fh, stderr=subprocess.STDOUT, env=env, cwd=ROOT)
        _, status, ru = os.wait4(p.pid, 0)
        wall = time.perf_counter() - t0
    p.returncode = os.waitstatus_to_exitcode(status)
    if p.returncode != 0:
        raise SystemExit(f"geo-corrosion run failed ({p.returncode}); see {log}")
    man = json.loads((out / "run.json").read_text(encoding="utf-8"))
    row: dict[str, Any] = {"wall_s": wall, "cpu_s": ru.ru_utime + ru.ru_stime,
                           "peak_MB": ru.ru_maxrss / 1024.0}
    for name in OUTPUTS:
        f = out / name
        row[f"{name}_MB"] = f.stat().st_size / 1e6 if f.is_file() else float("nan")
    for group, times in man.get("timings", {}).items():
        for name, s in times.items():
            row[f"{group}.{name}"] = s
    return row


def medians(rows: Sequence[dict[str, Any]]) -> dict[str, float]:
    """Return the median of every key over the repeats."""
    keys = dict.fromkeys(k for r in rows for k in r)
    return {k: statistics.median(r.get(k, float("nan")) for r in rows) for k in keys}


def slope(n: Sequence[float], t: Sequence[float]) -> float:
    """Least-squares slope of log t against log n."""
    return float(np.polyfit(np.log(n), np.log(t), 1)[0])


def print_sizes(results: dict[int, dict[str, float]], repeat: int) -> None:
    """Print the per-size table, then the stages and exporters, then the growth fit."""
    ns = sorted(results)
    print(f"\n## Whole run (median of {repeat})\n")
    head = ["readings", "wall_s", "cpu_s", "cpu/wall", "peak_MB",
            *[f"{o}_MB" for o in OUTPUTS]]
    print("| " + " | ".join(head) + " |")
    print("|" + "---|" * len(head))
    for n in ns:
        r = results[n]
        cells = [f"{n:,}", f"{r['wall_s']:.1f}", f"{r['cpu_s']:.1f}",
                 f"{r['cpu_s'] / r['wall_s']:.2f}", f"{r['peak_MB']:.0f}",
                 *[f"{r[f'{o}_MB']:.2f}" for o in OUTPUTS]]
        print("| " + " | ".join(cells) + " |")
    parts = sorted({k for r in results.values() for k in r
                    if k.startswith(("stages.", "exporters."))},
                   key=lambda k: (not k.startswith("stages."), -results[ns[-1]].get(k, 0.0)))
    if parts:
        print("\n## Stages and exporters, s (run.json timings; share of the wall time)\n")
        print("| part | " + " | ".join(f"{n:,}" for n in ns)
              + (" | slope |" if len(ns) > 1 else " |"))
        print("|---|" + "---|" * (len(ns) + (len(ns) > 1)))
        for k in parts:
            vals = [results[n].get(k, float("nan")) for n in ns]
            cells = [f"{v:.2f} ({100 * v / results[n]['wall_s']:.0f} %)"
                     for v, n in zip(vals, ns, strict=True)]
            if len(ns) > 1:
                ok = all(v > 0 for v in vals)
                cells.append(f"{slope(ns, vals):.2f}" if ok else "-")
            print(f"| {k} | " + " | ".join(cells) + " |")
    if len(ns) > 1:
        nlogn = [n * math.log(n) for n in ns]
        print("\n## Growth (log-log slope over the sizes)\n")
        print(f"wall time ~ n^{slope(ns, [results[n]['wall_s'] for n in ns]):.2f}, "
              f"CPU ~ n^{slope(ns, [results[n]['cpu_s'] for n in ns]):.2f}, "
              f"peak memory ~ n^{slope(ns, [results[n]['peak_MB'] for n in ns]):.2f}; "
              f"n log n over these sizes ~ n^{slope(ns, nlogn):.2f}")
        base = results[ns[0]]["wall_s"] / nlogn[0]
        print("wall / (n log n), relative to the smallest size: " + ", ".join(
            f"{n:,}: {results[n]['wall_s'] / m / base:.2f}"
            for n, m in zip(ns, nlogn, strict=True)))


def fit_and_krige_seconds(site: Path) -> tuple[float, float]:
    """Seconds (wall, CPU) the surfaces stage spends in variogram fitting and kriging.

    The site is opened and checked as a run does (:func:`geo_corrosion.pipeline.check`), then
    every level is mapped (:func:`~geo_corrosion.stages.map_surfaces.map_level`) with the
    stage's ``fit_variogram``, ``krige_grid`` and ``krige_regions`` wrapped by a timer: the
    sum over every kind and level of those calls alone.  CPU is this process's (all its
    threads: ``time.process_time``).
    """
    from geo_corrosion import pipeline
    from geo_corrosion.stages import map_surfaces
    from geo_corrosion.units import report_units

    spent = [0.0, 0.0]

    def timer(fn: Callable[..., Any]) -> Callable[..., Any]:
        def wrapped(*a: Any, **k: Any) -> Any:
            t0, c0 = time.perf_counter(), time.process_time()
            try:
                return fn(*a, **k)
            finally:
                spent[0] += time.perf_counter() - t0
                spent[1] += time.process_time() - c0
        return wrapped

    names = ("fit_variogram", "krige_grid", "krige_regions")
    saved = {n: getattr(map_surfaces, n) for n in names}
    s, flags = pipeline.check(site)
    units = report_units(s.config.units)
    try:
        for n in names:
            setattr(map_surfaces, n, timer(saved[n]))
        for lid, lv in s.levels.items():
            map_surfaces.map_level(lv, s.surveys_of(lid), flags, s.config.run, units=units)
    finally:
        for n, f in saved.items():
            setattr(map_surfaces, n, f)
    return spent[0], spent[1]


def sample_target(work: Path, repeat: int) -> None:
    """Print the sample site's whole run against its own variogram fitting plus kriging."""
    runs = [run_once(SAMPLE, work / "sample", work / f"sample_{i}.log") for i in range(repeat)]
    fk = [fit_and_krige_seconds(SAMPLE) for _ in range(repeat)]
    r = medians(runs)
    f = statistics.median(w for w, _ in fk)
    fc = statistics.median(c for _, c in fk)
    print(f"\n## Sample site (median of {repeat})\n")
    print(f"whole run: {r['wall_s']:.1f} s wall, {r['cpu_s']:.1f} s CPU, "
          f"{r['peak_MB']:.0f} MB peak (target < 10 s unloaded)")
    print(f"variogram fitting + kriging of every kind and level: {f:.2f} s wall, "
          f"{fc:.2f} s CPU")
    print(f"ratio whole run / (fitting + kriging): {r['wall_s'] / f:.1f}x wall (target <= 5x), "
          f"{r['cpu_s'] / fc:.1f}x CPU")
    parts = {k: v for k, v in r.items() if k.startswith(("stages.", "exporters."))}
    if parts:
        print("stages and exporters, s: " + ", ".join(
            f"{k} {v:.1f}" for k, v in sorted(parts.items(), key=lambda kv: -kv[1])))


def main(argv: Sequence[str] | None = None) -> int:
    """Run the benchmark from the command line."""
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--sizes", default="10k,30k",
                    help="total potential readings, comma separated (default 10k,30k; "
                         "100k is about 5 min on a loaded machine)")
    ap.add_argument("--with-300k", action="store_true", help="add the 300k garage (long)")
    ap.add_argument("--levels", type=int, default=4, help="levels of each garage (default 4)")
    ap.add_argument("--repeat", type=int, default=1, help="runs per size; medians (default 1)")
    ap.add_argument("--seed", type=int, default=20261203, help="garage seed")
    ap.add_argument("--sample", action="store_true",
                    help="also the sample-site target (whole run vs fitting + kriging)")
    ap.add_argument("--no-sizes", action="store_true", help="only the sample-site target")
    ap.add_argument("--work", type=Path, default=None,
                    help="folder for the garages and runs (default a new temporary folder)")
    a = ap.parse_args(argv)
    work = a.work or Path(tempfile.mkdtemp(prefix="geo_corrosion_bench_"))
    work.mkdir(parents=True, exist_ok=True)
    sizes = [] if a.no_sizes else [parse_size(s) for s in a.sizes.split(",") if s.strip()]
    if a.with_300k and not a.no_sizes:
        sizes.append(300_000)
    print(f"# geo-corrosion run benchmark; work folder {work}")
    print(f"machine: {os.cpu_count()} cores; load average "
          f"{', '.join(f'{x:.2f}' for x in os.getloadavg())} at start")
    results: dict[int, dict[str, float]] = {}
    for n in sorted(set(sizes)):
        site = make_garage(work / f"garage_{n}", levels=a.levels,
                           readings_per_level=n // a.levels, seed=a.seed)
        rows = []
        for i in range(a.repeat):
            rows.append(run_once(site, work / f"run_{n}", work / f"run_{n}_{i}.log"))
            print(f"  {n:,} readings, run {i + 1}/{a.repeat}: {rows[-1]['wall_s']:.1f} s",
                  flush=True)
        results[n] = medians(rows)
    if results:
        print_sizes(results, a.repeat)
    if a.sample:
        sample_target(work, a.repeat)
    print(f"\nload average at end: {', '.join(f'{x:.2f}' for x in os.getloadavg())}")
    return 0


if __name__ == "__main__":
    sys.exit(main())

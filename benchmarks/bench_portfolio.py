"""Benchmark of `geo-corrosion portfolio`: sites one after another vs on Dask workers.

Writes ``--sites`` synthetic sites (:func:`geo_corrosion.testing.make_synthetic_site`, each in
its own place, with its own seed), then in one process run:

* one after another, in this process, without Dask (``run_portfolio(serial=True)``);
* on a LocalCluster of ``--workers`` worker processes, one thread each, BLAS/OpenMP/numba
  limited to one thread per worker (:data:`geo_corrosion.portfolio.WORKER_ENV`).

Prints the wall times (median of ``--repeat``), the ratio (target of issue 16: at least
1.7 with two workers) and whether the outputs are the same: every site's run folder compared
file by file with ``.ci/compare_runs.py`` (time stamps, versions and run times masked), and
the summary tables (less the ``elapsed_s`` column).  Also prints the machine's load
(``/proc/loadavg``) before and after: on a shared machine, read the ratio with it.

Usage::

    PYTHONPATH=. python benchmarks/bench_portfolio.py --sites 20 --repeat 1
"""

from __future__ import annotations

import argparse
import csv
import importlib.util
import os
import shutil
import statistics
import sys
import tempfile
import time
from pathlib import Path
from types import ModuleType

REPO = Path(__file__).resolve().parents[1]


def _compare_runs() -> ModuleType:
    spec = importlib.util.spec_from_file_location("compare_runs", REPO / ".ci" / "compare_runs.py")
    assert spec is not None and spec.loader is not None
    mod = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = mod  # its dataclasses look their module up
    spec.loader.exec_module(mod)
    return mod


def _load() -> str:
    try:
        return Path("/proc/loadavg").read_text().strip()
    except OSError:
        return "unknown"


def make_sites(root: Path, n: int, width_ft: float, depth_ft: float) -> Path:
    """Write ``n`` synthetic sites on a 4 x k grid of places 300 m apart."""
    from geo_corrosion.testing import make_synthetic_site

    for i in range(n):
        make_synthetic_site(root / f"site{i:02d}", width_ft=width_ft, depth_ft=depth_ft,
                            name=f"Bench deck {i + 1:02d}", seed=i + 1,
                            offset_m=(300.0 * (i % 4), -300.0 * (i // 4)))
    return root


def _csv_rows(path: Path) -> list[dict[str, str]]:
    with path.open(newline="", encoding="utf-8") as f:
        return [{k: v for k, v in r.items() if k != "elapsed_s"} for r in csv.DictReader(f)]


def same_outputs(a: Path, b: Path) -> tuple[bool, list[str]]:
    """Compare two portfolio folders: every site's run folder and the summary tables."""
    from geo_corrosion.exporters.portfolio import SUMMARY_CSV

    cmp = _compare_runs()
    bad: list[str] = []
    n_files = 0
    for site in sorted(p.name for p in (a / "sites").iterdir()):
        results = cmp.compare_runs(a / "sites" / site, b / "sites" / site, cmp.Options())
        n_files += len(results)
        bad += [f"{site}/{line}" for rel, r in results if not r.ok
                for line in cmp.format_result(rel, r)]
    for name in SUMMARY_CSV.values():
        n_files += 1
        if _csv_rows(a / name) != _csv_rows(b / name):
            bad.append(f"{name}: differs")
    return not bad, [f"{n_files} files compared", *bad]


def main(argv: list[str] | None = None) -> int:
    """Run the benchmark; return 0 when the outputs are the same."""
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--sites", type=int, default=20)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--repeat", type=int, default=1)
    ap.add_argument("--width-ft", type=float, default=40.0)
    ap.add_argument("--depth-ft", type=float, default=30.0)
    ap.add_argument("--keep", type=Path, default=None, help="keep the folders here")
    args = ap.parse_args(argv)

    from geo_corrosion.portfolio import run_portfolio

    root = Path(tempfile.mkdtemp(prefix="bench_portfolio_", dir=args.keep))
    sites = make_sites(root / "sites", args.sites, args.width_ft, args.depth_ft)
    print(f"{args.sites} synthetic sites of {args.width_ft:g} x {args.depth_ft:g} ft "
          f"(2 ft spacing), {args.workers} workers, repeat {args.repeat}; cpu_count "
          f"{os.cpu_count()}; load before: {_load()}", flush=True)
    times: dict[str, list[float]] = {"serial": [], "dask": []}
    outs: dict[str, Path] = {}
    for k in range(args.repeat):
        for mode in ("serial", "dask"):
            out = root / f"{mode}{k}"
            t0 = time.perf_counter()
            res = run_portfolio([sites], out, serial=mode == "serial",
                                workers=None if mode == "serial" else args.workers)
            times[mode].append(time.perf_counter() - t0)
            failed = [o.site.id for o in res.failed]
            print(f"  {mode:>6} #{k + 1}: {times[mode][-1]:8.1f} s  "
                  f"({len(res.outcomes) - len(failed)} done, {len(failed)} failed)  "
                  f"load {_load()}", flush=True)
            if mode in outs:
                shutil.rmtree(out)
            else:
                outs[mode] = out
    ser, dsk = statistics.median(times["serial"]), statistics.median(times["dask"])
    same, notes = same_outputs(outs["serial"], outs["dask"])
    print(f"one after another: {ser:.1f} s (median of {args.repeat})")
    print(f"Dask, {args.workers} workers: {dsk:.1f} s (median of {args.repeat})")
    print(f"ratio: {ser / dsk:.2f}x (target >= 1.7x with 2 workers)")
    print(f"outputs the same: {'yes' if same else 'NO'} ({'; '.join(notes[:6])})")
    print(f"load after: {_load()}")
    if args.keep is None:
        shutil.rmtree(root, ignore_errors=True)
    else:
        print(f"folders kept in {root}")
    return 0 if same else 1


if __name__ == "__main__":
    sys.exit(main())

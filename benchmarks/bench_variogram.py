"""Benchmark: experimental variogram and model fitting, geo_corrosion against gstools.

Times (median over repeats, ``time.perf_counter``) and peak traced memory
(``tracemalloc``) of :func:`geo_corrosion.surfaces.experimental_variogram` and
:func:`geo_corrosion.surfaces.fit_variogram` (four candidate models, each
cross-validated) on a synthetic correlated deck, beside gstools' ``vario_estimate``
(with its own ``sampling_size`` pair subsampling) and ``fit_variogram`` on the same bins.

Run from the repository root::

    python benchmarks/bench_variogram.py                       # quick size
    python benchmarks/bench_variogram.py --n-readings 100000

This is a benchmark, not a test.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
import tracemalloc
from pathlib import Path
from typing import Any

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_kriging import synthetic_deck  # noqa: E402

from geo_corrosion.surfaces import experimental_variogram, fit_variogram  # noqa: E402


def _measure(fn: Any, repeat: int) -> tuple[float, float, Any]:
    times, peaks, out = [], [], None
    for _ in range(repeat):
        tracemalloc.start()
        t = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t)
        peaks.append(tracemalloc.get_traced_memory()[1] / 2**20)
        tracemalloc.stop()
    return statistics.median(times), max(peaks), out


def main() -> None:
    """Parse arguments, run, print the table."""
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n-readings", type=int, default=20_000)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--skip-gstools", action="store_true")
    a = ap.parse_args()
    x, y, z = synthetic_deck(a.n_readings, 200.0, 120.0)
    rows = []
    t, m, ev = _measure(lambda: experimental_variogram(x, y, z), a.repeat)
    rows.append(("experimental_variogram", t, m,
                 f"{ev.n_readings_used} readings, {ev.n_pairs} pairs"))
    t, m, fit = _measure(lambda: fit_variogram(x, y, z), a.repeat)
    rows.append(("fit_variogram (estimate+4 fits+CV)", t, m,
                 f"{fit.model.name} range {fit.model.range:.2f} sill {fit.model.sill:.1f}"))
    if not a.skip_gstools:
        import gstools as gs

        edges = ev.bin_edges

        def ref() -> Any:
            c, g = gs.vario_estimate((x, y), z, edges, sampling_size=min(a.n_readings, 5000),
                                     sampling_seed=0)
            mod = gs.Spherical(dim=2)
            mod.fit_variogram(c, g, nugget=True)
            return mod

        t, m, mod = _measure(ref, a.repeat)
        rows.append(("gstools estimate+fit (1 model)", t, m,
                     f"spherical len_scale {mod.len_scale:.2f} sill {mod.var + mod.nugget:.1f}"))
    print(f"readings {a.n_readings}")
    print(f"{'step':<36}{'time_s':>9}{'traced_MB':>11}  result")
    for r in rows:
        print(f"{r[0]:<36}{r[1]:>9.3f}{r[2]:>11.1f}  {r[3]}")


if __name__ == "__main__":
    main()

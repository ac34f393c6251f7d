"""Benchmark: geo_corrosion's local kriging engine against pykrige's moving window.

Generates a correlated synthetic deck (a smooth field plus noise), kriges it onto
a regular grid with both engines on the same variogram and the same 16-point
neighbourhood, in one process, and prints wall time (median over repeats,
``time.perf_counter``, runs without tracing), peak memory (``tracemalloc`` peak of Python/numpy
allocations during one extra traced run, and the process peak RSS from ``resource.getrusage``
read after each engine; ours runs first, so its RSS figure is its own peak plus the
interpreter and test data) and the largest absolute and relative differences.

Run from the repository root, for example::

    python benchmarks/bench_kriging.py                          # quick size
    python benchmarks/bench_kriging.py --n-readings 20000 --n-cells 500000
    python benchmarks/bench_kriging.py --n-readings 100000 --n-cells 2500000 --skip-pykrige
    python benchmarks/bench_kriging.py --n-readings 20000 --n-cells 500000 --skip-pykrige \
        --threads 2                       # one thread vs prange vs a thread pool (issue 16)

This is a benchmark, not a test.
"""

from __future__ import annotations

import argparse
import math
import os
import resource
import statistics
import time
import tracemalloc
from collections.abc import Callable
from typing import Any

import numpy as np

from geo_corrosion.surfaces import GridSpec, VariogramModel, krige_grid


def synthetic_deck(n: int, width: float, height: float, seed: int = 0) -> tuple[Any, Any, Any]:
    """Return readings of a smooth correlated field plus noise (value units: mV)."""
    rng = np.random.default_rng(seed)
    x = rng.uniform(0, width, n)
    y = rng.uniform(0, height, n)
    z = np.zeros(n)
    for _ in range(40):  # random Fourier features of a smooth field
        kx, ky = rng.normal(0, 1 / 15.0, 2)
        z += math.sqrt(2 / 40) * np.cos(2 * math.pi * (kx * x + ky * y) + rng.uniform(0, 6.3))
    return x, y, -250.0 + 80.0 * z + rng.normal(0, 10.0, n)


def measure(fn: Callable[[], Any], repeat: int) -> tuple[float, float, Any]:
    """Median wall time (s) over untraced runs, tracemalloc peak (MB) of one more run."""
    times, out = [], None
    for _ in range(repeat):
        t = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t)
    tracemalloc.start()
    fn()
    peak = tracemalloc.get_traced_memory()[1] / 2**20
    tracemalloc.stop()
    return statistics.median(times), peak, out


def threads_table(ours: Callable[[], Any], n: int, repeat: int, ref: Any) -> None:
    """Print wall and CPU time (medians) of our engine on 1 thread and on ``n`` threads."""
    from geo_corrosion.surfaces import _kernel
    from geo_corrosion.surfaces.kriging import KrigingEngine

    rows = []
    for label, t, prange in (("1 thread", 1, True), (f"{n} threads, prange", n, True),
                             (f"{n} threads, pool", n, False)):
        _kernel.set_threads(t)
        KrigingEngine._prange = prange
        walls, cpus, out = [], [], None
        for _ in range(repeat):
            w, c = time.perf_counter(), time.process_time()
            out = ours()
            walls.append(time.perf_counter() - w)
            cpus.append(time.process_time() - c)
        same = all(np.array_equal(u, v, equal_nan=True) for u, v in zip(out, ref, strict=True))
        rows.append((label, statistics.median(walls), statistics.median(cpus), same))
    _kernel.set_threads(None)
    KrigingEngine._prange = False
    print(f"{'threads':<22}{'wall_s':>9}{'cpu_s':>9}{'speed-up':>10}  identical")
    for r in rows:
        print(f"{r[0]:<22}{r[1]:>9.3f}{r[2]:>9.3f}{rows[0][1] / r[1]:>10.2f}  {r[3]}")


def main() -> None:
    """Parse arguments, run both engines, print the table."""
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n-readings", type=int, default=5000)
    ap.add_argument("--n-cells", type=int, default=100_000)
    ap.add_argument("--n-neighbors", type=int, default=16)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--pykrige-repeat", type=int, default=1)
    ap.add_argument("--backend", default="C", choices=["C", "loop"], help="pykrige backend")
    ap.add_argument("--skip-pykrige", action="store_true")
    ap.add_argument("--threads", type=int, default=0,
                    help="also time our engine on one thread, then on this many threads with "
                         "prange in the kernel and with a thread pool over chunks (wall and "
                         "CPU time, and whether the results are identical)")
    ap.add_argument("--numpy-path", action="store_true",
                    help="use the engine's numpy path, not the compiled kernel")
    a = ap.parse_args()

    width, height = 200.0, 120.0  # plan metres
    cell = math.sqrt(width * height / a.n_cells)
    grid = GridSpec(0.0, 0.0, cell, nx=max(1, round(width / cell)), ny=max(1, round(height / cell)))
    x, y, z = synthetic_deck(a.n_readings, width, height)
    model = VariogramModel("spherical", nugget=100.0, psill=6400.0, range=30.0)
    if a.numpy_path:
        os.environ["GEO_CORROSION_NO_JIT"] = "1"
    from geo_corrosion.surfaces._kernel import kernel_for

    path = "compiled kernel (numba)" if kernel_for(model) is not None else "numpy path"
    print(f"our engine: {path}")
    print(f"readings {a.n_readings}, cells {grid.size} ({grid.ny} x {grid.nx}), "
          f"neighbours {a.n_neighbors}, model {model.name}")

    def ours() -> Any:
        return krige_grid(x, y, z, grid, model, n_neighbors=a.n_neighbors)

    t_o, m_o, (zo, so) = measure(ours, a.repeat)
    rss_o = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    rows = [("geo_corrosion", t_o, m_o, rss_o, "", "")]
    if a.threads:
        threads_table(ours, a.threads, a.repeat, (zo, so))
    if not a.skip_pykrige:
        from pykrige.ok import OrdinaryKriging

        def theirs() -> Any:
            ok = OrdinaryKriging(
                x, y, z, variogram_model="spherical",
                variogram_parameters={"psill": model.psill, "range": model.range,
                                      "nugget": model.nugget},
            )
            return ok.execute("grid", grid.x_centers(), grid.y_centers()[::-1],
                              backend=a.backend, n_closest_points=a.n_neighbors)

        t_p, m_p, (zp, sp) = measure(theirs, a.pykrige_repeat)
        rss_p = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
        zp = np.asarray(zp)[::-1]
        sp = np.asarray(sp)[::-1]
        dz = np.abs(zo - zp)
        ds = np.abs(so - sp)
        rows.append((f"pykrige ({a.backend})", t_p, m_p, rss_p,
                     f"{dz.max():.2e} / {(dz / np.abs(zp).max()).max():.2e}",
                     f"{ds.max():.2e} / {(ds / np.abs(sp).max()).max():.2e}"))
        rows.append(("ratio pykrige/ours", t_p / t_o, m_p / m_o, math.nan, "", ""))
    print(f"{'engine':<22}{'time_s':>9}{'traced_MB':>11}{'maxRSS_MB':>11}  "
          f"{'mean diff abs/rel':<22}{'variance diff abs/rel':<22}")
    for r in rows:
        print(f"{r[0]:<22}{r[1]:>9.3f}{r[2]:>11.1f}{r[3]:>11.0f}  {r[4]:<22}{r[5]:<22}")


if __name__ == "__main__":
    main()

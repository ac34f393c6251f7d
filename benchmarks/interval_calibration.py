"""Benchmark: calibration and speed of the intervals of the area beyond a threshold.

Part 1, calibration.  Synthetic decks with known fields: an unconditional Gaussian field
(circulant embedding on a fine lattice, 1/10 of a kriging cell) with a smooth (Gaussian)
or rough (exponential) covariance, sampled on a square reading grid (0.6, 0.8, 1.0 or
1.2 m) with Gaussian noise (sigma 0, 5, 10 or 20 mV).  Each deck is kriged with the true
variogram (the noise variance as nugget) and the area below a threshold is estimated with
its 90 % interval by both methods, side by side in one process:

* ``simulation``: conditional simulation, nugget as measurement error, sub-cell areas
  (:func:`geo_corrosion.condition.probability.simulated_area_intervals`);
* ``separable``: the earlier approximation
  (:func:`geo_corrosion.condition.probability.area_interval`).

The true area is counted on the fine lattice over the mapped cells.  Reported per group and
overall: the share of decks whose interval holds the true area (target 85 to 95 %), the
median interval width against the spread of the actual error of the estimate (the 5-95 %
range of expected minus true area over the decks of a group; target at most 2x), and the
time of each interval against one kriging pass of the deck.

Part 2, speed (``--speed``): 20,000 readings onto 500,000 cells, 100 realisations, against
one kriging pass (median of ``--repeat`` runs; ``tracemalloc`` peak of one more run and the
process peak RSS).

Part 3, seed study (``--seeds``): how the 90 % bounds move with the seed for 50 to 400
realisations (the default of ``[run].realisations``).

Run from the repository root::

    python benchmarks/interval_calibration.py                  # calibration, 128 decks
    python benchmarks/interval_calibration.py --speed --repeat 3
    python benchmarks/interval_calibration.py --seeds

This is a benchmark, not a test.
"""

from __future__ import annotations

import argparse
import math
import resource
import statistics
import time
import tracemalloc
from typing import Any

import numpy as np

from geo_corrosion.condition.probability import area_interval, simulated_area_intervals
from geo_corrosion.surfaces import GridSpec, VariogramModel, krige_grid
from geo_corrosion.surfaces.simulation import CirculantEmbedding, ConditionalSimulator

WIDTH, HEIGHT = 12.0, 8.0  # plan metres
CELL = 0.25  # kriging cell, m
FINE = 10  # fine lattice steps per cell
MEAN, SD, THRESHOLD = -300.0, 60.0, -350.0  # mV; threshold about 0.8 sd below the mean
MODELS = {"smooth (gaussian, range 4 m)": ("gaussian", 4.0),
          "rough (exponential, range 6 m)": ("exponential", 6.0)}


def deck(model_name: str, rng_m: float, sigma: float, spacing: float, seed: int
         ) -> dict[str, Any]:
    """Return a synthetic deck: readings, grid, true area below the threshold."""
    rng = np.random.default_rng(seed)
    h = CELL / FINE
    ny, nx = round(HEIGHT / h), round(WIDTH / h)
    truth_model = VariogramModel(model_name, nugget=0.0, psill=SD**2, range=rng_m)
    field = MEAN + CirculantEmbedding(truth_model, (ny, nx), h).draw(1, rng)[0].reshape(ny, nx)
    # fine node (i, j) at x = (j + 0.5) h, y = HEIGHT - (i + 0.5) h
    step = round(spacing / h)
    js = np.arange(step // 2, nx, step)
    is_ = np.arange(step // 2, ny, step)
    jj, ii = np.meshgrid(js, is_)
    x = (jj.ravel() + 0.5) * h
    y = HEIGHT - (ii.ravel() + 0.5) * h
    z = field[ii.ravel(), jj.ravel()] + rng.normal(0.0, sigma, x.size) if sigma else \
        field[ii.ravel(), jj.ravel()].copy()
    grid = GridSpec(0.0, 0.0, CELL, nx=round(WIDTH / CELL), ny=round(HEIGHT / CELL))
    true_area = float((field < THRESHOLD).sum()) * h * h
    nugget = max(sigma**2, 1e-4 * SD**2)
    model = VariogramModel(model_name, nugget=nugget, psill=SD**2, range=rng_m)
    return {"x": x, "y": y, "z": z, "grid": grid, "model": model, "true": true_area}


def run_deck(d: dict[str, Any], n_real: int) -> dict[str, float]:
    """Krige a deck and find both intervals; return areas, bounds and times."""
    grid, model = d["grid"], d["model"]
    t0 = time.perf_counter()
    mean, var = krige_grid(d["x"], d["y"], d["z"], grid, model, n_neighbors=16)
    t_krige = time.perf_counter() - t0
    mask = np.isfinite(mean)
    t0 = time.perf_counter()
    sim = ConditionalSimulator(d["x"], d["y"], d["z"], model, grid, mask, n_neighbors=16)
    est, _ = simulated_area_intervals(sim, [(THRESHOLD, "below")], n_realisations=n_real)[0]
    t_sim = time.perf_counter() - t0
    t0 = time.perf_counter()
    old = area_interval(mean, var, THRESHOLD, cell_size=CELL, correlation_length=model.range,
                        direction="below", n_draws=400, seed=0)
    t_old = time.perf_counter() - t0
    return {"true": d["true"], "sim_e": est.expected, "sim_lo": est.lower, "sim_hi": est.upper,
            "old_e": old.expected, "old_lo": old.lower, "old_hi": old.upper,
            "t_krige": t_krige, "t_sim": t_sim, "t_old": t_old}


def summarise(rows: list[dict[str, float]], label: str) -> None:
    """Print coverage, width ratio and time ratio of both methods over some decks."""
    if not rows:
        return
    out = [label, str(len(rows))]
    for m in ("sim", "old"):
        cover = np.mean([r[f"{m}_lo"] <= r["true"] <= r[f"{m}_hi"] for r in rows])
        err = np.array([r[f"{m}_e"] - r["true"] for r in rows])
        spread = float(np.quantile(err, 0.95) - np.quantile(err, 0.05))
        width = float(np.median([r[f"{m}_hi"] - r[f"{m}_lo"] for r in rows]))
        ratio = width / spread if spread > 0 else math.inf
        out += [f"{cover:.0%}", f"{width:.2f}/{spread:.2f}", f"{ratio:.2f}"]
    tk = np.median([r["t_krige"] for r in rows])
    out += [f"{np.median([r['t_sim'] for r in rows]) / tk:.1f}",
            f"{np.median([r['t_old'] for r in rows]) / tk:.1f}"]
    print(" | ".join(out))


def calibration(a: argparse.Namespace) -> None:
    """Part 1: coverage and width on synthetic decks."""
    sigmas = (0.0, 5.0, 10.0, 20.0)
    spacings = (0.6, 0.8, 1.0, 1.2)
    rows: list[dict[str, Any]] = []
    t_all = time.perf_counter()
    seed = 0
    for mname, (model, rng_m) in MODELS.items():
        for sigma in sigmas:
            for spacing in spacings:
                for _ in range(a.decks_per_case):
                    seed += 1
                    d = deck(model, rng_m, sigma, spacing, seed)
                    r = run_deck(d, a.realisations)
                    r.update(model=mname, sigma=sigma, spacing=spacing)
                    rows.append(r)
    print(f"{len(rows)} decks, {WIDTH:g} m x {HEIGHT:g} m, cell {CELL:g} m, threshold "
          f"{THRESHOLD:g} mV (field {MEAN:g} +- {SD:g} mV), {a.realisations} realisations, "
          f"{time.perf_counter() - t_all:.0f} s in all")
    print("group | decks | simulation: coverage | median width / error spread (m2) | ratio | "
          "separable: coverage | width / spread | ratio | time/kriging sim | time/kriging sep")
    for mname in MODELS:
        for sigma in sigmas:
            summarise([r for r in rows if r["model"] == mname and r["sigma"] == sigma],
                      f"{mname}, noise {sigma:g} mV")
    for sigma in sigmas:
        summarise([r for r in rows if r["sigma"] == sigma], f"all models, noise {sigma:g} mV")
    summarise(rows, "all decks")


def speed(a: argparse.Namespace) -> None:
    """Part 2: 20,000 readings onto 500,000 cells, 100 realisations."""
    rng = np.random.default_rng(0)
    width, height = 200.0, 120.0
    n = 20_000
    x = rng.uniform(0, width, n)
    y = rng.uniform(0, height, n)
    z = np.zeros(n)
    for _ in range(40):  # the smooth random-Fourier field of bench_kriging.py
        kx, ky = rng.normal(0, 1 / 15.0, 2)
        z += math.sqrt(2 / 40) * np.cos(2 * math.pi * (kx * x + ky * y) + rng.uniform(0, 6.3))
    z = -250.0 + 80.0 * z + rng.normal(0, 10.0, n)
    cell = math.sqrt(width * height / 500_000)
    grid = GridSpec(0.0, 0.0, cell, nx=round(width / cell), ny=round(height / cell))
    model = VariogramModel(a.speed_model, nugget=100.0, psill=6400.0, range=20.0)
    mask = np.ones(grid.shape, bool)

    def kriging() -> Any:
        return krige_grid(x, y, z, grid, model, n_neighbors=16)

    def simulation() -> Any:
        sim = ConditionalSimulator(x, y, z, model, grid, mask, n_neighbors=16)
        return simulated_area_intervals(sim, [(-350.0, "below")],
                                        n_realisations=a.speed_realisations)

    kriging()  # compile and warm up both
    simulation()
    tk, ts, ratios = [], [], []
    for _ in range(a.repeat):
        t = time.perf_counter()
        kriging()
        tk.append(time.perf_counter() - t)
        t = time.perf_counter()
        simulation()
        ts.append(time.perf_counter() - t)
        ratios.append(ts[-1] / tk[-1])
    tracemalloc.start()
    simulation()
    peak = tracemalloc.get_traced_memory()[1] / 2**20
    tracemalloc.stop()
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"speed: {n:,} readings -> {grid.size:,} cells ({a.speed_model}, k = 16), "
          f"{a.speed_realisations} realisations, {a.repeat} repeats")
    print(f"  kriging pass: median {statistics.median(tk):.2f} s  (runs "
          f"{', '.join(f'{v:.2f}' for v in tk)})")
    print(f"  simulation + areas: median {statistics.median(ts):.2f} s  (runs "
          f"{', '.join(f'{v:.2f}' for v in ts)})")
    print(f"  ratio per repeat: {', '.join(f'{v:.1f}' for v in ratios)}; median "
          f"{statistics.median(ratios):.1f}x (target <= 10x)")
    print(f"  tracemalloc peak of one simulation: {peak:.0f} MB; process max RSS {rss:.0f} MB "
          "(target < 1 GB)")


def seeds(a: argparse.Namespace) -> None:
    """Part 3: spread of the 90 % bounds over seeds, by number of realisations."""
    print("seed study: sd over 10 seeds of the 90 % bounds, as % of the mapped area "
          "(and of the interval width)")
    print("deck | realisations | sd lower | sd upper | median width (m2)")
    for mname, (model, rng_m) in MODELS.items():
        for sigma in (0.0, 10.0):
            d = deck(model, rng_m, sigma, 0.8, 1000 + int(sigma))
            grid = d["grid"]
            total = grid.size * CELL**2
            sim = ConditionalSimulator(d["x"], d["y"], d["z"], d["model"], grid,
                                       np.ones(grid.shape, bool), n_neighbors=16)
            for n in (50, 100, 200, 400):
                lo, hi = [], []
                for s in range(10):
                    est, _ = simulated_area_intervals(sim, [(THRESHOLD, "below")],
                                                      n_realisations=n, seed=s)[0]
                    lo.append(est.lower)
                    hi.append(est.upper)
                w = float(np.median(np.subtract(hi, lo)))
                print(f"{mname}, noise {sigma:g} mV | {n} | {np.std(lo) / total:.2%} "
                      f"({np.std(lo) / w:.0%}) | {np.std(hi) / total:.2%} "
                      f"({np.std(hi) / w:.0%}) | {w:.2f}")


def main() -> None:
    """Parse arguments and run the parts asked for."""
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--decks-per-case", type=int, default=4,
                    help="decks per model, noise and spacing (32 cases)")
    ap.add_argument("--realisations", type=int, default=200)
    ap.add_argument("--speed", action="store_true", help="run the speed case only")
    ap.add_argument("--speed-model", default="spherical")
    ap.add_argument("--speed-realisations", type=int, default=100)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--seeds", action="store_true", help="run the seed study only")
    a = ap.parse_args()
    if a.speed:
        speed(a)
    elif a.seeds:
        seeds(a)
    else:
        calibration(a)


if __name__ == "__main__":
    main()

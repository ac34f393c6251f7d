"""Conditional simulation: moments, variogram, data honoured, sub-cell areas.

Each check names its source: the kriging mean and the nugget-filtered kriging variance that
the realisations must reproduce come from our KrigingEngine and, on a small case, from
pykrige; the unconditional variogram is estimated with gstools; the conditioning-by-kriging
identities are from [Chiles-Delfiner-2012 §7.3.1, from memory]; the tolerances are
statistical (derived: standard errors of a mean and of a variance over N realisations).
"""

from __future__ import annotations

import numpy as np
import pytest

from geo_corrosion.surfaces import GridSpec, VariogramModel
from geo_corrosion.surfaces._simkernel import excursion, filtered_weights
from geo_corrosion.surfaces.kriging import KrigingEngine
from geo_corrosion.surfaces.simulation import CirculantEmbedding, ConditionalSimulator


def _deck(n: int = 120, seed: int = 2) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    rng = np.random.default_rng(seed)
    x, y = rng.uniform(0.3, 11.7, n), rng.uniform(0.3, 7.7, n)
    z = -300 + 60 * np.sin(x / 3) * np.cos(y / 2.5) + rng.normal(0, 8, n)
    return x, y, z


GRID = GridSpec(0.0, 0.0, 0.25, nx=48, ny=32)
MODELS = [
    VariogramModel("exponential", nugget=64.0, psill=1600.0, range=6.0),
    VariogramModel("gaussian", nugget=25.0, psill=1600.0, range=4.0),
    VariogramModel("spherical", nugget=100.0, psill=1200.0, range=5.0,
                   anisotropy_ratio=0.6, anisotropy_angle_deg=30.0),
]


def _cells(grid: GridSpec) -> tuple[np.ndarray, np.ndarray]:
    xs, ys = np.meshgrid(grid.x_centers(), grid.y_centers())
    return xs.ravel(), ys.ravel()


@pytest.mark.parametrize("model", MODELS, ids=lambda m: m.name)
def test_filtered_weights_give_the_engines_mean_and_variance_minus_nugget(
        model: VariogramModel) -> None:
    # source: KrigingEngine (ours, itself checked against pykrige); away from the readings
    # the filtered weights are the ordinary kriging weights, and the variance of the
    # nugget-free field is the OK variance minus the nugget (derived: the right-hand sides
    # agree for d > 0 and C_S(0) = C(0) - nugget)
    x, y, z = _deck()
    eng = KrigingEngine(x, y, z, model, n_neighbors=16)
    qx, qy = _cells(GRID)
    mean, var, _ = eng.predict(qx, qy)
    tx, ty = model.transform_coords(qx, qy)
    d, i = eng.query(tx, ty)
    W, v = filtered_weights(eng.px, eng.py, i, d, n=eng.n, model=model)
    np.testing.assert_allclose(np.einsum("ij,ij->i", W, eng.z[i]), mean, rtol=0, atol=1e-8)
    np.testing.assert_allclose(v, var - model.nugget, rtol=1e-9, atol=1e-8)
    # the compiled loop and the numpy reference agree to round-off
    W2, v2 = filtered_weights(eng.px, eng.py, i, d, n=eng.n, model=model, use_kernel=False)
    np.testing.assert_allclose(W, W2, atol=1e-9)
    np.testing.assert_allclose(v, v2, atol=1e-7)


@pytest.mark.parametrize("model", MODELS, ids=lambda m: m.name)
def test_realisations_reproduce_kriging_mean_and_nugget_free_variance(
        model: VariogramModel) -> None:
    # source: KrigingEngine (mean, and OK variance minus nugget); tolerance derived: over N
    # realisations the mean has standard error sqrt(var / N) and a variance estimate
    # relative standard error sqrt(2 / N); 5 standard errors per cell, 0.03 for the median
    x, y, z = _deck()
    eng = KrigingEngine(x, y, z, model, n_neighbors=16)
    qx, qy = _cells(GRID)
    mean, var, _ = eng.predict(qx, qy)
    target_var = (var - model.nugget).reshape(GRID.shape)
    mean = mean.reshape(GRID.shape)
    sim = ConditionalSimulator(x, y, z, model, GRID, np.ones(GRID.shape, bool), n_neighbors=16)
    N = 1500
    zs = np.concatenate([sim.on_grid(b) for b in sim.realisations(N, seed=5, batch=50)])
    m, v = zs.mean(axis=0), zs.var(axis=0, ddof=1)
    assert np.all(np.abs(m - mean) <= 5 * np.sqrt(target_var / N) + 1e-9)
    ratio = v / target_var
    assert abs(np.median(ratio) - 1.0) < 0.03
    assert np.all(np.abs(ratio - 1.0) < 5 * np.sqrt(2.0 / N))
    # the nugget is not in the field: the full OK variance is clearly larger
    assert np.median(v / var.reshape(GRID.shape)) < 1.0 - 3 * np.sqrt(2.0 / N) or \
        model.nugget / model.sill < 0.03


def test_small_case_against_pykrige() -> None:
    # source: pykrige OrdinaryKriging (global neighbourhood, same variogram): its estimate is
    # the realisations' mean and its variance minus the nugget their variance
    pykrige = pytest.importorskip("pykrige.ok")
    x, y, z = _deck(n=25, seed=4)
    model = VariogramModel("exponential", nugget=50.0, psill=1500.0, range=6.0)
    ok = pykrige.OrdinaryKriging(x, y, z, variogram_model="exponential",
                                 variogram_parameters={"sill": model.sill,
                                                       "range": model.range,
                                                       "nugget": model.nugget})
    grid = GridSpec(0.0, 0.0, 0.5, nx=24, ny=16)
    qx, qy = _cells(grid)
    pm, pv = ok.execute("points", qx, qy)
    pm = np.asarray(pm).reshape(grid.shape)
    pv = np.asarray(pv).reshape(grid.shape) - model.nugget
    sim = ConditionalSimulator(x, y, z, model, grid, np.ones(grid.shape, bool), n_neighbors=25)
    N = 2000
    zs = np.concatenate([sim.on_grid(b) for b in sim.realisations(N, seed=1, batch=100)])
    assert np.all(np.abs(zs.mean(axis=0) - pm) <= 5 * np.sqrt(pv / N))
    ratio = zs.var(axis=0, ddof=1) / pv
    assert abs(np.median(ratio) - 1.0) < 0.03
    assert np.all(np.abs(ratio - 1.0) < 5 * np.sqrt(2.0 / N))


@pytest.mark.parametrize("name,rng", [("gaussian", 3.0), ("exponential", 4.0)])
def test_unconditional_variogram_matches_the_model(name: str, rng: float) -> None:
    # source: the method-of-moments variogram along the lattice axes
    # [Cressie-1993 §2.4, from memory], averaged over 40 realisations, against the model;
    # tolerance 10 % of the model plus 1 (derived from the spread of the estimate over
    # realisations, about 3 %)
    model = VariogramModel(name, nugget=0.0, psill=100.0, range=rng)
    cell = 0.2
    emb = CirculantEmbedding(model, (100, 120), cell)
    fields = emb.draw(40, np.random.default_rng(0)).reshape(40, 100, 120)
    lags = np.arange(1, int(rng / cell) + 1, 2)
    g = np.array([0.5 * np.mean(np.concatenate([
        ((fields[:, :, k:] - fields[:, :, :-k]) ** 2).ravel(),
        ((fields[:, k:, :] - fields[:, :-k, :]) ** 2).ravel()])) for k in lags])
    expected = model(lags * cell)
    assert np.all(np.abs(g - expected) <= 0.1 * expected + 1.0), (g, expected)
    assert emb.clipped < 1e-6


def test_realisations_honour_the_data_when_the_nugget_is_zero() -> None:
    # source: conditioning by kriging is exact where the kriging is exact, with no nugget
    # [Chiles-Delfiner-2012 §7.3.1, from memory]; readings at cell centres
    grid = GridSpec(0.0, 0.0, 0.5, nx=20, ny=16)
    xc, yc = grid.x_centers(), grid.y_centers()
    rr, cc = np.meshgrid(np.arange(1, 16, 3), np.arange(1, 20, 3), indexing="ij")
    x, y = xc[cc.ravel()], yc[rr.ravel()]
    z = -300 + 40 * np.sin(x / 2) + 30 * np.cos(y / 3)
    model = VariogramModel("exponential", nugget=0.0, psill=900.0, range=5.0)
    sim = ConditionalSimulator(x, y, z, model, grid, np.ones(grid.shape, bool), n_neighbors=12)
    zs = np.concatenate([sim.on_grid(b) for b in sim.realisations(20, seed=3)])
    np.testing.assert_allclose(zs[:, rr.ravel(), cc.ravel()], np.broadcast_to(z, (20, z.size)),
                               atol=1e-6)
    # and away from the readings they vary
    assert zs[:, 0, 0].std() > 1.0
    # with a nugget the readings are measurements with error: the field there varies
    noisy = ConditionalSimulator(x, y, z, model.replace(nugget=100.0), grid,
                                 np.ones(grid.shape, bool), n_neighbors=12)
    zn = np.concatenate([noisy.on_grid(b) for b in noisy.realisations(200, seed=3)])
    assert zn[:, rr.ravel(), cc.ravel()].std(axis=0).min() > 2.0


def test_excursion_of_a_plane_is_the_exact_area() -> None:
    # source: hand computation: a linear field is its own bilinear interpolant, so the
    # share of a cell below t is the area of a half-plane in the square, up to the
    # sampling of the crossed quarter cells (q = 32: 1/32 of a quarter cell's side)
    ny, nx = 10, 12
    jj, ii = np.meshgrid(np.arange(nx), np.arange(ny))
    field = (jj + 0.5 * ii).astype(float)[None]  # z = col + 0.5 row, centres
    t = 6.3
    rows, cols = np.nonzero(np.ones((ny, nx), bool)[1:-1, 1:-1])
    rows, cols = rows + 1, cols + 1
    frac, area = excursion(field, rows, cols, t, below=True, q=32)
    # fine reference: each interior cell sampled at 400 x 400 points of the plane
    s = (np.arange(400) + 0.5) / 400 - 0.5
    su, sv = np.meshgrid(s, s)
    ref = np.array([np.mean((c + su + 0.5 * (r + sv)) < t) for r, c in zip(rows, cols,
                                                                            strict=True)])
    np.testing.assert_allclose(frac, ref, atol=0.02)
    assert abs(area[0] - ref.sum()) < 0.05
    # compiled loop and numpy reference give the same shares
    f2, a2 = excursion(field, rows, cols, t, below=True, q=32, use_kernel=False)
    np.testing.assert_allclose(frac, f2, atol=1e-12)
    np.testing.assert_allclose(area, a2, atol=1e-9)


def test_readings_off_the_grid_widen_the_lattice() -> None:
    # common practice, no source: readings beyond the grid still condition it
    x, y, z = _deck(n=60)
    x = np.append(x, [-3.0, 15.0])
    y = np.append(y, [-2.0, 11.0])
    z = np.append(z, [-280.0, -320.0])
    model = MODELS[0]
    sim = ConditionalSimulator(x, y, z, model, GRID, np.ones(GRID.shape, bool), n_neighbors=16)
    assert sim.shape[0] > GRID.ny + 8 and sim.shape[1] > GRID.nx + 12
    zs = np.concatenate([sim.on_grid(b) for b in sim.realisations(10, seed=0)])
    assert np.isfinite(zs).all()


def test_excursion_fast_path_matches_the_numpy_reference() -> None:
    # source: the numpy version of excursion (our reference, no fast path: every quarter
    # tested and sampled); the compiled loop skips cells whose 5 x 5 block, widened by the
    # cubic overshoot, lies on one side, and must give the same shares (derived: the bound
    # holds for every quarter's interpolant, so the per-quarter test would agree)
    rng = np.random.default_rng(11)
    emb = CirculantEmbedding(VariogramModel("gaussian", nugget=0.0, psill=900.0, range=3.0),
                             (40, 56), 0.25)
    z = -300.0 + emb.draw(3, rng).reshape(3, 40, 56)
    z += rng.normal(0.0, 12.0, z.shape)  # roughness at the cell scale
    z[:, :3, :5] = np.nan  # a corner not simulated: the bilinear fall-back there
    rows, cols = np.nonzero(np.isfinite(z[0]))
    for t in (-330.0, -300.0, -270.0):
        f1, a1 = excursion(z, rows, cols, t, below=True, q=6)
        f2, a2 = excursion(z, rows, cols, t, below=True, q=6, use_kernel=False)
        np.testing.assert_allclose(f1, f2, atol=1e-9)
        np.testing.assert_allclose(a1, a2, atol=1e-9)
        # the fast path was taken for most cells (whole shares), the rest sampled
        assert 0.1 < np.mean((f1 == 0) | (f1 == 3)) < 1.0


def test_bernstein_hull_bounds_the_sampled_interpolant() -> None:
    # source: the convex hull property of the Bernstein form (a polynomial on [0, 1] lies
    # between its least and greatest Bernstein coefficient)
    # [Farin-2002 ch. 5, from memory]; the samples are those of excursion's crossed
    # quarters, evaluated here directly from Keys' weights (hand-written cubic convolution
    # kernel, a = -1/2)
    from geo_corrosion.surfaces._simkernel import bernstein_hull

    def keys(s: float) -> np.ndarray:
        return 0.5 * np.array([-s**3 + 2 * s**2 - s, 3 * s**3 - 5 * s**2 + 2,
                               -3 * s**3 + 4 * s**2 + s, s**3 - s**2])

    rng = np.random.default_rng(5)
    for q in (1, 3, 8):
        hull = bernstein_hull(q)
        u = (np.arange(q) + 0.5) / (2.0 * q)
        for _ in range(200):
            blk = rng.normal(0.0, 1.0, (4, 4)) * rng.choice([1.0, 50.0])
            for kr in (0, 1):
                for kc in (0, 1):
                    coef = hull[kr] @ blk @ hull[kc].T
                    sr = u if kr == 1 else 1.0 - u
                    sc = u if kc == 1 else 1.0 - u
                    vals = np.array([[keys(a) @ blk @ keys(b) for b in sc] for a in sr])
                    assert vals.min() >= coef.min() - 1e-12 * np.abs(blk).max()
                    assert vals.max() <= coef.max() + 1e-12 * np.abs(blk).max()
        # the bound is tight enough to matter: narrower than the 16 values' range
        assert np.ptp(hull[1] @ blk @ hull[1].T) < np.ptp(blk)

# ruff: noqa: D103  (test names say what they check)
"""Variogram models and the experimental variogram."""

from __future__ import annotations

import json
import tracemalloc

import gstools as gs
import numpy as np
import pytest
from pykrige import variogram_models as pkv

from geo_corrosion.errors import KrigingError
from geo_corrosion.surfaces import VariogramModel, experimental_variogram

H = np.linspace(0.01, 80.0, 200)


@pytest.mark.parametrize(
    ("name", "fn", "rng_factor"),
    [
        ("spherical", pkv.spherical_variogram_model, 1.0),
        ("exponential", pkv.exponential_variogram_model, 1.0),
        ("gaussian", pkv.gaussian_variogram_model, 7.0 / (4.0 * np.sqrt(3.0))),
    ],
)
def test_models_match_pykrige(name, fn, rng_factor):
    m = VariogramModel(name, nugget=3.0, psill=40.0, range=25.0)
    # pykrige as reference library ([psill, range, nugget])
    ref = fn([40.0, 25.0 * rng_factor, 3.0], H)
    np.testing.assert_allclose(m(H), ref, rtol=1e-12)


@pytest.mark.parametrize(
    ("m", "ref"),
    [
        (VariogramModel("spherical", 2.0, 10.0, 30.0),
         gs.Spherical(dim=2, var=10.0, len_scale=30.0, nugget=2.0)),
        (VariogramModel("exponential", 2.0, 10.0, 30.0),
         gs.Exponential(dim=2, var=10.0, len_scale=10.0, nugget=2.0)),
        (VariogramModel("gaussian", 2.0, 10.0, 30.0),
         gs.Gaussian(dim=2, var=10.0, len_scale=30.0 * np.sqrt(np.pi / 12.0), nugget=2.0)),
        (VariogramModel("stable", 2.0, 10.0, 30.0, shape=1.3),
         gs.Stable(dim=2, var=10.0, len_scale=30.0 / 3 ** (1 / 1.3), alpha=1.3, nugget=2.0)),
    ],
)
def test_models_match_gstools(m, ref):
    np.testing.assert_allclose(m(H), ref.variogram(H), rtol=1e-10)  # gstools as reference library


@pytest.mark.parametrize("nu", [0.5, 1.0, 1.5, 2.5])
def test_matern_matches_gstools(nu):
    m = VariogramModel("matern", 1.0, 5.0, 20.0, shape=nu)
    ref = gs.Matern(dim=2, var=5.0, len_scale=np.sqrt(nu) * m.scale, nu=nu, nugget=1.0)
    np.testing.assert_allclose(m(H), ref.variogram(H), rtol=1e-8)  # gstools as reference library


@pytest.mark.parametrize(("name", "shape"), [("exponential", None), ("gaussian", None),
                                             ("matern", 0.8), ("stable", 1.5)])
def test_practical_range_is_95_percent(name, shape):
    m = VariogramModel(name, 0.0, 1.0, 17.0, shape=shape)
    # practical range: 95 % of the partial sill (common practice, no source)
    assert float(m(np.array([17.0]))[0]) == pytest.approx(0.95, abs=2e-3)


def test_nugget_discontinuity_and_anisotropy():
    m = VariogramModel("spherical", 5.0, 10.0, 20.0, anisotropy_ratio=0.5,
                       anisotropy_angle_deg=30.0)
    assert float(m(np.array([0.0]))[0]) == 0.0
    assert float(m(np.array([1e-6]))[0]) == pytest.approx(5.0, abs=1e-5)
    t = np.radians(30.0)
    # distance r along the major axis equals r * ratio along the minor axis (geometric anisotropy)
    xa, ya = m.transform_coords(np.array([8 * np.cos(t)]), np.array([8 * np.sin(t)]))
    xb, yb = m.transform_coords(np.array([-4 * np.sin(t)]), np.array([4 * np.cos(t)]))
    assert np.hypot(xa, ya)[0] == pytest.approx(np.hypot(xb, yb)[0])


def test_invalid_models_refused():
    with pytest.raises(KrigingError, match="unknown variogram model"):
        VariogramModel("cubic", 0.0, 1.0, 1.0)
    with pytest.raises(KrigingError, match="range"):
        VariogramModel("spherical", 0.0, 1.0, 0.0)
    with pytest.raises(KrigingError, match=">= 0"):
        VariogramModel("spherical", -1.0, 1.0, 1.0)
    with pytest.raises(KrigingError, match="anisotropy_ratio"):
        VariogramModel("spherical", 0.0, 1.0, 1.0, anisotropy_ratio=2.0)
    with pytest.raises(KrigingError, match="shape"):
        VariogramModel("matern", 0.0, 1.0, 1.0, shape=50.0)


def test_to_dict_is_json_with_units():
    d = VariogramModel("matern", 1.0, 2.0, 3.0).to_dict(value_unit="mV", length_unit="m")
    assert d["nugget_unit"] == "mV^2" and d["range_unit"] == "m" and d["shape"] == 1.5
    json.dumps(d)


@pytest.fixture(scope="module")
def field():
    rng = np.random.default_rng(2)
    x, y = rng.uniform(0, 100, 600), rng.uniform(0, 60, 600)
    z = np.sin(x / 10) + 0.3 * rng.normal(size=600)
    return x, y, z


def test_experimental_matches_gstools(field):
    x, y, z = field
    ev = experimental_variogram(x, y, z, max_lag=40.0, n_lags=8)
    edges = np.linspace(0, 40.0, 9)
    _, g_ref, c_ref = gs.vario_estimate((x, y), z, edges, return_counts=True)
    np.testing.assert_array_equal(ev.counts, c_ref)  # gstools as reference library
    # gstools as reference library (Matheron)
    np.testing.assert_allclose(ev.gamma, g_ref, rtol=1e-10)


def test_directional_matches_brute_force(field):
    x, y, z = field
    ev = experimental_variogram(x, y, z, max_lag=30.0, n_lags=5, direction_deg=90.0,
                                tolerance_deg=20.0)
    i, j = np.triu_indices(x.size, 1)  # all pairs, brute force (definition)
    dx, dy = x[j] - x[i], y[j] - y[i]
    h = np.hypot(dx, dy)
    ang = np.degrees(np.arctan2(dy, dx)) % 180.0
    keep = (h <= 30.0) & (np.abs(ang - 90.0) <= 20.0)
    b = np.minimum((h[keep] / 6.0).astype(int), 4)
    g = np.bincount(b, 0.5 * (z[i] - z[j])[keep] ** 2, 5) / np.bincount(b, minlength=5)
    np.testing.assert_allclose(ev.gamma, g, rtol=1e-10)
    assert ev.direction_deg == 90.0


def test_pair_budget_keeps_memory_bounded():
    rng = np.random.default_rng(0)
    n = 100_000
    x, y = rng.uniform(0, 300, n), rng.uniform(0, 200, n)
    z = np.sin(x / 20) + rng.normal(0, 0.1, n)
    tracemalloc.start()
    ev = experimental_variogram(x, y, z, max_pairs=500_000)
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    assert ev.subsampled and ev.n_pairs <= 500_000
    # all pairs within the default max lag would be ~2e9 (>30 GB as a matrix); the budget
    # keeps the working set small (issue 3: memory stays small at 100,000 readings)
    assert peak < 150 * 2**20
    json.dumps(ev.to_dict(value_unit="mV", length_unit="m"))


def test_experimental_bad_input():
    with pytest.raises(KrigingError, match="max_lag"):
        experimental_variogram([1.0, 1.0], [2.0, 2.0], [1.0, 2.0])
    with pytest.raises(KrigingError, match="no pair"):
        experimental_variogram([0.0, 100.0], [0.0, 0.0], [1.0, 2.0], max_lag=1.0)


def test_matern_repeated_distances_match_gstools_value_by_value():
    """The Matérn model evaluated once per distinct distance gives every distance its value.

    Source: gstools' Matern covariance (reference library), value by value, on the pair
    distances of a regular 2 ft grid of readings (few distinct distances, many repeats, the
    case the evaluation per distinct distance serves) and on random distances.
    """
    g = np.arange(0.0, 40.0, 2.0)
    gx, gy = np.meshgrid(g, g)
    px, py = gx.ravel(), gy.ravel()
    h_grid = np.hypot(px[:, None] - px[None, :], py[:, None] - py[None, :]).ravel()
    h_grid = h_grid[h_grid > 0]  # gstools gives the nugget at 0, this model 0
    h_rand = np.random.default_rng(3).uniform(0.0, 60.0, 9000)
    for nu in (0.7, 1.5, 2.6):
        m = VariogramModel("matern", 1.0, 5.0, 20.0, shape=nu)
        ref = gs.Matern(dim=2, var=5.0, len_scale=np.sqrt(nu) * m.scale, nu=nu, nugget=1.0)
        for h in (h_grid, h_rand):
            np.testing.assert_allclose(m(h), ref.variogram(h), rtol=1e-8)


def test_directions_from_one_set_of_pairs_match_all_pairs_by_hand():
    """Variograms of several directions from one set of pairs match a count by hand.

    Source: hand computation of the directional Matheron estimator over every pair (all
    pairs from the full distance matrix, angle window of +/- 22.5 degrees, equal-width bins);
    with a pair subsample and groups, each direction equals its own single-direction call.
    """
    from geo_corrosion.surfaces import experimental_variograms

    rng = np.random.default_rng(8)
    x, y = rng.uniform(0, 90, 700), rng.uniform(0, 60, 700)
    z = np.sin(x / 9.0) + 0.3 * np.cos(y / 5.0) + rng.normal(0, 0.1, x.size)
    dirs = (0.0, 90.0, None)
    evs = experimental_variograms(x, y, z, max_lag=30.0, directions=list(dirs))
    i, j = np.triu_indices(x.size, 1)
    dx, dy = x[j] - x[i], y[j] - y[i]
    h = np.hypot(dx, dy)
    ang = np.degrees(np.arctan2(dy, dx)) % 180.0
    for d, ev in zip(dirs, evs, strict=True):
        sel = h <= 30.0
        if d is not None:
            sel &= np.minimum(np.abs(ang - d), 180.0 - np.abs(ang - d)) <= 22.5
        b = np.minimum((h[sel] / 2.0).astype(int), 14)  # 15 bins of 2.0
        cnt = np.bincount(b, minlength=15)
        g = np.bincount(b, weights=0.5 * (z[i][sel] - z[j][sel]) ** 2, minlength=15)
        np.testing.assert_array_equal(ev.counts, cnt[cnt > 0])
        np.testing.assert_allclose(ev.gamma, g[cnt > 0] / cnt[cnt > 0], rtol=1e-12)
    groups = (x > 45).astype(int)
    kw = {"max_pairs": 20_000, "groups": groups}
    for d, ev in zip(dirs, experimental_variograms(x, y, z, max_lag=30.0, directions=list(dirs),
                                                   **kw), strict=True):
        assert ev.to_dict() == experimental_variogram(x, y, z, max_lag=30.0, direction_deg=d,
                                                      **kw).to_dict()

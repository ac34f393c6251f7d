# ruff: noqa: D103  (test names say what they check)
"""Local ordinary kriging engine and cross-validation."""

from __future__ import annotations

import numpy as np
import pytest
from pykrige.ok import OrdinaryKriging

from geo_corrosion.errors import KrigingError, KrigingWarning
from geo_corrosion.surfaces import VariogramModel, cross_validate, krige

RTOL = 1e-6  # issue 3: "agree with pykrige to within 1e-6 relative"


def _pykrige_params(m: VariogramModel) -> dict[str, float]:
    """Test-side adapter: our practical range -> pykrige's range definition."""
    r = m.range
    if m.name == "gaussian":  # pykrige: exp(-(h / (4 r / 7))^2); ours: exp(-3 (h / r)^2)
        r = m.range * 7.0 / (4.0 * np.sqrt(3.0))
    return {"psill": m.psill, "range": r, "nugget": m.nugget}


def _pykrige(x, y, z, m, xq, yq, **kw):
    ok = OrdinaryKriging(
        x, y, z, variogram_model=m.name, variogram_parameters=_pykrige_params(m),
        anisotropy_scaling=1.0 / m.anisotropy_ratio, anisotropy_angle=m.anisotropy_angle_deg,
    )
    zp, sp = ok.execute("points", xq, yq, **kw)
    return np.asarray(zp), np.asarray(sp)


@pytest.fixture(scope="module")
def data():
    rng = np.random.default_rng(3)
    n = 400
    x = rng.uniform(0, 80, n)
    y = rng.uniform(0, 50, n)
    z = -250 + 60 * np.sin(x / 9) * np.cos(y / 13) + rng.normal(0, 8, n)
    xq = rng.uniform(-5, 85, 900)
    yq = rng.uniform(-5, 55, 900)
    return x, y, z, xq, yq


def _close(a, b, rtol=RTOL):
    scale = np.abs(b).max()
    np.testing.assert_allclose(a, b, rtol=0, atol=rtol * scale)


@pytest.mark.parametrize("name", ["spherical", "exponential", "gaussian"])
@pytest.mark.parametrize("aniso", [(1.0, 0.0), (0.4, 35.0)])
@pytest.mark.parametrize("backend", ["loop", "C"])
def test_moving_window_matches_pykrige(data, name, aniso, backend):
    x, y, z, xq, yq = data
    m = VariogramModel(name, nugget=20.0, psill=900.0, range=25.0,
                       anisotropy_ratio=aniso[0], anisotropy_angle_deg=aniso[1])
    zm, sm = krige(x, y, z, xq, yq, m, n_neighbors=16, chunk_size=128)
    zp, sp = _pykrige(x, y, z, m, xq, yq, n_closest_points=16, backend=backend)
    _close(zm, zp)  # pykrige as reference library, same variogram and neighbourhood
    _close(sm, sp)  # pykrige as reference library (kriging variance)


@pytest.mark.parametrize("name", ["spherical", "exponential", "gaussian"])
def test_global_matches_pykrige_on_small_data(name):
    rng = np.random.default_rng(5)
    x, y = rng.uniform(0, 30, 40), rng.uniform(0, 30, 40)
    z = rng.normal(0, 1, 40).cumsum()
    xq, yq = rng.uniform(0, 30, 200), rng.uniform(0, 30, 200)
    m = VariogramModel(name, nugget=0.1, psill=2.0, range=12.0)
    zm, sm = krige(x, y, z, xq, yq, m, n_neighbors=40)
    zp, sp = _pykrige(x, y, z, m, xq, yq, backend="vectorized")
    _close(zm, zp)  # pykrige global ordinary kriging as reference library
    _close(sm, sp)  # pykrige as reference library


def test_neighbourhood_larger_than_data_warns_and_is_global():
    rng = np.random.default_rng(6)
    x, y, z = rng.uniform(0, 10, 12), rng.uniform(0, 10, 12), rng.normal(0, 1, 12)
    m = VariogramModel("exponential", nugget=0.0, psill=1.0, range=6.0)
    with pytest.warns(KrigingWarning, match="larger than the 12 readings"):
        zm, _ = krige(x, y, z, [5.0, 2.0], [5.0, 8.0], m, n_neighbors=50)
    zp, _ = _pykrige(x, y, z, m, np.array([5.0, 2.0]), np.array([5.0, 8.0]), backend="vectorized")
    _close(zm, zp)  # pykrige global OK as reference library


def test_exact_at_readings(data):
    x, y, z, _, _ = data
    m = VariogramModel("spherical", nugget=20.0, psill=900.0, range=25.0)
    zm, sm = krige(x, y, z, x[:50], y[:50], m)
    np.testing.assert_allclose(zm, z[:50], rtol=1e-9)  # kriging is an exact interpolator
    np.testing.assert_allclose(sm, 0.0, atol=1e-9)  # zero variance at a reading


def test_chunking_and_grouping_do_not_change_result(data):
    x, y, z, _, _ = data
    m = VariogramModel("matern", nugget=5.0, psill=900.0, range=30.0, shape=1.2)
    g = np.linspace(0, 80, 61)
    gx, gy = np.meshgrid(g, g[:40])  # fine grid: many cells share neighbour sets
    a = krige(x, y, z, gx.ravel(), gy.ravel(), m, chunk_size=5)
    b = krige(x, y, z, gx.ravel(), gy.ravel(), m, chunk_size=100_000)
    np.testing.assert_allclose(a[0], b[0], rtol=1e-10)  # internal consistency
    np.testing.assert_allclose(a[1], b[1], rtol=1e-9, atol=1e-9)


def test_radius_limits_search():
    x = np.array([0.0, 1.0, 0.0, 1.0, 10.0])
    y = np.array([0.0, 0.0, 1.0, 1.0, 10.0])
    z = np.array([1.0, 2.0, 3.0, 4.0, 100.0])
    m = VariogramModel("exponential", nugget=0.0, psill=1.0, range=3.0)
    zm, sm = krige(x, y, z, [0.5, 30.0], [0.5, 30.0], m, n_neighbors=5, radius=2.0)
    zr, _ = krige(x[:4], y[:4], z[:4], [0.5], [0.5], m, n_neighbors=4)
    assert zm[0] == pytest.approx(zr[0], rel=1e-9)  # the far reading is outside the radius
    assert np.isnan(zm[1]) and np.isnan(sm[1])  # nothing within the radius -> no value


def test_log_transform_back_transform_matches_independent_formula():
    rng = np.random.default_rng(8)
    x, y = rng.uniform(0, 20, 30), rng.uniform(0, 20, 30)
    zr = np.exp(rng.normal(3.0, 0.5, 30))  # lognormal resistivity, kOhm.cm
    m = VariogramModel("exponential", nugget=0.02, psill=0.25, range=10.0)
    xq, yq = np.array([3.3, 10.0]), np.array([7.1, 12.5])
    est, var = krige(x, y, zr, xq, yq, m, n_neighbors=30, transform="log")
    # covariance-form ordinary kriging written out here ([Journel-1980] lognormal OK, from memory):
    # estimate = exp(y* + sigma^2 / 2 + mu) with sum_j l_j C_ij + mu = C_i0
    yl = np.log(zr)
    d = np.hypot(x[:, None] - x[None], y[:, None] - y[None])
    c = m.covariance(d)
    a = np.block([[c, np.ones((30, 1))], [np.ones((1, 30)), np.zeros((1, 1))]])
    for i in range(2):
        c0 = m.covariance(np.hypot(x - xq[i], y - yq[i]))
        sol = np.linalg.solve(a, np.append(c0, 1.0))
        lam, mu = sol[:30], sol[30]
        ys = lam @ yl
        s2 = m.sill - lam @ c0 - mu
        expect = np.exp(ys + s2 / 2 + mu)
        assert est[i] == pytest.approx(expect, rel=1e-9)
        assert var[i] == pytest.approx(expect**2 * np.expm1(s2), rel=1e-9)
    med, _ = krige(x, y, zr, x[:3], y[:3], m, transform="log", back_transform_how="median")
    np.testing.assert_allclose(med, zr[:3], rtol=1e-9)  # exact at readings


def test_bad_input_messages():
    m = VariogramModel("spherical", nugget=0.0, psill=1.0, range=5.0)
    with pytest.raises(KrigingError, match="NaN"):
        krige([0, 1, np.nan], [0, 1, 2], [1, 2, 3], [0], [0], m)
    with pytest.raises(KrigingError, match="same length"):
        krige([0, 1], [0, 1, 2], [1, 2, 3], [0], [0], m)
    with pytest.raises(KrigingError, match="positive readings"):
        krige([0, 1, 2], [0, 1, 0], [1, -2, 3], [0], [0], m, transform="log")
    with pytest.raises(KrigingError, match="n_neighbors"):
        krige([0, 1, 2], [0, 1, 0], [1, 2, 3], [0], [0], m, n_neighbors=0)


def test_coincident_readings_are_averaged_with_warning():
    x = np.array([0.0, 0.0, 5.0, 9.0, 3.0])
    y = np.array([0.0, 0.0, 5.0, 1.0, 8.0])
    z = np.array([1.0, 3.0, 5.0, 7.0, 2.0])
    m = VariogramModel("spherical", nugget=0.0, psill=4.0, range=10.0)
    with pytest.warns(KrigingWarning, match="averaged"):
        zm, _ = krige(x, y, z, [0.0], [0.0], m, n_neighbors=4)
    assert zm[0] == pytest.approx(2.0)  # mean of the two coincident readings


def test_collinear_readings_warn():
    x = np.linspace(0, 50, 40)
    y = 2.0 * x + 1.0
    z = np.sin(x / 5)
    m = VariogramModel("exponential", nugget=0.01, psill=1.0, range=15.0)
    with pytest.warns(KrigingWarning, match="straight line"):
        zm, sm = krige(x, y, z, [10.0, 30.0], [21.0, 0.0], m)
    assert np.isfinite(zm).all() and np.isfinite(sm).all()


# ---------------------------------------------------------------- cross-validation


@pytest.fixture(scope="module")
def known_field():
    """Gaussian field with a known exponential covariance (exact Cholesky simulation)."""
    rng = np.random.default_rng(11)
    n = 500
    x, y = rng.uniform(0, 100, n), rng.uniform(0, 100, n)
    m = VariogramModel("exponential", nugget=0.05, psill=1.0, range=30.0)
    d = np.hypot(x[:, None] - x[None], y[:, None] - y[None])
    c = m.covariance(d)
    np.fill_diagonal(c, m.sill)
    z = np.linalg.cholesky(c) @ rng.normal(size=n)
    return x, y, z, m


def test_cv_on_known_covariance(known_field):
    x, y, z, m = known_field
    cv = cross_validate(x, y, z, m, n_neighbors=24)
    # with the true covariance the standardized errors have unit variance
    # (kriging theory; common practice, no source): MSSE near 1, mean error near 0
    assert 0.75 < cv.msse < 1.3
    assert abs(cv.mean_error) < 0.1
    assert cv.n_tested == 500
    # scaling the sill leaves the weights unchanged and scales the variance: MSSE / 4 exactly
    big = m.replace(nugget=m.nugget * 4, psill=m.psill * 4)
    cv4 = cross_validate(x, y, z, big, n_neighbors=24)
    assert cv4.msse == pytest.approx(cv.msse / 4, rel=1e-9)
    assert cv4.rmse == pytest.approx(cv.rmse, rel=1e-9)
    # an overly smooth model must score worse on RMSE
    cv_bad = cross_validate(x, y, z, VariogramModel("gaussian", 0.0, 1.0, 60.0), n_neighbors=24)
    assert cv_bad.rmse > cv.rmse


def test_loo_equals_refit_without_point(known_field):
    x, y, z, m = known_field
    cv = cross_validate(x, y, z, m, n_neighbors=16)
    for i in (0, 17, 333):
        keep = np.arange(x.size) != i
        zi, _ = krige(x[keep], y[keep], z[keep], [x[i]], [y[i]], m, n_neighbors=16)
        assert cv.residuals[i] == pytest.approx(zi[0] - z[i], rel=1e-9)  # definition of LOO


def test_kfold_and_subset(known_field):
    x, y, z, m = known_field
    cvk = cross_validate(x, y, z, m, method="kfold", k=5)
    assert cvk.n_tested == 500 and np.isfinite(cvk.rmse)
    cvs = cross_validate(x, y, z, m, max_points=100)
    assert cvs.n_tested == 100 and np.isnan(cvs.residuals).sum() == 400
    assert set(cvk.to_dict()) >= {"mean_error", "rmse", "msse", "method"}
    with pytest.raises(KrigingError, match="method"):
        cross_validate(x, y, z, m, method="jackknife")

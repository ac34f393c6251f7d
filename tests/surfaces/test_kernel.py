"""The compiled kernel agrees with the engine's numpy path (the reference) to round-off.

The numpy path is itself checked against pykrige and gstools (tests/surfaces); here the
two paths of our engine are compared on the same readings, model and neighbourhood.
"""

from __future__ import annotations

import numpy as np
import pytest

from geo_corrosion.surfaces._kernel import kernel_for
from geo_corrosion.surfaces.kriging import KrigingEngine
from geo_corrosion.surfaces.variogram import VariogramModel

pytest.importorskip("numba")


def _deck(n: int = 600, seed: int = 3) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    rng = np.random.default_rng(seed)
    x, y = rng.uniform(0, 40, n), rng.uniform(0, 25, n)
    z = -250 + 60 * np.sin(x / 6) * np.cos(y / 5) + rng.normal(0, 8, n)
    return x, y, z


MODELS = [
    VariogramModel("spherical", nugget=30.0, psill=900.0, range=9.0),
    VariogramModel("exponential", nugget=10.0, psill=800.0, range=12.0),
    VariogramModel("gaussian", nugget=5.0, psill=700.0, range=8.0),
    VariogramModel("stable", nugget=5.0, psill=700.0, range=8.0, shape=1.5),
    VariogramModel("spherical", nugget=30.0, psill=900.0, range=9.0,
                   anisotropy_ratio=0.5, anisotropy_angle_deg=30.0),
]


@pytest.mark.parametrize("model", MODELS, ids=lambda m: f"{m.name}-{m.anisotropy_ratio}")
@pytest.mark.parametrize("radius", [None, 3.0])
def test_kernel_matches_numpy_path(model: VariogramModel, radius: float | None) -> None:
    x, y, z = _deck()
    rng = np.random.default_rng(1)
    qx = np.concatenate([rng.uniform(-5, 45, 3000), x[:50]])  # includes exact points
    qy = np.concatenate([rng.uniform(-5, 30, 3000), y[:50]])
    fast = KrigingEngine(x, y, z, model, n_neighbors=12, radius=radius)
    ref = KrigingEngine(x, y, z, model, n_neighbors=12, radius=radius, use_kernel=False)
    assert fast._kernel is not None and ref._kernel is None
    m1, v1, n1 = fast.predict(qx, qy)
    m0, v0, n0 = ref.predict(qx, qy)
    np.testing.assert_array_equal(np.isnan(m1), np.isnan(m0))  # same points without data
    ok = np.isfinite(m0)
    assert ok.sum() > 1000
    np.testing.assert_allclose(m1[ok], m0[ok], rtol=1e-10, atol=1e-9)
    np.testing.assert_allclose(v1[ok], v0[ok], rtol=1e-8, atol=1e-8)
    np.testing.assert_allclose(n1[ok], n0[ok], rtol=1e-8, atol=1e-8)
    # kriging is exact at the readings ([Cressie-1993], ordinary kriging with Γ_ii = 0)
    np.testing.assert_allclose(m1[-50:], z[:50], atol=1e-8)


def test_matern_and_the_switch_use_the_numpy_path(monkeypatch: pytest.MonkeyPatch) -> None:
    assert kernel_for(VariogramModel("matern", nugget=1.0, psill=9.0, range=5.0)) is None
    sph = VariogramModel("spherical", nugget=1.0, psill=9.0, range=5.0)
    assert kernel_for(sph) == 0
    monkeypatch.setenv("GEO_CORROSION_NO_JIT", "1")
    assert kernel_for(sph) is None


def test_singular_systems_fall_back_to_the_numpy_path() -> None:
    # zero nugget and two readings 1e-300 apart (not merged: merge=False) make Γ exactly
    # singular (a zero pivot) for the points near them; the numpy path's pseudo-inverse takes them
    x = np.array([0.0, 1e-300, 5.0, 0.0, 5.0, 2.5])
    y = np.array([0.0, 0.0, 0.0, 5.0, 5.0, 2.5])
    z = np.array([1.0, 1.0, 2.0, 3.0, 4.0, 2.5])
    model = VariogramModel("spherical", nugget=0.0, psill=1.0, range=10.0)
    from geo_corrosion.errors import KrigingWarning

    with pytest.warns(KrigingWarning, match="pseudo-inverse"):
        eng = KrigingEngine(x, y, z, model, n_neighbors=6, merge=False)
        m, v, _ = eng.predict(np.array([1.0, 4.0]), np.array([1.0, 4.0]))
    assert np.isfinite(m).all() and np.isfinite(v).all()
    from geo_corrosion.surfaces._kernel import solve_points

    d, i = eng.query(*eng.model.transform_coords(np.array([1.0, 4.0]), np.array([1.0, 4.0])))
    assert solve_points(eng.px, eng.py, eng.z, i, d, n=eng.n, code=0, model=model,
                        eps=1e-10)[3].all()  # both points were left to the numpy path
    with pytest.warns(KrigingWarning, match="pseudo-inverse"):
        ref = KrigingEngine(x, y, z, model, n_neighbors=6, merge=False, use_kernel=False)
        m0, v0, _ = ref.predict(np.array([1.0, 4.0]), np.array([1.0, 4.0]))
    np.testing.assert_allclose(m, m0, rtol=1e-12)
    np.testing.assert_allclose(v, v0, rtol=1e-12)


def test_variance_calibration_keeps_estimates_and_gives_msse_one() -> None:
    # Ordinary kriging weights are invariant to multiplying the variogram by a constant
    # (the factor cancels in the system [Cressie-1993 §3.2, from memory]), so the estimate is
    # unchanged and the variance scales. Checked by re-running the cross-validation with the
    # calibrated model, independently of the value calibrate_variance sets.
    from geo_corrosion.stages.map_surfaces import calibrate_variance
    from geo_corrosion.surfaces import cross_validate, fit_variogram

    x, y, z = _deck(800)
    fit = fit_variogram(x, y, z, models=("spherical",))
    cv = cross_validate(x, y, z, fit.model, n_neighbors=12)
    assert abs(cv.msse - 1) > 0.05  # the case worth calibrating
    fit2, cv2 = calibrate_variance(fit, cv)
    assert fit2.variance_factor == pytest.approx(cv.msse)
    again = cross_validate(x, y, z, fit2.model, n_neighbors=12)
    assert again.msse == pytest.approx(1.0, rel=1e-9)
    np.testing.assert_allclose(again.residuals, cv.residuals, rtol=1e-9, atol=1e-9)
    np.testing.assert_allclose(again.variance, cv2.variance, rtol=1e-9)

# ruff: noqa: D103  (test names say what they check)
"""Variogram fitting and model choice."""

from __future__ import annotations

import json

import gstools as gs
import numpy as np
import pytest

from geo_corrosion.errors import KrigingError, KrigingWarning
from geo_corrosion.surfaces import VariogramModel, fit_variogram


@pytest.fixture(scope="module")
def spherical_field():
    """Gaussian field with a known spherical variogram, simulated exactly by Cholesky."""
    rng = np.random.default_rng(21)
    n = 900
    x, y = rng.uniform(0, 120, n), rng.uniform(0, 120, n)
    m = VariogramModel("spherical", nugget=0.1, psill=1.0, range=35.0)
    c = m.covariance(np.hypot(x[:, None] - x[None], y[:, None] - y[None]))
    np.fill_diagonal(c, m.sill)
    z = np.linalg.cholesky(c) @ rng.normal(size=n)
    return x, y, z, m


def test_fit_recovers_known_model_and_agrees_with_gstools(spherical_field):
    x, y, z, truth = spherical_field
    fit = fit_variogram(x, y, z, models=("spherical", "exponential"))
    sph = fit.candidates["spherical"].model
    # one realisation, 900 readings: range and sill within 35 % of the truth (common practice)
    assert sph.range == pytest.approx(truth.range, rel=0.35)
    assert sph.sill == pytest.approx(truth.sill, rel=0.35)
    ev = fit.experimental
    ref = gs.Spherical(dim=2)
    ref.fit_variogram(ev.lags, ev.gamma, nugget=True, weights=ev.counts.astype(float))
    # gstools as reference library: its least-squares fit on the same bins gives a similar model
    assert sph.range == pytest.approx(ref.len_scale, rel=0.25)
    assert sph.sill == pytest.approx(ref.var + ref.nugget, rel=0.15)
    assert fit.model.name in ("spherical", "exponential")
    best = min(fit.candidates.values(), key=lambda c: c.cv.rmse)
    assert fit.model == best.model  # chosen by smallest cross-validation RMSE
    d = fit.to_dict(value_unit="mV", length_unit="m")
    json.dumps(d)
    assert d["model"]["range_unit"] == "m" and set(d["candidates"]) == {"spherical", "exponential"}


def test_fixed_parameters_are_kept(spherical_field):
    x, y, z, _ = spherical_field
    fit = fit_variogram(x, y, z, fixed={"model": "exponential", "nugget": 0.25}, cv_folds=3)
    assert set(fit.candidates) == {"exponential"}
    assert fit.model.name == "exponential" and fit.model.nugget == 0.25
    assert fit.candidates["exponential"].cv.method == "kfold"
    with pytest.raises(KrigingError, match="unknown fixed"):
        fit_variogram(x, y, z, fixed={"sill": 3.0})


def test_matern_candidate_fits(spherical_field):
    x, y, z, _ = spherical_field
    fit = fit_variogram(x, y, z, models=("matern",))
    m = fit.model
    assert m.name == "matern" and 0.2 <= m.shape <= 5.0
    assert np.isfinite(fit.candidates["matern"].cv.msse)


def test_too_few_readings_fall_back_with_warning():
    rng = np.random.default_rng(1)
    x, y, z = rng.uniform(0, 10, 12), rng.uniform(0, 10, 12), rng.normal(0, 5, 12)
    with pytest.warns(KrigingWarning, match="fewer than 30"):
        fit = fit_variogram(x, y, z)
    assert fit.fallback and fit.model.name == "exponential"
    assert fit.model.psill == pytest.approx(np.var(z))
    full = {"model": "spherical", "nugget": 1.0, "psill": 2.0, "range": 3.0}
    fit2 = fit_variogram(x, y, z, fixed=full)  # everything fixed: no warning, no fallback
    assert not fit2.fallback and fit2.model.range == 3.0


def test_degenerate_inputs_refused():
    with pytest.raises(KrigingError, match="all 50 readings are equal"):
        fit_variogram(np.arange(50.0), np.arange(50.0) % 7, np.full(50, -200.0))
    with pytest.raises(KrigingError, match="at least 3"):
        fit_variogram([0.0, 1.0], [0.0, 1.0], [1.0, 2.0])


def test_collinear_readings_warn():
    x = np.linspace(0, 100, 60)
    z = np.sin(x / 8)
    with pytest.warns(KrigingWarning, match="straight line"):
        fit = fit_variogram(x, 0.5 * x, z, models=("spherical",))
    assert np.isfinite(fit.model.range)


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_short_range_structure_is_found_inside_the_default_first_bin(seed: int) -> None:
    # A field of 40 random Fourier features with wave numbers ~ N(0, (1/15 per m)^2) has the
    # Gaussian covariance exp(-2 pi^2 s^2 h^2) (Rahimi & Recht 2007, random features; from
    # memory), practical range sqrt(ln 20 / (2 pi^2 s^2)) = 5.84 m and variance 80^2 mV^2,
    # plus a 10 mV white-noise nugget. Its structure lies inside the first 5 m bin of the
    # default lags (max lag = diagonal / 3 = 78 m), where a fit used to find ranges of
    # 75-230 m for some subsamples.
    import math

    rng = np.random.default_rng(100 + seed)
    n = 30_000
    x, y = rng.uniform(0, 200, n), rng.uniform(0, 120, n)
    z = np.zeros(n)
    for _ in range(40):
        kx, ky = rng.normal(0, 1 / 15.0, 2)
        z += math.sqrt(2 / 40) * np.cos(2 * math.pi * (kx * x + ky * y) + rng.uniform(0, 6.3))
    z = -250 + 80 * z + rng.normal(0, 10, n)
    fit = fit_variogram(x, y, z, seed=seed)
    practical = math.sqrt(math.log(20) / (2 * math.pi**2 / 15.0**2))
    assert fit.model.name in ("gaussian", "matern")  # smooth at the origin
    assert fit.model.range == pytest.approx(practical, rel=0.25)
    assert any("first lag bin" in note for note in fit.notes)


@pytest.mark.parametrize("fixed", [None, {"nugget": 0.05}])
def test_written_out_jacobian_gives_scipys_fit_to_the_bit(spherical_field, monkeypatch, fixed):
    """The fit's own finite-difference Jacobian reproduces scipy's default one exactly.

    Source: scipy's ``least_squares`` with its default ``jac="2-point"``
    (``approx_derivative``; reference library): every candidate's fitted parameters and WLS
    residual are the same floats with either Jacobian.
    """
    from geo_corrosion.surfaces import fitting
    from geo_corrosion.surfaces.variogram import experimental_variogram

    x, y, z, _ = spherical_field
    ev = experimental_variogram(x, y, z, n_lags=15)
    names = ("spherical", "exponential", "gaussian", "matern", "stable")
    ours = {n: fitting._fit_one(n, ev, dict(fixed or {}), float(np.var(z)), 50.0) for n in names}
    plain = fitting.optimize.least_squares

    def scipys(*args, **kw):
        kw.pop("jac")
        return plain(*args, **kw)

    monkeypatch.setattr(fitting.optimize, "least_squares", scipys)
    ref = {n: fitting._fit_one(n, ev, dict(fixed or {}), float(np.var(z)), 50.0) for n in names}
    for n in names:
        assert ours[n][0].to_params() == ref[n][0].to_params(), n
        assert ours[n][1] == ref[n][1], n

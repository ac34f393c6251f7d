"""Tests of geo_corrosion.condition.potential."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from geo_corrosion.condition import potential as P
from geo_corrosion.errors import ConditionError


def test_cfd_plotting_position() -> None:
    """Check cfd plotting position."""
    # r/(n+1) [ASTM-C876-91 §6.3, from memory]
    cfd = P.cumulative_frequency([-150.0, -250.0, -300.0, -400.0, np.nan])
    assert cfd.potential_mv.tolist() == [-400.0, -300.0, -250.0, -150.0]
    np.testing.assert_allclose(cfd.percent, [20.0, 40.0, 60.0, 80.0])
    np.testing.assert_allclose(cfd.z, stats.norm.ppf([0.2, 0.4, 0.6, 0.8]))  # scipy as reference
    assert P.fraction_below([-150.0, -250.0, -300.0, -400.0], -350.0) == 0.25  # one of four


def test_cfd_empty() -> None:
    """Check cfd empty."""
    # common practice, no source
    with pytest.raises(ConditionError, match="no finite"):
        P.cumulative_frequency([np.nan])


def _two_populations(seed: int = 3) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return np.r_[rng.normal(-450.0, 40.0, 300), rng.normal(-180.0, 30.0, 700)]


def test_mixture_recovers_populations() -> None:
    """Check mixture recovers populations."""
    # synthetic two-population data (seeded); tolerances ~3 standard errors
    x = _two_populations()
    m = P.fit_mixture_threshold(x)
    assert m.active_mean_mv == pytest.approx(-450.0, abs=8.0)
    assert m.passive_mean_mv == pytest.approx(-180.0, abs=5.0)
    assert m.active_std_mv == pytest.approx(40.0, abs=6.0)
    assert m.passive_std_mv == pytest.approx(30.0, abs=4.0)
    assert m.active_weight == pytest.approx(0.3, abs=0.04)
    assert m.warnings == ()
    # threshold: posterior 0.5 at the crossing (definition, common practice)
    assert m.posterior_active(m.threshold_mv) == pytest.approx(0.5, abs=1e-9)
    da, dp = m.density(m.threshold_mv)
    assert float(da) == pytest.approx(float(dp), rel=1e-9)
    assert m.active_mean_mv < m.threshold_mv < m.passive_mean_mv
    # fraction of readings below the threshold matches a direct count
    assert m.fraction_readings_below == pytest.approx(np.mean(x < m.threshold_mv))
    assert m.threshold_at(0.9) < m.threshold_mv < m.threshold_at(0.1)


def test_mixture_threshold_true_parameters() -> None:
    """Check mixture threshold true parameters."""
    # D: crossing of the true weighted densities, solved numerically with scipy (brentq)
    from scipy.optimize import brentq

    def diff(v: float) -> float:
        return 0.3 * stats.norm.pdf(v, -450, 40) - 0.7 * stats.norm.pdf(v, -180, 30)

    true_thr = brentq(diff, -450, -180)
    m = P.fit_mixture_threshold(_two_populations())
    assert m.threshold_mv == pytest.approx(true_thr, abs=10.0)


def test_mixture_matches_sklearn() -> None:
    """Check mixture matches sklearn."""
    # scikit-learn GaussianMixture as reference library
    sk = pytest.importorskip("sklearn.mixture")
    x = _two_populations(5)
    g = sk.GaussianMixture(2, random_state=0, tol=1e-10, max_iter=1000).fit(x[:, None])
    order = np.argsort(g.means_.ravel())
    m = P.fit_mixture_threshold(x)
    assert m.active_mean_mv == pytest.approx(g.means_.ravel()[order][0], abs=0.5)
    assert m.passive_mean_mv == pytest.approx(g.means_.ravel()[order][1], abs=0.5)
    assert m.active_weight == pytest.approx(g.weights_[order][0], abs=0.005)


def test_mixture_is_deterministic() -> None:
    """Check mixture is deterministic."""
    # common practice, no source: no hidden randomness
    x = _two_populations(9)
    assert P.fit_mixture_threshold(x) == P.fit_mixture_threshold(x)


def test_mixture_area_fractions() -> None:
    """Check mixture area fractions."""
    # D: area shares are counts of cells times the cell area
    x = _two_populations()
    cells = np.array([[-500.0, -400.0], [-100.0, np.nan]])
    m = P.fit_mixture_threshold(x, cell_potential_mv=cells, cell_area=0.25)
    assert m.area_below == pytest.approx(0.5)
    assert m.area_above == pytest.approx(0.25)
    assert m.fraction_area_below == pytest.approx(2 / 3)
    with pytest.raises(ConditionError, match="cell_area"):
        P.fit_mixture_threshold(x, cell_potential_mv=cells)


def test_mixture_single_population_warns_or_refuses() -> None:
    """Check mixture single population warns or refuses."""
    # common practice: one normal population gives no clear threshold
    rng = np.random.default_rng(1)
    x = rng.normal(-250.0, 30.0, 500)
    try:
        m = P.fit_mixture_threshold(x)
    except ConditionError as err:
        assert "two populations" in str(err)
    else:
        assert any("overlap" in w or "only" in w for w in m.warnings)


def test_mixture_bad_input() -> None:
    """Check mixture bad input."""
    # common practice, no source
    with pytest.raises(ConditionError, match="at least 20"):
        P.fit_mixture_threshold([-300.0] * 5)
    with pytest.raises(ConditionError, match="equal"):
        P.fit_mixture_threshold([-300.0] * 30)


def test_gradient_linear_ramp() -> None:
    """Check gradient linear ramp."""
    # D: |grad E| of E = 30 x + 40 y is 50 mV per unit everywhere
    y, x = np.mgrid[0:10, 0:12] * 0.5
    g = P.gradient_magnitude(30.0 * x + 40.0 * y, 0.5)
    np.testing.assert_allclose(g, 50.0)
    # anisotropic cells
    y2, x2 = np.mgrid[0:10, 0:12]
    g2 = P.gradient_magnitude(30.0 * (x2 * 2.0) + 40.0 * (y2 * 0.5), 2.0, cell_size_y=0.5)
    np.testing.assert_allclose(g2, 50.0)


def test_gradient_bad_input() -> None:
    """Check gradient bad input."""
    # common practice, no source
    with pytest.raises(ConditionError, match="2-D"):
        P.gradient_magnitude([1.0, 2.0], 1.0)
    with pytest.raises(ConditionError, match="positive"):
        P.gradient_magnitude(np.zeros((3, 3)), 0.0)


def _em_per_reading(x: np.ndarray, mu0: tuple[float, float], var0: float, max_iter: int,
                    tol: float) -> tuple[np.ndarray, np.ndarray, np.ndarray, float, int]:
    """EM over every reading, written out as in the textbook (reference for the test)."""
    w, mu, var = np.array([0.5, 0.5]), np.array(mu0), np.array([var0, var0])
    ll_old, ll, it = -np.inf, -np.inf, 0
    for step in range(1, max_iter + 1):
        it = step
        logp = (np.log(w) - 0.5 * np.log(2 * np.pi * var)
                - 0.5 * (x[:, None] - mu) ** 2 / var)
        lse = np.logaddexp(logp[:, 0], logp[:, 1])
        ll = float(lse.mean())
        resp = np.exp(logp - lse[:, None])
        nk = resp.sum(axis=0)
        w = nk / x.size
        mu = (resp * x[:, None]).sum(axis=0) / nk
        var = np.maximum((resp * (x[:, None] - mu) ** 2).sum(axis=0) / nk, 1.0)
        if abs(ll - ll_old) < tol:
            break
        ll_old = ll
    return w, mu, var, ll, it


def test_mixture_em_on_distinct_values_matches_per_reading_em() -> None:
    """Check the EM on distinct values with counts gives the per-reading EM's fit."""
    # Dempster-Laird-Rubin 1977 EM written per reading (above) as the reference; readings
    # rounded to 1 mV, as a half-cell meter gives them, so that values repeat
    x = np.round(_two_populations(3))
    assert np.unique(x).size < x.size / 2
    var0 = float(np.var(x)) / 4.0
    mu0 = (float(np.quantile(x, 0.25)), float(np.quantile(x, 0.75)))
    w, mu, var, ll, it = P._em(x, mu0, var0, 1000, 1e-10)
    rw, rmu, rvar, rll, rit = _em_per_reading(x, mu0, var0, 1000, 1e-10)
    assert it == rit
    np.testing.assert_allclose(mu, rmu, rtol=0, atol=1e-9)
    np.testing.assert_allclose(np.sqrt(var), np.sqrt(rvar), rtol=0, atol=1e-9)
    np.testing.assert_allclose(w, rw, rtol=0, atol=1e-12)
    assert ll == pytest.approx(rll, abs=1e-12)

"""Statistical evaluation of half-cell potentials.

Methods
-------
Cumulative frequency distribution
    Readings are sorted ascending; reading of rank ``r`` (1-based) of ``n`` gets
    the plotting position ``f = r / (n + 1)`` [ASTM-C876-91 §6.3, from memory].
    On a normal-probability scale the
    ordinate is ``z = Phi^-1(f)`` (``scipy.stats.norm.ppf``), so a normal
    population plots as a straight line and an active and a passive population
    appear as two segments [RILEM-TC154-2003, from memory].

Site-specific threshold
    A two-component Gaussian mixture is fitted to the readings by our own
    expectation-maximisation with deterministic starts (three quantile pairs;
    the best log-likelihood wins), so results do not depend on a random seed
    or on scikit-learn.  The component with the more negative mean is called
    *active*, the other *passive*.  The threshold is where the weighted
    component densities cross between the two means,
    ``w_a N(x; mu_a, s_a) = w_p N(x; mu_p, s_p)``, i.e. where the posterior
    probability of "active" is 0.5; :meth:`MixtureThreshold.threshold_at`
    gives the crossing for any other posterior probability.  This follows the
    idea of Gulikers & Elsener (2008), who model active and passive steel with
    normal distributions [Gulikers-Elsener-2008]; the crossing rule is
    common practice.  Ashman's D = sqrt(2)|mu_a - mu_p| / sqrt(s_a^2 + s_p^2)
    is reported; D < 2 means the populations are not clearly separated, and a
    warning is attached.

Gradient map
    ``|grad E|`` by central differences (``numpy.gradient``) on a regular grid,
    in mV per plan unit.  Steep gradients next to the most negative zones point
    to anodes [RILEM-TC154-2003, from memory].
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from geo_corrosion.errors import ConditionError

__all__ = [
    "CumulativeFrequency",
    "cumulative_frequency",
    "fraction_below",
    "MixtureThreshold",
    "fit_mixture_threshold",
    "gradient_magnitude",
]

_VAR_FLOOR_MV2 = 1.0  # 1 mV^2: below the 10 mV repeatability [ASTM-C876-15, from memory]


def _finite_1d(values: ArrayLike, what: str) -> NDArray[np.float64]:
    try:
        v = np.asarray(values, dtype=float).ravel()
    except (TypeError, ValueError) as err:
        raise ConditionError(f"{what} must be numbers in mV vs CSE ({err})") from err
    out: NDArray[np.float64] = v[np.isfinite(v)]
    return out


@dataclass(frozen=True)
class CumulativeFrequency:
    """Cumulative frequency distribution of potentials.

    Attributes
    ----------
    potential_mv : ndarray
        Readings sorted ascending (NaN dropped), mV vs CSE.
    rank : ndarray of int
        1-based rank.
    fraction : ndarray
        Plotting position ``r / (n + 1)`` (0..1).
    z : ndarray
        Normal-probability ordinate ``norm.ppf(fraction)``.
    """

    potential_mv: NDArray[np.float64]
    rank: NDArray[np.int64]
    fraction: NDArray[np.float64]
    z: NDArray[np.float64]

    @property
    def percent(self) -> NDArray[np.float64]:
        """Plotting position in percent."""
        return self.fraction * 100.0


def cumulative_frequency(potential_mv: ArrayLike) -> CumulativeFrequency:
    """Return the cumulative frequency distribution with plotting position r/(n+1).

    Parameters
    ----------
    potential_mv : array_like
        Readings, mV vs CSE; NaN are dropped.

    Raises
    ------
    ConditionError
        If there is no finite reading.

    Examples
    --------
    >>> cumulative_frequency([-150, -250, -300, -400]).percent.tolist()  # r/(n+1)
    [20.0, 40.0, 60.0, 80.0]
    """
    v = np.sort(_finite_1d(potential_mv, "potentials"))
    n = v.size
    if n == 0:
        raise ConditionError("no finite potential readings to build a cumulative frequency from")
    from scipy import stats  # here, not at the top: `geo-corrosion check` starts faster

    rank = np.arange(1, n + 1, dtype=np.int64)
    frac = rank / (n + 1.0)
    return CumulativeFrequency(v, rank, frac, stats.norm.ppf(frac))


def fraction_below(values: ArrayLike, threshold: float, *, inclusive: bool = False) -> float:
    """Share (0..1) of finite values below ``threshold`` (``<=`` if ``inclusive``).

    Examples
    --------
    >>> fraction_below([-150, -250, -300, -400], -350.0)  # one of four
    0.25
    """
    v = _finite_1d(values, "values")
    if v.size == 0:
        raise ConditionError("no finite values")
    below = v <= threshold if inclusive else v < threshold
    return float(np.mean(below))


@dataclass(frozen=True)
class MixtureThreshold:
    """Two-component Gaussian mixture of potentials and the site-specific threshold.

    Attributes
    ----------
    threshold_mv : float
        Crossing of the weighted component densities between the means, mV vs CSE.
    active_mean_mv, active_std_mv, active_weight : float
        The more negative component.
    passive_mean_mv, passive_std_mv, passive_weight : float
        The more positive component.
    ashman_d : float
        Separation of the components; D > 2 means clear separation.
    log_likelihood : float
        Mean log-likelihood per reading at convergence.
    n_readings : int
    n_iterations : int
    fraction_readings_below, fraction_readings_above : float
        Share of readings more negative than the threshold (active side) and not.
    area_below, area_above : float or None
        Area of cells more negative than the threshold and not, in the unit of
        the cell area given (None when no cells were given).
    fraction_area_below, fraction_area_above : float or None
    warnings : tuple of str
    """

    threshold_mv: float
    active_mean_mv: float
    active_std_mv: float
    active_weight: float
    passive_mean_mv: float
    passive_std_mv: float
    passive_weight: float
    ashman_d: float
    log_likelihood: float
    n_readings: int
    n_iterations: int
    fraction_readings_below: float
    fraction_readings_above: float
    area_below: float | None = None
    area_above: float | None = None
    fraction_area_below: float | None = None
    fraction_area_above: float | None = None
    warnings: tuple[str, ...] = ()

    def density(self, x_mv: ArrayLike) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        """Weighted component densities (active, passive) at ``x_mv``, per mV."""
        from scipy import stats

        x = np.asarray(x_mv, dtype=float)
        da = self.active_weight * stats.norm.pdf(x, self.active_mean_mv, self.active_std_mv)
        dp = self.passive_weight * stats.norm.pdf(x, self.passive_mean_mv, self.passive_std_mv)
        return da, dp

    def posterior_active(self, x_mv: ArrayLike) -> NDArray[np.float64]:
        """Posterior probability that a reading ``x_mv`` belongs to the active population."""
        da, dp = self.density(x_mv)
        with np.errstate(invalid="ignore", divide="ignore"):
            mid = 0.5 * (self.active_mean_mv + self.passive_mean_mv)
            tail = np.where(np.asarray(x_mv, dtype=float) < mid, 1.0, 0.0)
            return np.where(da + dp > 0, da / (da + dp), tail)

    def threshold_at(self, p_active: float) -> float:
        """Potential (mV) where the posterior probability of "active" equals ``p_active``.

        ``threshold_at(0.5)`` is :attr:`threshold_mv`.

        Raises
        ------
        ConditionError
            If ``p_active`` is not in (0, 1) or no crossing lies between the means.
        """
        if not 0.0 < p_active < 1.0:
            raise ConditionError(f"p_active must lie strictly between 0 and 1, got {p_active}")
        x = _crossing(
            self.active_weight * (1.0 - p_active), self.active_mean_mv, self.active_std_mv,
            self.passive_weight * p_active, self.passive_mean_mv, self.passive_std_mv,
        )
        if x is None:
            raise ConditionError(
                f"no potential between the component means has a posterior of {p_active}"
            )
        return x


def _crossing(w1: float, m1: float, s1: float, w2: float, m2: float, s2: float) -> float | None:
    """Root of w1 N(x;m1,s1) = w2 N(x;m2,s2) in [m1, m2] (m1 < m2), or None."""
    # log form: a x^2 + b x + c = 0
    a = 1.0 / (2 * s2**2) - 1.0 / (2 * s1**2)
    b = m1 / s1**2 - m2 / s2**2
    c = (m2**2 / (2 * s2**2) - m1**2 / (2 * s1**2)
         + np.log(w1 / s1) - np.log(w2 / s2))
    if abs(a) < 1e-15 * max(abs(b), 1e-300):
        roots = [-c / b] if b != 0 else []
    else:
        disc = b * b - 4 * a * c
        if disc < 0:
            return None
        sq = np.sqrt(disc)
        roots = [(-b - sq) / (2 * a), (-b + sq) / (2 * a)]
    inside = [float(r) for r in roots if m1 <= r <= m2]
    if not inside:
        return None
    mid = 0.5 * (m1 + m2)
    return min(inside, key=lambda r: abs(r - mid))


def _em(x: NDArray[np.float64], mu0: tuple[float, float], var0: float,
        max_iter: int, tol: float) -> tuple[NDArray[np.float64], NDArray[np.float64],
                                            NDArray[np.float64], float, int]:
    """Fit the two-component mixture by EM [Dempster-Laird-Rubin-1977, from memory].

    The readings are taken once as their distinct values with counts (a survey read to
    0.1 or 1 mV repeats values many times; the sums are the same, weighted), and the
    log-sum-exp of the two components is written for two terms,
    ``max(a, b) + log1p(exp(-|a - b|))``, on 1-D arrays (no ``(n, 2)`` temporaries; sums
    by numpy, not BLAS, whose threads spin on a shared machine).  The same iteration as a
    per-reading EM; the sums are taken in another order, so the fit moves in the last
    bits only (about 1e-11 mV on the sample site).
    """
    xs, cnt = np.unique(x, return_counts=True)
    c = cnt.astype(float)
    n = float(x.size)
    w0, w1 = 0.5, 0.5
    m0, m1 = float(mu0[0]), float(mu0[1])
    v0 = v1 = float(var0)
    ll_old = -np.inf
    ll = -np.inf
    it = 0
    half_log_2pi = 0.5 * np.log(2 * np.pi)
    for step in range(1, max_iter + 1):
        it = step
        d0 = xs - m0
        d1 = xs - m1
        a = (np.log(w0) - half_log_2pi - 0.5 * np.log(v0)) - (0.5 / v0) * (d0 * d0)
        b = (np.log(w1) - half_log_2pi - 0.5 * np.log(v1)) - (0.5 / v1) * (d1 * d1)
        diff = b - a
        e = np.exp(-np.abs(diff))
        lse = np.maximum(a, b) + np.log1p(e)
        ll = float((c * lse).sum()) / n
        # responsibility of component 1: 1 / (1 + exp(a - b)), from e without overflow
        r1 = np.where(diff >= 0.0, 1.0 / (1.0 + e), e / (1.0 + e))
        cr1 = c * r1
        cr0 = c - cr1
        nk0, nk1 = float(cr0.sum()), float(cr1.sum())
        if min(nk0, nk1) < 1e-9 * n:
            break
        w0, w1 = nk0 / n, nk1 / n
        m0, m1 = float((cr0 * xs).sum()) / nk0, float((cr1 * xs).sum()) / nk1
        d0 = xs - m0
        d1 = xs - m1
        v0 = max(float((cr0 * (d0 * d0)).sum()) / nk0, _VAR_FLOOR_MV2)
        v1 = max(float((cr1 * (d1 * d1)).sum()) / nk1, _VAR_FLOOR_MV2)
        if abs(ll - ll_old) < tol:
            break
        ll_old = ll
    return np.array([w0, w1]), np.array([m0, m1]), np.array([v0, v1]), ll, it


def fit_mixture_threshold(
    potential_mv: ArrayLike,
    *,
    cell_potential_mv: ArrayLike | None = None,
    cell_area: float | None = None,
    min_readings: int = 20,
    max_iter: int = 1000,
    tol: float = 1e-10,
) -> MixtureThreshold:
    """Fit a two-component Gaussian mixture and return the site-specific threshold.

    Parameters
    ----------
    potential_mv : array_like
        Readings, mV vs CSE (NaN dropped).
    cell_potential_mv : array_like, optional
        Values of a gridded (kriged) potential surface, mV vs CSE, for the
        share of area on each side of the threshold (NaN cells ignored).
    cell_area : float, optional
        Area of one grid cell, in the area unit wanted back (e.g. m2).
        Required with ``cell_potential_mv``.
    min_readings : int
        Fewer finite readings than this raise.
    max_iter : int
        Maximum EM iterations per start.
    tol : float
        Convergence tolerance on the mean log-likelihood per reading.

    Returns
    -------
    MixtureThreshold

    Raises
    ------
    ConditionError
        Too few readings, all readings equal, or no crossing of the weighted
        densities between the component means.

    Notes
    -----
    Deterministic: EM starts from the (25 %, 75 %), (10 %, 90 %) and
    (40 %, 60 %) quantiles with the pooled variance; the start with the best
    final likelihood wins.  Component variances are floored at 1 mV^2.
    """
    x = _finite_1d(potential_mv, "potentials")
    if x.size < min_readings:
        raise ConditionError(
            f"a mixture fit needs at least {min_readings} finite readings, got {x.size}; "
            "use the fixed ASTM C876 classes for small surveys"
        )
    if np.ptp(x) <= 0:
        raise ConditionError("all potential readings are equal; no mixture can be fitted")
    var0 = max(float(np.var(x)) / 4.0, _VAR_FLOOR_MV2)
    best = None
    for qa, qb in ((0.25, 0.75), (0.10, 0.90), (0.40, 0.60)):
        mu0 = (float(np.quantile(x, qa)), float(np.quantile(x, qb)))
        if mu0[0] == mu0[1]:
            continue
        res = _em(x, mu0, var0, max_iter, tol)
        if best is None or res[3] > best[3] + 1e-12:
            best = res
    if best is None:
        raise ConditionError("potential readings are too concentrated for a mixture fit")
    w, mu, var, ll, it = best
    order = np.argsort(mu)
    w, mu, sd = w[order], mu[order], np.sqrt(var[order])
    thr = _crossing(w[0], mu[0], sd[0], w[1], mu[1], sd[1])
    if thr is None:
        raise ConditionError(
            "the fitted active and passive populations do not cross between their means "
            f"(means {mu[0]:.0f} and {mu[1]:.0f} mV, weights {w[0]:.2f}/{w[1]:.2f}); "
            "the readings do not show two populations, report the fixed C876 classes only"
        )
    d = float(np.sqrt(2.0) * abs(mu[1] - mu[0]) / np.sqrt(sd[0] ** 2 + sd[1] ** 2))
    warns: list[str] = []
    if d < 2.0:
        warns.append(
            f"active and passive populations overlap (Ashman's D = {d:.2f} < 2); "
            "the site-specific threshold is weakly defined"
        )
    if min(w) < 0.05:
        warns.append(f"one population holds only {min(w):.1%} of readings; threshold uncertain")
    fb = float(np.mean(x < thr))
    area_b = area_a = fab = faa = None
    if cell_potential_mv is not None:
        if cell_area is None or not np.isfinite(cell_area) or cell_area <= 0:
            raise ConditionError("cell_area (positive, in the area unit wanted) is required "
                                 "with cell_potential_mv")
        cv = _finite_1d(cell_potential_mv, "cell potentials")
        if cv.size == 0:
            raise ConditionError("the potential surface has no finite cells")
        nb = int(np.sum(cv < thr))
        area_b = nb * float(cell_area)
        area_a = (cv.size - nb) * float(cell_area)
        fab = nb / cv.size
        faa = 1.0 - fab
    return MixtureThreshold(
        threshold_mv=float(thr),
        active_mean_mv=float(mu[0]), active_std_mv=float(sd[0]), active_weight=float(w[0]),
        passive_mean_mv=float(mu[1]), passive_std_mv=float(sd[1]), passive_weight=float(w[1]),
        ashman_d=d, log_likelihood=ll, n_readings=int(x.size), n_iterations=int(it),
        fraction_readings_below=fb, fraction_readings_above=1.0 - fb,
        area_below=area_b, area_above=area_a,
        fraction_area_below=fab, fraction_area_above=faa,
        warnings=tuple(warns),
    )


def gradient_magnitude(
    grid_mv: ArrayLike, cell_size: float, *, cell_size_y: float | None = None
) -> NDArray[np.float64]:
    """Return ``|grad E|`` of a regular grid, in mV per plan unit.

    Parameters
    ----------
    grid_mv : array_like, 2-D
        Potential surface, mV vs CSE; rows along y, columns along x. NaN cells
        give NaN gradients at and next to them.
    cell_size : float
        Cell width along x, in plan units (m or ft).
    cell_size_y : float, optional
        Cell height along y; defaults to ``cell_size``.

    Raises
    ------
    ConditionError
        If the grid is not 2-D with at least 2 x 2 cells, or a cell size is not positive.

    Examples
    --------
    >>> g = gradient_magnitude([[0.0, 30.0, 60.0], [40.0, 70.0, 100.0]], 1.0)
    >>> round(float(g[0, 1]), 6)  # 30 mV/unit in x, 40 in y
    50.0
    """
    try:
        g = np.asarray(grid_mv, dtype=float)
    except (TypeError, ValueError) as err:
        raise ConditionError(f"potential grid must be numeric ({err})") from err
    if g.ndim != 2 or min(g.shape) < 2:
        raise ConditionError(f"potential grid must be 2-D with at least 2 x 2 cells, got {g.shape}")
    dy = cell_size if cell_size_y is None else cell_size_y
    for name, s in (("cell_size", cell_size), ("cell_size_y", dy)):
        if not (np.isfinite(s) and s > 0):
            raise ConditionError(f"{name} must be a positive length in plan units, got {s}")
    gy, gx = np.gradient(g, float(dy), float(cell_size))
    return np.asarray(np.hypot(gx, gy), dtype=float)

"""Probability maps and class areas from the kriging mean and variance.

Assumption
----------
The kriging error of each cell is Gaussian: the true value of the kriged
variable ``Z`` at a cell is ``N(mean, variance)`` with the kriging mean and
variance of that cell.  For lognormal kinds (resistivity, corrosion rate) the
kriging is done in log space; the mean and variance given here must then be
those of ``log(Z)`` and the threshold is transformed by the same logarithm
(``log_space=True``, natural log unless ``log_base`` is given).  This is the
usual multi-Gaussian reading of kriging output
[Goovaerts-1997 ch. 7, from memory] and is an
assumption, not a property of the data: the probabilities are only as good as
the variogram and the Gaussian model.

Exceedance probability
    ``P(Z < t) = Phi((t - mean) / sd)`` per cell ("below", e.g. potential more
    negative than -350 mV); ``P(Z > t) = 1 - P(Z < t)`` ("above").

Expected class area
    ``E[A] = sum_cells P_i * cell_area`` -- exact under the assumption, whatever
    the correlation between cells.

Interval of the class area
    The spread of the area depends on how the cell errors are correlated: with
    independent cells errors average out and the interval is far too narrow.
    We therefore simulate the error field: ``Z = mean + sd * eps`` with ``eps``
    a unit-variance Gaussian field whose correlation between cells is
    ``rho(dx, dy) = r(dx) r(dy)``, separable along the grid axes, with
    ``r(d) = exp(-(d/L)^2)`` ("gaussian") or ``exp(-|d|/L)`` ("exponential",
    which makes the 2-D correlation ``exp(-(|dx| + |dy|)/L)``).  ``eps`` is
    drawn exactly as ``A_y E A_x^T`` with ``A A^T`` the 1-D correlation
    matrices (eigen square roots) and ``E`` white noise, seeded.  The area of
    every draw is counted and the interval is the equal-tailed quantile range
    of the draws (default 90 %).

    The correlation length ``L`` should be the correlation length of the
    kriging errors; the variogram's correlation length of the variable (its
    practical range divided by about 3 for an exponential model, by about
    sqrt(3) for a Gaussian one) is a practical, somewhat conservative stand-in,
    since errors between data points are correlated over a shorter distance
    than the variable itself.  ``L = 0`` gives independent cells and is too
    narrow; say which ``L`` was used in the report.

    This is the fast "separable-approximation" method.  It counts the nugget (measurement
    noise) as uncertainty of the field, takes the whole variogram range as the error
    correlation length and counts whole cells: on synthetic decks its interval was about ten
    times wider than the actual error with noisy readings and of zero width (missing the
    truth) with noiseless ones (benchmarks/interval_calibration.py).

Intervals by conditional simulation (the default)
    :func:`simulated_area_intervals` draws realisations of the nugget-free field given
    the readings (:class:`geo_corrosion.surfaces.simulation.ConditionalSimulator`,
    conditioning by kriging
    [Journel-Huijbregts-1978 ch. VII, from memory; Chiles-Delfiner-2012 §7.3.1, from memory])
    and measures in each the area beyond the
    threshold under the cubic convolution interpolant of the cell values [Keys-1981], at
    sub-cell resolution,
    so that the area is not counted in whole cells.  The expected area is the mean over the
    realisations, the interval their equal-tailed quantile range, and the probability map
    the mean share of each cell beyond, all from the same realisations.
"""

from __future__ import annotations

import math
from contextlib import AbstractContextManager, nullcontext
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from numpy.typing import ArrayLike, NDArray

from geo_corrosion.condition.classes import ClassSet
from geo_corrosion.errors import ConditionError
from geo_corrosion.surfaces.simulation import ConditionalSimulator

__all__ = [
    "exceedance_probability",
    "class_probabilities",
    "expected_area",
    "AreaEstimate",
    "area_interval",
    "correlated_unit_field",
    "simulated_area_intervals",
    "INTERVAL_METHODS",
]

#: The methods of the area interval (site key ``[run].interval_method``).
INTERVAL_METHODS = ("simulation", "separable-approximation")


def _prep(mean: ArrayLike, variance: ArrayLike) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    try:
        m = np.asarray(mean, dtype=float)
        v = np.asarray(variance, dtype=float)
    except (TypeError, ValueError) as err:
        raise ConditionError(f"kriging mean and variance must be numeric ({err})") from err
    if m.shape != v.shape:
        raise ConditionError(f"kriging mean {m.shape} and variance {v.shape} differ in shape")
    with np.errstate(invalid="ignore"):
        vmax = float(np.nanmax(v)) if np.any(np.isfinite(v)) else 0.0
        tol = 1e-9 * max(vmax, 1.0)
        if np.any(v < -tol):
            raise ConditionError(
                f"kriging variance has negative values (min {np.nanmin(v):.3g}); check the "
                "variogram model"
            )
        v = np.where(v < 0, 0.0, v)
    return m, v


def _transform(threshold: float, log_space: bool, log_base: float) -> float:
    t = float(threshold)
    if not log_space:
        return t
    if not t > 0:
        raise ConditionError(
            f"threshold {threshold} cannot be log-transformed: a lognormal kind needs a "
            "positive threshold"
        )
    return float(np.log(t) / np.log(log_base))


def exceedance_probability(
    mean: ArrayLike,
    variance: ArrayLike,
    threshold: float,
    *,
    direction: str = "below",
    log_space: bool = False,
    log_base: float = math.e,
) -> NDArray[np.float64]:
    """Return per cell the probability that the variable is beyond ``threshold``.

    Parameters
    ----------
    mean, variance : array_like
        Kriging mean and variance of the kriged variable (of its log when
        ``log_space``), in the kind's canonical unit (squared for variance).
    threshold : float
        Threshold in the canonical unit (not transformed), e.g. -350 mV.
    direction : {"below", "above"}
        "below": P(Z < t) (potential, resistivity); "above": P(Z > t) (rate).
    log_space : bool
        The mean and variance are of ``log(Z)``; the threshold is transformed.
    log_base : float
        Base of that logarithm (e, 10).

    Returns
    -------
    ndarray
        Probabilities in [0, 1]; NaN where the mean or variance is NaN.

    Examples
    --------
    >>> exceedance_probability([-350.0, -450.0], [100.0, 0.0], -350.0).tolist()
    [0.5, 1.0]
    """
    if direction not in ("below", "above"):
        raise ConditionError(f"direction must be 'below' or 'above', got {direction!r}")
    from scipy import stats  # here, not at the top: `geo-corrosion check` starts faster

    m, v = _prep(mean, variance)
    t = _transform(threshold, log_space, log_base)
    sd = np.sqrt(v)
    with np.errstate(divide="ignore", invalid="ignore"):
        z = (t - m) / sd
    p_below = np.where(sd > 0, stats.norm.cdf(z), np.where(m < t, 1.0, 0.0))
    p = p_below if direction == "below" else np.where(sd > 0, stats.norm.sf(z),
                                                     np.where(m > t, 1.0, 0.0))
    return np.where(np.isnan(m) | np.isnan(v), np.nan, p)


def class_probabilities(
    mean: ArrayLike,
    variance: ArrayLike,
    class_set: ClassSet,
    *,
    log_space: bool = False,
    log_base: float = math.e,
) -> NDArray[np.float64]:
    """Return per cell the probability of each class, shape ``mean.shape + (n_classes,)``.

    Classes are ordered as in ``class_set`` (increasing value); the edge
    convention does not matter for a continuous distribution.
    """
    edges = [_transform(e, log_space, log_base) if not log_space or e > 0 else -np.inf
             for e in class_set.edges]
    cdfs = [exceedance_probability(mean, variance, e, log_space=False) if np.isfinite(e)
            else np.zeros(np.shape(mean)) for e in edges]
    m = np.asarray(mean, dtype=float)
    lo = [np.zeros(m.shape)] + cdfs
    hi = cdfs + [np.ones(m.shape)]
    out = np.stack([h - low for low, h in zip(lo, hi, strict=True)], axis=-1)
    return np.clip(out, 0.0, 1.0)


def expected_area(probability: ArrayLike, cell_area: float) -> float:
    """Return ``sum(p) * cell_area`` (NaN cells ignored), in the unit of ``cell_area``.

    Examples
    --------
    >>> expected_area([0.5, 1.0, float("nan")], 0.25)
    0.375
    """
    if not (np.isfinite(cell_area) and cell_area > 0):
        raise ConditionError(f"cell area must be positive, got {cell_area}")
    return float(np.nansum(np.asarray(probability, dtype=float))) * float(cell_area)


@dataclass(frozen=True)
class AreaEstimate:
    """Area where the variable is beyond a threshold, with an interval.

    Attributes
    ----------
    expected : float
        ``sum(p) * cell_area``, in the unit of the cell area.
    lower, upper : float
        Equal-tailed interval of the simulated areas at ``level``.
    level : float
        Interval level (0.9 = 90 %).
    plugin : float
        Area where the kriging mean itself is beyond the threshold.
    simulated_mean : float
        Mean of the simulated areas (close to ``expected``).
    total_area : float
        Area of all cells with a finite mean and variance.
    threshold : float
    direction : str
    correlation_length : float
        In plan units.
    model : str
    n_draws : int
    seed : int
    method : str
        One-line description for reports.
    """

    expected: float
    lower: float
    upper: float
    level: float
    plugin: float
    simulated_mean: float
    total_area: float
    threshold: float
    direction: str
    correlation_length: float
    model: str
    n_draws: int
    seed: int
    method: str


def _cell_xy(cell_size: float | tuple[float, float]) -> tuple[float, float]:
    if isinstance(cell_size, tuple | list):
        if len(cell_size) != 2:
            raise ConditionError("cell_size must be a number or a pair (x, y), in plan units")
        dx, dy = float(cell_size[0]), float(cell_size[1])
    else:
        dx = dy = float(cell_size)
    if not (dx > 0 and dy > 0):
        raise ConditionError("cell size must be positive, in plan units")
    return dx, dy


@lru_cache(maxsize=8)
def _sqrt_corr(n: int, step: float, length: float, model: str) -> NDArray[np.float64]:
    """Return the eigen square root of the 1-D correlation matrix (cached, read-only).

    The same matrix serves every batch of draws of a field, and every kind and threshold
    mapped on the same grid, so it is decomposed once per (n, step, length, model); the
    decomposition runs with one BLAS thread (:func:`_one_blas_thread`).
    """
    if length <= 0 or n == 1:
        out = np.eye(n)
    else:
        d = np.abs(np.arange(n)[:, None] - np.arange(n)[None, :]) * step / length
        r = np.exp(-(d**2)) if model == "gaussian" else np.exp(-d)
        with _one_blas_thread():
            w, q = np.linalg.eigh(r)
        out = np.asarray(q * np.sqrt(np.clip(w, 0.0, None))[None, :], dtype=float)
    out.flags.writeable = False
    return out


def _one_blas_thread() -> AbstractContextManager[object]:
    """Limit BLAS to one thread in a block (threadpoolctl), or do nothing without it.

    The eigendecomposition of :func:`_sqrt_corr` ran about 19 times slower with two BLAS
    threads than with one on a loaded two-core machine (issue 16), and the draws' matrix
    products gave the same bits, faster, on one thread (``benchmarks/README.md``).
    """
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:  # pragma: no cover - threadpoolctl is a dependency
        return nullcontext()
    limits: AbstractContextManager[object] = threadpool_limits(limits=1, user_api="blas")
    return limits


def correlated_unit_field(
    shape: tuple[int, int],
    cell_size: float | tuple[float, float],
    correlation_length: float,
    *,
    model: str = "gaussian",
    n_draws: int = 1,
    rng: np.random.Generator | None = None,
) -> NDArray[np.float64]:
    """Draw unit-variance Gaussian fields with separable correlation, shape ``(n_draws, ny, nx)``.

    Parameters
    ----------
    shape : (int, int)
        Grid shape (rows along y, columns along x).
    cell_size : float or (float, float)
        Cell size (x, y) in plan units.
    correlation_length : float
        ``L`` of the 1-D correlation ``exp(-(d/L)^2)`` or ``exp(-d/L)``, plan units.
    model : {"gaussian", "exponential"}
    n_draws : int
    rng : numpy Generator, optional
    """
    if model not in ("gaussian", "exponential"):
        raise ConditionError(f"model must be 'gaussian' or 'exponential', got {model!r}")
    dx, dy = _cell_xy(cell_size)
    if not correlation_length >= 0:
        raise ConditionError("correlation length must be >= 0, in plan units")
    ny, nx = shape
    ax = _sqrt_corr(nx, float(dx), float(correlation_length), model)
    ay = _sqrt_corr(ny, float(dy), float(correlation_length), model)
    g = rng if rng is not None else np.random.default_rng()
    e = g.standard_normal((n_draws, ny, nx))
    return np.asarray(np.einsum("ij,djk,lk->dil", ay, e, ax, optimize=True), dtype=float)


def area_interval(
    mean: ArrayLike,
    variance: ArrayLike,
    threshold: float,
    *,
    cell_size: float | tuple[float, float],
    correlation_length: float,
    direction: str = "below",
    log_space: bool = False,
    log_base: float = math.e,
    level: float = 0.9,
    n_draws: int = 1000,
    seed: int = 0,
    model: str = "gaussian",
    batch: int = 100,
) -> AreaEstimate:
    """Return the expected area beyond ``threshold`` and a simulated interval.

    Parameters
    ----------
    mean, variance : array_like, 2-D
        Kriging mean and variance on a regular grid (rows along y); NaN cells
        are outside the element and are not counted.
    threshold : float
        In the canonical unit (transformed when ``log_space``).
    cell_size : float or (float, float)
        Cell size (x, y), plan units; the cell area is their product, in plan
        units squared (convert to m2/ft2 with :mod:`geo_corrosion.units`).
    correlation_length : float
        Correlation length of the kriging errors, plan units (see module notes).
    direction, log_space, log_base
        As in :func:`exceedance_probability`.
    level : float
        Interval level in (0, 1).
    n_draws : int
        Simulated error fields.
    seed : int
        Seed of the simulation (results are reproducible).
    model : {"gaussian", "exponential"}
    batch : int
        Draws simulated at once (memory).

    Raises
    ------
    ConditionError
        Bad shapes, sizes or levels.
    """
    m, v = _prep(mean, variance)
    if m.ndim != 2:
        raise ConditionError(f"area_interval needs 2-D grids, got shape {m.shape}")
    if not 0.0 < level < 1.0:
        raise ConditionError(f"level must lie strictly between 0 and 1, got {level}")
    if n_draws < 10:
        raise ConditionError("n_draws must be at least 10")
    dx, dy = _cell_xy(cell_size)
    cell_area = float(dx) * float(dy)
    p = exceedance_probability(m, v, threshold, direction=direction, log_space=log_space,
                               log_base=log_base)
    valid = np.isfinite(m) & np.isfinite(v)
    expected = expected_area(p, cell_area)
    t = _transform(threshold, log_space, log_base)
    beyond_mean = (m < t) if direction == "below" else (m > t)
    plugin = float(np.sum(beyond_mean & valid)) * cell_area
    mm = np.where(valid, m, 0.0)
    sd = np.sqrt(np.where(valid, v, 0.0))
    rng = np.random.default_rng(seed)
    areas = np.empty(n_draws)
    done = 0
    with _one_blas_thread():  # the products A_y E A_x^T too: faster on one thread, same bits
        while done < n_draws:
            k = min(batch, n_draws - done)
            eps = correlated_unit_field(m.shape, (float(dx), float(dy)), correlation_length,
                                        model=model, n_draws=k, rng=rng)
            z = mm[None] + sd[None] * eps
            hit = (z < t) if direction == "below" else (z > t)
            areas[done:done + k] = np.sum(hit & valid[None], axis=(1, 2)) * cell_area
            done += k
    a = (1.0 - level) / 2.0
    lo, hi = np.quantile(areas, [a, 1.0 - a])
    method = (
        f"{level:.0%} interval from {n_draws} simulated Gaussian error fields "
        f"(kriging sd, separable {model} correlation, L = {correlation_length:g} plan units, "
        f"seed {seed})"
    )
    return AreaEstimate(
        expected=expected, lower=float(lo), upper=float(hi), level=level, plugin=plugin,
        simulated_mean=float(areas.mean()), total_area=float(valid.sum()) * cell_area,
        threshold=float(threshold), direction=direction,
        correlation_length=float(correlation_length), model=model, n_draws=int(n_draws),
        seed=int(seed), method=method,
    )


def simulated_area_intervals(
    simulator: ConditionalSimulator,
    thresholds: list[tuple[float, str]],
    *,
    log_space: bool = False,
    level: float = 0.9,
    n_realisations: int = 200,
    seed: int = 0,
) -> list[tuple[AreaEstimate, NDArray[np.float64]]]:
    """Return, per threshold, the area estimate and the probability map from realisations.

    Parameters
    ----------
    simulator : ConditionalSimulator
        Readings, variogram (in the kriged space), grid and mask.
    thresholds : list of (float, {"below", "above"})
        In the canonical unit (log-transformed here when ``log_space``).
    log_space : bool
        The simulator works on natural logarithms (lognormal kinds).
    level : float
        Interval level in (0, 1).
    n_realisations : int
        Realisations (at least 10).
    seed : int

    Returns
    -------
    list of (AreaEstimate, ndarray)
        Areas in plan units squared; the map is ``(ny, nx)``, NaN off the mask.
    """
    if not 0.0 < level < 1.0:
        raise ConditionError(f"level must lie strictly between 0 and 1, got {level}")
    if n_realisations < 10:
        raise ConditionError("the number of realisations must be at least 10")
    for _, d in thresholds:
        if d not in ("below", "above"):
            raise ConditionError(f"direction must be 'below' or 'above', got {d!r}")
    kt = [(_transform(t, log_space, math.e), d) for t, d in thresholds]
    res = simulator.excursion_areas(kt, n_realisations, seed=seed)
    cell_area = simulator.grid.cell ** 2
    total = float(simulator.mask.sum()) * cell_area
    a = (1.0 - level) / 2.0
    out = []
    method = (f"{level:.0%} interval from {n_realisations} conditional simulations "
              "(conditioning by kriging, nugget as measurement error; areas at sub-cell "
              f"resolution; seed {seed})")
    for (t, d), r in zip(thresholds, res, strict=True):
        lo, hi = np.quantile(r.areas, [a, 1.0 - a])
        mean_area = float(r.areas.mean())
        est = AreaEstimate(
            expected=mean_area, lower=float(lo), upper=float(hi), level=level,
            plugin=float("nan"), simulated_mean=mean_area, total_area=total,
            threshold=float(t), direction=d, correlation_length=float(simulator.model.range),
            model=simulator.model.name, n_draws=int(n_realisations), seed=int(seed),
            method=method)
        out.append((est, r.probability))
    return out

"""Variogram model fitting by weighted least squares and choice by cross-validation.

Each candidate model (nugget plus one structure) is fitted to the isotropic
experimental variogram by minimising Cressie's weighted least squares
criterion Σ N_j (γ̂_j / γ(h_j) − 1)², N_j being the pair count of bin j
[Cressie-1985].  Each
fitted candidate is then cross-validated with the local kriging engine
(leave-one-out on at most ``cv_max_points`` readings, or k-fold) and the model
with the smallest cross-validation RMSE is chosen.

Parameters fixed in the site file (``fixed``) are held at their value; a fixed
``model`` restricts the candidates to that model.  With fewer than
``min_readings`` readings (default 30) no fit is attempted: a documented
fallback model is used (exponential, nugget 0, partial sill = sample variance,
practical range = half the bounding-box diagonal) with a KrigingWarning, unless
the site file fixes every parameter.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import optimize

from geo_corrosion.errors import KrigingError, KrigingWarning
from geo_corrosion.surfaces.kriging import (
    CrossValidation,
    _check_transform,
    cross_validate,
    is_collinear,
    merge_coincident,
)
from geo_corrosion.surfaces.variogram import (
    _SHAPE_BOUNDS,
    MODEL_NAMES,
    ExperimentalVariogram,
    VariogramModel,
    _structure,
    as_xyz,
    experimental_variogram,
)

__all__ = ["VariogramFit", "CandidateFit", "fit_variogram", "FIXABLE"]

#: scipy's relative step of 2-point finite differences in float64 (``approx_derivative``)
_RSTEP = float(np.finfo(np.float64).eps ** 0.5)

FIXABLE = (
    "model", "nugget", "psill", "range", "shape", "anisotropy_ratio", "anisotropy_angle_deg",
)


@dataclass(frozen=True)
class CandidateFit:
    """One fitted candidate model.

    Attributes
    ----------
    model : VariogramModel
        Fitted parameters.
    wls_residual : float
        Cressie WLS criterion at the optimum (dimensionless; smaller is better).
    cv : CrossValidation or None
        Cross-validation of the candidate (None when skipped).
    """

    model: VariogramModel
    wls_residual: float
    cv: CrossValidation | None

    def to_dict(self, *, value_unit: str = "", length_unit: str = "") -> dict[str, Any]:
        """JSON-ready description."""
        return {
            "params": self.model.to_dict(value_unit=value_unit, length_unit=length_unit),
            "wls_residual": self.wls_residual,
            "cv": None if self.cv is None else self.cv.to_dict(value_unit=value_unit),
        }


@dataclass(frozen=True)
class VariogramFit:
    """Result of :func:`fit_variogram`.

    Attributes
    ----------
    model : VariogramModel
        The chosen model.
    candidates : dict of str to CandidateFit
        Every fitted candidate, by model name.
    experimental : ExperimentalVariogram
        The isotropic experimental variogram the models were fitted to.
    criterion : str
        How the model was chosen.
    fallback : bool
        True when the documented fallback model was used (too few readings).
    notes : tuple of str
        Warnings and caveats, for run.json.
    variance_factor : float, optional
        Factor applied to nugget and partial sill by the variance calibration of the
        mapping stage (None: not calibrated).
    uncorrelated : bool
        True when no spatial correlation was found at the readings' spacing: the model is
        a pure nugget (partial sill 0, nugget the variance of the readings), whose kriged
        surface would be their mean everywhere.
    """

    model: VariogramModel
    candidates: dict[str, CandidateFit]
    experimental: ExperimentalVariogram | None
    criterion: str
    fallback: bool = False
    notes: tuple[str, ...] = field(default=())
    variance_factor: float | None = None
    uncorrelated: bool = False

    def to_dict(self, *, value_unit: str = "", length_unit: str = "") -> dict[str, Any]:
        """JSON-ready description with units, for run.json."""
        return {
            "model": self.model.to_dict(value_unit=value_unit, length_unit=length_unit),
            **({"no_spatial_correlation": True} if self.uncorrelated else {}),
            "criterion": self.criterion,
            "fallback": self.fallback,
            "variance_factor": self.variance_factor,
            "notes": list(self.notes),
            "candidates": {
                k: c.to_dict(value_unit=value_unit, length_unit=length_unit)
                for k, c in self.candidates.items()
            },
            "experimental": None
            if self.experimental is None
            else self.experimental.to_dict(value_unit=value_unit, length_unit=length_unit),
        }


def _check_fixed(fixed: dict[str, Any] | None) -> dict[str, Any]:
    fx = dict(fixed or {})
    unknown = sorted(set(fx) - set(FIXABLE))
    if unknown:
        raise KrigingError(
            f"unknown fixed variogram parameter(s) {unknown}; allowed: {', '.join(FIXABLE)}"
        )
    if "model" in fx and fx["model"] not in MODEL_NAMES:
        raise KrigingError(
            f"fixed variogram model {fx['model']!r} is unknown; use one of {', '.join(MODEL_NAMES)}"
        )
    return fx


def _fit_one(
    name: str, ev: ExperimentalVariogram, fx: dict[str, Any], var: float, max_lag: float
) -> tuple[VariogramModel, float]:
    h, g, w = ev.lags, ev.gamma, ev.counts.astype(np.float64)
    has_shape = name in _SHAPE_BOUNDS
    gmax = float(max(g.max(), var, 1e-300))
    r_lo, r_hi = max(float(h.min()) * 0.25, max_lag * 1e-3), max_lag * 3.0
    names = ["nugget", "psill", "range"] + (["shape"] if has_shape else [])
    lo = {"nugget": 0.0, "psill": gmax * 1e-6, "range": r_lo}
    hi = {"nugget": 2.0 * gmax, "psill": 3.0 * gmax, "range": r_hi}
    if has_shape:
        lo["shape"], hi["shape"] = _SHAPE_BOUNDS[name]
    free = [p for p in names if p not in fx]
    lb = np.array([lo[p] for p in free])
    ub = np.array([hi[p] for p in free])
    aniso = {
        "anisotropy_ratio": float(fx.get("anisotropy_ratio", 1.0)),
        "anisotropy_angle_deg": float(fx.get("anisotropy_angle_deg", 0.0)),
    }

    def build(theta: NDArray[np.float64]) -> VariogramModel:
        p = {k: float(fx[k]) for k in names if k in fx}
        p.update({k: float(v) for k, v in zip(free, theta, strict=True)})
        return VariogramModel(name=name, shape=p.pop("shape", None), **p, **aniso)

    def resid_model(theta: NDArray[np.float64]) -> NDArray[np.float64]:
        gm = build(theta).gamma_positive(h)
        return np.sqrt(w) * (g / np.maximum(gm, 1e-300) - 1.0)

    if not free:
        m = build(np.array([]))
        return m, float(np.sum(resid_model(np.array([])) ** 2))
    sw = np.sqrt(w)
    try:
        fixed_p: dict[str, float] | None = {k: float(fx[k]) for k in names if k in fx}
    except (TypeError, ValueError):
        fixed_p = None  # the model's own path raises, start by start
    s_lo, s_hi = _SHAPE_BOUNDS.get(name, (0.0, 0.0))
    a_ok = (0 < aniso["anisotropy_ratio"] <= 1 and math.isfinite(aniso["anisotropy_ratio"])
            and math.isfinite(aniso["anisotropy_angle_deg"]))
    last: list[tuple[bytes, NDArray[np.float64]]] = []

    def resid(theta: NDArray[np.float64]) -> NDArray[np.float64]:
        # resid_model without building a VariogramModel at each step: the same arithmetic
        # (VariogramModel.gamma_positive through variogram._structure), so the same bits;
        # a parameter set the model would refuse goes through the model for its error
        if fixed_p is None or not a_ok:
            return resid_model(theta)
        p = dict(fixed_p)
        p.update({k: float(v) for k, v in zip(free, theta, strict=True)})
        nug, ps, rg, sh = p["nugget"], p["psill"], p["range"], p.get("shape")
        if not (nug >= 0 and ps >= 0 and nug + ps > 0 and rg > 0 and math.isfinite(nug + ps + rg)
                and (sh is None or s_lo <= sh <= s_hi)):
            return resid_model(theta)
        gm = _structure(name, h, rg, sh)
        gm *= ps
        gm += nug
        out = sw * (g / np.maximum(gm, 1e-300) - 1.0)
        last[:] = [(theta.tobytes(), out)]
        return out

    def jac(x: NDArray[np.float64]) -> NDArray[np.float64]:
        # scipy's default 2-point finite differences (approx_derivative: relative step
        # sqrt(eps) * max(1, |x|), one-sided steps turned or shortened at the bounds),
        # written out: the same steps and the same quotients, so the same Jacobian to the
        # bit, without the wrappers' overhead (most of the fit's time) and reusing the
        # residuals the solver has just computed at x
        f0 = last[0][1] if last and last[0][0] == x.tobytes() else resid(x)
        hs = _RSTEP * ((x >= 0).astype(float) * 2 - 1) * np.maximum(1.0, np.abs(x))
        ha = hs.copy()
        lower, upper = x - lb, ub - x
        xt = x + hs
        violated = (xt < lb) | (xt > ub)
        fitting = np.abs(hs) <= np.maximum(lower, upper)
        ha[violated & fitting] *= -1
        forward = (upper >= lower) & ~fitting
        ha[forward] = upper[forward] / 1
        backward = (upper < lower) & ~fitting
        ha[backward] = -lower[backward] / 1
        jt = np.empty((x.size, f0.size))
        for i in range(x.size):
            x1 = x.copy()
            x1[i] = x[i] + ha[i]
            jt[i] = (resid(x1) - f0) / ((x[i] + ha[i]) - x[i])
        return jt.T
    # starting points
    above = np.flatnonzero(g >= 0.95 * g.max())
    r0 = float(h[above[0]]) if above.size else max_lag
    starts: list[dict[str, float]] = []
    for rf in (1.0, 0.5, 2.0):
        for nf in (0.1, 0.5):
            s = {"nugget": nf * float(g[0]), "psill": max(gmax - nf * float(g[0]), gmax * 1e-3),
                 "range": float(np.clip(r0 * rf, r_lo, r_hi))}
            if has_shape:
                s["shape"] = 1.0 if name == "stable" else 0.8
            starts.append(s)
    best: tuple[float, NDArray[np.float64]] | None = None
    for s in starts:
        x0 = np.clip(np.array([s[p] for p in free]), lb + 1e-12 * (ub - lb), ub - 1e-12 * (ub - lb))
        try:
            res = optimize.least_squares(resid, x0, jac=jac, bounds=(lb, ub), method="trf",
                                         max_nfev=300)
        except (ValueError, KrigingError):
            continue
        cost = float(np.sum(res.fun**2))
        if best is None or cost < best[0]:
            best = (cost, res.x)
    if best is None:
        raise KrigingError(f"the {name} variogram model could not be fitted")
    return build(best[1]), best[0]


def _fallback_model(
    x: NDArray[np.float64], y: NDArray[np.float64], z: NDArray[np.float64], fx: dict[str, Any]
) -> VariogramModel:
    diag = math.hypot(float(np.ptp(x)), float(np.ptp(y)))
    var = float(np.var(z))
    p: dict[str, Any] = {
        "name": fx.get("model", "exponential"),
        "nugget": 0.0,
        "psill": var if var > 0 else 1.0,
        "range": diag / 2.0 if diag > 0 else 1.0,
    }
    p.update({k: v for k, v in fx.items() if k != "model"})
    return VariogramModel(**p)


def _median_spacing(x: NDArray[np.float64], y: NDArray[np.float64]) -> float:
    """Median distance from a reading to its nearest other reading (a sample of 5,000)."""
    from scipy.spatial import cKDTree

    pts = np.column_stack([x, y])
    tree = cKDTree(pts)
    q = pts if len(pts) <= 5000 else pts[np.random.default_rng(0).choice(len(pts), 5000,
                                                                          replace=False)]
    d, _ = tree.query(q, k=2)
    d = d[:, 1]
    d = d[np.isfinite(d) & (d > 0)]
    return float(np.median(d)) if d.size else 0.0


def _nugget_only(ev: ExperimentalVariogram, fx: dict[str, Any], spacing: float,
                 notes: list[str]) -> VariogramFit:
    """Return the pure-nugget fit of readings with no spatial correlation at their spacing.

    Its sill is the pair-weighted mean semivariance of the bins, which for uncorrelated
    readings estimates their variance (the semivariogram of white noise is flat at the
    variance at every lag).
    """
    sill = float(np.average(ev.gamma, weights=ev.counts))
    model = VariogramModel(name=str(fx.get("model", "exponential")), nugget=sill, psill=0.0,
                           range=max(spacing, 1e-9),
                           **{k: float(fx[k]) for k in ("anisotropy_ratio",
                                                        "anisotropy_angle_deg") if k in fx})
    msg = (f"no spatial correlation found: the fitted practical range is not longer than the "
           f"median reading spacing ({spacing:.3g}), so neighbouring readings vary "
           f"independently; a pure nugget model (sill {sill:.4g}, the readings' variance) is "
           "used, whose kriged surface would be the mean everywhere")
    return VariogramFit(model=model, candidates={}, experimental=ev,
                        criterion="no spatial correlation found (pure nugget)",
                        notes=(*notes, msg), uncorrelated=True)


def fit_variogram(
    x: ArrayLike,
    y: ArrayLike,
    z: ArrayLike,
    *,
    models: tuple[str, ...] = ("spherical", "exponential", "gaussian", "matern"),
    n_lags: int = 15,
    max_lag: float | None = None,
    fixed: dict[str, Any] | None = None,
    cv_folds: int | None = None,
    seed: int = 0,
    n_neighbors: int = 16,
    transform: str | None = None,
    cv_max_points: int = 2000,
    min_readings: int = 30,
    max_pairs: int = 2_000_000,
    groups: ArrayLike | None = None,
) -> VariogramFit:
    """Fit candidate variogram models and choose one by cross-validation.

    Parameters
    ----------
    x, y : array_like
        Reading coordinates, plan length units.
    z : array_like
        Reading values, value units.
    models : tuple of str
        Candidate model names.
    n_lags : int
        Lag bins of the experimental variogram.
    max_lag : float, optional
        Largest lag, plan length units (default: one third of the bounding-box diagonal).
    fixed : dict, optional
        Parameters fixed by the site file: any of ``model``, ``nugget``, ``psill``,
        ``range``, ``shape``, ``anisotropy_ratio``, ``anisotropy_angle_deg``.
    cv_folds : int, optional
        None for leave-one-out cross-validation, else the number of folds.
    seed : int
        Seed of the pair subsample and of the cross-validation subset/folds.
    n_neighbors : int
        Readings per local system in cross-validation.
    transform : {None, "log"}
        Fit the variogram of ``log(z)`` (the kriged space).
    cv_max_points : int
        Leave-one-out tests at most this many readings (random subset).
    min_readings : int
        Below this many readings the fallback model is used.
    max_pairs : int
        Pair budget of the experimental variogram.
    groups : array_like, optional
        A label per reading (the continuity region of a deck split by breaking joints):
        the experimental variogram counts only pairs within one group and each group is
        cross-validated from its own readings, so the fit never pairs readings across a
        breaking joint.  The readings must not hold coincident locations.

    Returns
    -------
    VariogramFit

    Raises
    ------
    KrigingError
        When all readings are equal, fewer than 3 readings are given, or the
        parameters are invalid.

    Warns
    -----
    KrigingWarning
        When the fallback model is used or the readings lie on a line.
    """
    xa, ya, za = as_xyz(x, y, z, min_n=1, what="variogram fit")
    zt = _check_transform(transform, za)
    fx = _check_fixed(fixed)
    notes: list[str] = []
    if xa.size < 3:
        raise KrigingError(
            f"only {xa.size} reading(s): a surface needs at least 3 readings; "
            "add readings or leave this kind out for this level"
        )
    if np.ptp(zt) == 0:
        raise KrigingError(
            f"all {za.size} readings are equal ({za[0]:g}): there is no spatial variation to "
            "model; report the constant value instead of a kriged surface"
        )
    if is_collinear(xa, ya):
        msg = (
            "the readings lie on one straight line: the variogram is one-dimensional and the "
            "surface away from the line is an extrapolation"
        )
        notes.append(msg)
        warnings.warn(msg, KrigingWarning, stacklevel=2)
    cands = tuple(models) if "model" not in fx else (str(fx["model"]),)
    for c in cands:
        if c not in MODEL_NAMES:
            raise KrigingError(f"unknown candidate model {c!r}; use {', '.join(MODEL_NAMES)}")
    if xa.size < min_readings:
        complete = {"model", "nugget", "psill", "range"} <= set(fx)
        model = _fallback_model(xa, ya, zt, fx)
        if not complete:
            msg = (
                f"only {xa.size} readings (fewer than {min_readings}): no variogram was fitted; "
                f"the fallback model {model.name} (nugget 0, partial sill = sample variance "
                f"{model.psill:g}, range = half the diagonal {model.range:g}) is used; "
                "fix the variogram in the site file to override"
            )
            notes.append(msg)
            warnings.warn(msg, KrigingWarning, stacklevel=2)
        return VariogramFit(
            model=model, candidates={}, experimental=None,
            criterion="fixed" if complete else "fallback (too few readings)",
            fallback=not complete, notes=tuple(notes),
        )
    ev = experimental_variogram(
        xa, ya, zt, max_lag=max_lag, n_lags=n_lags, max_pairs=max_pairs, seed=seed,
        groups=groups,
    )
    ml = float(ev.bin_edges[-1])
    var = float(np.var(zt))
    spacing = _median_spacing(xa, ya) if max_lag is None else 0.0
    if max_lag is None:
        # the structure lies inside the first lag bin (its semivariance is already over half
        # the variance): no model can be fitted to the bins, so zoom in on the short lags,
        # at most three times and not below the reading spacing
        for _ in range(3):
            if not (ev.gamma[0] > 0.5 * var and ml / n_lags > 2.0 * spacing):
                break
            ml = max(ml / 4.0, 2.0 * spacing * n_lags)
            ev = experimental_variogram(
                xa, ya, zt, max_lag=ml, n_lags=n_lags, max_pairs=max_pairs, seed=seed,
        groups=groups,
            )
            notes.append(f"experimental variogram re-binned to max_lag={ml:g}: the first lag "
                         "bin already held most of the variance")
    wls = {name: _fit_one(name, ev, fx, var, ml) for name in cands}
    short = float(np.median([m.range for m, _ in wls.values()]))
    if max_lag is None and short < ml / 2.5:
        # the structure is short compared with the default maximum lag: re-bin the
        # experimental variogram on twice the fitted range so the short lags are resolved,
        # never below twice the reading spacing (as the zoom above): closer than that there
        # is no pair of readings to bin, and an uncorrelated kind's fitted range is tiny
        ev = experimental_variogram(
            xa, ya, zt, max_lag=max(2.0 * short, 2.0 * spacing), n_lags=n_lags,
            max_pairs=max_pairs, seed=seed, groups=groups,
        )
        ml = float(ev.bin_edges[-1])
        notes.append(f"experimental variogram re-binned to max_lag={ml:g} (twice the range)"
                     if ml > 2.0 * spacing else
                     f"experimental variogram re-binned to max_lag={ml:g} (twice the reading "
                     "spacing; the fitted range was shorter)")
        wls = {name: _fit_one(name, ev, fx, var, ml) for name in cands}
        short = float(np.median([m.range for m, _ in wls.values()]))
        if short <= spacing and not {"nugget", "psill", "range"} & set(fx):
            return _nugget_only(ev, fx, spacing, notes)
    if ev.subsampled:
        notes.append(
            f"experimental variogram from a random subsample of {ev.n_readings_used} of "
            f"{ev.n_readings} readings ({ev.n_pairs} pairs)"
        )
    if groups is None:
        xm, ym, zm = merge_coincident(xa, ya, zt, what="variogram fit")
    else:
        xm, ym, zm = xa, ya, zt
    fits: dict[str, CandidateFit] = {}
    for name, (model, cost) in wls.items():
        cv = cross_validate(
            xm, ym, zm, model, n_neighbors=n_neighbors,
            method="loo" if cv_folds is None else "kfold", k=cv_folds or 5,
            max_points=cv_max_points if cv_folds is None else None, seed=seed, groups=groups,
        )
        fits[name] = CandidateFit(model=model, wls_residual=cost, cv=cv)
    scored = [(c.cv.rmse if c.cv and math.isfinite(c.cv.rmse) else math.inf, c.wls_residual, n)
              for n, c in fits.items()]
    best = min(scored)[2]
    return VariogramFit(
        model=fits[best].model, candidates=fits, experimental=ev,
        criterion="smallest cross-validation RMSE (ties: smallest WLS residual)",
        notes=tuple(notes),
    )

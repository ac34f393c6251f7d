"""Galvanostatic pulse transients: fit of the Randles response and batch processing.

Method
------
For a constant current step ``I`` applied at ``t = 0``, a Randles circuit
without diffusion responds as
[Newton-Sykes-1988; Andrade-Alonso-2004, from memory]::

    E(t) = I R_ohm + I R_p (1 - exp(-t / (R_p C_dl)))

so ``E(0+) = I R_ohm``, ``E(inf) = I (R_ohm + R_p)`` and ``tau = R_p C_dl``.

Fitting (:func:`fit_transient`):

1. Samples at ``t <= 0`` are the rest potential; their mean is subtracted
   (without any, ``e_mv`` is taken as the shift from rest already).
2. Starting values: ``R_ohm`` from the first sample after switch-on; ``tau``
   from a log-spaced scan in which, for each ``tau``, ``R_ohm`` and ``R_p``
   follow by linear least squares -- this extrapolates ``E(inf)``.
3. ``scipy.optimize.curve_fit`` refines ``(R_ohm, R_p, tau)`` on the whole
   transient; ``C_dl = tau / R_p``.

Units: ``E`` in mV and ``I`` in uA give resistances in kOhm, reported in ohm;
``C_dl`` in uF.  With the polarized area ``A_pol`` (cm2) and Stern-Geary B (mV),
``i_corr = B / (R_p A_pol)`` (:func:`geo_corrosion.condition.corrosion_rate.icorr_ua_cm2`).

Checks: the polarization ``|I R_p|`` should stay within the linear range;
more than 30 mV (common practice; 20 mV in strict RILEM mode [Andrade-Alonso-2004, from memory])
adds a warning.
A pulse shorter than one fitted time constant, a fit with r2 below ``min_r2``
(too noisy), zero current, a negative R_p or a missing polarized area raise
:class:`~geo_corrosion.errors.ConditionError`.

Long-format CSV (:func:`read_transients_csv`, :func:`fit_transients`)
---------------------------------------------------------------------
One row per sample::

    location_id,t_s,e_mv,i_ua,area_cm2,b_mv
    L1,-0.5,0.0,100,52.78,26
    L1,0.0,...

``location_id`` (text), ``t_s`` (time since switch-on, s), ``e_mv`` (potential,
mV, absolute or shift), ``i_ua`` (applied current, uA; constant per location).
``area_cm2`` (polarized area) and ``b_mv`` (Stern-Geary B, mV, or the words
``active``/``passive``) may be columns of this table (constant per location)
or of a separate per-location table passed as ``locations``.
"""

from __future__ import annotations

import logging
import os
from collections.abc import Hashable
from dataclasses import asdict, dataclass
from typing import Any

import numpy as np
import pandas as pd
from numpy.typing import ArrayLike, NDArray
from scipy.optimize import curve_fit

from geo_corrosion.condition.classes import RATE_RILEM
from geo_corrosion.condition.corrosion_rate import icorr_ua_cm2, resolve_b_mv
from geo_corrosion.errors import ConditionError, IngestError

__all__ = [
    "TransientFit",
    "randles_response_mv",
    "fit_transient",
    "read_transients_csv",
    "fit_transients",
    "TRANSIENT_COLUMNS",
    "RESULT_COLUMNS",
]

log = logging.getLogger(__name__)

TRANSIENT_COLUMNS = ("location_id", "t_s", "e_mv", "i_ua")
RESULT_COLUMNS = (
    "location_id", "i_ua", "r_ohm_ohm", "rp_ohm", "cdl_uf", "tau_s", "e_inf_mv",
    "polarization_mv", "residual_rms_mv", "r2", "area_cm2", "b_mv", "rp_ohm_cm2",
    "icorr_ua_cm2", "rate_class", "n_samples", "flag", "message",
)


def randles_response_mv(
    t_s: ArrayLike, current_ua: float, r_ohm_ohm: float, rp_ohm: float, cdl_uf: float
) -> NDArray[np.float64]:
    """Return ``E(t)`` in mV of the Randles circuit for a current step at ``t = 0``.

    Parameters
    ----------
    t_s : array_like
        Time since switch-on, s (``E = 0`` before).
    current_ua : float
        Current, uA.
    r_ohm_ohm, rp_ohm : float
        Ohmic and polarization resistance, ohm.
    cdl_uf : float
        Double-layer capacitance, uF.
    """
    t = np.asarray(t_s, dtype=float)
    tau = rp_ohm * cdl_uf * 1e-6
    i_a = current_ua * 1e-6
    e = i_a * r_ohm_ohm + i_a * rp_ohm * (1.0 - np.exp(-np.clip(t, 0, None) / tau))
    return np.where(t > 0, e * 1000.0, 0.0)


@dataclass(frozen=True)
class TransientFit:
    """Result of a galvanostatic pulse fit.

    Attributes
    ----------
    current_ua : float
    r_ohm_ohm, rp_ohm : float
        Ohmic and polarization resistance, ohm.
    cdl_uf : float
        Double-layer capacitance, uF.
    tau_s : float
        Time constant ``R_p C_dl``, s.
    e_inf_mv : float
        Extrapolated steady polarization ``I (R_ohm + R_p)``, mV.
    polarization_mv : float
        ``I R_p``, mV.
    residual_rms_mv : float
        RMS of the fit residuals, mV.
    r2 : float
        Coefficient of determination of the fit.
    n_samples : int
        Samples after switch-on used.
    area_cm2, b_mv : float
        Polarized area (cm2) and Stern-Geary B (mV).
    rp_ohm_cm2 : float
        ``R_p A_pol``, ohm.cm2.
    icorr_ua_cm2 : float
        ``B / (R_p A_pol)``, uA/cm2.
    warnings : tuple of str
    """

    current_ua: float
    r_ohm_ohm: float
    rp_ohm: float
    cdl_uf: float
    tau_s: float
    e_inf_mv: float
    polarization_mv: float
    residual_rms_mv: float
    r2: float
    n_samples: int
    area_cm2: float
    b_mv: float
    rp_ohm_cm2: float
    icorr_ua_cm2: float
    warnings: tuple[str, ...] = ()


def _model(t: NDArray[np.float64], r0: float, rp: float, tau: float) -> NDArray[np.float64]:
    return r0 + rp * (1.0 - np.exp(-t / tau))


def fit_transient(
    t_s: ArrayLike,
    e_mv: ArrayLike,
    current_ua: float,
    *,
    area_cm2: float | None,
    b_mv: float | str = 26.0,
    strict: bool = False,
    linear_limit_mv: float | None = None,
    min_samples: int = 10,
    min_r2: float = 0.95,
) -> TransientFit:
    """Fit a galvanostatic pulse transient with the Randles response.

    Parameters
    ----------
    t_s : array_like
        Time since switch-on, s; samples at ``t <= 0`` give the rest potential.
    e_mv : array_like
        Potential, mV (absolute, or the shift from rest if no ``t <= 0`` samples).
    current_ua : float
        Applied current, uA (non-zero; its sign sets the sign of the response).
    area_cm2 : float or None
        Polarized (confined) steel area, cm2; required.
    b_mv : float or {"active", "passive"}
        Stern-Geary B, mV.
    strict : bool
        Use the strict RILEM linear limit of 20 mV instead of 30 mV.
    linear_limit_mv : float, optional
        Override of the linear limit, mV.
    min_samples : int
        Minimum samples after switch-on.
    min_r2 : float
        A worse fit is rejected as too noisy.

    Raises
    ------
    ConditionError
        Zero current, missing area, too few samples or too short a pulse, too
        noisy a transient, or a fit giving negative or zero R_p.
    """
    if area_cm2 is None or not np.isfinite(area_cm2) or area_cm2 <= 0:
        raise ConditionError(
            f"missing or non-positive polarized area ({area_cm2!r}); give area_cm2 = pi x bar "
            "diameter x confined length in cm2 (i_corr is never computed without it)"
        )
    b = float(resolve_b_mv(b_mv)[0]) if isinstance(b_mv, str) else float(b_mv)
    if not b > 0:
        raise ConditionError(f"Stern-Geary B must be positive, in mV, got {b_mv!r}")
    try:
        cur = float(current_ua)
    except (TypeError, ValueError) as err:
        raise ConditionError(f"current must be a number in uA, got {current_ua!r}") from err
    if not np.isfinite(cur) or cur == 0:
        raise ConditionError(f"pulse current is {current_ua!r} uA: a non-zero current is needed")
    try:
        t = np.asarray(t_s, dtype=float).ravel()
        e = np.asarray(e_mv, dtype=float).ravel()
    except (TypeError, ValueError) as err:
        raise ConditionError(f"t_s and e_mv must be numeric ({err})") from err
    if t.shape != e.shape:
        raise ConditionError(f"t_s ({t.size}) and e_mv ({e.size}) differ in length")
    ok = np.isfinite(t) & np.isfinite(e)
    t, e = t[ok], e[ok]
    order = np.argsort(t, kind="stable")
    t, e = t[order], e[order]
    rest = t <= 0
    base = float(np.mean(e[rest])) if np.any(rest) else 0.0
    t_on, de = t[~rest], e[~rest] - base
    n = t_on.size
    if n < min_samples:
        raise ConditionError(
            f"transient too short: {n} sample(s) after switch-on, at least {min_samples} needed"
        )
    if np.unique(t_on).size < 3:
        raise ConditionError("transient needs at least 3 distinct sample times after switch-on")
    # normalised response in kOhm (mV / uA)
    r = de / cur
    # starting values: R_ohm from the first sample, tau by scan with linear LS for (R_ohm, R_p)
    r0_first = float(r[0])
    t_end = float(t_on[-1])
    dt = float(np.min(np.diff(np.unique(t_on)))) if n > 1 else t_end
    taus = np.geomspace(max(dt / 3.0, t_end * 1e-4), 10.0 * t_end, 80)
    best = (np.inf, r0_first, float(r[-1] - r0_first), t_end / 3.0)
    for tau in taus:
        x = np.column_stack([np.ones(n), 1.0 - np.exp(-t_on / tau)])
        coef, *_ = np.linalg.lstsq(x, r, rcond=None)
        sse = float(np.sum((x @ coef - r) ** 2))
        if sse < best[0]:
            best = (sse, float(coef[0]), float(coef[1]), float(tau))
    p0 = [best[1], best[2], best[3]]
    try:
        popt, _ = curve_fit(_model, t_on, r, p0=p0, maxfev=5000)
    except (RuntimeError, ValueError) as err:
        raise ConditionError(f"transient fit did not converge ({err}); check the data") from err
    r0, rp, tau = (float(v) for v in popt)
    if not np.all(np.isfinite(popt)):
        raise ConditionError("transient fit gave non-finite parameters; check the data")
    resid = (r - _model(t_on, r0, rp, tau)) * cur
    rms = float(np.sqrt(np.mean(resid**2)))
    ss_tot = float(np.sum((de - de.mean()) ** 2))
    r2 = 1.0 - float(np.sum(resid**2)) / ss_tot if ss_tot > 0 else 0.0
    if rp <= 0 or tau <= 0:
        raise ConditionError(
            f"fitted polarization resistance R_p = {rp * 1000:.1f} ohm (tau = {tau:.3g} s) is not "
            "positive: the potential does not rise towards a steady value in the direction of "
            "the current; check lead polarity and the current sign"
        )
    if r2 < min_r2:
        raise ConditionError(
            f"transient too noisy to fit: r2 = {r2:.3f} < {min_r2:g} (residual RMS "
            f"{rms:.2f} mV); repeat the measurement or lengthen the pulse"
        )
    if t_end < tau:
        raise ConditionError(
            f"pulse too short: it lasts {t_end:.3g} s, less than the fitted time constant "
            f"{tau:.3g} s, so R_p is an extrapolation; lengthen the pulse"
        )
    warns: list[str] = []
    if t_end < 3.0 * tau:
        warns.append(
            f"pulse of {t_end:.3g} s is shorter than 3 time constants ({3 * tau:.3g} s); R_p "
            "relies on extrapolation"
        )
    rp_ohm = rp * 1000.0
    r_ohm = r0 * 1000.0
    pol = abs(cur * 1e-6 * rp_ohm * 1000.0)
    limit = linear_limit_mv if linear_limit_mv is not None else (20.0 if strict else 30.0)
    if pol > limit:
        warns.append(
            f"polarization beyond linear range: I*R_p = {pol:.1f} mV > {limit:g} mV; "
            "reduce the pulse current"
        )
    if r_ohm < 0:
        warns.append(f"negative ohmic resistance {r_ohm:.1f} ohm fitted; check the first samples")
    icorr = float(icorr_ua_cm2(rp_ohm, area_cm2, b))
    return TransientFit(
        current_ua=cur, r_ohm_ohm=r_ohm, rp_ohm=rp_ohm, cdl_uf=tau / rp_ohm * 1e6, tau_s=tau,
        e_inf_mv=(r0 + rp) * cur, polarization_mv=pol, residual_rms_mv=rms, r2=float(r2),
        n_samples=int(n), area_cm2=float(area_cm2), b_mv=b, rp_ohm_cm2=rp_ohm * area_cm2,
        icorr_ua_cm2=icorr, warnings=tuple(warns),
    )


def read_transients_csv(path: str | os.PathLike[str]) -> pd.DataFrame:
    """Read a long-format transient CSV (columns documented in the module docstring).

    Raises
    ------
    IngestError
        If the file cannot be read or a required column is missing.
    """
    try:
        frame = pd.read_csv(path, dtype={"location_id": str})
    except (OSError, pd.errors.ParserError, UnicodeDecodeError) as err:
        raise IngestError(f"{path}: cannot read transient CSV ({err})") from err
    missing = [c for c in TRANSIENT_COLUMNS if c not in frame.columns]
    if missing:
        raise IngestError(
            f"{path}: missing column(s) {missing}; a transient CSV needs "
            f"{', '.join(TRANSIENT_COLUMNS)} (plus area_cm2 and b_mv, here or per location)"
        )
    return frame


def _per_location(group: pd.DataFrame, col: str, loc: Any) -> Any:
    vals = group[col].dropna().unique()
    if len(vals) == 0:
        return None
    if len(vals) > 1:
        raise ConditionError(f"{col} is not constant within location {loc!r}: {list(vals)[:3]}")
    return vals[0]


def fit_transients(
    frame: pd.DataFrame,
    *,
    locations: pd.DataFrame | None = None,
    default_b_mv: float | str | None = None,
    strict: bool = False,
    linear_limit_mv: float | None = None,
    min_samples: int = 10,
    min_r2: float = 0.95,
) -> pd.DataFrame:
    """Fit every location of a long-format transient table; one row per location.

    Bad locations do not raise: they get ``flag = "error"`` and the reason in
    ``message``; fits with warnings get ``flag = "warning"``; clean fits ``"ok"``.

    Parameters
    ----------
    frame : DataFrame
        Columns ``location_id, t_s, e_mv, i_ua`` and optionally ``area_cm2``, ``b_mv``.
    locations : DataFrame, optional
        Per-location ``location_id, area_cm2, b_mv``; overrides values in ``frame``.
    default_b_mv : float or str, optional
        B (mV or "active"/"passive") where none is given; None means a missing
        B is an error for that location.
    strict, linear_limit_mv, min_samples, min_r2
        As in :func:`fit_transient`.

    Returns
    -------
    DataFrame
        Columns :data:`RESULT_COLUMNS`, ordered as the locations first appear.

    Raises
    ------
    ConditionError
        Only if ``frame`` itself lacks the required columns.
    """
    missing = [c for c in TRANSIENT_COLUMNS if c not in frame.columns]
    if missing:
        raise ConditionError(f"transient table lacks column(s) {missing}; needs "
                             f"{', '.join(TRANSIENT_COLUMNS)}")
    loc_table: dict[Any, dict[Hashable, Any]] = {}  # records keyed by column label
    if locations is not None:
        if "location_id" not in locations.columns:
            raise ConditionError("the per-location table needs a 'location_id' column")
        for rec in locations.to_dict("records"):
            loc_table[rec["location_id"]] = rec
    rows: list[dict[str, Any]] = []
    for loc, group in frame.groupby("location_id", sort=False):
        row: dict[str, Any] = {c: np.nan for c in RESULT_COLUMNS}
        row.update(location_id=loc, rate_class="", flag="error", message="")
        try:
            extra = loc_table.get(loc, {})
            area = extra.get("area_cm2")
            if area is None or pd.isna(area):
                area = _per_location(group, "area_cm2", loc) if "area_cm2" in group else None
            b = extra.get("b_mv")
            if b is None or (not isinstance(b, str) and pd.isna(b)):
                b = _per_location(group, "b_mv", loc) if "b_mv" in group else None
            if b is None:
                b = default_b_mv
            if b is None:
                raise ConditionError("no Stern-Geary B given (column b_mv or default_b_mv)")
            on = group[pd.to_numeric(group["t_s"], errors="coerce") > 0]
            cur_vals = pd.to_numeric(on["i_ua"], errors="coerce").dropna().to_numpy()
            if cur_vals.size == 0:
                raise ConditionError("no current value after switch-on")
            cur = float(np.median(cur_vals))
            warn_cur = []
            if cur != 0 and np.ptp(cur_vals) > 0.05 * abs(cur):
                warn_cur.append("pulse current varies by more than 5 % during the pulse")
            fit = fit_transient(
                pd.to_numeric(group["t_s"], errors="coerce").to_numpy(),
                pd.to_numeric(group["e_mv"], errors="coerce").to_numpy(),
                cur,
                area_cm2=None if area is None else float(area),
                b_mv=b if isinstance(b, str) else float(b),
                strict=strict, linear_limit_mv=linear_limit_mv,
                min_samples=min_samples, min_r2=min_r2,
            )
            d = asdict(fit)
            warns = list(d.pop("warnings")) + warn_cur
            row.update(
                i_ua=d["current_ua"], r_ohm_ohm=d["r_ohm_ohm"], rp_ohm=d["rp_ohm"],
                cdl_uf=d["cdl_uf"], tau_s=d["tau_s"], e_inf_mv=d["e_inf_mv"],
                polarization_mv=d["polarization_mv"], residual_rms_mv=d["residual_rms_mv"],
                r2=d["r2"], area_cm2=d["area_cm2"], b_mv=d["b_mv"], rp_ohm_cm2=d["rp_ohm_cm2"],
                icorr_ua_cm2=d["icorr_ua_cm2"], n_samples=d["n_samples"],
                rate_class=str(RATE_RILEM.classify([d["icorr_ua_cm2"]])[0]),
                flag="warning" if warns else "ok", message="; ".join(warns),
            )
        except ConditionError as err:
            row["message"] = str(err)
            log.info("transient at location %r not used: %s", loc, err)
        rows.append(row)
    return pd.DataFrame(rows, columns=list(RESULT_COLUMNS))

"""Corrosion rate from polarization resistance, Faraday conversion, section loss, cracking.

Methods
-------
Stern-Geary
    ``i_corr = B / R_p`` with ``B = beta_a beta_c / [ln(10) (beta_a + beta_c)]``
    (Tafel slopes in mV/decade; [Roberge-2008 eqs. 5.22-5.23; Stern-Geary-1957],
    which write 2.303 for ln 10).  A passive anodic
    branch is ``beta_a = inf`` giving ``B = beta_c / ln 10``.  Conventional
    constants for steel in concrete: B = 26 mV active, 52 mV passive
    [Andrade-Gonzalez-1978; Andrade-Alonso-2004, from memory].  Tafel slopes below
    30 mV/decade are refused (a configurable plausibility bound, common
    practice).

Area normalisation and ohmic drop
    ``i_corr [uA/cm2] = 1000 B [mV] / (R_p [ohm] A_pol [cm2])``, with the
    confined polarized area ``A_pol = pi d L`` per bar [Andrade-Alonso-2004, from memory]
    and ``R_p = dE/dI - R_ohm`` [Andrade-Alonso-2004, from memory].  i_corr is never
    computed without A_pol (common practice).

Faraday's law
    Penetration ``v = i M / (n F rho_Fe)``: M = 55.845 g/mol, n = 2, F =
    96 485.33 C/mol, rho_Fe = 7.874 g/cm3, Julian year 3.15576e7 s gives
    11.598 um/year per uA/cm2 (derived); all are parameters.

Linear polarization sweep
    R_p is the slope dE/dI of a straight line fitted to the points within
    +-``window_mv`` of E_corr (the idea of [ASTM-G59]); polarization
    beyond 20 mV leaves the linear range [Andrade-Alonso-2004, from memory].

Section loss and time to cover cracking are in :mod:`geo_corrosion.condition.life`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from geo_corrosion.errors import ConditionError

__all__ = [
    "B_ACTIVE_MV",
    "B_PASSIVE_MV",
    "stern_geary_b_mv",
    "resolve_b_mv",
    "icorr_ua_cm2",
    "icorr_from_specific_rp",
    "ohmic_corrected_rp_ohm",
    "polarized_area_cm2",
    "faraday_um_per_year",
    "faraday_mpy",
    "faraday_mass_loss_g_m2_year",
    "check_linearity",
    "SweepResult",
    "rp_from_sweep",
]

B_ACTIVE_MV = 26.0  # mV, active steel [Andrade-Gonzalez-1978; Andrade-Alonso-2004, from memory]
B_PASSIVE_MV = 52.0  # mV, passive steel [Andrade-Alonso-2004, from memory]
LINEAR_LIMIT_MV = 20.0  # mV, linear range [Andrade-Alonso-2004, from memory]


def _arr(x: ArrayLike, what: str) -> NDArray[np.float64]:
    try:
        return np.asarray(x, dtype=float)
    except (TypeError, ValueError) as err:
        raise ConditionError(f"{what} must be numeric ({err})") from err


def _count(mask: NDArray[np.bool_]) -> str:
    m = np.atleast_1d(mask)
    idx = np.argwhere(m)
    first = int(np.ravel_multi_index(tuple(idx[0]), m.shape)) if len(idx) else -1
    return f"{len(idx)} value(s), first at flat index {first}"


def stern_geary_b_mv(
    beta_a_mv_dec: ArrayLike,
    beta_c_mv_dec: ArrayLike,
    *,
    min_slope_mv_dec: float = 30.0,
    max_slope_mv_dec: float = math.inf,
) -> NDArray[np.float64]:
    """Return the Stern-Geary constant B in mV from Tafel slopes.

    Parameters
    ----------
    beta_a_mv_dec, beta_c_mv_dec : array_like
        Anodic and cathodic Tafel slopes, mV/decade (magnitudes); ``inf`` for a
        passive (or diffusion-limited) branch, not both.
    min_slope_mv_dec, max_slope_mv_dec : float
        Accepted range of each slope, mV/decade.

    Raises
    ------
    ConditionError
        Slopes missing, outside the accepted range, or both infinite.

    Examples
    --------
    >>> round(float(stern_geary_b_mv(120, 120)), 2), round(float(stern_geary_b_mv(np.inf, 120)), 1)
    (26.06, 52.1)
    """
    ba = _arr(beta_a_mv_dec, "anodic Tafel slope")
    bc = _arr(beta_c_mv_dec, "cathodic Tafel slope")
    for name, b in (("anodic", ba), ("cathodic", bc)):
        bad = np.isnan(b) | (b < min_slope_mv_dec) | (b > max_slope_mv_dec)
        if np.any(bad):
            raise ConditionError(
                f"{name} Tafel slope out of range ({_count(bad)}): accepted "
                f"{min_slope_mv_dec:g} to {max_slope_mv_dec:g} mV/decade; use B = 26 mV (active) "
                "or 52 mV (passive) when no slopes were measured"
            )
    both_inf = np.isinf(ba) & np.isinf(bc)
    if np.any(both_inf):
        raise ConditionError(f"both Tafel slopes infinite ({_count(both_inf)}): B is undefined")
    ln10 = math.log(10.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        b = np.where(np.isinf(ba), bc / ln10,
                     np.where(np.isinf(bc), ba / ln10, ba * bc / (ln10 * (ba + bc))))
    return np.asarray(b, dtype=float)


def resolve_b_mv(b: ArrayLike | str) -> NDArray[np.float64]:
    """Return B in mV from numbers or from the words "active" / "passive" per reading.

    Examples
    --------
    >>> resolve_b_mv(["active", "passive", 30]).tolist()
    [26.0, 52.0, 30.0]
    """
    raw = np.atleast_1d(np.asarray(b, dtype=object))
    out = np.empty(raw.shape, dtype=float)
    for i, v in enumerate(raw.ravel()):
        if isinstance(v, str):
            key = v.strip().lower()
            if key == "active":
                out.flat[i] = B_ACTIVE_MV
            elif key == "passive":
                out.flat[i] = B_PASSIVE_MV
            else:
                try:
                    out.flat[i] = float(key)
                except ValueError as err:
                    raise ConditionError(
                        f"B value {v!r} at index {i} is neither a number in mV nor "
                        "'active'/'passive'"
                    ) from err
        else:
            out.flat[i] = float(v) if v is not None else np.nan
    bad = ~(out > 0)
    if np.any(bad):
        raise ConditionError(f"Stern-Geary B must be a positive number in mV ({_count(bad)})")
    return out.reshape(np.shape(b)) if np.ndim(b) else out


def icorr_ua_cm2(rp_ohm: ArrayLike, area_cm2: ArrayLike, b_mv: ArrayLike) -> NDArray[np.float64]:
    """Return ``i_corr = B / (R_p A)`` in uA/cm2.

    Parameters
    ----------
    rp_ohm : array_like
        Polarization resistance of the polarized area, ohm (positive).
    area_cm2 : array_like
        Polarized (confined) steel area, cm2 (positive; required).
    b_mv : array_like
        Stern-Geary constant, mV.

    Raises
    ------
    ConditionError
        If R_p is not positive, the area is missing or not positive, or B not positive.

    Examples
    --------
    >>> float(icorr_ua_cm2(1000.0, 26.0, 26.0))  # [Stern-Geary-1957], derived
    1.0
    """
    rp = _arr(rp_ohm, "polarization resistance")
    a = _arr(area_cm2, "polarized area")
    b = _arr(b_mv, "Stern-Geary B")
    if np.any(~(a > 0)):
        raise ConditionError(
            f"polarized area missing or not positive ({_count(~(a > 0))}); give A_pol in cm2 "
            "(pi x bar diameter x confined length); i_corr is never computed without it"
        )
    if np.any(~(rp > 0)):
        raise ConditionError(
            f"polarization resistance must be positive, in ohm ({_count(~(rp > 0))}); a negative "
            "or zero R_p means a bad connection or an ohmic drop larger than the response"
        )
    if np.any(~(b > 0)):
        raise ConditionError(f"Stern-Geary B must be positive, in mV ({_count(~(b > 0))})")
    return 1000.0 * b / (rp * a)


def icorr_from_specific_rp(rp_ohm_cm2: ArrayLike, b_mv: ArrayLike) -> NDArray[np.float64]:
    """Return ``i_corr = B / R_p`` in uA/cm2 for R_p already in ohm.cm2.

    Examples
    --------
    >>> float(icorr_from_specific_rp(52_000.0, 52.0))  # [Stern-Geary-1957], derived
    1.0
    """
    return icorr_ua_cm2(rp_ohm_cm2, 1.0, b_mv)


def ohmic_corrected_rp_ohm(
    delta_e_mv: ArrayLike, delta_i_ua: ArrayLike, r_ohm_ohm: ArrayLike
) -> NDArray[np.float64]:
    """Return ``R_p = dE/dI - R_ohm`` in ohm.

    Parameters
    ----------
    delta_e_mv : array_like
        Potential shift, mV.
    delta_i_ua : array_like
        Current step, uA (non-zero).
    r_ohm_ohm : array_like
        Ohmic (concrete) resistance, ohm.

    Raises
    ------
    ConditionError
        If the current step is zero or the corrected R_p is not positive.

    Examples
    --------
    >>> float(ohmic_corrected_rp_ohm(10.0, 8.0, 250.0))  # 1250 - 250, derived
    1000.0
    """
    de = _arr(delta_e_mv, "potential shift")
    di = _arr(delta_i_ua, "current step")
    ro = _arr(r_ohm_ohm, "ohmic resistance")
    if np.any(di == 0):
        raise ConditionError(f"current step of zero ({_count(di == 0)}): no polarization applied")
    rp = 1000.0 * de / di - ro
    if np.any(rp <= 0):
        raise ConditionError(
            f"ohmic-drop corrected R_p is not positive ({_count(rp <= 0)}): R_ohm exceeds the "
            "total dE/dI; check the ohmic resistance and the sign of the current"
        )
    return rp


def polarized_area_cm2(
    bar_diameter_mm: ArrayLike, confined_length_mm: ArrayLike, *, n_bars: ArrayLike = 1
) -> NDArray[np.float64]:
    """Return the confined polarized area ``pi d L`` (summed over ``n_bars``), cm2.

    Examples
    --------
    >>> round(float(polarized_area_cm2(16.0, 105.0)), 2)  # pi x 1.6 x 10.5, derived
    52.78
    """
    d = _arr(bar_diameter_mm, "bar diameter")
    length = _arr(confined_length_mm, "confined length")
    n = _arr(n_bars, "number of bars")
    if np.any(~(d > 0)) or np.any(~(length > 0)) or np.any(~(n > 0)):
        raise ConditionError("bar diameter (mm), confined length (mm) and n_bars must be positive")
    return math.pi * (d / 10.0) * (length / 10.0) * n


def faraday_um_per_year(
    icorr_ua_cm2: ArrayLike,
    *,
    molar_mass_g_mol: float = 55.845,
    valence: float = 2.0,
    faraday_c_mol: float = 96485.33212,
    density_g_cm3: float = 7.874,
    year_s: float = 3.15576e7,
) -> NDArray[np.float64]:
    """Return the uniform penetration rate ``i M / (n F rho)`` in um/year.

    Parameters
    ----------
    icorr_ua_cm2 : array_like
        Corrosion current density, uA/cm2.
    molar_mass_g_mol : float
        Molar mass of iron, g/mol.
    valence : float
        Electrons per atom (2 for Fe -> Fe2+).
    faraday_c_mol : float
        Faraday constant, C/mol.
    density_g_cm3 : float
        Density of steel, g/cm3.
    year_s : float
        Length of a year, s (Julian year by default).

    Examples
    --------
    >>> round(float(faraday_um_per_year(1.0)), 2)  # Faraday's law, derived
    11.6
    """
    i = _arr(icorr_ua_cm2, "corrosion current density")
    # A/cm2 * g/mol / (C/mol * g/cm3) = cm/s ; * s/year * 1e4 um/cm
    return i * 1e-6 * molar_mass_g_mol / (valence * faraday_c_mol * density_g_cm3) * year_s * 1e4


def faraday_mpy(icorr_ua_cm2: ArrayLike, **kwargs: float) -> NDArray[np.float64]:
    """Return the penetration rate in mil/year (1 mil = 25.4 um).

    Keywords as :func:`faraday_um_per_year`.

    Examples
    --------
    >>> round(float(faraday_mpy(1.0)), 3)  # Faraday's law, derived
    0.457
    """
    return faraday_um_per_year(icorr_ua_cm2, **kwargs) / 25.4


def faraday_mass_loss_g_m2_year(
    icorr_ua_cm2: ArrayLike,
    *,
    molar_mass_g_mol: float = 55.845,
    valence: float = 2.0,
    faraday_c_mol: float = 96485.33212,
    year_s: float = 3.15576e7,
) -> NDArray[np.float64]:
    """Return the mass loss rate ``i M / (n F)`` in g/(m2 year) (91.3 per uA/cm2, §3.2)."""
    i = _arr(icorr_ua_cm2, "corrosion current density")
    return i * 1e-6 * 1e4 * molar_mass_g_mol / (valence * faraday_c_mol) * year_s


def check_linearity(delta_e_mv: float, *, limit_mv: float = LINEAR_LIMIT_MV) -> str | None:
    """Return a warning text when the polarization ``|dE|`` exceeds ``limit_mv``, else None.

    Examples
    --------
    >>> check_linearity(15.0) is None, check_linearity(25.0) is not None  # 20 mV limit
    (True, True)
    """
    if abs(delta_e_mv) > limit_mv:
        return (f"polarization {abs(delta_e_mv):.1f} mV is outside the linearity limit of "
                f"{limit_mv:g} mV; R_p may be underestimated")
    return None


@dataclass(frozen=True)
class SweepResult:
    """Polarization resistance from a potentiostatic sweep.

    Attributes
    ----------
    rp_ohm : float
        Slope dE/dI of the fitted line, ohm (before ohmic-drop correction).
    e_corr_mv : float
        Open-circuit (corrosion) potential used, mV.
    r2 : float
        Coefficient of determination of the linear fit.
    n_points : int
        Points within the window.
    max_polarization_mv : float
        Largest ``|E - E_corr|`` among the points used, mV.
    warnings : tuple of str
    """

    rp_ohm: float
    e_corr_mv: float
    r2: float
    n_points: int
    max_polarization_mv: float
    warnings: tuple[str, ...] = ()


def rp_from_sweep(
    e_mv: ArrayLike,
    i_ua: ArrayLike,
    *,
    e_corr_mv: float | None = None,
    window_mv: float = 20.0,
    linear_limit_mv: float = LINEAR_LIMIT_MV,
    min_r2: float = 0.98,
) -> SweepResult:
    """Return R_p as the slope of a line fitted to E(I) within +-``window_mv`` of E_corr.

    Parameters
    ----------
    e_mv : array_like
        Potentials of the sweep, mV.
    i_ua : array_like
        Currents, uA.
    e_corr_mv : float, optional
        Open-circuit potential, mV; by default the potential where the current
        crosses zero (linear interpolation), or at the smallest |I|.
    window_mv : float
        Half-width of the fitting window around E_corr, mV.
    linear_limit_mv : float
        A window reaching beyond this adds a linearity warning [Andrade-Alonso-2004, from memory].
    min_r2 : float
        A worse straight-line fit adds a warning.

    Raises
    ------
    ConditionError
        Fewer than 3 points in the window, no current change, or a non-positive slope.
    """
    e = _arr(e_mv, "sweep potentials").ravel()
    i = _arr(i_ua, "sweep currents").ravel()
    if e.shape != i.shape:
        raise ConditionError(
            f"sweep potentials ({e.size}) and currents ({i.size}) differ in length"
        )
    ok = np.isfinite(e) & np.isfinite(i)
    e, i = e[ok], i[ok]
    if e.size < 3:
        raise ConditionError(f"a sweep needs at least 3 finite points, got {e.size}")
    if e_corr_mv is None:
        order = np.argsort(i)
        io, eo = i[order], e[order]
        if io[0] <= 0 <= io[-1] and np.ptp(io) > 0:
            e_corr = float(np.interp(0.0, io, eo))
        else:
            e_corr = float(e[np.argmin(np.abs(i))])
    else:
        e_corr = float(e_corr_mv)
    sel = np.abs(e - e_corr) <= window_mv
    if sel.sum() < 3:
        raise ConditionError(
            f"only {int(sel.sum())} sweep point(s) within +-{window_mv:g} mV of E_corr = "
            f"{e_corr:.1f} mV; at least 3 are needed (widen the window or sample densely)"
        )
    es, is_ = e[sel], i[sel]
    if np.ptp(is_) == 0:
        raise ConditionError("current does not change within the window; no slope")
    slope, intercept = np.polyfit(is_, es, 1)
    pred = slope * is_ + intercept
    ss_res = float(np.sum((es - pred) ** 2))
    ss_tot = float(np.sum((es - es.mean()) ** 2))
    r2 = 1.0 - ss_res / ss_tot if ss_tot > 0 else 0.0
    if slope <= 0:
        raise ConditionError(
            f"sweep slope dE/dI = {slope * 1000:.1f} ohm is not positive: negative polarization "
            "resistance; check the sign convention of current and potential"
        )
    maxpol = float(np.max(np.abs(es - e_corr)))
    warns = []
    msg = check_linearity(maxpol, limit_mv=linear_limit_mv)
    if msg:
        warns.append(msg)
    if r2 < min_r2:
        warns.append(f"E(I) near E_corr is not linear (r2 = {r2:.3f} < {min_r2:g})")
    return SweepResult(float(slope * 1000.0), e_corr, float(r2), int(sel.sum()), maxpol,
                       tuple(warns))

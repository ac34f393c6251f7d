"""Propagation: section loss of bars and time to cover cracking.

Methods
-------
Section loss
    Uniform attack all round: ``d = d0 - 2 P``, loss ``1 - (d/d0)^2``, with the
    penetration ``P = v t`` from Faraday's law
    (:func:`geo_corrosion.condition.corrosion_rate.faraday_um_per_year`,
    derived).  Pitting: pit depth ``p = R P`` with pitting factor
    R (4-8 for natural chloride attack, [Gonzalez-Andrade-1995, from memory]) and
    the hemispherical pit area of Val & Melchers [Val-Melchers-1997, from memory]
    (verify against the paper).  Bars with more than 25 %
    section loss, or adjacent bars with more than 20 %, need an engineering
    decision on replacement or supplementing [UFGS-03931 §3.3.1.4].

Time to cover cracking
    Alonso, Andrade, Rodriguez & Diez (1998)
    [Alonso-Andrade-1998, from memory]: penetration to first visible
    crack ``x_crit [um] = 7.53 + 9.32 c/phi``; time from initiation
    ``x_crit / (11.6 i_corr)`` years.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from geo_corrosion.condition.corrosion_rate import faraday_um_per_year
from geo_corrosion.errors import ConditionError

__all__ = [
    "REVIEW_LOSS",
    "REVIEW_ADJACENT_LOSS",
    "SectionLoss",
    "section_loss",
    "pit_area_mm2",
    "bar_review_required",
    "critical_penetration_um",
    "time_to_cracking_years",
]

REVIEW_LOSS = 0.25  # [UFGS-03931 §3.3.1.4]
REVIEW_ADJACENT_LOSS = 0.20  # [UFGS-03931 §3.3.1.4]


def _arr(x: ArrayLike, what: str) -> NDArray[np.float64]:
    try:
        return np.asarray(x, dtype=float)
    except (TypeError, ValueError) as err:
        raise ConditionError(f"{what} must be numeric ({err})") from err


def pit_area_mm2(pit_depth_mm: ArrayLike, bar_diameter_mm: float) -> NDArray[np.float64]:
    """Return the cross-section lost to a hemispherical pit, mm2 [Val-Melchers-1997, from memory].

    Parameters
    ----------
    pit_depth_mm : array_like
        Pit depth p, mm (>= 0).
    bar_diameter_mm : float
        Original bar diameter D0, mm.
    """
    p = np.clip(_arr(pit_depth_mm, "pit depth"), 0.0, None)
    d0 = float(bar_diameter_mm)
    if not d0 > 0:
        raise ConditionError("bar diameter must be positive, in mm")
    full = math.pi * d0**2 / 4.0
    pc = np.clip(p, 1e-300, d0)
    with np.errstate(invalid="ignore"):
        a = 2.0 * pc * np.sqrt(np.clip(1.0 - (pc / d0) ** 2, 0.0, None))
        th1 = 2.0 * np.arcsin(np.clip(a / d0, -1.0, 1.0))
        th2 = 2.0 * np.arcsin(np.clip(a / (2.0 * pc), -1.0, 1.0))
        a1 = 0.5 * (th1 * (d0 / 2.0) ** 2 - a * np.abs(d0 / 2.0 - pc**2 / d0))
        a2 = 0.5 * (th2 * pc**2 - a * pc**2 / d0)
    out = np.where(pc <= d0 / math.sqrt(2.0), a1 + a2, full - a1 + a2)
    out = np.where(p >= d0, full, out)
    return np.where(p <= 0, 0.0, out)


def bar_review_required(
    loss_fraction: float, *, adjacent_loss_fraction: float | None = None,
    loss_limit: float = REVIEW_LOSS, adjacent_limit: float = REVIEW_ADJACENT_LOSS,
) -> bool:
    """Return True when loss > 25 % (adjacent bars > 20 %): engineer review [UFGS-03931 §3.3.1.4].

    Examples
    --------
    >>> bar_review_required(0.26), bar_review_required(0.24)  # [UFGS-03931 §3.3.1.4]
    (True, False)
    """
    if loss_fraction > loss_limit:
        return True
    return adjacent_loss_fraction is not None and (
        loss_fraction > adjacent_limit and adjacent_loss_fraction > adjacent_limit
    )


@dataclass(frozen=True)
class SectionLoss:
    """Section loss of a bar after ``years`` at a corrosion rate.

    Attributes
    ----------
    penetration_mm : float
        Uniform (average) penetration, mm.
    pit_depth_mm : float or None
        Pit depth (pitting variant), mm.
    residual_diameter_mm : float
        Equivalent residual diameter, mm.
    loss_fraction : float
        Lost share of the original cross-section (0..1).
    review_required : bool
        Engineer-review trigger (> 25 %) [UFGS-03931 §3.3.1.4].
    message : str
    """

    penetration_mm: float
    pit_depth_mm: float | None
    residual_diameter_mm: float
    loss_fraction: float
    review_required: bool
    message: str


def section_loss(
    bar_diameter_mm: float,
    icorr_ua_cm2: float,
    years: float,
    *,
    pitting_factor: float | None = None,
    um_per_year_per_ua_cm2: float | None = None,
) -> SectionLoss:
    """Return the section loss of a bar, uniform or with a pitting factor.

    Parameters
    ----------
    bar_diameter_mm : float
        Original diameter, mm.
    icorr_ua_cm2 : float
        Mean corrosion current density, uA/cm2.
    years : float
        Propagation time, years.
    pitting_factor : float, optional
        Ratio of maximum pit depth to average penetration (4-8 natural chloride
        attack [Gonzalez-Andrade-1995, from memory]); None for uniform attack.
    um_per_year_per_ua_cm2 : float, optional
        Faraday factor; default from :func:`faraday_um_per_year` (11.6).
    """
    if not bar_diameter_mm > 0:
        raise ConditionError("bar diameter must be positive, in mm")
    if not (icorr_ua_cm2 >= 0 and years >= 0):
        raise ConditionError("corrosion current density (uA/cm2) and years must be >= 0")
    f = (float(faraday_um_per_year(1.0)) if um_per_year_per_ua_cm2 is None
         else um_per_year_per_ua_cm2)
    pen = f * icorr_ua_cm2 * years / 1000.0
    d0 = float(bar_diameter_mm)
    full = math.pi * d0**2 / 4.0
    if pitting_factor is None:
        d = max(d0 - 2.0 * pen, 0.0)
        loss = 1.0 - (d / d0) ** 2
        pit = None
    else:
        if not pitting_factor >= 1.0:
            raise ConditionError(f"pitting factor must be >= 1, got {pitting_factor}")
        pit = pitting_factor * pen
        loss = float(pit_area_mm2(pit, d0)) / full
        d = d0 * math.sqrt(max(1.0 - loss, 0.0))
    review = bar_review_required(loss)
    msg = ("section loss above 25 %: replace/supplement - engineer review" if review
           else "section loss within 25 %")
    return SectionLoss(pen, pit, d, float(loss), review, msg)


def critical_penetration_um(cover_mm: ArrayLike, bar_diameter_mm: ArrayLike) -> NDArray[np.float64]:
    """Return ``x_crit = 7.53 + 9.32 c/phi`` in um [Alonso-Andrade-1998, from memory].

    Examples
    --------
    >>> round(float(critical_penetration_um(50.0, 12.0)), 2)  # 7.53 + 9.32 x 50/12
    46.36
    """
    c = _arr(cover_mm, "cover")
    phi = _arr(bar_diameter_mm, "bar diameter")
    if np.any(~(phi > 0)) or np.any(c < 0):
        raise ConditionError("bar diameter must be positive and cover not negative, in mm")
    return 7.53 + 9.32 * c / phi


def time_to_cracking_years(
    cover_mm: ArrayLike,
    bar_diameter_mm: ArrayLike,
    icorr_ua_cm2: ArrayLike,
    *,
    um_per_year_per_ua_cm2: float = 11.6,
) -> NDArray[np.float64]:
    """Return years from corrosion initiation to first visible crack, ``x_crit / (11.6 i)``.

    Zero current density gives ``inf``; negative raises.

    Examples
    --------
    >>> round(float(time_to_cracking_years(50.0, 12.0, 1.0)), 2)
    4.0
    """
    x = critical_penetration_um(cover_mm, bar_diameter_mm)
    i = _arr(icorr_ua_cm2, "corrosion current density")
    if np.any(i < 0):
        raise ConditionError("corrosion current density must not be negative, in uA/cm2")
    with np.errstate(divide="ignore"):
        return x / (um_per_year_per_ua_cm2 * i)

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

Indicative ranges, never a headline figure
    Both estimates rest on one survey's rate readings (instantaneous rates that vary with
    season, temperature and moisture by a factor of several [Andrade-Alonso-2004]) and on
    model constants not confirmed against the original papers.  They are given only where
    the readings support them (:func:`life_support`: at least :data:`LIFE_MIN_READINGS`
    readings with a rate and a cover, spread over at least :data:`LIFE_MIN_SPREAD` of the
    deck, a rule of this project), and then as the 10th to 90th percentile range over the
    readings (:func:`indicative_range`), with the readings, the model, the source and the
    assumptions to confirm beside them.

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
    "LIFE_MIN_READINGS",
    "LIFE_MIN_SPREAD",
    "LIFE_PERCENTILES",
    "LifeSupport",
    "life_support",
    "indicative_range",
]

REVIEW_LOSS = 0.25  # [UFGS-03931 §3.3.1.4]
REVIEW_ADJACENT_LOSS = 0.20  # [UFGS-03931 §3.3.1.4]

#: Fewest readings (rate and cover both known) for an indicative life range: with 20 the
#: 10th and 90th percentiles each rest on two readings (a rule of this project).
LIFE_MIN_READINGS = 20
#: Least share of the deck the readings must span (their convex hull over the deck area), so
#: that the range describes the level and not one bay (a rule of this project).
LIFE_MIN_SPREAD = 0.25
#: Percentiles of an indicative range: low, middle, high.
LIFE_PERCENTILES = (10.0, 50.0, 90.0)


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


@dataclass(frozen=True)
class LifeSupport:
    """Whether a survey's readings support an indicative life range, and why.

    Attributes
    ----------
    supported : bool
    readings : int
        Readings with a finite rate and a finite cover.
    spread : float or None
        Convex hull of those readings over the deck area (None without a deck area).
    reason : str
        One sentence for the reader, naming the counts against the rule.
    """

    supported: bool
    readings: int
    spread: float | None
    reason: str


def life_support(x: ArrayLike, y: ArrayLike, usable: ArrayLike, *,
                 deck_area: float | None) -> LifeSupport:
    """Decide whether the readings support an indicative life range.

    The rule (this project's, see the module docstring): at least
    :data:`LIFE_MIN_READINGS` usable readings whose convex hull covers at least
    :data:`LIFE_MIN_SPREAD` of the deck.

    Parameters
    ----------
    x, y : array_like
        Reading positions, plan length units.
    usable : array_like of bool
        Readings with a finite rate and cover.
    deck_area : float or None
        Deck area in the same length units squared; None skips the spread test.

    Examples
    --------
    >>> import numpy as np
    >>> g = np.arange(5.0)
    >>> x, y = np.meshgrid(g, g)
    >>> life_support(x.ravel(), y.ravel(), np.ones(25, bool), deck_area=32.0).supported
    True
    >>> life_support(x.ravel()[:12], y.ravel()[:12], np.ones(12, bool), deck_area=32.0).reason
    '12 readings with a rate and a cover; an indicative range needs at least 20'
    """
    from shapely.geometry import MultiPoint

    ok = np.asarray(usable, bool)
    n = int(ok.sum())
    if n < LIFE_MIN_READINGS:
        return LifeSupport(False, n, None, f"{n} readings with a rate and a cover; an "
                           f"indicative range needs at least {LIFE_MIN_READINGS}")
    if deck_area is None or not deck_area > 0:
        return LifeSupport(True, n, None, f"{n} readings with a rate and a cover")
    pts = MultiPoint(np.column_stack([_arr(x, "x")[ok], _arr(y, "y")[ok]]))
    spread = float(pts.convex_hull.area) / float(deck_area)
    if spread < LIFE_MIN_SPREAD:
        return LifeSupport(False, n, spread,
                           f"the {n} readings span {100 * spread:.0f} % of the deck; an "
                           f"indicative range needs readings over at least "
                           f"{100 * LIFE_MIN_SPREAD:.0f} %")
    return LifeSupport(True, n, spread, f"{n} readings with a rate and a cover, spread over "
                       f"{100 * spread:.0f} % of the deck")


def indicative_range(values: ArrayLike) -> dict[str, float] | None:
    """Return the 10th, 50th and 90th percentiles of the finite values (None if none).

    Examples
    --------
    >>> indicative_range(range(1, 12))
    {'p10': 2.0, 'p50': 6.0, 'p90': 10.0}
    """
    v = _arr(values, "values").ravel()
    v = v[~np.isnan(v)]
    if not v.size:
        return None
    p = np.percentile(v, LIFE_PERCENTILES)
    return {"p10": float(p[0]), "p50": float(p[1]), "p90": float(p[2])}

"""When the readings of a kind carry a surface, and how far each kind's surface reaches.

Two rules of our own (common practice, no source beyond the one named), applied per kind and
per level:

**Density.**  A kind is kriged into a surface only where both hold:

1. it has at least ``min_readings_for_surface`` usable readings (default
   :data:`MIN_READINGS_FOR_SURFACE`, 30): with fewer, the experimental variogram has too few
   pairs per lag to be fitted (100 to 150 readings give a reliable variogram, fewer an
   unstable one [Webster-Oliver-2007 §4.5, from memory]);
2. the median nearest-neighbour spacing of its readings is at most
   ``max_spacing_to_range`` (default :data:`MAX_SPACING_TO_RANGE`, 0.5) times the fitted
   practical range: readings farther apart than half the range leave most of the deck
   between readings that are nearly uncorrelated, where kriging returns little more than the
   mean (the advice to sample at less than half the range, Kerry and Oliver 2004, from
   memory; not in the bibliography yet).

Otherwise the kind is shown as its readings, coloured by class (``"points"``).

**Neighbourhood.**  A surfaced kind's mask distance (a cell farther than this from every
reading is left empty) and search radius (readings farther than this from a cell are not
used for it; within it, the ``n_neighbors`` nearest are) are derived from that kind's
spacing ``s`` and fitted practical range ``R``::

    mask distance = max(2.5 s, min(R, 5 s))
    search radius = max(mask distance, R)

2.5 spacings put about twenty readings of a regular grid within reach of every cell; beyond
the range a reading carries no information about the cell, and 5 spacings keep a dense
survey with a long range from being extrapolated far past its readings.  The search radius
reaches at least the range, so a cell is kriged from every correlated reading among its
nearest, and at least the mask distance, so every cell drawn has a reading in reach.
``max_distance`` (per kind in ``[run.kinds.<kind>]``, else site-wide in ``[run]``) overrides
the mask distance.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike
from scipy.spatial import cKDTree

from geo_corrosion.errors import KrigingError

__all__ = ["MIN_READINGS_FOR_SURFACE", "MAX_SPACING_TO_RANGE", "SEARCH_SPACINGS",
           "MAX_SPACINGS", "DensityRule", "Neighbourhood", "nearest_neighbour_spacing",
           "density_rule", "count_reason", "spacing_reason", "neighbourhood",
           "DENSITY_RULE_TEXT", "NEIGHBOURHOOD_RULE_TEXT", "SparseReadingsError",
           "surface_reason", "kind_neighbourhood", "binding_radius", "uncorrelated_reason"]


class SparseReadingsError(KrigingError):
    """The readings of a kind are too far apart for its fitted range: shown as points."""


#: Fewest usable readings for a kriged surface of a kind on a level (default).
MIN_READINGS_FOR_SURFACE = 30
#: Largest median nearest-neighbour spacing, as a fraction of the practical range (default).
MAX_SPACING_TO_RANGE = 0.5
#: The mask distance is at least this many median spacings.
SEARCH_SPACINGS = 2.5
#: ... and, unless the range is shorter, at most this many.
MAX_SPACINGS = 5.0

DENSITY_RULE_TEXT = ("a surface needs at least min_readings_for_surface usable readings and a "
                     "median nearest-neighbour spacing of at most max_spacing_to_range times "
                     "the fitted practical range")
NEIGHBOURHOOD_RULE_TEXT = ("mask distance = max(2.5 x median nearest-neighbour spacing, "
                           "min(fitted practical range, 5 x spacing)), or max_distance when "
                           "given; search radius = max(mask distance, fitted practical range)")


@dataclass(frozen=True)
class DensityRule:
    """The density rule of one kind: fewest readings and largest spacing-to-range ratio."""

    min_readings: int = MIN_READINGS_FOR_SURFACE
    max_spacing_to_range: float = MAX_SPACING_TO_RANGE

    def to_dict(self) -> dict[str, Any]:
        """Return the rule as ``run.json`` keeps it."""
        return {"min_readings_for_surface": self.min_readings,
                "max_spacing_to_range": self.max_spacing_to_range}


@dataclass(frozen=True)
class Neighbourhood:
    """Search radius and mask distance of one kind's surface (plan length units).

    ``basis`` says where the mask distance came from: ``derived`` (the rule above),
    ``[run.kinds.<kind>] max_distance`` or ``[run] max_distance``.
    """

    search_radius: float
    mask_distance: float
    spacing: float
    practical_range: float
    basis: str

    def to_dict(self, unit: str) -> dict[str, Any]:
        """Return the neighbourhood as ``run.json`` keeps it."""
        return {"search_radius": self.search_radius, "mask_distance": self.mask_distance,
                "unit": unit, "basis": self.basis, "rule": NEIGHBOURHOOD_RULE_TEXT}


def nearest_neighbour_spacing(x: ArrayLike, y: ArrayLike) -> float:
    """Return the median distance from each reading location to its nearest other one.

    Repeated locations count once.  NaN with fewer than two distinct locations.
    """
    xy = np.unique(np.column_stack([np.asarray(x, float).ravel(),
                                    np.asarray(y, float).ravel()]), axis=0)
    if len(xy) < 2:
        return float("nan")
    d, _ = cKDTree(xy).query(xy, k=2)
    return float(np.median(d[:, 1]))


def density_rule(kinds: Mapping[str, Mapping[str, Any]], kind: str) -> DensityRule:
    """Return the density rule of ``kind`` from the ``[run.kinds.<kind>]`` tables."""
    t = kinds.get(kind, {})
    return DensityRule(int(t.get("min_readings_for_surface", MIN_READINGS_FOR_SURFACE)),
                       float(t.get("max_spacing_to_range", MAX_SPACING_TO_RANGE)))


def count_reason(n: int, rule: DensityRule) -> str | None:
    """Say why ``n`` readings are too few for a surface; None when they are enough."""
    if n >= rule.min_readings:
        return None
    return (f"{n} usable reading{'s' if n != 1 else ''}, fewer than the "
            f"{rule.min_readings} a surface needs (min_readings_for_surface), so the "
            "readings are shown as points")


def spacing_reason(spacing: float, practical_range: float, rule: DensityRule,
                   unit: str) -> str | None:
    """Say why readings this far apart carry no surface; None when they are close enough."""
    limit = rule.max_spacing_to_range * practical_range
    if math.isfinite(spacing) and spacing <= limit:
        return None
    return (f"the readings are {spacing:.3g} {unit} apart (median nearest-neighbour spacing), "
            f"more than {rule.max_spacing_to_range:g} x the fitted practical range of "
            f"{practical_range:.3g} {unit}, so a surface between them would be little more than "
            "their mean; the readings are shown as points")


def uncorrelated_reason(spacing: float, unit: str) -> str:
    """Say why a kind with no spatial correlation at its reading spacing is shown as points."""
    return (f"no spatial correlation found: readings {spacing:.3g} {unit} apart (median "
            "nearest-neighbour spacing) vary independently of each other (a pure nugget "
            "variogram), so a kriged surface would be their mean everywhere; the readings are "
            "shown as points")


def neighbourhood(spacing: float, practical_range: float, *,
                  max_distance: float | None = None, basis: str = "derived") -> Neighbourhood:
    """Return the search radius and mask distance of a kind (plan length units).

    Parameters
    ----------
    spacing : float
        Median nearest-neighbour spacing of its readings.
    practical_range : float
        Of its fitted variogram.
    max_distance : float, optional
        An explicit mask distance (``max_distance`` of the site file); ``basis`` names it.
    """
    s = spacing if math.isfinite(spacing) and spacing > 0 else practical_range
    mask = max(SEARCH_SPACINGS * s, min(practical_range, MAX_SPACINGS * s))
    if max_distance is not None:
        mask = max_distance
    else:
        basis = "derived"
    return Neighbourhood(max(mask, practical_range), mask, spacing, practical_range, basis)


def surface_reason(n: int, spacing: float, practical_range: float, rule: DensityRule,
                   unit: str) -> str:
    """Say why a kind's readings carry a surface (the density rule, met)."""
    return (f"{n} usable readings (at least {rule.min_readings}) at a median nearest-neighbour "
            f"spacing of {spacing:.3g} {unit}, at most {rule.max_spacing_to_range:g} x the "
            f"fitted practical range of {practical_range:.3g} {unit}")


def kind_neighbourhood(kinds: Mapping[str, Mapping[str, Any]], site_max_distance_m: float | None,
                       kind: str, spacing: float, practical_range: float,
                       m_per_unit: float) -> Neighbourhood:
    """Return a kind's neighbourhood with the overrides of the site file applied.

    ``[run.kinds.<kind>] max_distance`` wins over ``[run] max_distance``; both are held in
    metres and converted with ``m_per_unit`` (metres per plan unit).
    """
    own = kinds.get(kind, {}).get("max_distance_m")
    if own is not None:
        return neighbourhood(spacing, practical_range, max_distance=own / m_per_unit,
                             basis=f"[run.kinds.{kind}] max_distance")
    if site_max_distance_m is not None:
        return neighbourhood(spacing, practical_range,
                             max_distance=site_max_distance_m / m_per_unit,
                             basis="[run] max_distance")
    return neighbourhood(spacing, practical_range)


def binding_radius(x: ArrayLike, y: ArrayLike, cx: ArrayLike, cy: ArrayLike, n_neighbors: int,
                   radius: float, transform: Any = None) -> float | None:
    """Return ``radius`` when it leaves out one of some cell's ``n_neighbors`` nearest readings.

    Otherwise None: every cell's nearest readings lie within the radius, so the kriging
    neighbourhood is the same without it (and the search need not rank readings at equal
    distances differently).  ``transform`` maps plan coordinates into the variogram's
    isotropic space (``VariogramModel.transform_coords``), where the radius applies.
    """
    xa, ya = np.asarray(x, float).ravel(), np.asarray(y, float).ravel()
    qa, qb = np.asarray(cx, float).ravel(), np.asarray(cy, float).ravel()
    if transform is not None:
        xa, ya = transform(xa, ya)
        qa, qb = transform(qa, qb)
    if not qa.size or not xa.size:
        return None
    k = min(int(n_neighbors), xa.size)
    tree = cKDTree(np.column_stack([xa, ya]))
    cells = np.column_stack([qa, qb])
    # first a bound: a cell's k-th nearest reading is no farther than its nearest reading r
    # plus r's own k-th nearest (r counted), so when that bound stays inside the radius for
    # every cell the answer is None without ranking k readings for every cell (the cells
    # outnumber the readings); a margin of 1e-9 covers the rounding of the sums
    d1, i1 = tree.query(cells, k=1)
    dk_r, _ = tree.query(tree.data, k=[k])
    if float(np.max(d1 + dk_r[i1, 0])) <= radius * (1.0 - 1e-9):
        return None
    d, _ = tree.query(cells, k=[k])
    return radius if float(np.max(d)) > radius else None

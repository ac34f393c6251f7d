"""Results of the surfaces and condition stages for one level, on the level's kriging grid.

:class:`KindSurface` is one kind's kriged surface with its variogram, cross-validation,
contours and class polygons; :class:`LevelCondition` the level's probability maps,
combined classes and condition statistics.  Geometry is in the level's local grid.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd
from numpy.typing import NDArray
from shapely.geometry.base import BaseGeometry

from geo_corrosion.measurements import MeasurementKind
from geo_corrosion.surfaces import GridSpec, VariogramFit
from geo_corrosion.surfaces.density import Neighbourhood

__all__ = ["grid_values_at", "KindSurface", "KindPoints", "LevelCondition", "LevelSurfaces",
           "with_role"]


def grid_values_at(grid: GridSpec, values: NDArray[np.float64], x_local: NDArray[np.float64],
                   y_local: NDArray[np.float64]) -> NDArray[np.float64]:
    """Return the grid's value in the cell under each point (local grid coordinates).

    Points off the grid take the nearest edge cell; cells outside the mask give NaN.
    """
    x = np.asarray(x_local, dtype=np.float64)
    y = np.asarray(y_local, dtype=np.float64)
    col = np.clip(((x - grid.x0) / grid.cell).astype(int), 0, grid.nx - 1)
    row = np.clip(((grid.y0 + grid.ny * grid.cell - y) / grid.cell).astype(int), 0, grid.ny - 1)
    return np.asarray(values[row, col], dtype=np.float64)


@dataclass(frozen=True)
class KindSurface:
    """The kriged surface of one kind on one level (local grid coordinates).

    Attributes
    ----------
    kind : MeasurementKind
    grid : GridSpec
        Prediction grid (local grid units).
    mean, variance : ndarray
        ``(ny, nx)``, NaN outside the mask; mean in the kind's canonical unit and
        variance in its square (lognormal kinds are kriged in log space and both are
        back-transformed; see :func:`geo_corrosion.surfaces.kriging.back_transform`).
    fit : VariogramFit
    cv : dict
        Cross-validation statistics.
    residuals : DataFrame
        Per-reading cross-validation residuals (reading_id, x_local, y_local, residual).
    n_readings : int
    lines, bands : list
        Contour lines ``(level, geometry)`` and bands ``(lo, hi, geometry)``.
    classes : DataFrame
        Class polygons with ``class``, ``color``, ``area_local`` (local units squared).
    regions : ndarray of int, optional
        ``(ny, nx)``: the continuity region of each cell drawn (-1 elsewhere) when the kind
        was kriged region by region (the deck split by breaking joints); None otherwise.
        Maps trace contours region by region with it.
    """

    kind: MeasurementKind
    grid: GridSpec
    mean: NDArray[np.float64]
    variance: NDArray[np.float64]
    fit: VariogramFit
    cv: dict[str, Any]
    residuals: pd.DataFrame
    n_readings: int
    interval: float
    lines: Sequence[tuple[float, BaseGeometry]] = field(default_factory=list)
    bands: Sequence[tuple[float, float, BaseGeometry]] = field(default_factory=list)
    classes: pd.DataFrame | None = None
    directional: dict[str, Any] = field(default_factory=dict)
    regions: NDArray[np.intp] | None = None
    #: search radius and mask distance of this kind (None: built without them)
    neighbourhood: Neighbourhood | None = None

    def values_at(self, x_local: NDArray[np.float64], y_local: NDArray[np.float64]
                  ) -> NDArray[np.float64]:
        """Return the surface's value in the cell under each point (local grid coordinates).

        Points off the grid take the nearest edge cell; cells outside the mask give NaN.
        """
        return grid_values_at(self.grid, self.mean, x_local, y_local)


@dataclass(frozen=True)
class KindPoints:
    """A kind shown as its readings: too sparse for a surface (local grid coordinates).

    Attributes
    ----------
    kind : MeasurementKind
    points : DataFrame
        One row per usable reading: ``reading_id``, ``point_id``, ``x_local``, ``y_local``,
        the value column, ``value``, ``unit``, and with a class set ``class``, ``class_code``,
        ``color``, ``class_set``; ``cell`` is its Thiessen cell clipped to the deck.
    reason : str
        Why there is no surface, one sentence.
    spacing : float
        Median nearest-neighbour spacing of the readings (NaN with one location).
    """

    kind: MeasurementKind
    points: pd.DataFrame
    reason: str
    spacing: float


@dataclass
class LevelCondition:
    """Condition results of one level (arrays on the level's kriging grid)."""

    probability: dict[str, NDArray[np.float64]] = field(default_factory=dict)
    combined_codes: NDArray[np.int64] | None = None
    combined_polygons: pd.DataFrame | None = None
    stats: dict[str, Any] = field(default_factory=dict)
    mixture: Any = None


@dataclass(frozen=True)
class LevelSurfaces:
    """What the surfaces stage made of one level.

    Attributes
    ----------
    surfaces : dict of str to KindSurface
        By kind name, for the kinds that got a surface.
    readings : dict of str to DataFrame
        The readings each surface was kriged from (after QA exclusions), by kind name.
    kinds : dict of str to dict
        Per kind, the record that ``run.json`` keeps under ``levels.<id>.kinds``: reading
        counts, unit, statistics, class shares, and the surface's grid, variogram,
        cross-validation and class areas (or why there is no surface).
    skipped : dict of str to str
        Kinds with readings but no surface, with the reason.
    points : dict of str to KindPoints
        Kinds with usable readings but no surface, shown as points.
    """

    surfaces: dict[str, KindSurface] = field(default_factory=dict)
    readings: dict[str, pd.DataFrame] = field(default_factory=dict)
    kinds: dict[str, dict[str, Any]] = field(default_factory=dict)
    skipped: dict[str, str] = field(default_factory=dict)
    points: dict[str, KindPoints] = field(default_factory=dict)


def with_role(surfaces: Mapping[str, KindSurface], role: str) -> KindSurface | None:
    """Return the surface of the kind that plays ``role`` (a measurements ``Role``).

    None when no kind of these surfaces plays it.  A site has at most one kind per role on
    a level (checked before the run); should there be more, the first one is taken.
    """
    return next((s for s in surfaces.values() if role in s.kind.roles), None)

"""Local survey grids and their tie to the site CRS.

A level is surveyed on a local grid (metres or feet from a grid origin, axes
along the deck).  :class:`LocalGrid` maps local coordinates to the projected
site CRS by a similarity transform (rotation, uniform scale, translation):
either declared (origin and rotation) or fitted by least squares to two or more
control points, with the residuals reported.  The scale absorbs the
projection's grid scale factor (e.g. 0.9996 on a UTM central meridian).

A control point whose residual exceeds :data:`RESIDUAL_TOLERANCE_M` (0.1 m, common
practice) is reported by a :class:`~geo_corrosion.errors.GeoreferenceWarning`.  With
exactly two points the fit has no redundancy: the residuals are 0 by construction and
say nothing about the tie.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pyproj
import shapely
from numpy.typing import ArrayLike, NDArray
from shapely.geometry.base import BaseGeometry

from geo_corrosion.config import ControlPoint, GridConfig
from geo_corrosion.errors import CRSError, GeoreferenceError, GeoreferenceWarning
from geo_corrosion.units import LENGTH_TO_M

__all__ = ["LocalGrid", "fit_similarity", "site_crs", "RESIDUAL_TOLERANCE_M"]

#: Largest accepted departure of the fitted scale from the unit ratio (1 %): more
#: means the control points are in the wrong unit or mislabelled.
MAX_SCALE_DEPARTURE = 0.01
#: Largest control-point residual of a fitted tie taken without a warning, metres (common
#: practice, our own choice): control points of a deck are surveyed and the grid laid out
#: to a few centimetres, so 0.1 m is a mistyped coordinate or the wrong point, and it is
#: small beside the reading spacings of a deck survey (0.3-1.5 m).
RESIDUAL_TOLERANCE_M = 0.1


@dataclass(frozen=True)
class LocalGrid:
    """A level's local survey grid tied to the site CRS.

    ``X = tx + s (cos a * x' - sin a * y')``, ``Y = ty + s (sin a * x' + cos a * y')``,
    with ``x' = x * unit_factor`` the local coordinates in site CRS units.

    Attributes
    ----------
    unit : str
        Unit of local coordinates.
    crs_unit : str
        Unit of the site CRS.
    rotation_deg : float
        Counter-clockwise angle from the CRS x axis (east) to the grid x axis.
    scale : float
        Fitted scale beyond the unit conversion (1.0 when declared).
    tx, ty : float
        Site coordinates of the local origin.
    residuals : tuple of (id, dx, dy) in site CRS units
        Control-point residuals of the fit (empty when declared).
    """

    unit: str
    crs_unit: str
    rotation_deg: float
    scale: float
    tx: float
    ty: float
    residuals: tuple[tuple[str, float, float], ...] = ()

    @property
    def unit_factor(self) -> float:
        """Site CRS units per local unit."""
        return LENGTH_TO_M[self.unit] / LENGTH_TO_M[self.crs_unit]

    @property
    def rms_residual(self) -> float:
        """Root-mean-square control-point residual, site CRS units."""
        if not self.residuals:
            return 0.0
        sq = sum(dx * dx + dy * dy for _, dx, dy in self.residuals)
        return math.sqrt(sq / len(self.residuals))

    @property
    def redundant(self) -> bool:
        """Whether the fit has residuals that test it: three or more control points."""
        return len(self.residuals) >= 3

    @property
    def residual_tolerance(self) -> float:
        """:data:`RESIDUAL_TOLERANCE_M` in site CRS units."""
        return RESIDUAL_TOLERANCE_M / LENGTH_TO_M[self.crs_unit]

    def large_residuals(self) -> list[tuple[str, float]]:
        """Control points whose residual exceeds the tolerance, largest first (CRS units)."""
        if not self.redundant:
            return []
        big = [(i, math.hypot(dx, dy)) for i, dx, dy in self.residuals]
        return sorted(((i, r) for i, r in big if r > self.residual_tolerance),
                      key=lambda ir: -ir[1])

    def residual_warning(self, where: str = "") -> str | None:
        """Message naming the control points beyond the tolerance, or ``None``."""
        big = self.large_residuals()
        if not big:
            return None
        u = self.crs_unit
        items = ", ".join(f"{i!r} {r:.3f} {u}" for i, r in big)
        head = f"{where}: " if where else ""
        return (
            f"{head}control point residual(s) above the {self.residual_tolerance:.3f} {u} "
            f"tolerance (0.1 m, common practice): {items} (RMS {self.rms_residual:.3f} {u} over "
            f"{len(self.residuals)} points). A control point's local or site coordinates are "
            "wrong; with few points the error of one spreads over the others in the fit, so "
            "check every control point of this grid, those listed first"
        )

    def _abcd(self) -> tuple[float, float]:
        a = math.radians(self.rotation_deg)
        k = self.scale * self.unit_factor
        return k * math.cos(a), k * math.sin(a)

    def to_site(self, x: ArrayLike, y: ArrayLike
                ) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        """Local grid coordinates to site CRS coordinates."""
        c, s = self._abcd()
        xa, ya = np.asarray(x, float), np.asarray(y, float)
        return self.tx + c * xa - s * ya, self.ty + s * xa + c * ya

    def to_local(self, X: ArrayLike, Y: ArrayLike
                 ) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        """Site CRS coordinates to local grid coordinates."""
        c, s = self._abcd()
        d = c * c + s * s
        dx, dy = np.asarray(X, float) - self.tx, np.asarray(Y, float) - self.ty
        return (c * dx + s * dy) / d, (-s * dx + c * dy) / d

    def geom_to_site(self, geom: BaseGeometry) -> BaseGeometry:
        """Transform a shapely geometry from local to site coordinates."""
        return shapely.transform(geom, lambda xy: np.column_stack(self.to_site(xy[:, 0], xy[:, 1])))

    def geom_to_local(self, geom: BaseGeometry) -> BaseGeometry:
        """Transform a shapely geometry from site to local coordinates."""
        return shapely.transform(
            geom, lambda xy: np.column_stack(self.to_local(xy[:, 0], xy[:, 1])))

    def affine_gdal(self, x0: float, y_top: float, cell: float) -> tuple[float, ...]:
        """Affine (a, b, c, d, e, f) of a north-up-in-local raster placed in the site CRS.

        Parameters
        ----------
        x0, y_top : float
            Local coordinates of the raster's upper-left corner.
        cell : float
            Cell size in local units.
        """
        c, s = self._abcd()
        X0, Y0 = self.to_site(x0, y_top)
        # column step = +cell along local x, row step = -cell along local y
        return (c * cell, s * cell, float(X0), s * cell, -c * cell, float(Y0))

    @classmethod
    def from_config(cls, grid: GridConfig, crs_unit: str, *, where: str = "") -> LocalGrid:
        """Build the tie from a level's ``[levels.grid]`` table."""
        if grid.control_points:
            return fit_similarity(grid.control_points, grid.unit, crs_unit, where=where)
        assert grid.origin is not None
        return cls(grid.unit, crs_unit, grid.rotation_deg, 1.0, grid.origin[0], grid.origin[1])

    def to_dict(self) -> dict[str, object]:
        """JSON-ready description for run.json."""
        return {
            "local_unit": self.unit,
            "crs_unit": self.crs_unit,
            "rotation_deg": self.rotation_deg,
            "scale": self.scale,
            "origin_site": [self.tx, self.ty],
            "control_point_residuals": [
                {"id": i, "dx": dx, "dy": dy, "unit": self.crs_unit} for i, dx, dy in self.residuals
            ],
            "rms_residual": self.rms_residual,
        }


def fit_similarity(
    points: Sequence[ControlPoint], unit: str, crs_unit: str, *, where: str = ""
) -> LocalGrid:
    """Fit a 4-parameter similarity transform to control points by least squares.

    Parameters
    ----------
    points : sequence of ControlPoint
        At least two, not coincident.
    unit, crs_unit : str
        Units of the local grid and of the site CRS.

    Raises
    ------
    GeoreferenceError
        Fewer than two points, coincident points, or a scale that shows a unit mix-up.

    Warns
    -----
    GeoreferenceWarning
        A control point's residual exceeds :data:`RESIDUAL_TOLERANCE_M` (three or more
        points; with two the residuals are 0 by construction).
    """
    if len(points) < 2:
        raise GeoreferenceError(
            f"{where}: {len(points)} control point(s); at least 2 are needed to fit the grid"
        )
    f = LENGTH_TO_M[unit] / LENGTH_TO_M[crs_unit]
    loc = np.array([p.local for p in points], float) * f
    site = np.array([p.site for p in points], float)
    if np.ptp(loc, axis=0).max() < 1e-9 or np.ptp(site, axis=0).max() < 1e-9:
        raise GeoreferenceError(f"{where}: control points coincide; they must be spread out")
    # centre both point sets first: the translation is then exact and the 2x2 part well conditioned
    lm, sm = loc.mean(axis=0), site.mean(axis=0)
    lc, sc = loc - lm, site - sm
    n = len(points)
    A = np.zeros((2 * n, 2))
    A[0::2] = np.column_stack([lc[:, 0], -lc[:, 1]])
    A[1::2] = np.column_stack([lc[:, 1], lc[:, 0]])
    b = sc.reshape(-1)
    (c, s), *_ = np.linalg.lstsq(A, b, rcond=None)
    tx = sm[0] - (c * lm[0] - s * lm[1])
    ty = sm[1] - (s * lm[0] + c * lm[1])
    scale = math.hypot(c, s)
    if abs(scale - 1.0) > MAX_SCALE_DEPARTURE:
        raise GeoreferenceError(
            f"{where}: the control points imply a scale of {scale:.4f} between the local grid "
            f"({unit}) and the site CRS ({crs_unit}); check the grid unit and that each point's "
            "local and site coordinates belong together"
        )
    res = (A @ np.array([c, s]) - b).reshape(-1, 2)
    grid = LocalGrid(
        unit=unit,
        crs_unit=crs_unit,
        rotation_deg=math.degrees(math.atan2(s, c)),
        scale=scale,
        tx=float(tx),
        ty=float(ty),
        residuals=tuple((p.id, float(r[0]), float(r[1])) for p, r in zip(points, res, strict=True)),
    )
    message = grid.residual_warning(where)
    if message:
        warnings.warn(message, GeoreferenceWarning, stacklevel=2)
    return grid


def site_crs(text: object, *, where: str) -> tuple[pyproj.CRS, str]:
    """Parse and check the site CRS: known, projected, in metres or feet.

    Returns
    -------
    crs : pyproj.CRS
    unit : str
        ``"m"``, ``"ft"`` or ``"us-ft"``: the CRS's linear unit.
    """
    if not isinstance(text, str | int) or isinstance(text, bool):
        raise CRSError(f"{where}: expected a CRS such as \"EPSG:26918\"; got {text!r}")
    try:
        crs = pyproj.CRS.from_user_input(text)
    except pyproj.exceptions.CRSError as err:
        raise CRSError(
            f"{where}: unknown CRS {text!r}; give an EPSG code of a projected CRS, "
            "such as \"EPSG:26918\""
        ) from err
    if not crs.is_projected:
        raise CRSError(
            f"{where}: CRS {text!r} ({crs.name}) is geographic (degrees); areas and kriging need "
            "a projected CRS in metres or feet, e.g. the UTM zone or State Plane zone of the site"
        )
    factor = crs.axis_info[0].unit_conversion_factor
    for unit, f in (("m", 1.0), ("ft", LENGTH_TO_M["ft"]), ("us-ft", LENGTH_TO_M["us-ft"])):
        if abs(factor - f) < 1e-9:
            return crs, unit
    raise CRSError(
        f"{where}: CRS {text!r} uses unit {crs.axis_info[0].unit_name!r}; "
        "use a CRS in metres or feet"
    )

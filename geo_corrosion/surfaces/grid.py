"""Prediction grids aligned with the level's local survey grid, masks, and gridded kriging.

Arrays follow the GeoTIFF convention: shape ``(ny, nx)``, row 0 is the top
(north-most, largest y) row, column 0 the west-most column.  A cell's value is
predicted at its centre.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable
from dataclasses import dataclass

import affine
import numpy as np
import shapely
from numpy.typing import ArrayLike, NDArray
from scipy.spatial import cKDTree
from shapely.geometry.base import BaseGeometry

from geo_corrosion.errors import KrigingError, KrigingWarning
from geo_corrosion.surfaces.kriging import (
    KrigingEngine,
    _check_transform,
    back_transform,
    is_collinear,
)
from geo_corrosion.surfaces.variogram import VariogramModel, as_xyz

__all__ = ["GridSpec", "grid_for_polygon", "surface_mask", "krige_grid"]

_SNAP_TOL = 1e-9


@dataclass(frozen=True)
class GridSpec:
    """A regular grid in local plan coordinates.

    Parameters
    ----------
    x0, y0 : float
        Lower-left corner of the lower-left cell, plan length units.
    cell : float
        Cell size, plan length units.
    nx, ny : int
        Number of columns and rows.

    Examples
    --------
    >>> g = GridSpec(0.0, 0.0, 1.0, nx=3, ny=2)
    >>> g.x_centers().tolist(), g.y_centers().tolist()
    ([0.5, 1.5, 2.5], [1.5, 0.5])
    """

    x0: float
    y0: float
    cell: float
    nx: int
    ny: int

    def __post_init__(self) -> None:
        if not (math.isfinite(self.cell) and self.cell > 0):
            raise KrigingError(f"grid cell size must be > 0 (plan length units), got {self.cell}")
        if self.nx < 1 or self.ny < 1:
            raise KrigingError(f"grid needs at least one row and column, got {self.ny}x{self.nx}")

    @property
    def shape(self) -> tuple[int, int]:
        """``(ny, nx)``."""
        return (self.ny, self.nx)

    @property
    def size(self) -> int:
        """Number of cells."""
        return self.nx * self.ny

    @property
    def bounds(self) -> tuple[float, float, float, float]:
        """``(xmin, ymin, xmax, ymax)`` of the grid, plan length units."""
        return (self.x0, self.y0, self.x0 + self.nx * self.cell, self.y0 + self.ny * self.cell)

    def x_centers(self) -> NDArray[np.float64]:
        """Cell-centre x of each column (increasing)."""
        return np.asarray(self.x0 + (np.arange(self.nx) + 0.5) * self.cell, dtype=np.float64)

    def y_centers(self) -> NDArray[np.float64]:
        """Cell-centre y of each row (decreasing: row 0 is the top)."""
        return np.asarray(self.y0 + (self.ny - np.arange(self.ny) - 0.5) * self.cell,
                          dtype=np.float64)

    def affine(self) -> affine.Affine:
        """GeoTIFF-style transform from (col, row) to local plan coordinates."""
        top = self.y0 + self.ny * self.cell
        return affine.Affine(self.cell, 0.0, self.x0, 0.0, -self.cell, top)

    def row_centers(self, rows: slice) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        """Flattened centre coordinates of a block of rows."""
        xs = self.x_centers()
        ys = self.y_centers()[rows]
        return np.tile(xs, ys.size), np.repeat(ys, xs.size)


def grid_for_polygon(
    polygon: BaseGeometry, cell: float, *, max_cells: int = 50_000_000
) -> GridSpec:
    """Grid covering a polygon, with cell edges on multiples of ``cell`` from the origin.

    Parameters
    ----------
    polygon : shapely.Polygon or MultiPolygon
        The slab outline, local plan coordinates (only its bounds are used, so any
        geometry is accepted, e.g. a slab minus its exclusions).
    cell : float
        Cell size, plan length units.
    max_cells : int
        Refuse grids with more cells than this.

    Returns
    -------
    GridSpec

    Raises
    ------
    KrigingError
        On an empty polygon, a bad cell size or too many cells.
    """
    if polygon is None or polygon.is_empty:
        raise KrigingError("cannot build a grid for an empty slab polygon")
    cell = float(cell)
    if not (math.isfinite(cell) and cell > 0):
        raise KrigingError(f"cell size must be > 0 (plan length units), got {cell}")
    minx, miny, maxx, maxy = polygon.bounds
    ix0 = math.floor(minx / cell + _SNAP_TOL)
    iy0 = math.floor(miny / cell + _SNAP_TOL)
    ix1 = math.ceil(maxx / cell - _SNAP_TOL)
    iy1 = math.ceil(maxy / cell - _SNAP_TOL)
    nx = max(1, ix1 - ix0)
    ny = max(1, iy1 - iy0)
    if nx * ny > max_cells:
        raise KrigingError(
            f"a {cell:g}-unit cell over a {maxx - minx:g} x {maxy - miny:g} slab gives "
            f"{nx * ny:,} cells (limit {max_cells:,}); choose a larger cell size "
            f"(at least {cell * math.sqrt(nx * ny / max_cells):.3g})"
        )
    return GridSpec(x0=ix0 * cell, y0=iy0 * cell, cell=cell, nx=nx, ny=ny)


def _rows_per_block(grid: GridSpec, cells: int = 262_144) -> int:
    return max(1, cells // grid.nx)


def surface_mask(
    grid: GridSpec,
    polygon: BaseGeometry | None,
    x: ArrayLike,
    y: ArrayLike,
    *,
    max_distance: float | None,
) -> NDArray[np.bool_]:
    """Cells where a value is drawn.

    A cell is drawn when its centre is inside the polygon (holes, i.e.
    exclusions, are outside) and the nearest reading is within
    ``max_distance``.

    Parameters
    ----------
    grid : GridSpec
        The prediction grid.
    polygon : shapely.Polygon or MultiPolygon, optional
        Slab minus exclusions (any geometry: a cell is kept when the geometry contains its
        centre); None keeps every cell.
    x, y : array_like
        Reading coordinates, plan length units.
    max_distance : float, optional
        Largest distance from a cell centre to its nearest reading, plan length
        units; None disables that test.

    Returns
    -------
    ndarray of bool, shape ``(ny, nx)``
    """
    xa = np.asarray(x, dtype=float).ravel()
    ya = np.asarray(y, dtype=float).ravel()
    if max_distance is not None and not max_distance > 0:
        raise KrigingError(f"max_distance must be > 0 (plan length units), got {max_distance}")
    mask = np.zeros(grid.shape, dtype=bool)
    tree = cKDTree(np.column_stack([xa, ya])) if max_distance is not None and xa.size else None
    if polygon is not None:
        shapely.prepare(polygon)
    step = _rows_per_block(grid)
    for r0 in range(0, grid.ny, step):
        rows = slice(r0, min(r0 + step, grid.ny))
        cx, cy = grid.row_centers(rows)
        ok = np.ones(cx.size, dtype=bool)
        if polygon is not None:
            ok &= shapely.contains_xy(polygon, cx, cy)
        if max_distance is not None:
            if tree is None:
                ok[:] = False
            else:
                sel = np.flatnonzero(ok)
                d, _ = tree.query(
                    np.column_stack([cx[sel], cy[sel]]), k=1,
                    distance_upper_bound=max_distance * (1 + 1e-12), workers=-1,
                )
                ok[sel] = d <= max_distance
        mask[rows] = ok.reshape(-1, grid.nx)
    return mask


def krige_grid(
    x: ArrayLike,
    y: ArrayLike,
    z: ArrayLike,
    grid: GridSpec,
    model: VariogramModel,
    *,
    mask: NDArray[np.bool_] | None = None,
    n_neighbors: int = 16,
    radius: float | None = None,
    transform: str | None = None,
    progress: Callable[[int, int], None] | None = None,
    chunk_size: int = 8192,
    back_transform_how: str = "unbiased",
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Ordinary kriging onto a grid.

    Parameters
    ----------
    x, y : array_like
        Reading coordinates, plan length units.
    z : array_like
        Reading values, value units.
    grid : GridSpec
        Prediction grid.
    model : VariogramModel
        Variogram of ``z`` (of ``log(z)`` with ``transform="log"``).
    mask : ndarray of bool, optional
        ``(ny, nx)``; only True cells are kriged.  None krige every cell.
    n_neighbors, radius, transform, back_transform_how
        As in :func:`geo_corrosion.surfaces.krige`.
    progress : callable, optional
        Called as ``progress(done, total)`` with counts of cells.
    chunk_size : int
        Cells per chunk.

    Returns
    -------
    mean, variance : ndarray, shape ``(ny, nx)``
        Estimate (value units) and kriging variance (value units squared), NaN
        outside the mask.

    Raises
    ------
    KrigingError
        On invalid input or a mask of the wrong shape.

    Warns
    -----
    KrigingWarning
        As :func:`geo_corrosion.surfaces.krige`, and when the mask is empty.
    """
    xa, ya, za = as_xyz(x, y, z, min_n=1, what="krige_grid")
    zt = _check_transform(transform, za)
    if mask is not None:
        mask = np.asarray(mask, dtype=bool)
        if mask.shape != grid.shape:
            raise KrigingError(f"mask shape {mask.shape} does not match grid shape {grid.shape}")
    mean = np.full(grid.shape, np.nan)
    var = np.full(grid.shape, np.nan)
    cells = np.flatnonzero(mask.ravel()) if mask is not None else None
    total = grid.size if cells is None else int(cells.size)
    if total == 0:
        warnings.warn(
            "krige_grid: the mask selects no cell; nothing was kriged (check the slab polygon "
            "and the maximum distance to the nearest reading)", KrigingWarning, stacklevel=2,
        )
        return mean, var
    if xa.size >= 3 and is_collinear(xa, ya):
        warnings.warn(
            "krige_grid: the readings lie on one straight line; away from the line the surface "
            "is an extrapolation (mask it with a maximum distance to the nearest reading)",
            KrigingWarning, stacklevel=2,
        )
    eng = KrigingEngine(
        xa, ya, zt, model, n_neighbors=n_neighbors, radius=radius, what="krige_grid"
    )
    xs, ys = grid.x_centers(), grid.y_centers()
    mflat, vflat = mean.reshape(-1), var.reshape(-1)
    block = max(chunk_size, 262_144)
    done = 0
    for a in range(0, total, block):
        sel = np.arange(a, min(a + block, total)) if cells is None else cells[a : a + block]
        r, c = np.divmod(sel, grid.nx)
        mv, vv, nv = eng.predict(xs[c], ys[r], chunk_size=chunk_size)
        mflat[sel], vflat[sel] = back_transform(mv, vv, nv, transform, back_transform_how)
        done += sel.size
        if progress is not None:
            progress(done, total)
    return mean, var

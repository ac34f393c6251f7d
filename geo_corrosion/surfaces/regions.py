"""Continuity regions: a deck split at the joint lines that break the reinforcing mat.

An expansion or isolation joint separates two reinforcing mats that are not electrically
continuous; a half-cell potential is read against the mat it is on, so a potential surface
must not be interpolated across such a joint [ACI-222R-19, from memory; ASTM-C876-22a].
:func:`split_at_lines` splits a polygon at lines (the repair layout splits a slab into
panels with it too); :func:`region_labels` says which region each reading lies in.
Plain functions on shapely geometries and arrays, in plan units.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
import shapely
from numpy.typing import ArrayLike, NDArray
from shapely.geometry.base import BaseGeometry

from geo_corrosion.surfaces.contours import contour_bands, contour_lines
from geo_corrosion.surfaces.density import binding_radius
from geo_corrosion.surfaces.grid import GridSpec, krige_grid, surface_mask
from geo_corrosion.surfaces.variogram import VariogramModel

__all__ = ["split_at_lines", "region_labels", "dangling_lines", "krige_regions",
           "contours_by_region"]


def split_at_lines(area: BaseGeometry, lines: Sequence[BaseGeometry], tol: float
                   ) -> list[BaseGeometry]:
    """Split a polygon at lines; lines that do not cut it through leave it whole.

    Parameters
    ----------
    area : Polygon or MultiPolygon
        The slab, or the deck (slab minus exclusions: an opening then ends a cut).
    lines : sequence of lineal geometries
        Joint lines, plan units.
    tol : float
        Faces of at most this area (slivers of the noding) are dropped, plan units squared.

    Returns
    -------
    list of Polygon (or the area itself)
        The faces of the area between its boundary and the lines, in the order shapely's
        polygonize gives them; ``[area]`` when no line cuts it (or no face is left).
    """
    used = [j for j in lines if j is not None and not j.is_empty]
    if not used:
        return [area]
    rings: list[BaseGeometry] = []
    for part in shapely.get_parts(area):
        rings += [part.exterior, *part.interiors]
    faces = shapely.polygonize(shapely.get_parts(shapely.union_all([*rings, *used])))
    out = [f for f in shapely.get_parts(faces)
           if f.area > tol and area.contains(f.representative_point())]
    return out or [area]


def region_labels(regions: Sequence[BaseGeometry], x: ArrayLike, y: ArrayLike
                  ) -> NDArray[np.intp]:
    """Index of the region each point lies in; a point on a joint goes to the nearest region.

    A point inside no region (on a joint line, or just off the deck) takes the region at the
    least distance, the first of equals.
    """
    xa = np.asarray(x, dtype=float).ravel()
    ya = np.asarray(y, dtype=float).ravel()
    out = np.full(xa.size, -1, dtype=np.intp)
    for i, r in enumerate(regions):
        inside = (out < 0) & shapely.contains_xy(r, xa, ya)
        out[inside] = i
    rest = np.flatnonzero(out < 0)
    if rest.size:
        pts = shapely.points(xa[rest], ya[rest])
        d = np.column_stack([shapely.distance(r, pts) for r in regions])
        out[rest] = np.argmin(d, axis=1)
    return out


def dangling_lines(area: BaseGeometry, lines: Sequence[BaseGeometry], tol: float) -> list[int]:
    """Return the indices of the lines that split off no region (the split is the same without).

    A breaking joint that stops short of the slab edge or an opening leaves its two sides
    connected; it then separates nothing.
    """
    full = len(split_at_lines(area, lines, tol))
    return [i for i in range(len(lines))
            if len(split_at_lines(area, [*lines[:i], *lines[i + 1:]], tol)) == full]


def krige_regions(
    x: NDArray[np.float64],
    y: NDArray[np.float64],
    z: NDArray[np.float64],
    labels: NDArray[np.intp],
    regions: Sequence[BaseGeometry],
    grid: GridSpec,
    model: VariogramModel,
    *,
    max_distance: float | None,
    n_neighbors: int = 16,
    transform: str | None = None,
    search_radius: float | None = None,
) -> tuple[NDArray[np.intp], NDArray[np.float64], NDArray[np.float64], list[str]]:
    """Krige each region on one grid from its own readings only.

    A cell belongs to the region containing its centre and is kriged from that region's
    readings (so no neighbour crosses a region boundary), masked beyond ``max_distance`` of
    them, with neighbours searched within ``search_radius`` where it binds
    (:func:`geo_corrosion.surfaces.density.binding_radius`).  A region with fewer than 3
    readings is left unmapped, and said so.

    Returns
    -------
    cell_region : ndarray of int, shape ``(ny, nx)``
        The region of each cell drawn (index into ``regions``); -1 where nothing is drawn.
    mean, var : ndarray, shape ``(ny, nx)``
        The estimate and the kriging variance (NaN where nothing is drawn).
    notes : list of str
        One line per region left unmapped.
    """
    cell_region = np.full(grid.shape, -1, dtype=np.intp)
    mean = np.full(grid.shape, np.nan)
    var = np.full(grid.shape, np.nan)
    notes = []
    for r, region in enumerate(regions):
        sel = labels == r
        if sel.sum() < 3:
            c = region.representative_point()
            notes.append(f"continuity region {r + 1} of {len(regions)} (around ({c.x:.1f}, "
                         f"{c.y:.1f}), {region.area:.0f} square units) holds {int(sel.sum())} "
                         "reading(s): left unmapped (a surface needs 3)")
            continue
        m = surface_mask(grid, region, x[sel], y[sel], max_distance=max_distance)
        m &= cell_region < 0  # a cell centre on a boundary goes to the first region
        if not m.any():
            continue
        radius = None
        if search_radius is not None:
            cx, cy = grid.row_centers(slice(None))
            flat = m.ravel()
            radius = binding_radius(x[sel], y[sel], cx[flat], cy[flat], n_neighbors,
                                    search_radius, model.transform_coords)
        mu, v = krige_grid(x[sel], y[sel], z[sel], grid, model, mask=m,
                           n_neighbors=n_neighbors, radius=radius, transform=transform)
        mean[m], var[m] = mu[m], v[m]
        cell_region[m] = r
    return cell_region, mean, var, notes


def contours_by_region(
    mean: NDArray[np.float64], grid: GridSpec, cell_region: NDArray[np.intp], *,
    interval: float,
) -> tuple[list[tuple[float, shapely.MultiLineString]],
           list[tuple[float, float, shapely.MultiPolygon]]]:
    """Contour lines and bands of each region traced apart, then gathered by level.

    A contour traced over the whole grid would run along a breaking joint wherever the
    surface steps across it; traced region by region, no line or band crosses a joint.

    Returns
    -------
    lines : list of (level, MultiLineString)
    bands : list of (lo, hi, MultiPolygon)
        As :func:`~geo_corrosion.surfaces.contours.contour_lines` and
        :func:`~geo_corrosion.surfaces.contours.contour_bands`, ascending.
    """
    lines: dict[float, list[Any]] = {}
    bands: dict[tuple[float, float], list[Any]] = {}
    for r in sorted(set(cell_region[cell_region >= 0].tolist())):
        part = np.where(cell_region == r, mean, np.nan)
        for lev, ml in contour_lines(part, grid, interval=interval):
            lines.setdefault(lev, []).extend(ml.geoms)
        for lo, hi, mp in contour_bands(part, grid, interval=interval):
            bands.setdefault((lo, hi), []).extend(mp.geoms)
    return ([(lev, shapely.MultiLineString(lines[lev])) for lev in sorted(lines)],
            [(lo, hi, shapely.MultiPolygon(bands[(lo, hi)])) for lo, hi in sorted(bands)])

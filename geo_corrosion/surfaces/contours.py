"""Contour lines and filled contour bands of gridded surfaces, in local plan coordinates.

Contours are traced with contourpy (the marching-squares engine behind
matplotlib) through the cell centres; NaN cells (outside the mask) are left out.
Levels are ``base + i * interval``.  A band covers values from its lower level
to its upper level; a value exactly on a level belongs to the band below it
(contourpy's convention, ``lo < z <= hi``), which differs from ``[lo, hi)`` only
on a set of zero area.
"""

from __future__ import annotations

import math
from typing import cast

import contourpy
import numpy as np
import shapely
from numpy.typing import NDArray

from geo_corrosion.errors import KrigingError
from geo_corrosion.surfaces.grid import GridSpec

__all__ = ["contour_levels", "contour_lines", "contour_bands", "check_contour_interval"]

def check_contour_interval(interval: float, max_interval: float | None = None, *,
                           unit: str = "", source: str = "", what: str = "") -> None:
    """Refuse contour intervals that are not allowed.

    Parameters
    ----------
    interval : float
        Contour interval, in the kind's value unit.
    max_interval : float, optional
        The largest interval the kind allows (a measurement kind's ``max_contour_interval``:
        100 mV for half-cell potentials [ASTM-C876-91 §6.2, from memory]);
        None: no limit.
    unit, source, what : str
        The unit of the interval, the source of the limit and what is contoured, for the
        message.

    Raises
    ------
    KrigingError
        If the interval is not a positive finite number, or exceeds ``max_interval``.

    Examples
    --------
    >>> check_contour_interval(50.0, 100.0, unit="mV", source="ASTM C876")
    """
    iv = float(interval)
    if not (math.isfinite(iv) and iv > 0):
        raise KrigingError(f"contour interval must be a positive number, got {interval!r}")
    if max_interval is not None and iv > max_interval:
        u = f" {unit}" if unit else ""
        by = f"{source} allows" if source else "the limit is"
        raise KrigingError(
            f"a contour interval of {iv:g}{u} is too coarse{' for ' + what if what else ''}: "
            f"{by} at most {max_interval:g}{u}; use {max_interval:g}{u} or less"
        )


def contour_levels(
    array2d: NDArray[np.float64], *, interval: float, base: float = 0.0, max_levels: int = 10_000
) -> NDArray[np.float64]:
    """Levels ``base + i * interval`` strictly inside the data range (empty if none)."""
    check_contour_interval(interval)
    a = np.asarray(array2d, dtype=float)
    if not np.isfinite(a).any():
        return np.empty(0)
    lo, hi = float(np.nanmin(a)), float(np.nanmax(a))
    i0 = math.floor((lo - base) / interval) + 1
    i1 = math.ceil((hi - base) / interval) - 1
    if i1 - i0 + 1 > max_levels:
        raise KrigingError(
            f"interval {interval:g} gives {i1 - i0 + 1} contour levels over the range "
            f"{lo:g} to {hi:g}; choose a larger interval"
        )
    return base + interval * np.arange(i0, i1 + 1, dtype=float)


def _generator(array2d: NDArray[np.float64], grid: GridSpec) -> contourpy.ContourGenerator:
    a = np.asarray(array2d, dtype=float)
    if a.shape != grid.shape:
        raise KrigingError(f"array shape {a.shape} does not match grid shape {grid.shape}")
    # flip so that y increases with the row index, as contourpy expects
    return contourpy.contour_generator(
        grid.x_centers(), grid.y_centers()[::-1], np.ma.masked_invalid(a[::-1]),
        name="serial", corner_mask=True, line_type="Separate", fill_type="OuterOffset",
    )


def contour_lines(
    array2d: NDArray[np.float64], grid: GridSpec, *, interval: float, base: float = 0.0
) -> list[tuple[float, shapely.MultiLineString]]:
    """Contour lines at ``base + i * interval``.

    Parameters
    ----------
    array2d : ndarray
        ``(ny, nx)`` surface, row 0 at the top; NaN outside the mask.
    grid : GridSpec
        Grid of the array.
    interval : float
        Contour interval, value units.
    base : float
        A level that every contour level differs from by a whole number of intervals.

    Returns
    -------
    list of (level, MultiLineString)
        Levels with at least one line, ascending, in local plan coordinates.
    """
    gen = _generator(array2d, grid)
    out: list[tuple[float, shapely.MultiLineString]] = []
    for lev in contour_levels(array2d, interval=interval, base=base):
        # contourpy types lines() as the union over every line_type; _generator asks for
        # "Separate": one (n, 2) float64 array per line
        segs = cast("list[NDArray[np.float64]]", gen.lines(float(lev)))
        lines = [seg for seg in segs if len(seg) >= 2]
        if lines:
            out.append((float(lev), shapely.MultiLineString(lines)))
    return out


def _polygons(points: list[NDArray[np.float64]], offsets: list[NDArray[np.uint32]]) -> list[
    shapely.Polygon
]:
    polys: list[shapely.Polygon] = []
    for pts, off in zip(points, offsets, strict=True):
        rings = [pts[off[i] : off[i + 1]] for i in range(len(off) - 1)]
        rings = [r for r in rings if len(r) >= 4]
        if not rings:
            continue
        poly = shapely.Polygon(rings[0], rings[1:])
        polys.extend(_only_polygons(poly if poly.is_valid else shapely.make_valid(poly)))
    return polys


def _only_polygons(geom: shapely.Geometry) -> list[shapely.Polygon]:
    if isinstance(geom, shapely.Polygon):
        return [] if geom.is_empty else [geom]
    if hasattr(geom, "geoms"):
        return [p for g in geom.geoms for p in _only_polygons(g)]
    return []


def contour_bands(
    array2d: NDArray[np.float64], grid: GridSpec, *, interval: float, base: float = 0.0
) -> list[tuple[float, float, shapely.MultiPolygon]]:
    """Trace filled contour bands ``[lo, lo + interval)`` covering the surface.

    Parameters
    ----------
    array2d : ndarray
        ``(ny, nx)`` surface, row 0 at the top; NaN outside the mask.
    grid : GridSpec
        Grid of the array.
    interval : float
        Band width, value units.
    base : float
        A band edge.

    Returns
    -------
    list of (lo, hi, MultiPolygon)
        Non-empty bands, ascending, in local plan coordinates.  The bands cover
        the area spanned by the unmasked cell centres.
    """
    a = np.asarray(array2d, dtype=float)
    levels = contour_levels(a, interval=interval, base=base)
    if not np.isfinite(a).any():
        return []
    lo = float(np.nanmin(a))
    hi = float(np.nanmax(a))
    first = (
        levels[0] - interval
        if levels.size
        else base + interval * math.floor((lo - base) / interval)
    )
    edges = np.concatenate([[first], levels, [(levels[-1] if levels.size else first) + interval]])
    gen = _generator(a, grid)
    out: list[tuple[float, float, shapely.MultiPolygon]] = []
    for b0, b1 in zip(edges[:-1], edges[1:], strict=True):
        # the outer bands are opened to include the extreme values themselves
        q0 = -np.inf if b0 <= lo else float(b0)
        q1 = np.inf if b1 >= hi else float(b1)
        # contourpy types filled() as the union over every fill_type; _generator asks for
        # "OuterOffset": (points, offsets) lists, offsets uint32
        points, offsets = cast("tuple[list[NDArray[np.float64]], list[NDArray[np.uint32]]]",
                               gen.filled(q0, q1))
        polys = _polygons(points, offsets)
        if polys:
            out.append((float(b0), float(b1), shapely.MultiPolygon(polys)))
    return out

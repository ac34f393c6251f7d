"""Thiessen (Voronoi) cells of readings, clipped to the deck.

A kind too sparse for a surface is shown as its readings; its Thiessen cells say which
reading is nearest to each part of the deck.  They are not a surface: the value of a cell is
the value of one reading, and the cells are labelled as such wherever they are drawn.
"""

from __future__ import annotations

from typing import cast

import numpy as np
import shapely
from numpy.typing import ArrayLike, NDArray
from shapely.geometry.base import BaseGeometry

__all__ = ["thiessen_cells", "THIESSEN_LABEL"]

#: How the cells are named on maps and in layers.
THIESSEN_LABEL = "Thiessen (nearest-reading) cells, not a surface"


def thiessen_cells(x: ArrayLike, y: ArrayLike, deck: BaseGeometry) -> list[BaseGeometry]:
    """Return the Thiessen cell of each reading, clipped to ``deck``, in the readings' order.

    The cells are :func:`shapely.voronoi_polygons` of the distinct reading locations,
    extended past the deck and intersected with it; readings at one location share its cell.
    One location gives the whole deck.  Locations need not lie on the deck.

    Parameters
    ----------
    x, y : array_like
        Reading coordinates (plan units of ``deck``).
    deck : shapely geometry
        The slab minus exclusions.
    """
    xa = np.asarray(x, float).ravel()
    ya = np.asarray(y, float).ravel()
    if xa.size == 0:
        return []
    xy, inverse = np.unique(np.column_stack([xa, ya]), axis=0, return_inverse=True)
    inverse = np.asarray(inverse).ravel()
    if len(xy) == 1:
        return [deck] * xa.size
    # an (n, 2) array gives an array of n points; the stubs cannot tell it from one point
    pts = cast("NDArray[np.object_]", shapely.points(xy))
    dx0, dy0, dx1, dy1 = deck.bounds
    x0, y0 = min(dx0, float(xy[:, 0].min())), min(dy0, float(xy[:, 1].min()))
    x1, y1 = max(dx1, float(xy[:, 0].max())), max(dy1, float(xy[:, 1].max()))
    pad = max(x1 - x0, y1 - y0)
    frame = shapely.box(x0 - pad, y0 - pad, x1 + pad, y1 + pad)
    regions = shapely.get_parts(shapely.voronoi_polygons(shapely.multipoints(xy),
                                                         extend_to=frame))
    # each region holds exactly one of the locations (collinear ones too)
    cell = [shapely.Polygon()] * len(xy)
    for r in regions:
        inside = np.flatnonzero(shapely.intersects(r, pts))
        for i in inside:
            if shapely.contains(r, pts[i]) or cell[i].is_empty:
                cell[i] = r
    clipped = [shapely.intersection(c, deck) for c in cell]
    return [clipped[i] for i in inverse]

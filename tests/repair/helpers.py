"""Shared builders of the repair tests (invented geometry, no data files)."""

from __future__ import annotations

from collections.abc import Sequence

import geopandas as gpd
import numpy as np
from shapely.geometry import Polygon
from shapely.geometry.base import BaseGeometry
from shapely.geometry.polygon import orient

from geo_corrosion.repair import polygon_parts


def sources(geoms: Sequence[BaseGeometry], kind: str = "delamination",
            **cols: list) -> gpd.GeoDataFrame:
    """Build a sources frame with ids d0, d1, ..."""
    data = {"source_id": [f"d{i}" for i in range(len(geoms))], "kind": [kind] * len(geoms)}
    data.update(cols)
    return gpd.GeoDataFrame(data, geometry=list(geoms))


def interior_angles_deg(geom: BaseGeometry) -> np.ndarray:
    """Interior angles (0-360) at every vertex of every ring of the polygons."""
    out = []
    for p in polygon_parts(geom):
        p: Polygon = orient(p, 1.0)
        for ring in (p.exterior, *p.interiors):
            xy = np.asarray(ring.coords)[:-1]
            a = np.roll(xy, 1, axis=0) - xy
            b = np.roll(xy, -1, axis=0) - xy
            ang = np.degrees(np.arctan2(a[:, 0] * b[:, 1] - a[:, 1] * b[:, 0],
                                        (a * b).sum(axis=1)))
            # CCW exterior / CW holes: region on the left; interior angle from b to a
            out.append((360.0 - np.mod(ang, 360.0)) % 360.0)
    return np.concatenate(out) if out else np.array([])


def evaluate_xlsx(path: object) -> dict[tuple[str, str], object]:
    """Evaluate every cell of a workbook with the ``formulas`` library, not openpyxl.

    An engine independent of the writer (``formulas`` parses and computes Excel formulas
    itself); returns the value of each cell by (sheet title in capitals, coordinate).
    """
    import re

    import formulas

    sol = formulas.ExcelModel().loads(str(path)).finish().calculate()
    out: dict[tuple[str, str], object] = {}
    for key, v in sol.items():
        m = re.fullmatch(r"'\[[^\]]+\](.+)'!([A-Z]+\d+)", str(key))
        if m is None:
            continue  # a range
        val = getattr(v, "value", v)
        while hasattr(val, "__len__") and not isinstance(val, str) and len(val) == 1:
            val = val[0]
        out[(m.group(1).upper(), m.group(2))] = val.item() if hasattr(val, "item") else val
    return out

"""A kind too sparse for a surface, shown as its readings: classed points and Thiessen cells.

Called by :func:`geo_corrosion.stages.map_surfaces.map_level` for each kind whose usable
readings fail the density rule of :mod:`geo_corrosion.surfaces.density` (or whose kriging
failed): the kind then appears in every deliverable as its readings, coloured by its class
set, each with its Thiessen cell clipped to the deck (:mod:`geo_corrosion.surfaces.thiessen`),
and ``run.json`` records ``representation = "points"`` with the reason.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd
from shapely.geometry.base import BaseGeometry

from geo_corrosion.measurements import MeasurementKind
from geo_corrosion.model.surface import KindPoints, LevelSurfaces
from geo_corrosion.surfaces.density import nearest_neighbour_spacing
from geo_corrosion.surfaces.thiessen import thiessen_cells

__all__ = ["kind_points", "points_record", "combined_kinds"]

#: Colour of the points of a kind without a class set.
NO_CLASS_COLOR = "#0072B2"


def kind_points(kind: MeasurementKind, readings: pd.DataFrame, deck: BaseGeometry, reason: str,
                *, class_set: str | None = None) -> KindPoints:
    """Return the points representation of a kind on a level.

    Parameters
    ----------
    kind : MeasurementKind
    readings : DataFrame
        The kind's usable readings (``x_local``, ``y_local``, the value column); at least one.
    deck : shapely geometry
        Slab minus exclusions (local grid units), to clip the Thiessen cells.
    reason : str
        Why there is no surface.
    class_set : str, optional
        A class set overriding the kind's (a survey's ``class_set`` option).
    """
    from geo_corrosion.condition.classes import get_class_set

    col = kind.value_column
    x = readings["x_local"].to_numpy(float)
    y = readings["y_local"].to_numpy(float)
    v = readings[col].to_numpy(float)
    pts = pd.DataFrame({
        "reading_id": readings["reading_id"].astype(str).to_numpy(),
        "point_id": (readings["point_id"].astype(str).to_numpy() if "point_id" in readings
                     else readings["reading_id"].astype(str).to_numpy()),
        "x_local": x, "y_local": y, col: v, "value": v, "unit": kind.canonical_unit})
    name = class_set or kind.class_set
    if name is not None:
        cs = get_class_set(name)
        codes = np.asarray(cs.codes(v), dtype=int)
        pts["class"] = [cs.labels[c] if c >= 0 else "" for c in codes]
        pts["class_code"] = codes
        pts["color"] = [cs.colors[c] if c >= 0 else "#999999" for c in codes]
        pts["class_set"] = cs.name
    else:
        pts["color"] = NO_CLASS_COLOR
    pts["cell"] = pd.Series(thiessen_cells(x, y, deck), index=pts.index, dtype=object)
    return KindPoints(kind, pts, reason, nearest_neighbour_spacing(x, y))


def points_record(p: KindPoints, *, a2: float) -> dict[str, Any]:
    """Return what ``run.json`` keeps of a points representation (``points`` of the kind).

    ``a2`` converts the level's plan unit squared to m2.  The class counts and shares are
    of readings; the Thiessen areas are the deck area nearest to each class's readings.
    """
    out: dict[str, Any] = {"points": len(p.points)}
    if "class" in p.points:
        g = p.points.groupby("class", sort=False)
        cells = p.points.drop_duplicates(subset=["x_local", "y_local"])
        area = cells.groupby("class", sort=False)["cell"].apply(
            lambda c: float(sum(g_.area for g_ in c)) * a2)
        out["class_counts"] = [
            {"class": str(k), "readings": int(len(rows)),
             "share_of_readings": len(rows) / len(p.points),
             "thiessen_area_m2": float(area.get(k, 0.0))}
            for k, rows in g]
    return out


def combined_kinds(mapped: LevelSurfaces, columns: Any) -> dict[str, str]:
    """Say, per column of the combined rule table, which kind's surface it used, or why none.

    A kind takes part in the combined classes only where it has a surface; a kind shown as
    points takes no part (its readings say nothing of the cells between them).

    Parameters
    ----------
    mapped : LevelSurfaces
    columns : iterable of str
        The rule table's columns (roles: ``potential``, ``resistivity``, ``rate``).
    """
    out: dict[str, str] = {}
    for col in columns:
        s = next((s for s in mapped.surfaces.values() if col in s.kind.roles), None)
        p = next((p for p in mapped.points.values() if col in p.kind.roles), None)
        if s is not None:
            out[str(col)] = f"used: the {s.kind.name} surface, in the cells where it has a value"
        elif p is not None:
            out[str(col)] = (f"not used: {p.kind.name} has no surface on this level and is shown "
                             f"as points ({p.reason})")
    return out

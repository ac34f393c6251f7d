"""What a tender needs of each repair and of the area treatments (issue 13).

Plain functions on shapely geometries in a level's local grid (unit ``"m"`` or ``"ft"``):

- :func:`sounding_labels`: the numbers of the sounded areas on the sounding plan, D1, D2,
  ... for delaminations and S1, ... for spalls;
- :func:`column_location`, :func:`station_location` and :func:`grid_location`: where a
  repair is, from the nearest column-grid intersection, as a deck's station and offset, or
  as grid coordinates of its centre;
- :func:`joint_edge_length`: the length of a repair's edge that lies on a joint (a joint
  seal or header is rebuilt there);
- :func:`anode_count` and :func:`bar_replacement_length`: the galvanic anodes along a
  repair's perimeter and the allowance for replacing corroded bars;
- :func:`bays` and :func:`pay_areas`: the slab split into bays at its joints and column
  lines, and the bays a treatment zone pays for.

All rules are common practice with no published source; the defaults are listed in
``docs/methods.md`` (repair section) as assumptions to confirm.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import pandas as pd
import shapely
from shapely.geometry import Point, Polygon
from shapely.geometry.base import BaseGeometry

from geo_corrosion.errors import RepairError
from geo_corrosion.repair.layout import panels
from geo_corrosion.repair.rounding import format_length
from geo_corrosion.units import LENGTH_TO_M

__all__ = ["SOUNDING_PREFIX", "anode_count", "bar_replacement_length", "bays",
           "column_location", "format_station", "grid_intersections", "grid_location",
           "joint_edge_length", "pay_areas", "sounding_labels", "station_location",
           "tender_columns"]

#: Label prefix of each kind of sounded area on the sounding plan.
SOUNDING_PREFIX: dict[str, str] = {"delamination": "D", "spall": "S",
                                   "soffit_delamination": "OD"}


def sounding_labels(geoms: Sequence[BaseGeometry], prefix: str) -> list[str]:
    """Return the numbers of sounded areas: from the top of the plan down, then left to right.

    The order is that of the centroids, by grid y descending then grid x ascending (on a
    plan drawn with grid y up: north-west to south-east), the same order as the repairs
    are numbered; a tie keeps the input order.

    Examples
    --------
    >>> from shapely.geometry import box
    >>> sounding_labels([box(5, 0, 6, 1), box(0, 5, 1, 6), box(5, 5, 6, 6)], "D")
    ['D3', 'D1', 'D2']
    """
    keys = []
    for i, g in enumerate(geoms):
        c = g.centroid
        keys.append((round(-c.y, 6), round(c.x, 6), i))
    out = [""] * len(geoms)
    for n, (_, _, i) in enumerate(sorted(keys), start=1):
        out[i] = f"{prefix}{n}"
    return out


def grid_location(g: BaseGeometry, unit: str) -> str:
    """Return where a repair is: the grid coordinates of its centre.

    Examples
    --------
    >>> from shapely.geometry import box
    >>> grid_location(box(10, 20, 12.5, 24.5), "ft")
    'grid x 11.25 ft, y 22.25 ft'
    """
    x0, y0, x1, y1 = g.bounds
    return f"grid x {(x0 + x1) / 2:.2f} {unit}, y {(y0 + y1) / 2:.2f} {unit}"


def grid_intersections(lines: Sequence[tuple[BaseGeometry, str]]) -> list[tuple[Point, str]]:
    """Return the intersections of labelled column-grid lines, named ``C/3``.

    The name puts a lettered line before a numbered one (``C/3``, not ``3/C``).

    Examples
    --------
    >>> from shapely.geometry import LineString
    >>> grid_intersections([(LineString([(0, -9), (0, 99)]), "3"),
    ...                     (LineString([(-9, 30), (99, 30)]), "C")])
    [(<POINT (0 30)>, 'C/3')]
    """
    out = []
    for i, (a, la) in enumerate(lines):
        for b, lb in lines[i + 1:]:
            x = a.intersection(b)
            for p in shapely.get_parts(x):
                if isinstance(p, Point):
                    first, second = sorted((la, lb), key=lambda t: (t[:1].isdigit(), t))
                    out.append((p, f"{first}/{second}"))
    return out


def column_location(g: BaseGeometry, intersections: Sequence[tuple[Point, str]],
                    unit: str) -> str:
    """Return where a repair is from the nearest column-grid intersection to its centre.

    Examples
    --------
    >>> from shapely.geometry import box
    >>> column_location(box(10, 20, 12.5, 24.5), [(Point(0, 30), "C/3")], "ft")
    'C/3 +11.25 ft x, -7.75 ft y'
    """
    x0, y0, x1, y1 = g.bounds
    c = Point((x0 + x1) / 2, (y0 + y1) / 2)
    p, name = min(intersections, key=lambda t: t[0].distance(c))
    return f"{name} {c.x - p.x:+.2f} {unit} x, {c.y - p.y:+.2f} {unit} y"


def format_station(v: float, unit: str) -> str:
    """Return a station as written on a plan: 12+61.25 (feet) or 1+261.25 (metres).

    Examples
    --------
    >>> format_station(1261.25, "ft"), format_station(1261.25, "m"), format_station(35, "ft")
    ('12+61.25', '1+261.25', '0+35.00')
    """
    per = 1000 if unit == "m" else 100
    whole, rest = divmod(round(v, 2), per)
    width = 6 if per == 1000 else 5
    return f"{int(whole)}+{rest:0{width}.2f}"


def station_location(g: BaseGeometry, *, start: float, centerline_y: float, unit: str) -> str:
    """Return where a repair is on a deck: station and offset of its centre.

    Stations run along grid x from ``start`` at x = 0; the offset is measured from the
    centreline ``y = centerline_y``, left (Lt, +y) or right (Rt) looking up-station.

    Examples
    --------
    >>> from shapely.geometry import box
    >>> station_location(box(10, 20, 12.5, 24.5), start=1250.0, centerline_y=20.0, unit="ft")
    'Sta. 12+61.25, 2.25 ft Lt'
    """
    x0, y0, x1, y1 = g.bounds
    cx, cy = (x0 + x1) / 2, (y0 + y1) / 2
    off = cy - centerline_y
    side = "Lt" if off > 0 else "Rt" if off < 0 else "on CL"
    return f"Sta. {format_station(start + cx, unit)}, {abs(off):.2f} {unit} {side}"


def joint_edge_length(g: BaseGeometry, joints: Sequence[BaseGeometry], tol: float) -> float:
    """Length of the outline of ``g`` that lies on a joint, in plan units."""
    lines = [j for j in joints if j is not None and not j.is_empty]
    if not lines:
        return 0.0
    near = shapely.union_all(lines).buffer(tol * 10)
    return float(g.boundary.intersection(near).length)


def anode_count(perimeter: float, spacing: float) -> int:
    """Galvanic anodes along a repair perimeter: ceil(perimeter / spacing) (common practice).

    Examples
    --------
    >>> anode_count(14.0, 2.0), anode_count(14.1, 2.0), anode_count(0.0, 2.0)
    (7, 8, 0)
    """
    if not (spacing > 0 and math.isfinite(spacing)):
        raise RepairError(f"anode spacing = {spacing!r}; give a spacing > 0")
    return math.ceil(perimeter / spacing - 1e-9) if perimeter > 0 else 0


def bar_replacement_length(area: float, *, share: float, bar_spacing: float) -> float:
    """Return the allowance of bar to replace in a repair, in plan length units.

    ``share`` of the repair area is taken to have its top-mat bars replaced; a two-way mat
    at ``bar_spacing`` holds ``2 / bar_spacing`` of bar per unit area (common practice).

    Examples
    --------
    >>> bar_replacement_length(10.0, share=0.25, bar_spacing=1.0)  # 10 ft2, 12 in mat, 25 %
    5.0
    """
    if not (0 <= share <= 1) or not (bar_spacing > 0):
        raise RepairError(f"bar replacement: share {share!r} (0 to 1) and bar spacing "
                          f"{bar_spacing!r} (> 0) needed")
    return area * share * 2.0 / bar_spacing


def bays(slab: Polygon, lines: Sequence[BaseGeometry], tol: float) -> list[Polygon]:
    """Split the slab into bays at joint and column lines (lines not cutting it are ignored).

    The same split as the repair layout's panels (:func:`geo_corrosion.repair.layout.panels`),
    ordered from the top of the plan down, then left to right.
    """
    got = panels(slab, list(lines), tol)
    return sorted(got, key=lambda p: (round(-p.centroid.y, 6), round(p.centroid.x, 6)))


def pay_areas(zone: BaseGeometry, bay_list: Sequence[Polygon], *, share: float,
              deck: BaseGeometry | None = None) -> list[tuple[int, BaseGeometry, float]]:
    """Return the bays a treatment zone pays for, whole.

    A bay is paid when the zone covers more than ``share`` of its area (of the deck, when
    ``deck`` is given: exclusions do not count).  Each paid bay is returned whole (its deck
    part) as ``(index, polygon, share covered)``.

    Examples
    --------
    >>> from shapely.geometry import box
    >>> b = [box(0, 0, 10, 10), box(10, 0, 20, 10)]
    >>> [(i, p.area, s) for i, p, s in pay_areas(box(0, 0, 12, 1), b, share=0.05)]
    [(0, 100.0, 0.1)]
    """
    if not (0 <= share < 1):
        raise RepairError(f"pay-area share = {share!r}; give a fraction from 0 to below 1")
    out = []
    for i, b in enumerate(bay_list):
        part = b.intersection(deck) if deck is not None else b
        if part.area <= 0:
            continue
        s = float(zone.intersection(part).area / part.area)
        if s > share:
            out.append((i, part, s))
    return out


def tender_columns(repairs: pd.DataFrame, *, joints: Sequence[BaseGeometry], unit: str,
                   units: str, anode_spacing_mm: float | None, bar_share: float,
                   bar_spacing_mm: float, tol: float = 1e-9,
                   column_grid: Sequence[tuple[BaseGeometry, str]] = (),
                   stations: tuple[float, float] | None = None) -> pd.DataFrame:
    """Add what the per-repair schedule needs to a frame of :func:`layout_repairs`.

    Columns added: ``dimensions`` (``size_x_m`` by ``size_y_m`` as a contractor writes
    them, :func:`~geo_corrosion.repair.rounding.format_length`), ``location``
    (:func:`column_location` when ``column_grid`` lines, labelled, cross; else
    :func:`station_location` with ``stations`` = (station at x = 0, centreline y); else
    :func:`grid_location`), ``joint_edge_m`` (:func:`joint_edge_length`), ``anodes``
    (:func:`anode_count` on the saw-cut perimeter; absent without a spacing) and
    ``bar_replacement_m`` (:func:`bar_replacement_length`, for repairs that expose the
    bars: below the bars or full depth; 0 above the bars).
    """
    f = LENGTH_TO_M[unit]
    out = repairs.copy()
    out["dimensions"] = [f"{format_length(x, units)} x {format_length(y, units)}"
                         for x, y in zip(out["size_x_m"], out["size_y_m"], strict=True)]
    cross = grid_intersections(column_grid) if column_grid else []

    def where(g: BaseGeometry) -> str:
        if cross:
            return column_location(g, cross, unit)
        if stations is not None:
            return station_location(g, start=stations[0], centerline_y=stations[1], unit=unit)
        return grid_location(g, unit)

    out["location"] = [where(g) for g in out.geometry]
    out["joint_edge_m"] = [joint_edge_length(g, joints, tol) * f for g in out.geometry]
    if anode_spacing_mm is not None:
        out["anodes"] = [anode_count(p, anode_spacing_mm / 1000.0) for p in out["perimeter_m"]]
    exposes = out["depth_class"].isin(["partial_below_bars", "full_depth"])
    out["bar_replacement_m"] = [
        bar_replacement_length(a, share=bar_share, bar_spacing=bar_spacing_mm / 1000.0)
        if e else 0.0 for a, e in zip(out["area_m2"], exposes, strict=True)]
    return out

"""Repair layout: sounded delaminations grown into saw-cut outlines a contractor can price.

Every function works on shapely geometries held in one level's local survey grid
(orthogonal; its axes are the grid axes) in a plan length unit ``unit`` ("m" or
"ft").  Length parameters are given by name in millimetres and converted with
:data:`geo_corrosion.units.LENGTH_TO_M`.

The layout is common practice, built on [ICRI-310.1R-2008; UFGS-03931]:

1. clean the sounded outlines (:func:`clean_outlines`);
2. split the slab into panels at its joints; each panel is laid out on its own, so
   a repair never crosses a joint and repairs of two panels never overlap;
3. grow each outline by the margin and replace it by its rectangle aligned to the
   grid axes (rotated by ``axis_angle_deg``);
4. enforce the minimum repair size, and extend a side to a free slab edge that is
   within the margin of it;
5. merge rectangles closer than the merge gap: first, pair by pair (cheapest
   first), into their bounding rectangle while it adds no more than
   ``merge_max_extra`` of the members' own rectangle area; then the bounding
   rectangle of each remaining close group if that is cheap enough, else the
   group's union bridged across the gaps, kept rectilinear with no re-entrant
   notch or step smaller than ``min_reentrant_mm`` (narrow strips are filled,
   never cut, so no sounded area is lost) and with small or narrow sound islands
   inside it filled;
6. clip to the panel and subtract exclusions;
7. apply the minimum size again to the pieces the clip left (common practice, see
   :func:`_settle_slivers`): a piece narrower than it is dropped if it is margin
   only, else widened away from the cut edge inside its panel, else kept with a
   :class:`~geo_corrosion.errors.GeometryWarning` naming the repair;
8. with ``round_increment_mm``, round every side up to the cutting increment,
   keeping all the repair covered and staying in its panel, out of exclusions and
   clear of the other repairs (:mod:`geo_corrosion.repair.rounding`).
"""

from __future__ import annotations

import logging
import math
import warnings
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from typing import Literal, TypeVar

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely
from numpy.typing import NDArray
from shapely import affinity
from shapely.geometry import LinearRing, LineString, MultiPolygon, Polygon, box
from shapely.geometry.base import BaseGeometry
from shapely.geometry.polygon import orient

from geo_corrosion.config import LayoutParams
from geo_corrosion.errors import GeometryWarning, RepairError
from geo_corrosion.repair.rounding import check_no_overlap, round_up_outlines
from geo_corrosion.surfaces.regions import split_at_lines
from geo_corrosion.units import LENGTH_TO_M, MM_PER_INCH

__all__ = [
    "DEPTH_CLASSES",
    "REPAIR_COLUMNS",
    "SPALL_DEPTH_SHARE_OF_COVER",
    "LayoutParams",
    "clean_outlines",
    "depth_class",
    "layout_repairs",
    "n_reentrant_corners",
    "panels",
    "polygon_parts",
    "undercut_clearance_mm",
]

log = logging.getLogger(__name__)

_G = TypeVar("_G", bound=BaseGeometry)

#: Depth classes, shallowest first (common practice; names are owner-specific).
DEPTH_CLASSES: tuple[str, ...] = ("partial_above_bars", "partial_below_bars", "full_depth")

#: Columns of the frame returned by :func:`layout_repairs`.
REPAIR_COLUMNS: tuple[str, ...] = (
    "repair_id", "level_id", "source_ids", "area_m2", "perimeter_m", "outline_m",
    "n_reentrant_corners", "depth_class", "depth_mm", "volume_m3", "size_x_m", "size_y_m",
    "area_before_rounding_m2", "rounding_note", "sounded", "plan_unit", "geometry",
)

#: Where a spall carries no depth, it is taken at this share of the cover: shallower than
#: the cover, so above the bars (common practice, no source; to confirm).  A delamination
#: without a depth is taken at the bars (below the bars), see :func:`depth_class`.
SPALL_DEPTH_SHARE_OF_COVER = 0.5

_SOURCE_KINDS = ("delamination", "spall", "zone")
_PLAN_UNITS = ("m", "ft")


#: The layout's defaults, declared once with :class:`~geo_corrosion.config.LayoutParams`;
#: the library functions below take theirs from it.
_DEFAULT = LayoutParams()


# ----------------------------------------------------------------------------- depth


def undercut_clearance_mm(max_aggregate_mm: float, *, rule: Literal["icri", "ufgs"] = "icri"
                          ) -> float:
    """Clearance to cut under exposed corroded bars, mm.

    Parameters
    ----------
    max_aggregate_mm : float
        Largest aggregate in the repair material, mm.
    rule : {"icri", "ufgs"}
        ``"icri"``: the greater of 3/4 in (19 mm) and 1/4 in (6 mm) plus the largest
        aggregate [ICRI-310.1R-2008], to confirm; ``"ufgs"``: the greater of 1 in
        (25 mm) and 1/4 in plus the largest aggregate [UFGS-03931 §3.3.1.4].
        The inch values are used exactly (19.05, 6.35, 25.4 mm).

    Returns
    -------
    float
        Clearance, mm.

    Raises
    ------
    RepairError
        If the aggregate size is negative or the rule unknown.

    Examples
    --------
    >>> round(undercut_clearance_mm(9.525) / 25.4, 4)  # 3/8 in aggregate
    0.75
    >>> round(undercut_clearance_mm(19.05) / 25.4, 4)  # 3/4 in aggregate
    1.0
    """
    if not math.isfinite(max_aggregate_mm) or max_aggregate_mm < 0:
        raise RepairError(f"max_aggregate_mm = {max_aggregate_mm!r} mm; give a size >= 0 mm")
    extra = 0.25 * MM_PER_INCH + max_aggregate_mm
    if rule == "icri":
        return max(0.75 * MM_PER_INCH, extra)
    if rule == "ufgs":
        return max(1.0 * MM_PER_INCH, extra)
    raise RepairError(f"unknown undercut rule {rule!r}; use 'icri' or 'ufgs'")


def depth_class(*, cover_mm: float, bar_diameter_mm: float, delam_depth_mm: float | None = None,
                max_aggregate_mm: float = _DEFAULT.max_aggregate_mm,
                slab_thickness_mm: float | None = None,
                rule: Literal["icri", "ufgs"] = _DEFAULT.undercut_rule,
                sawcut_depth_mm: float = _DEFAULT.sawcut_depth_mm,
                full_depth_fraction: float = _DEFAULT.full_depth_fraction) -> tuple[str, float]:
    """Depth class of a repair and its removal depth (common practice).

    Parameters
    ----------
    cover_mm : float
        Cover to the top bars, mm.
    bar_diameter_mm : float
        Top-mat bar diameter, mm.
    delam_depth_mm : float, optional
        Depth of the delamination plane, mm.  Unknown: taken at the bars, as a
        corrosion-induced delamination usually is (common practice).
    max_aggregate_mm : float
        Largest aggregate of the repair material, mm.
    slab_thickness_mm : float, optional
        Slab thickness, mm; without it no repair is classed full depth.
    rule : {"icri", "ufgs"}
        Undercut rule, see :func:`undercut_clearance_mm`.
    sawcut_depth_mm : float
        Least removal depth (the saw-cut depth), mm.
    full_depth_fraction : float
        Removal deeper than this fraction of the slab thickness is full depth
        (common practice).

    Returns
    -------
    (str, float)
        One of :data:`DEPTH_CLASSES`, and the removal depth in mm: the delamination
        depth (at least the saw-cut depth) above the bars; cover + bar diameter +
        undercut clearance below the top mat; the slab thickness at full depth.

    Raises
    ------
    RepairError
        If a value is negative or not finite.

    Examples
    --------
    >>> depth_class(cover_mm=50, bar_diameter_mm=16, delam_depth_mm=30)
    ('partial_above_bars', 30.0)
    >>> depth_class(cover_mm=38.1, bar_diameter_mm=15.9, max_aggregate_mm=9.525)
    ('partial_below_bars', 73.05)
    """
    for name, v in (("cover_mm", cover_mm), ("bar_diameter_mm", bar_diameter_mm),
                    ("delam_depth_mm", delam_depth_mm), ("slab_thickness_mm", slab_thickness_mm)):
        if v is not None and (not math.isfinite(v) or v < 0):
            raise RepairError(f"depth class: {name} = {v!r} mm; give a value >= 0 mm")
    below = cover_mm + bar_diameter_mm + undercut_clearance_mm(max_aggregate_mm, rule=rule)
    if delam_depth_mm is not None and delam_depth_mm < cover_mm:
        cls, depth = DEPTH_CLASSES[0], max(float(delam_depth_mm), sawcut_depth_mm)
    else:
        cls, depth = DEPTH_CLASSES[1], below
        if delam_depth_mm is not None:
            depth = max(depth, float(delam_depth_mm))
    if slab_thickness_mm is not None and depth > full_depth_fraction * slab_thickness_mm:
        cls, depth = DEPTH_CLASSES[2], float(slab_thickness_mm)
    return cls, round(float(depth), 6)


# ----------------------------------------------------------------------------- outlines


def polygon_parts(geom: BaseGeometry | None) -> list[Polygon]:
    """Return the non-empty polygons of any geometry, flattened (lines and points dropped)."""
    if geom is None or geom.is_empty:
        return []
    if isinstance(geom, Polygon):
        return [geom]
    if hasattr(geom, "geoms"):
        return [p for g in geom.geoms for p in polygon_parts(g)]
    return []


def clean_outlines(geoms: Sequence[BaseGeometry | None], ids: Sequence[str], *, source: str
                   ) -> tuple[list[Polygon], list[str]]:
    """Check and repair sounded outlines.

    Parameters
    ----------
    geoms : sequence of shapely geometries
        Polygons, multipolygons, or closed lines (taken as polygons).
    ids : sequence of str
        One id per geometry, for messages and for the ``source_ids`` column.
    source : str
        Where the outlines came from (file or layer), for messages.

    Returns
    -------
    (list of Polygon, list of str)
        Valid polygons with positive area; a multipart outline gives one polygon
        per part, each with the id of its feature.

    Raises
    ------
    RepairError
        For an empty or missing shape, an open line, a point, or a shape of zero area.

    Warns
    -----
    GeometryWarning
        When a closed line is taken as a polygon, or a self-intersecting outline is
        repaired with :func:`shapely.make_valid`.
    """
    if len(geoms) != len(ids):
        raise RepairError(f"{source}: {len(geoms)} outlines but {len(ids)} ids")
    out: list[Polygon] = []
    out_ids: list[str] = []
    for g, fid in zip(geoms, ids, strict=True):
        what = f"{source}: feature {fid!r}"
        if g is None or g.is_empty:
            raise RepairError(f"{what} has no shape; remove it or draw its outline")
        if isinstance(g, (LineString, LinearRing)):
            if not g.is_closed or len(g.coords) < 4:
                raise RepairError(f"{what} is an open line, not an outline; close it (or put it "
                                  "on a crack layer)")
            warnings.warn(f"{what}: closed line taken as a polygon", GeometryWarning, stacklevel=2)
            g = Polygon(g.coords)
        if not isinstance(g, (Polygon, MultiPolygon)):
            raise RepairError(f"{what} is a {g.geom_type}, not a polygon; draw the outline "
                              "of the sounded area")
        if not g.is_valid:
            reason = shapely.is_valid_reason(g)
            fixed = shapely.make_valid(g)
            parts = polygon_parts(fixed)
            if not parts or sum(p.area for p in parts) <= 0:
                raise RepairError(f"{what} is invalid ({reason}) and cannot be repaired; "
                                  "redraw it")
            warnings.warn(f"{what} was invalid ({reason}); repaired into {len(parts)} part(s)",
                          GeometryWarning, stacklevel=2)
            g = shapely.union_all(parts)
        parts = polygon_parts(g)
        if not parts or g.area <= 0:
            raise RepairError(f"{what} has zero area; redraw it as a closed outline")
        out.extend(parts)
        out_ids.extend([str(fid)] * len(parts))
    return out, out_ids


def n_reentrant_corners(geom: BaseGeometry, *, tol_deg: float = 1.0) -> int:
    """Count the re-entrant (reflex, > 180 degree interior) corners of polygons.

    Corners of holes count: they are re-entrant for the repair around them.
    """
    n = 0
    for p in polygon_parts(geom):
        p = orient(p, 1.0)
        for ring in (p.exterior, *p.interiors):
            xy = np.asarray(ring.coords)[:-1]
            if len(xy) < 3:
                continue
            a = np.roll(xy, 1, axis=0) - xy
            b = np.roll(xy, -1, axis=0) - xy
            cross = a[:, 0] * b[:, 1] - a[:, 1] * b[:, 0]
            ang = np.degrees(np.arctan2(np.abs(cross), (a * b).sum(axis=1)))
            n += int(((cross > 0) & (ang < 180 - tol_deg)).sum())
    return n


# ----------------------------------------------------------------------------- geometry helpers


def _tol(extent: float) -> float:
    return max(1e-9, 1e-9 * extent)


def _square_off(geom: BaseGeometry, strip: float, tol: float) -> BaseGeometry:
    """Fill every strip narrower than ``strip`` next to the shape (axis-aligned input).

    The shape is cut into the cells of its own vertex coordinates; a cell in a
    column or row narrower than ``strip`` is filled when a neighbour across the
    strip is inside.  Only grows, so nothing inside is lost.
    """
    parts = polygon_parts(geom)
    if not parts or strip <= 0:
        return geom
    xy = np.vstack([np.asarray(r.coords) for p in parts for r in (p.exterior, *p.interiors)])

    def uniq(v: NDArray[np.float64]) -> NDArray[np.float64]:
        u: NDArray[np.float64] = np.unique(v)
        keep = np.concatenate([[True], np.diff(u) > tol])
        return np.asarray(u[keep], dtype=np.float64)

    xs, ys = uniq(xy[:, 0]), uniq(xy[:, 1])
    if len(xs) < 2 or len(ys) < 2:
        return geom
    cx, cy = (xs[:-1] + xs[1:]) / 2, (ys[:-1] + ys[1:]) / 2
    gx, gy = np.meshgrid(cx, cy, indexing="ij")
    inside = shapely.contains_xy(shapely.union_all(parts), gx, gy)
    thin_x = np.diff(xs) < strip - tol
    thin_y = np.diff(ys) < strip - tol
    while True:
        nb = np.zeros_like(inside)
        nb[1:, :] |= inside[:-1, :]
        nb[:-1, :] |= inside[1:, :]
        add = ~inside & nb & thin_x[:, None]
        nb = np.zeros_like(inside)
        nb[:, 1:] |= inside[:, :-1]
        nb[:, :-1] |= inside[:, 1:]
        add |= ~inside & nb & thin_y[None, :]
        if not add.any():
            break
        inside |= add
    boxes = []
    for i in range(len(cx)):  # runs along y of each column
        col = inside[i]
        j = 0
        while j < len(col):
            if col[j]:
                k = j
                while k + 1 < len(col) and col[k + 1]:
                    k += 1
                boxes.append(box(xs[i], ys[j], xs[i + 1], ys[k + 1]))
                j = k + 1
            else:
                j += 1
    return shapely.union_all(boxes).simplify(0)


def _close(geom: BaseGeometry, gap: float) -> BaseGeometry:
    """Morphological closing with a square (keeps axis-aligned shapes axis-aligned)."""
    if gap <= 0:
        return geom
    d = gap / 2.0
    grown = geom.buffer(d, join_style="mitre", mitre_limit=5.0)
    return shapely.union_all([grown.buffer(-d, join_style="mitre", mitre_limit=5.0), geom])


def panels(slab: Polygon, joints: Sequence[BaseGeometry], tol: float) -> list[Polygon]:
    """Split the slab at its joint lines (joints that do not cut it through are ignored).

    Also the bays of the pay areas (:func:`geo_corrosion.repair.tender.bays`).
    """
    return [p for p in split_at_lines(slab, joints, tol) if isinstance(p, Polygon)] or [slab]


@dataclass
class _Shape:
    geom: BaseGeometry
    ids: frozenset[int]
    own: BaseGeometry | None = None  # union of the member rectangles, before any merge

    def base(self) -> BaseGeometry:
        return self.geom if self.own is None else self.own


def _pair_rectangles(shapes: list[_Shape], gap: float, max_extra: float, tol: float
                     ) -> list[_Shape]:
    """Greedily merge the pair that costs least into its bounding rectangle.

    A pair qualifies when closer than ``gap`` and its bounding rectangle exceeds
    the union of the pair's own rectangles by at most ``max_extra``.
    """
    while len(shapes) > 1:
        tree = shapely.STRtree([s.geom for s in shapes])
        best: tuple[float, int, int] | None = None
        for i, s in enumerate(shapes):
            for j in tree.query(s.geom, predicate="dwithin", distance=gap - tol):
                j = int(j)
                if j <= i:
                    continue
                own = shapely.union_all([s.base(), shapes[j].base()]).area
                rect = box(*shapely.union_all([s.geom, shapes[j].geom]).bounds).area
                extra = rect / own - 1.0 if own > 0 else math.inf
                if extra <= max_extra + 1e-12 and (best is None or extra < best[0]):
                    best = (extra, i, j)
        if best is None:
            break
        _, i, j = best
        a, b = shapes[i], shapes[j]
        merged = _Shape(box(*shapely.union_all([a.geom, b.geom]).bounds), a.ids | b.ids,
                        shapely.union_all([a.base(), b.base()]))
        shapes = [x for k, x in enumerate(shapes) if k not in (i, j)] + [merged]
    return shapes


def _fill_holes(geom: BaseGeometry, max_extra: float, strip: float) -> BaseGeometry:
    """Fill sound islands inside a repair: small ones (by ``max_extra``) and narrow ones."""
    out = []
    for p in polygon_parts(geom):
        keep = []
        for ring in p.interiors:
            hole = Polygon(ring)
            hx0, hy0, hx1, hy1 = hole.bounds
            if hole.area > max_extra * Polygon(p.exterior).area and min(hx1 - hx0,
                                                                        hy1 - hy0) >= strip:
                keep.append(ring)
        out.append(Polygon(p.exterior, keep))
    return shapely.union_all(out) if out else geom


def _find(parent: list[int], i: int) -> int:
    """Root of ``i`` in a union-find forest (with path halving)."""
    while parent[i] != i:
        parent[i] = parent[parent[i]]
        i = parent[i]
    return i


def _merge(shapes: list[_Shape], gap: float, max_extra: float, strip: float, tol: float
           ) -> list[_Shape]:
    """Merge shapes closer than ``gap`` (iterated until stable)."""
    shapes = _pair_rectangles(shapes, gap, max_extra, tol)
    refused: set[frozenset[frozenset[int]]] = set()
    while True:
        n = len(shapes)
        tree = shapely.STRtree([s.geom for s in shapes])
        parent = list(range(n))
        for i, s in enumerate(shapes):
            for j in tree.query(s.geom, predicate="dwithin", distance=gap - tol):
                j = int(j)
                if j > i and frozenset((s.ids, shapes[j].ids)) not in refused:
                    parent[_find(parent, i)] = _find(parent, j)
        groups: dict[int, list[int]] = {}
        for i in range(n):
            groups.setdefault(_find(parent, i), []).append(i)
        if all(len(g) == 1 for g in groups.values()):
            return shapes
        new: list[_Shape] = []
        changed = False
        for members in groups.values():
            if len(members) == 1:
                new.append(shapes[members[0]])
                continue
            ms = [shapes[i] for i in members]
            union = shapely.union_all([m.geom for m in ms])
            own = shapely.union_all([m.base() for m in ms])
            ids = frozenset().union(*(m.ids for m in ms))
            rect = box(*union.bounds)
            if rect.area <= own.area * (1 + max_extra) + tol:
                new.append(_Shape(rect, ids, own))
                changed = True
                continue
            closed = _square_off(_fill_holes(_close(union, gap), max_extra, strip), strip, tol)
            pieces = polygon_parts(closed)
            if len(pieces) == len(ms):  # nothing bridged: never try this group again
                for a in range(len(ms)):
                    for b in range(a + 1, len(ms)):
                        refused.add(frozenset((ms[a].ids, ms[b].ids)))
                new.extend(ms)
                continue
            changed = True
            for pc in pieces:
                inside = [m for m in ms if m.geom.intersects(pc)]
                new.append(_Shape(pc, frozenset().union(*(m.ids for m in inside)),
                                  shapely.union_all([m.base() for m in inside])))
        shapes = new
        if not changed and all(len(g) == 1 for g in groups.values()):
            return shapes


def _resolve_overlaps(shapes: list[_Shape], strip: float, tol: float) -> list[_Shape]:
    """Merge any shapes that overlap, so no area is counted twice."""
    while True:
        tree = shapely.STRtree([s.geom for s in shapes])
        for i, s in enumerate(shapes):
            hits = [int(j) for j in tree.query(s.geom, predicate="intersects") if int(j) != i
                    and s.geom.intersection(shapes[int(j)].geom).area > tol]
            if hits:
                j = hits[0]
                u = _square_off(shapely.union_all([s.geom, shapes[j].geom]), strip, tol)
                merged = _Shape(u, s.ids | shapes[j].ids,
                                shapely.union_all([s.base(), shapes[j].base()]))
                shapes = [x for k, x in enumerate(shapes) if k not in (i, j)] + [merged]
                break
        else:
            return shapes


def _extend_to_edges(r: Polygon, region: BaseGeometry, d: float, tol: float) -> Polygon:
    """Extend each side of rectangle ``r`` by ``d`` if a free edge lies within ``d`` of it."""
    inner = r.intersection(region)
    if inner.is_empty:
        return r
    x0, y0, x1, y1 = inner.bounds
    strips = {"w": box(x0 - d, y0, x0, y1), "e": box(x1, y0, x1 + d, y1),
              "s": box(x0, y0 - d, x1, y0), "n": box(x0, y1, x1, y1 + d)}
    out = {k: strip.difference(region).area > tol for k, strip in strips.items()}
    rx0, ry0, rx1, ry1 = r.bounds
    return box(min(rx0, x0 - d * out["w"]), min(ry0, y0 - d * out["s"]),
               max(rx1, x1 + d * out["e"]), max(ry1, y1 + d * out["n"]))


def _min_size(r: Polygon, size: float) -> Polygon:
    x0, y0, x1, y1 = r.bounds
    if x1 - x0 < size:
        c = (x0 + x1) / 2
        x0, x1 = c - size / 2, c + size / 2
    if y1 - y0 < size:
        c = (y0 + y1) / 2
        y0, y1 = c - size / 2, c + size / 2
    return box(x0, y0, x1, y1)


# ----------------------------------------------------------------------------- slivers
#
# Minimum size after clipping (common practice, no source).  Step 4 makes every
# rectangle at least ``min_size`` on a side, but the clip to the panel (a joint or
# the slab edge) and the cut-out of exclusions come after it and can leave a piece
# a few inches wide that no contractor would saw-cut, break out and form.  What a
# repair contractor expects, and what is done here, for each piece in which no
# ``min_size`` square fits (for a rectangle: its short side is below ``min_size``):
#
# - a piece that holds no sounded area (it is margin only: the sounded area is on
#   the other side of the joint or the exclusion) is dropped: the margin is there
#   to reach sound concrete around a delamination, and the joint or the exclusion
#   already bounds the repair on that side;
# - a piece that holds sounded area is widened, away from the edge it was cut at,
#   to ``min_size``, as a rectangle that stays inside its panel (inside the slab,
#   on its side of the joint), outside every exclusion and clear of every other
#   repair;
# - if it cannot be widened so, it is kept as it is (sounded area is never left
#   unrepaired) and reported with a GeometryWarning naming the repair.


@dataclass
class _Piece:
    """One repair outline in the saw-cut frame, as clipped to its panel and exclusions."""

    geom: BaseGeometry
    ids: frozenset[int]
    panel: Polygon
    clipped: BaseGeometry  # as clipped, before any widening: numbering uses it
    narrow_mm: float | None = None  # kept below the minimum size: its short side, mm (nan if
    #                                 not a rectangle); warned once it has an id
    unrounded: BaseGeometry | None = None  # before rounding up to the cutting increment
    note: str = ""  # what the rounding could not do (clipped at an obstacle)


def _fits_square(g: BaseGeometry, size: float, tol: float) -> bool:
    """Tell whether a ``size`` square (on the saw-cut axes) fits inside ``g``.

    A rectangle is measured exactly (its short side).  Any other outline is eroded by
    the square (a mitred inward buffer, exact on a rectilinear outline) less 0.1 % of
    ``size``: GEOS drops an erosion much thinner than that.
    """
    x0, y0, x1, y1 = g.bounds
    if abs((x1 - x0) * (y1 - y0) - g.area) <= tol:
        return min(x1 - x0, y1 - y0) >= size - tol
    d = size / 2.0 - max(tol, 1e-3 * size)
    return d <= 0 or not g.buffer(-d, join_style="mitre", mitre_limit=5.0).is_empty


def _widen(g: BaseGeometry, panel: Polygon, excl: BaseGeometry, others: Sequence[BaseGeometry],
           size: float, tiny: float) -> Polygon | None:
    """Find a rectangle over ``g`` with both sides >= ``size`` that fits there, or None.

    Each short side is extended from one end of the piece's bounds: first keeping
    the low end (growing up / right), then keeping the high end.  The edge a piece
    was cut at (a joint, an exclusion, the slab edge) blocks growth across it, so
    the rectangle that fits grows away from it.  It must stay inside ``panel``,
    outside ``excl`` and clear of ``others``.
    """
    x0, y0, x1, y1 = g.bounds

    def spans(lo: float, hi: float) -> list[tuple[float, float]]:
        return [(lo, hi)] if hi - lo >= size else [(lo, lo + size), (hi - size, hi)]

    for ax0, ax1 in spans(x0, x1):
        for ay0, ay1 in spans(y0, y1):
            c = box(ax0, ay0, ax1, ay1)
            if c.difference(panel).area > tiny:
                continue
            if not excl.is_empty and c.intersection(excl).area > tiny:
                continue
            if any(c.intersection(o).area > tiny for o in others):
                continue
            return c
    return None


def _settle_slivers(pieces: list[_Piece], parts_r: Sequence[BaseGeometry], excl: BaseGeometry,
                    size: float, tol: float, per_mm: float) -> list[_Piece]:
    """Apply the minimum size again after clipping (see the comment above)."""
    if size <= 0:
        return pieces
    tiny = tol * 1e-3  # area: above GEOS noise, far below any sounded area
    kept: list[tuple[_Piece, bool]] = []
    for pc in pieces:
        narrow = not _fits_square(pc.geom, size, tol)
        if narrow and not any(parts_r[k].intersection(pc.geom).area > tiny for k in pc.ids):
            continue  # margin only: dropped
        kept.append((pc, narrow))
    out = [pc for pc, _ in kept]
    for i, (pc, narrow) in enumerate(kept):
        if not narrow:
            continue
        others = [q.geom for j, q in enumerate(out) if j != i]
        grown = _widen(pc.geom, pc.panel, excl, others, size, tiny)
        if grown is not None:
            pc.geom = grown
            continue
        x0, y0, x1, y1 = pc.geom.bounds
        rect = abs((x1 - x0) * (y1 - y0) - pc.geom.area) <= tol
        pc.narrow_mm = min(x1 - x0, y1 - y0) / per_mm if rect else math.nan  # for the warning
    return out


# ----------------------------------------------------------------------------- layout


def _empty_frame() -> gpd.GeoDataFrame:
    cols = {c: pd.Series(dtype="float64" if c.endswith(("_m2", "_m", "_mm", "_m3")) else object)
            for c in REPAIR_COLUMNS if c != "geometry"}
    cols["n_reentrant_corners"] = pd.Series(dtype="int64")
    return gpd.GeoDataFrame(cols, geometry=gpd.GeoSeries([], dtype="geometry"))


def _finite(v: object) -> float | None:
    try:
        f = float(v)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return None
    return f if math.isfinite(f) else None


def _check_inputs(sources: gpd.GeoDataFrame, slab: Polygon, unit: str, level_id: str) -> None:
    if unit not in LENGTH_TO_M or unit in ("mm", "cm", "in"):
        raise RepairError(f"level {level_id}: plan unit {unit!r} is not a plan length unit; "
                          "use 'm' or 'ft'")
    if not isinstance(slab, Polygon) or slab.is_empty or slab.area <= 0:
        raise RepairError(f"level {level_id}: the slab outline must be one polygon with area; "
                          f"got {getattr(slab, 'geom_type', type(slab).__name__)}")
    if not slab.is_valid:
        raise RepairError(f"level {level_id}: the slab outline is invalid "
                          f"({shapely.is_valid_reason(slab)}); redraw it")
    if not isinstance(sources, gpd.GeoDataFrame):
        raise RepairError(f"level {level_id}: repair sources must be a GeoDataFrame")
    missing = [c for c in ("source_id", "kind") if c not in sources.columns]
    if missing:
        raise RepairError(f"level {level_id}: repair sources lack column(s) {missing}; "
                          "give 'source_id' and 'kind'")
    bad = sorted(set(map(str, sources["kind"])) - set(_SOURCE_KINDS))
    if bad:
        raise RepairError(f"level {level_id}: unknown source kind(s) {bad}; expected one of "
                          f"{list(_SOURCE_KINDS)}")


def layout_repairs(sources: gpd.GeoDataFrame, *, slab: Polygon,
                   exclusions: Sequence[BaseGeometry] = (), joints: Sequence[BaseGeometry] = (),
                   unit: str, params: LayoutParams, level_id: str) -> gpd.GeoDataFrame:
    """Lay out saw-cut repairs around sounded delaminations, spalls and opted-in zones.

    Parameters
    ----------
    sources : GeoDataFrame
        Polygons with columns ``source_id`` and ``kind`` (``"delamination"``,
        ``"spall"`` or ``"zone"``); optional ``cover_mm`` and ``delam_depth_mm``
        (mm) set the depth class of the repair holding them (a spall without a depth is
        taken at :data:`SPALL_DEPTH_SHARE_OF_COVER` of the cover: above the bars);
        optional ``label`` (the number on the sounding plan, ``D1``).
    slab : Polygon
        The slab outline, local grid coordinates in ``unit``.
    exclusions : sequence of Polygon
        Areas that are not repaired (columns, drains, ramps); repairs stop at them.  Any
        geometry is accepted (they are united); only their area matters.
    joints : sequence of LineString
        Joint lines; a repair never crosses one.  Any lineal geometry is accepted
        (LineString, MultiLineString, LinearRing).
    unit : {"m", "ft"}
        Plan length unit of every geometry.
    params : LayoutParams
    level_id : str
        Level id, prefix of the repair ids.

    Returns
    -------
    GeoDataFrame
        One row per repair, columns :data:`REPAIR_COLUMNS`: ``repair_id``
        (``f"{level_id}-R{n:03d}"`` numbered from the top row of the plan down, then
        left to right, by the centroid of the outline as clipped, before a sliver is
        widened), ``source_ids`` (comma-joined), ``area_m2``,
        ``perimeter_m`` (saw-cut length: the outline less the parts on the slab
        edge, on an exclusion's boundary or on a joint, none of which are cut),
        ``outline_m`` (whole outline), ``n_reentrant_corners``, ``depth_class``,
        ``depth_mm`` (removal depth), ``volume_m3`` (area times removal depth),
        ``size_x_m`` and ``size_y_m`` (overall size along the saw-cut axes),
        ``area_before_rounding_m2``, ``rounding_note`` (a side that could not be rounded
        up, '' otherwise), ``sounded`` (the ``label`` of each source held, comma-joined,
        or its ``source_id`` where the sources carry no label), ``plan_unit`` and the
        geometry in local grid coordinates.

    Raises
    ------
    RepairError
        For a bad unit, slab, frame or outline.

    Warns
    -----
    GeometryWarning
        For outlines repaired by :func:`clean_outlines`, sources wholly outside the slab,
        and a repair left narrower than ``min_size_mm`` by a joint, an exclusion or the
        slab edge that holds sounded area and has no room to widen (named by its id).

    Notes
    -----
    The rectangle of a grown outline is its bounds widened by the margin on every
    side.  That is exactly the axis-aligned rectangle of the outline grown by the
    margin (round or mitred growth of a straight-sided outline), without the small
    overshoot a mitred buffer of a polygonised curve has at its vertices.
    """
    _check_inputs(sources, slab, unit, level_id)
    if len(sources) == 0:
        return _empty_frame()
    with np.errstate(all="ignore"):  # GEOS floating-point flags on near-degenerate shapes
        return _layout(sources, slab, exclusions, joints, unit, params, level_id)


def _layout(sources: gpd.GeoDataFrame, slab: Polygon, exclusions: Sequence[BaseGeometry],
            joints: Sequence[BaseGeometry], unit: str, params: LayoutParams, level_id: str
            ) -> gpd.GeoDataFrame:
    per_mm = 0.001 / LENGTH_TO_M[unit]
    p = params
    margin, gap = p.margin_mm * per_mm, p.merge_gap_mm * per_mm
    min_size, strip = p.min_size_mm * per_mm, p.min_reentrant_mm * per_mm
    rows = sources.reset_index(drop=True)
    parts: list[Polygon] = []
    row_of: list[int] = []
    for k, (g, sid) in enumerate(zip(rows.geometry, rows["source_id"].astype(str), strict=True)):
        got, _ = clean_outlines([g], [sid], source=f"level {level_id}")
        parts.extend(got)
        row_of.extend([k] * len(got))
    excl = [e for e in exclusions if e is not None and not e.is_empty]
    jts = [j for j in joints if j is not None and not j.is_empty]
    origin = slab.centroid
    angle = float(p.axis_angle_deg)

    def rot(g: _G, sign: float = -1.0) -> _G:  # a rotated polygon stays a Polygon
        return affinity.rotate(g, sign * angle, origin=origin) if angle else g

    slab_r = rot(slab)
    x0, y0, x1, y1 = slab.bounds
    tol = _tol(max(x1 - x0, y1 - y0, abs(x0), abs(y0), abs(x1), abs(y1)))
    excl_r = shapely.union_all([rot(e) for e in excl]) if excl else Polygon()
    parts_r = [rot(g) for g in parts]
    outside = [k for k, g in zip(row_of, parts_r, strict=True) if not g.intersects(slab_r)]
    for k in sorted(set(outside) - {r for r, g in zip(row_of, parts_r, strict=True)
                                    if g.intersects(slab_r)}):
        warnings.warn(f"level {level_id}: {rows.loc[k, 'kind']} {rows.loc[k, 'source_id']!r} "
                      "lies wholly outside the slab; it is ignored", GeometryWarning, stacklevel=2)
    found: list[_Piece] = []
    for panel in panels(slab_r, [rot(j) for j in jts], tol):
        shapes: list[_Shape] = []
        for k, g in enumerate(parts_r):
            piece = g.intersection(panel)
            if piece.area <= tol:
                continue
            bx0, by0, bx1, by1 = piece.bounds
            r = _min_size(box(bx0 - margin, by0 - margin, bx1 + margin, by1 + margin), min_size)
            if p.extend_to_edge and margin > 0:
                r = _extend_to_edges(r, slab_r, margin, tol)
            shapes.append(_Shape(r, frozenset([k])))
        if not shapes:
            continue
        shapes = _merge(shapes, gap, p.merge_max_extra, strip, tol)
        shapes = _resolve_overlaps(shapes, strip, tol)
        for s in shapes:
            g = s.geom.intersection(panel)
            if not excl_r.is_empty:
                g = g.difference(excl_r)
            for pc in polygon_parts(g):
                if pc.area <= tol:
                    continue
                ks = frozenset(k for k in s.ids if parts_r[k].intersects(pc)) or s.ids
                found.append(_Piece(pc, ks, panel, pc))
    found = _settle_slivers(found, parts_r, excl_r, min_size, tol, per_mm)
    if p.round_increment_mm:
        _round(found, excl_r, p.round_increment_mm, per_mm, unit, tol)
    return _attributes(found, rows, row_of, slab, excl, jts, rot, unit, p, level_id, tol)


def _round(found: list[_Piece], excl: BaseGeometry, increment_mm: float, per_mm: float,
           unit: str, tol: float) -> None:
    """Round every repair up to the cutting increment (:mod:`geo_corrosion.repair.rounding`)."""
    done = round_up_outlines([pc.geom for pc in found], [pc.panel for pc in found],
                             increment=increment_mm * per_mm, exclusions=excl, tol=tol)
    inc = (f"{increment_mm / MM_PER_INCH:g} in" if unit == "ft"
           else f"{increment_mm / 1000:g} m")
    for pc, r in zip(found, done, strict=True):
        pc.unrounded, pc.geom, pc.note = pc.geom, r.geom, r.note(inc)
    check_no_overlap([pc.geom for pc in found], [f"#{k + 1}" for k in range(len(found))],
                     tol=tol * 1e-3, what="repair layout")


def _sorted_labels(labels: set[str]) -> list[str]:
    """Sort labels such as D2, D10, S1 by prefix, then number."""
    def key(s: str) -> tuple[str, int, str]:
        head = s.rstrip("0123456789")
        tail = s[len(head):]
        return head, int(tail) if tail else -1, s
    return sorted(labels, key=key)


def _tidy(g: BaseGeometry, tol: float) -> BaseGeometry:
    """Snap to a fine grid (drops near-coincident vertices), drop collinear ones, orient CCW."""
    grid = 10.0 ** (math.floor(math.log10(tol)) - 3)
    g = shapely.set_precision(g, grid).simplify(0)
    parts = [orient(p, 1.0) for p in polygon_parts(g) if p.area > tol]
    if not parts:
        return Polygon()
    return parts[0] if len(parts) == 1 else MultiPolygon(parts)


def _attributes(found: Iterable[_Piece], rows: pd.DataFrame,
                row_of: list[int], slab: Polygon, excl: list[BaseGeometry],
                jts: list[BaseGeometry], rot: Callable[[BaseGeometry, float], BaseGeometry],
                unit: str, p: LayoutParams, level_id: str, tol: float
                ) -> gpd.GeoDataFrame:
    f = LENGTH_TO_M[unit]
    nocut = shapely.union_all([slab.boundary, *[e.boundary for e in excl], *jts]).buffer(tol * 10)
    recs = []
    for pc in found:
        g = _tidy(rot(pc.geom, 1.0), tol)
        if g.is_empty:
            continue
        # numbered by the outline as clipped, so widening a sliver renumbers no other repair
        at = g if pc.clipped is pc.geom else _tidy(rot(pc.clipped, 1.0), tol)
        c = at.centroid
        srows = sorted({row_of[k] for k in pc.ids})
        best: tuple[int, float, str] = (-1, 0.0, "")
        for r in srows:
            cover = _finite(rows.loc[r, "cover_mm"]) if "cover_mm" in rows else None
            dd = _finite(rows.loc[r, "delam_depth_mm"]) if "delam_depth_mm" in rows else None
            cov = p.cover_mm if cover is None else cover
            if dd is None and str(rows.loc[r, "kind"]) == "spall":
                dd = SPALL_DEPTH_SHARE_OF_COVER * cov
            cls, dep = depth_class(
                cover_mm=cov, bar_diameter_mm=p.bar_diameter_mm,
                delam_depth_mm=dd, max_aggregate_mm=p.max_aggregate_mm,
                slab_thickness_mm=p.slab_thickness_mm, rule=p.undercut_rule,
                sawcut_depth_mm=p.sawcut_depth_mm, full_depth_fraction=p.full_depth_fraction)
            key = (DEPTH_CLASSES.index(cls), dep, cls)
            best = max(best, key)
        area_m2 = g.area * f * f
        sx0, sy0, sx1, sy1 = pc.geom.bounds  # in the saw-cut frame
        ids = list(dict.fromkeys(str(rows.loc[r, "source_id"]) for r in srows))
        labels = (_sorted_labels({str(rows.loc[r, "label"]) for r in srows})
                  if "label" in rows else ids)
        recs.append({
            "_y": round(-c.y, 6), "_x": round(c.x, 6), "_narrow": pc.narrow_mm is not None,
            "_width_mm": math.nan if pc.narrow_mm is None else pc.narrow_mm,
            "level_id": level_id, "source_ids": ",".join(ids), "area_m2": area_m2,
            "perimeter_m": g.boundary.difference(nocut).length * f,
            "outline_m": g.boundary.length * f,
            "n_reentrant_corners": n_reentrant_corners(g),
            "depth_class": best[2], "depth_mm": best[1],
            "volume_m3": area_m2 * best[1] / 1000.0,
            "size_x_m": (sx1 - sx0) * f, "size_y_m": (sy1 - sy0) * f,
            "area_before_rounding_m2": (area_m2 if pc.unrounded is None
                                        else pc.unrounded.area * f * f),
            "rounding_note": pc.note, "sounded": ", ".join(labels), "plan_unit": unit,
            "geometry": g,
        })
    if not recs:
        return _empty_frame()
    df = pd.DataFrame(recs).sort_values(["_y", "_x"], kind="stable").reset_index(drop=True)
    df.insert(0, "repair_id", [f"{level_id}-R{n:03d}" for n in range(1, len(df) + 1)])
    for rid, sids, narrow, w in zip(df["repair_id"], df["source_ids"], df["_narrow"],
                                    df["_width_mm"], strict=True):
        if not narrow:
            continue
        wide = (f"only {w:.0f} mm ({w / MM_PER_INCH:.1f} in) wide" if math.isfinite(w)
                else f"nowhere {p.min_size_mm:g} mm wide")
        warnings.warn(
            f"level {level_id}: repair {rid} is {wide} after the cut at a joint, an exclusion "
            f"or the slab edge, below the minimum repair size ({p.min_size_mm:g} mm), and cannot "
            f"be widened on its side of the cut; it holds sounded area ({sids}), so it is kept: "
            "check it on the drawing", GeometryWarning, stacklevel=3)
    df = df.drop(columns=["_y", "_x", "_narrow", "_width_mm"])
    return gpd.GeoDataFrame(df[list(REPAIR_COLUMNS)], geometry="geometry")

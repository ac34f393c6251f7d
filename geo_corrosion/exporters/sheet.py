"""Geometry of a drawing sheet: sheet sizes, scale choice, label placement, clean outlines.

Plain functions on numbers and shapely geometries, with no DXF in them; ``dxf.py`` draws
with them and ``sheet_pdf.py`` renders the result.  Paper lengths are in millimetres.

Sheet sizes and scales are common practice: ANSI/ASME Y14.1 sizes (ANSI C, D, E) for US
sites and ISO 216 A sizes for metric ones; US engineer's scales 1" = 10', 20', ... 100'
and metric 1:50 ... 1:1000.  The title block, its fields and the layout of the sheet are
this project's own design.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import LineString, Polygon, box
from shapely.geometry.base import BaseGeometry
from shapely.ops import nearest_points
from shapely.prepared import prep

from geo_corrosion.errors import ExportError
from geo_corrosion.units import LENGTH_TO_M, MM_PER_INCH

__all__ = [
    "CHAR_WIDTH",
    "DEFAULT_SHEET",
    "LINE_SPACING",
    "SCALES",
    "SHEET_SIZES_MM",
    "Label",
    "Placed",
    "Scale",
    "SheetFrame",
    "choose_scale",
    "clean_outline",
    "clean_zones",
    "format_length",
    "place_labels",
    "rectangle_sides",
    "sheet_frame",
    "text_box",
]

#: Sheet sizes, landscape, mm (common practice: ANSI/ASME Y14.1 and ISO 216).
SHEET_SIZES_MM: dict[str, tuple[float, float]] = {
    "ANSI-C": (22 * MM_PER_INCH, 17 * MM_PER_INCH),
    "ANSI-D": (34 * MM_PER_INCH, 22 * MM_PER_INCH),
    "ANSI-E": (44 * MM_PER_INCH, 34 * MM_PER_INCH),
    "ISO-A2": (594.0, 420.0),
    "ISO-A1": (841.0, 594.0),
    "ISO-A0": (1189.0, 841.0),
}

#: The sheet of each reporting system when ``[drawings].sheet = "auto"``.
DEFAULT_SHEET = {"us": "ANSI-D", "metric": "ISO-A1"}

#: Width of a character as a share of the text height, for text boxes (a generous
#: figure for capitals and digits of a sans-serif font, so boxes are not too small).
CHAR_WIDTH = 0.9
#: Distance between the base lines of a label's lines, as a share of the text height.
LINE_SPACING = 1.6


@dataclass(frozen=True)
class Scale:
    """A standard drawing scale: ``ratio`` model lengths per paper length."""

    ratio: float
    label: str

    def model_per_mm(self, model_unit: str) -> float:
        """Return the model length (in ``model_unit``) that one paper millimetre stands for."""
        return self.ratio * 0.001 / LENGTH_TO_M[model_unit]


#: Standard scales by reporting system, largest first (common practice).
SCALES: dict[str, tuple[Scale, ...]] = {
    "us": tuple(Scale(12.0 * f, f"1\" = {f}'") for f in (10, 20, 30, 40, 50, 60, 80, 100)),
    "metric": tuple(Scale(float(r), f"1:{r}") for r in (50, 100, 200, 250, 500, 1000)),
}


@dataclass(frozen=True)
class SheetFrame:
    """Where things go on a sheet (mm, origin at the lower left corner).

    Attributes
    ----------
    name : str
        ``ANSI-D``, ``ISO-A1`` ...
    width, height : float
    border : tuple of float
        (x0, y0, x1, y1) of the border line.
    drawing : tuple of float
        The area of the plan's viewport.
    column : tuple of float
        The right-hand column: title block at the bottom, then revisions, north arrow and
        scale bar, legend, general notes, and the repair table at the top.
    """

    name: str
    width: float
    height: float
    border: tuple[float, float, float, float]
    drawing: tuple[float, float, float, float]
    column: tuple[float, float, float, float]


def sheet_frame(name: str, *, where: str = "[drawings].sheet") -> SheetFrame:
    """Return the frame of a named sheet.

    A 20 mm binding margin on the left and 10 mm elsewhere (common practice, as ISO 5457),
    a right-hand column of 185 mm and 5 mm of clear space around the viewport.
    """
    if name not in SHEET_SIZES_MM:
        raise ExportError(f"{where}: unknown sheet {name!r}; use one of "
                          f"{', '.join(SHEET_SIZES_MM)} or \"auto\"")
    w, h = SHEET_SIZES_MM[name]
    border = (20.0, 10.0, w - 10.0, h - 10.0)
    col_w = 185.0
    column = (border[2] - col_w, border[1], border[2], border[3])
    drawing = (border[0] + 5.0, border[1] + 5.0, column[0] - 5.0, border[3] - 5.0)
    return SheetFrame(name, w, h, border, drawing, column)


def choose_scale(extent: tuple[float, float, float, float], model_unit: str, system: str,
                 frame: SheetFrame, *, margin_mm: float = 25.0, what: str = "the plan",
                 where: str = "[drawings].sheet") -> Scale:
    """Return the largest standard scale at which a model extent fits the viewport.

    Parameters
    ----------
    extent : (x0, y0, x1, y1)
        Model extent to show, in ``model_unit``.
    model_unit : str
        A unit of :data:`geo_corrosion.units.LENGTH_TO_M`.
    system : {"us", "metric"}
        Which family of scales.
    frame : SheetFrame
    margin_mm : float
        Paper kept free around the extent for station and grid labels.

    Raises
    ------
    ExportError
        When the extent fits at none of the standard scales; the message names the sheet,
        the extent and the smallest scale tried.
    """
    x0, y0, x1, y1 = extent
    dw = frame.drawing[2] - frame.drawing[0] - 2 * margin_mm
    dh = frame.drawing[3] - frame.drawing[1] - 2 * margin_mm
    scales = SCALES[system]
    for s in scales:
        f = s.model_per_mm(model_unit)
        if (x1 - x0) / f <= dw and (y1 - y0) / f <= dh:
            return s
    raise ExportError(
        f"{where}: {what} ({x1 - x0:.0f} x {y1 - y0:.0f} {model_unit}) does not fit the "
        f"drawing area of the {frame.name} sheet ({dw:.0f} x {dh:.0f} mm) at any standard "
        f"scale down to {scales[-1].label}; choose a larger sheet ({', '.join(SHEET_SIZES_MM)})")


# --------------------------------------------------------------------------- text


def format_length(value: float, model_unit: str, system: str) -> str:
    """Return a length for a drawing: feet and inches to 1/4 in (US), or whole mm.

    Examples
    --------
    >>> print(format_length(2.4375, "ft", "us"))
    2'-5 1/4"
    >>> format_length(3.5504, "m", "metric")
    '3550'
    """
    metres = value * LENGTH_TO_M[model_unit]
    if system == "metric":
        return f"{round(metres * 1000.0):d}"
    quarters = round(metres / (MM_PER_INCH / 1000.0) * 4)
    feet, rest = divmod(quarters, 48)
    inches, q = divmod(rest, 4)
    frac = {0: "", 1: " 1/4", 2: " 1/2", 3: " 3/4"}[q]
    return f"{feet}'-{inches}{frac}\""


def text_box(x: float, y: float, lines: Sequence[str], h: float) -> Polygon:
    """Return the box of a block of lines whose top line's base line is at (x, y), left aligned.

    Each line is ``len(text) * CHAR_WIDTH * h`` wide and ``h`` high (cap height); lines are
    ``LINE_SPACING * h`` apart.
    """
    w = max(len(t) for t in lines) * CHAR_WIDTH * h
    bottom = y - (len(lines) - 1) * LINE_SPACING * h
    return box(x, bottom, x + w, y + h)


def rectangle_sides(geom: BaseGeometry) -> tuple[float, float, bool]:
    """Return the two sides of a repair's rectangle, longer first, and whether it is one.

    For an outline that is not a rectangle (an L or T shape), the sides of its smallest
    enclosing rectangle and False.
    """
    rect = geom.minimum_rotated_rectangle
    c = list(getattr(rect, "exterior", rect).coords)
    a = math.dist(c[0], c[1])
    b = math.dist(c[1], c[2])
    is_rect = rect.area > 0 and abs(geom.area - rect.area) <= 1e-6 * rect.area
    return max(a, b), min(a, b), is_rect


# --------------------------------------------------------------------------- placement


@dataclass(frozen=True)
class Label:
    """A label to place beside a shape: its key, the shape and its lines of text."""

    key: str
    shape: BaseGeometry
    lines: tuple[str, ...]


@dataclass(frozen=True)
class Placed:
    """A placed label: where its top line starts, its box and its leader (or None)."""

    key: str
    lines: tuple[str, ...]
    x: float
    y: float
    box: Polygon
    leader: LineString | None


_DIRECTIONS = ((1, 0), (1, 1), (0, 1), (-1, 1), (-1, 0), (-1, -1), (0, -1), (1, -1))
_DISTANCES = (0.6, 1.5, 3.0, 5.0, 8.0, 12.0, 18.0, 26.0, 36.0)


def _candidates(shape: BaseGeometry, w: float, bh: float, h: float
                ) -> list[tuple[float, float]]:
    """Lower-left corners of boxes around a shape, nearest first."""
    x0, y0, x1, y1 = shape.bounds
    cx, cy = (x0 + x1) / 2, (y0 + y1) / 2
    out = []
    for d in _DISTANCES:
        g = d * h
        for dx, dy in _DIRECTIONS:
            bx = x1 + g if dx > 0 else (x0 - g - w if dx < 0 else cx - w / 2)
            by = y1 + g if dy > 0 else (y0 - g - bh if dy < 0 else cy - bh / 2)
            out.append((bx, by))
    return out


def place_labels(labels: Sequence[Label], *, h: float,
                 hard: Sequence[BaseGeometry] = (), soft: Sequence[BaseGeometry] = (),
                 within: BaseGeometry | None = None) -> list[Placed]:
    """Place labels beside their shapes so that no two overlap and none crosses an outline.

    A simple search: for each label in turn, boxes on eight sides of its shape at growing
    distances, nearest first; the first box that overlaps no placed label or leader, no
    ``hard`` line and no ``soft`` line (keeping a gap of ``h / 4``) is taken, with a leader
    from the box to the shape when it stands off more than ``h``.  Near the shape (up to
    five text heights) a box may cross soft lines before a box farther out is sought;
    when no box is free of the hard lines, the box of the least hard crossing is taken
    (never one on another label).

    Parameters
    ----------
    labels : sequence of Label
    h : float
        Text height, model units.
    hard : geometries
        Outlines no label may cross (repairs, delaminations, spalls): their boundaries are
        used.
    soft : geometries
        Outlines a label should not cross (slab, joints, zones, grid lines).
    within : geometry, optional
        Boxes must lie inside it (the viewport's extent in model units).

    Returns
    -------
    list of Placed
        In the order of ``labels``.
    """
    def lines_of(gs: Sequence[BaseGeometry]) -> BaseGeometry:
        parts = [g.boundary if g.geom_type in ("Polygon", "MultiPolygon") else g
                 for g in gs if g is not None and not g.is_empty]
        return shapely.union_all(parts) if parts else LineString()

    hard_lines = lines_of(hard)
    hard_p, soft_p = prep(hard_lines), prep(lines_of(soft))
    within_p = prep(within) if within is not None else None
    gap = h / 4
    taken = _Taken()
    out: list[Placed] = []
    order = sorted(range(len(labels)), key=lambda i: (-labels[i].shape.bounds[3],
                                                      labels[i].shape.bounds[0]))
    result: dict[int, Placed] = {}
    for i in order:
        lab = labels[i]
        w = max(len(t) for t in lab.lines) * CHAR_WIDTH * h
        bh = ((len(lab.lines) - 1) * LINE_SPACING + 1) * h
        cands = _candidates(lab.shape, w, bh, h)
        taken.freeze()
        best: tuple[float, Polygon, LineString | None] | None = None
        near = len(_DIRECTIONS) * sum(1 for d in _DISTANCES if d <= 5.0)
        # a candidate's box, grown box, leader and tests, made once (the passes below see
        # the nearer candidates up to five times): index -> (box, grown, leader) or None
        # when it lies outside ``within`` or on a placed label or leader
        seen: dict[int, tuple[Polygon, Polygon, LineString | None] | None] = {}
        soft_hit: dict[int, bool] = {}
        hard_hit: dict[int, bool] = {}

        for level, pool in ((0, near), (1, near), (0, len(cands)), (1, len(cands)),
                            (2, len(cands))):
            for k in range(pool):
                if k not in seen:
                    bx, by = cands[k]
                    b = box(bx, by, bx + w, by + bh)
                    grown = b.buffer(gap, join_style="mitre")
                    leader = None
                    free = ((within_p is None or within_p.contains(b))
                            and not taken.hits(grown))
                    if free:
                        leader = _leader(b, lab.shape, h)
                        free = leader is None or not taken.hits(leader)
                    seen[k] = (b, grown, leader) if free else None
                c = seen[k]
                if c is None:
                    continue
                b, grown, leader = c
                if level == 0:
                    if k not in soft_hit:
                        soft_hit[k] = soft_p.intersects(grown)
                    if soft_hit[k]:
                        continue
                if level < 2:
                    if k not in hard_hit:
                        hard_hit[k] = hard_p.intersects(grown)
                    if hard_hit[k]:
                        continue
                if level == 2:
                    cost = grown.intersection(hard_lines).length
                    if best is None or cost < best[0]:
                        best = (cost, b, leader)
                    continue
                best = (0.0, b, leader)
                break
            if best is not None:
                break
        if best is None:  # everything near is taken: stack beside the shape, far out
            x0, _, x1, y1 = lab.shape.bounds
            top = max([g.bounds[3] for g in taken.geoms] + [y1]) + 2 * h
            b = box(x0, top, x0 + w, top + bh)
            best = (math.inf, b, _leader(b, lab.shape, h))
        _, b, leader = best
        taken.add(b.buffer(gap, join_style="mitre"))
        if leader is not None:
            taken.add(leader)
        bx0, _, _, by1 = b.bounds
        result[i] = Placed(lab.key, lab.lines, bx0, by1 - h, b, leader)
    out = [result[i] for i in range(len(labels))]
    return out


class _Taken:
    """Keep the placed labels' grown boxes and leaders, and tell what touches them.

    Does a geometry touch any of them?  The same answer as asking the union of them all
    (a geometry meets a union when it meets one of its parts), without a union per label:
    the boxes that overlap the geometry's bounds are tested, one by one, in one call.
    """

    def __init__(self) -> None:
        self.geoms: list[BaseGeometry] = []
        self._bounds: list[tuple[float, float, float, float]] = []
        self._arr = np.empty(0, dtype=object)
        self._b = np.empty((0, 4))

    def add(self, g: BaseGeometry) -> None:
        """Take a geometry (seen by :meth:`hits` after the next :meth:`freeze`)."""
        self.geoms.append(g)
        self._bounds.append(g.bounds)

    def freeze(self) -> None:
        """Index what was taken so far (once per label)."""
        if len(self._arr) != len(self.geoms):
            self._arr = np.empty(len(self.geoms), dtype=object)
            self._arr[:] = self.geoms
            self._b = np.array(self._bounds, dtype=float).reshape(-1, 4)

    def hits(self, g: BaseGeometry) -> bool:
        """Return whether ``g`` intersects anything taken (as of the last freeze)."""
        if not len(self._arr):
            return False
        x0, y0, x1, y1 = g.bounds
        b = self._b
        near = (b[:, 0] <= x1) & (b[:, 2] >= x0) & (b[:, 1] <= y1) & (b[:, 3] >= y0)
        if not near.any():
            return False
        return bool(shapely.intersects(self._arr[near], g).any())


def _leader(b: Polygon, shape: BaseGeometry, h: float) -> LineString | None:
    """Return a leader from a box to a shape, or None when the box is close to it."""
    p_box, p_shape = nearest_points(b, shape.boundary)
    if p_box.distance(p_shape) <= h:
        return None
    return LineString([p_box, p_shape])


# --------------------------------------------------------------------------- outlines


def clean_outline(geom: BaseGeometry, tolerance: float, *, max_change: float = 0.02,
                  within: BaseGeometry | None = None) -> BaseGeometry:
    """Return a zone outline without the raster's staircase.

    Collinear vertices are dropped, then each run of steps (edges no longer than 2.5
    ``tolerance``, about a kriging cell) is replaced by the line through the steps'
    midpoints, which keeps the area the steps enclose; the outline is then simplified with
    the tolerance, or a half or a quarter of it where that keeps the area (shapely
    ``simplify``,
    topology kept) and its near-orthogonal edges squared: a vertex whose x (or y) differs
    from the previous one's by less than the tolerance takes the previous one's.  With
    ``within`` (the deck: slab less exclusions), the result is clipped to it, so the deck's
    own edges, notches and openings stay as drawn.  The area may change by less than
    ``max_change`` (2 %) of the original; otherwise the outline is only simplified, and
    failing that left as it was.
    """
    if geom is None or geom.is_empty or tolerance <= 0:
        return geom
    area = geom.area

    def clip(g: BaseGeometry) -> BaseGeometry:
        return g if within is None else shapely.make_valid(g.intersection(within))

    destaired = _polygons(geom.simplify(0), lambda r: _destair(r, tolerance))
    tries = []
    for t in (tolerance, tolerance / 2, tolerance / 4):  # a cell first, then finer
        simple = clip(destaired.simplify(t, preserve_topology=True))
        tries += [clip(_polygons(simple, lambda r: _square_ring(r, tolerance))), simple]
    tries.append(clip(geom.simplify(tolerance / 4, preserve_topology=True)))
    for g in tries:
        g = _polygons(g, lambda r: [(float(c[0]), float(c[1])) for c in r[:-1]])
        if g.is_valid and not g.is_empty and abs(g.area - area) < max_change * area:
            return g
    return geom


def clean_zones(zones: Sequence[BaseGeometry], tolerance: float, deck: BaseGeometry, *,
                exact: Sequence[bool] = (), max_change: float = 0.02) -> list[BaseGeometry]:
    """Return the outlines of zones that partition the deck, cleaned so that they still do.

    In order: a zone marked ``exact`` is kept as it is (the repairs, priced as drawn); any
    other is cleaned (:func:`clean_outline`, clipped to the deck) less the zones before it;
    the last zone, when the zones cover the deck, is the rest of the deck.  So neighbouring
    zones share their edges and the deck's outline stays as drawn.  When a zone's area
    changes by ``max_change`` (2 %) or more, or the zones do not cover the deck, the zones
    are returned as given.
    """
    zs = list(zones)
    if not zs:
        return zs
    exact = list(exact) + [False] * (len(zs) - len(exact))
    covered = shapely.union_all(zs)
    if abs(covered.area - deck.area) > 1e-3 * deck.area:
        return zs
    out: list[BaseGeometry] = []
    taken: BaseGeometry = Polygon()
    for i, (z, keep) in enumerate(zip(zs, exact, strict=True)):
        if i == len(zs) - 1 and not keep:
            g = deck.difference(taken)
        elif keep:
            g = z
        else:
            g = clean_outline(z, tolerance, within=deck).difference(taken)
        g = _polygons(shapely.make_valid(g),
                      lambda r: [(float(c[0]), float(c[1])) for c in r[:-1]])
        if z.area > 0 and abs(g.area - z.area) >= max_change * z.area:
            return zs
        out.append(g)
        taken = shapely.union_all([taken, g])
    return out


def _destair(coords: Sequence[tuple[float, float]], tol: float) -> list[tuple[float, float]]:
    """Replace steps (short edges) of a closed ring by their midpoints."""
    pts = [(float(c[0]), float(c[1])) for c in coords[:-1]]
    n = len(pts)
    if n < 4:
        return pts
    short = [math.dist(pts[i], pts[(i + 1) % n]) <= 2.5 * tol for i in range(n)]
    out: list[tuple[float, float]] = []
    for i in range(n):
        if not short[i - 1] or not short[i]:
            out.append(pts[i])  # a corner at a long edge stays
        if short[i]:
            (ax, ay), (bx, by) = pts[i], pts[(i + 1) % n]
            out.append(((ax + bx) / 2, (ay + by) / 2))
    return out if len(out) >= 3 else pts


def _square_ring(coords: Sequence[tuple[float, float]], tol: float
                 ) -> list[tuple[float, float]]:
    pts = [(float(c[0]), float(c[1])) for c in coords[:-1]]
    out: list[tuple[float, float]] = []
    for x, y in pts:
        if out:
            px, py = out[-1]
            if abs(x - px) < tol and abs(y - py) >= tol:
                x = px
            elif abs(y - py) < tol and abs(x - px) >= tol:
                y = py
        out.append((x, y))
    return out


def _polygons(geom: BaseGeometry,
              fix: Callable[[Sequence[tuple[float, float]]], list[tuple[float, float]]]
              ) -> BaseGeometry:
    """Apply a change to every ring of a (multi)polygon; a valid geometry comes back."""
    polys = []
    for p in getattr(geom, "geoms", [geom]):
        if p.geom_type != "Polygon":
            continue
        ext = fix(list(p.exterior.coords))
        holes = [fix(list(r.coords)) for r in p.interiors]
        if len(ext) >= 3:
            polys.append(Polygon(ext, [r for r in holes if len(r) >= 3]))
    if not polys:
        return geom
    return shapely.make_valid(shapely.union_all(polys) if len(polys) > 1 else polys[0])

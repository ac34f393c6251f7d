"""Practical repair sizes: saw-cut outlines rounded up to a cutting increment.

Contractors set out and cut repairs to practical increments, not to 2.43 ft x 4.41 ft
(common practice, no published source: whole inches in multiples of 3 in on US sites,
0.05 m on metric sites).  :func:`round_up_outlines` rounds every side of each repair UP
to a multiple of the increment and places the rounded outline ("snaps its corners") so
that it still holds the whole outline it replaces: the sounded areas and the margin
they had are never reduced.

Rules, for each repair in turn (in the saw-cut frame, axes aligned with the cuts):

1. the overall width and height are rounded up to the next multiple of the increment;
   the extra length goes half to each side;
2. an outline that is not a rectangle (an L- or T-shaped merged repair) is cut into the
   cells of its own corner coordinates, and every cell is grown outward onto the
   increment's lattice anchored at the rounded outline, so each of its sides is a
   multiple of the increment too and nothing inside is lost;
3. where the rounded outline would cross a joint or the slab edge (leave its panel),
   enter an exclusion or overlap another repair, the extra length is put on the other
   side instead (growth away from the obstacle; all nine placements of the extra,
   centred first, are tried);
4. where no placement fits (an obstacle on both sides), the centred outline is clipped
   at the obstacle(s): that side is then not a multiple of the increment, and the repair
   gets a note saying so.

Repairs are taken one after another, each against the others as they stand, so no two
overlap afterwards; :func:`check_no_overlap` checks it again.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import shapely
from numpy.typing import NDArray
from shapely.geometry import Polygon, box
from shapely.geometry.base import BaseGeometry

from geo_corrosion.errors import RepairError

__all__ = ["Rounded", "check_no_overlap", "default_increment_mm", "format_length",
           "round_up", "round_up_outlines"]

#: Default cutting increment by reporting system, mm (common practice, no source).
_DEFAULT_INCREMENT_MM = {"us": 76.2, "metric": 50.0}  # 3 in exactly; 0.05 m

#: Placement of the extra length on an axis: share put below the low side.
_PLACEMENTS = (0.5, 0.0, 1.0)


def default_increment_mm(units: str) -> float:
    """Return the default cutting increment of a reporting system, mm.

    3 in (76.2 mm) for ``"us"``, 50 mm for ``"metric"`` (common practice, no source).

    Examples
    --------
    >>> default_increment_mm("us"), default_increment_mm("metric")
    (76.2, 50.0)
    """
    try:
        return _DEFAULT_INCREMENT_MM[units]
    except KeyError:
        raise RepairError(f"unknown reporting system {units!r}; use 'us' or 'metric'") from None


def round_up(v: float, inc: float) -> float:
    """Round a length up to a multiple of ``inc`` (a length within 1e-6 of one is kept).

    Examples
    --------
    >>> round_up(2.43, 0.25), round_up(4.41, 0.25), round_up(2.5, 0.25)
    (2.5, 4.5, 2.5)
    """
    if inc <= 0:
        return v
    return math.ceil(v / inc - 1e-6) * inc


def _cells(g: BaseGeometry, tol: float) -> list[tuple[float, float, float, float]]:
    """Return the cells of a rectilinear outline on its own corner coordinates."""
    parts = shapely.get_parts(g)
    xy = np.vstack([np.asarray(r.coords) for p in parts
                    for r in (p.exterior, *p.interiors)])

    def uniq(v: NDArray[np.float64]) -> NDArray[np.float64]:
        u: NDArray[np.float64] = np.unique(v)
        return np.asarray(u[np.concatenate([[True], np.diff(u) > tol])], dtype=np.float64)

    xs, ys = uniq(xy[:, 0]), uniq(xy[:, 1])
    cx, cy = (xs[:-1] + xs[1:]) / 2, (ys[:-1] + ys[1:]) / 2
    gx, gy = np.meshgrid(cx, cy, indexing="ij")
    inside = shapely.contains_xy(g, gx, gy)
    return [(float(xs[i]), float(ys[j]), float(xs[i + 1]), float(ys[j + 1]))
            for i, j in zip(*np.nonzero(inside), strict=True)]


def _snapped(g: BaseGeometry, inc: float, fx: float, fy: float, tol: float) -> BaseGeometry:
    """Return ``g`` rounded up, the extra placed ``fx``/``fy`` below its low sides."""
    x0, y0, x1, y1 = g.bounds
    ox = x0 - fx * (round_up(x1 - x0, inc) - (x1 - x0))
    oy = y0 - fy * (round_up(y1 - y0, inc) - (y1 - y0))
    if abs((x1 - x0) * (y1 - y0) - g.area) <= tol * max(1.0, x1 - x0, y1 - y0):
        cells = [(x0, y0, x1, y1)]
    else:
        cells = _cells(g, tol)

    def lo(v: float, o: float) -> float:
        return o + math.floor((v - o) / inc + 1e-6) * inc

    def hi(v: float, o: float) -> float:
        return o + math.ceil((v - o) / inc - 1e-6) * inc

    boxes = [box(lo(a, ox), lo(b, oy), hi(c, ox), hi(d, oy)) for a, b, c, d in cells]
    return shapely.union_all(boxes).simplify(0) if len(boxes) > 1 else boxes[0]


@dataclass(frozen=True)
class Rounded:
    """One repair outline after rounding.

    Attributes
    ----------
    geom : BaseGeometry
        The rounded outline (saw-cut frame).
    clipped : tuple of str
        The sides (``"left"``, ``"right"``, ``"bottom"``, ``"top"`` on the plan, in the
        saw-cut frame) cut back at an obstacle, with what the obstacle was; empty when
        every side is a multiple of the increment.
    """

    geom: BaseGeometry
    clipped: tuple[str, ...] = ()

    def note(self, increment_text: str) -> str:
        """Return the note shown with the repair ('' when it was rounded throughout)."""
        if not self.clipped:
            return ""
        return (f"not rounded up to {increment_text} on its {', '.join(self.clipped)}: "
                "clipped there")


def _what_blocks(cut: BaseGeometry, panel: Polygon, excl: BaseGeometry,
                 others: BaseGeometry, tiny: float) -> str:
    if cut.difference(panel).area > tiny:
        return "joint or slab edge"
    if not excl.is_empty and cut.intersection(excl).area > tiny:
        return "exclusion"
    if not others.is_empty and cut.intersection(others).area > tiny:
        return "neighbouring repair"
    return "obstacle"


def round_up_outlines(geoms: Sequence[BaseGeometry], panels: Sequence[Polygon], *,
                      increment: float, exclusions: BaseGeometry | None = None,
                      tol: float = 1e-9) -> list[Rounded]:
    """Round repair outlines up to a cutting increment (see the module's rules).

    Parameters
    ----------
    geoms : sequence of shapely geometries
        Rectilinear repair outlines, axis-aligned in the frame of the cuts.
    panels : sequence of Polygon
        The panel (slab part between joints) of each outline; a rounded outline stays
        inside its panel.
    increment : float
        Cutting increment, in the outlines' length unit; 0 leaves them as they are.
    exclusions : geometry, optional
        Areas not repaired; a rounded outline stays out of them.
    tol : float
        Length tolerance of the plan.

    Returns
    -------
    list of Rounded
        One per outline, in order; each holds the outline it replaces.

    Raises
    ------
    RepairError
        If the increment is negative or the counts differ.

    Examples
    --------
    A 2.43 ft x 4.41 ft repair in the open becomes 2.5 ft x 4.5 ft (3 in increments):

    >>> r = round_up_outlines([box(10, 10, 12.43, 14.41)], [box(0, 0, 50, 50)],
    ...                       increment=0.25)
    >>> [round(v, 3) for v in r[0].geom.bounds]
    [9.965, 9.955, 12.465, 14.455]
    """
    if len(geoms) != len(panels):
        raise RepairError(f"{len(geoms)} outlines but {len(panels)} panels")
    if not math.isfinite(increment) or increment < 0:
        raise RepairError(f"rounding increment = {increment!r}; give a length >= 0")
    out = [Rounded(g) for g in geoms]
    if increment <= 0:
        return out
    excl = exclusions if exclusions is not None else Polygon()
    tiny = max(tol, 1e-12) * 1e-3 * max(1.0, increment)
    for i, (g, panel) in enumerate(zip(geoms, panels, strict=True)):
        # only the repairs within reach of the rounding can be in its way
        reach = box(*g.bounds).buffer(increment, join_style="mitre")
        others = shapely.union_all([r.geom for k, r in enumerate(out)
                                    if k != i and r.geom.intersects(reach)])
        allowed = panel.difference(excl) if not excl.is_empty else panel
        if not others.is_empty:
            allowed = allowed.difference(others)
        first = None
        chosen = None
        for fx, fy in [(a, b) for b in _PLACEMENTS for a in _PLACEMENTS]:
            cand = _snapped(g, increment, fx, fy, tol)
            first = first if first is not None else cand
            if cand.difference(allowed).area <= tiny:
                chosen = cand
                break
        if chosen is not None:
            out[i] = Rounded(chosen)
            continue
        assert first is not None
        kept = shapely.union_all([first.intersection(allowed), g])  # never less than before
        if tol > 0:
            # snapping to the precision grid may move an edge clipped at an obstacle by up
            # to half a grid step into it (found at a joint, over the neighbouring repair):
            # clip the snapped outline back to what it may hold, in floating precision (a
            # snapped geometry keeps its grid through later overlays)
            kept = shapely.set_precision(shapely.set_precision(kept, tol * 1e-3).simplify(0), 0)
            kept = kept.intersection(shapely.union_all([allowed, g]))
        fx0, fy0, fx1, fy1 = first.bounds
        kx0, ky0, kx1, ky1 = kept.bounds
        sides = []
        for name, a, b, strip in (
                ("left side", fx0, kx0, box(fx0, fy0, kx0, fy1)),
                ("right side", kx1, fx1, box(kx1, fy0, fx1, fy1)),
                ("bottom side", fy0, ky0, box(fx0, fy0, fx1, ky0)),
                ("top side", ky1, fy1, box(fx0, ky1, fx1, fy1))):
            if b - a > tol * 10:
                sides.append(f"{name} (at a {_what_blocks(strip, panel, excl, others, tiny)})")
        out[i] = Rounded(kept, tuple(sides) or ("outline (at an obstacle)",))
    return out


def check_no_overlap(geoms: Sequence[BaseGeometry], ids: Sequence[str], *, tol: float,
                     what: str) -> None:
    """Raise if two outlines overlap by more than ``tol`` (area).

    Raises
    ------
    RepairError
        Naming the two repairs.
    """
    tree = shapely.STRtree(list(geoms))
    for i, g in enumerate(geoms):
        for j in tree.query(g, predicate="intersects"):
            j = int(j)
            if j > i and g.intersection(geoms[j]).area > tol:
                raise RepairError(f"{what}: repairs {ids[i]} and {ids[j]} overlap after "
                                  "rounding; report this as a bug")


def format_length(v_m: float, units: str) -> str:
    r"""Return a repair side as a contractor writes it: 2'-6" (us) or 0.75 m (metric).

    Inches are shown to the nearest 1/4 in; metres to 0.01 m, or 0.001 m where the side
    is not a whole centimetre (a side clipped at an obstacle).

    Examples
    --------
    >>> format_length(0.762, "us"), format_length(1.3716, "us"), format_length(0.75, "metric")
    ('2\'-6"', '4\'-6"', '0.75 m')
    >>> format_length(0.0254 * 52.25, "us")
    '4\'-4 1/4"'
    """
    if units == "us":
        q = round(v_m / 0.0254 * 4)  # quarter inches
        ft, rest = divmod(q, 48)
        inch, frac = divmod(rest, 4)
        f = {0: "", 1: " 1/4", 2: " 1/2", 3: " 3/4"}[frac]
        return f"{ft}'-{inch}{f}\""
    cm = v_m * 100
    return f"{v_m:.2f} m" if abs(cm - round(cm)) < 1e-6 else f"{v_m:.3f} m"

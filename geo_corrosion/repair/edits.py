"""Repair outlines edited by hand: checked, then put in place of the layout's.

An engineer may move or reshape a repair in a GIS (the run's GeoPackage) or in CAD (the
drawing sheet) and re-price the run (``geo-corrosion reprice``).  :func:`check_edits` refuses
an edit the tender cannot use (not a polygon, a lost or duplicated repair id, outside the
slab, in an exclusion, overlapping another repair) and warns where the edit leaves a sounded
area uncovered or an outline that is not rectilinear; :func:`apply_edits` puts the edited
outlines into the repair frame with their measures recomputed.  Geometry is in the level's
survey grid (plan units).  Every message names the file, the layer and the feature.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import geopandas as gpd
import shapely
from shapely.geometry import Polygon
from shapely.geometry.base import BaseGeometry

from geo_corrosion.errors import RepairError
from geo_corrosion.repair.layout import n_reentrant_corners
from geo_corrosion.units import LENGTH_TO_M

__all__ = ["EditedOutline", "RepairEdit", "apply_edits", "check_edits", "is_rectilinear",
           "EDIT_GRID"]

#: Coordinates of an edited outline are snapped to this grid (plan units) once brought back
#: from the site CRS, so the round trip's floating-point noise is neither an edit nor a
#: slanted side (common practice, no source: far below any cutting increment).
EDIT_GRID = 1e-6


@dataclass(frozen=True)
class EditedOutline:
    """A repair outline as read from an edited file, in the level's survey grid.

    ``where`` names the file, the layer and the feature (``fid 3`` or ``handle 2F``);
    ``repair_id`` is None when the feature has none; ``geometry`` None when it has none.
    """

    where: str
    repair_id: str | None
    geometry: BaseGeometry | None


@dataclass(frozen=True)
class RepairEdit:
    """A repair whose outline was edited: its id and its area before and after, m2 (0: deleted)."""

    repair_id: str
    old_area_m2: float
    new_area_m2: float


def is_rectilinear(geom: BaseGeometry, *, tol_deg: float = 0.5) -> bool:
    """Return whether every side of a polygon runs along a grid axis (within ``tol_deg``)."""
    polys = [geom] if isinstance(geom, Polygon) else list(getattr(geom, "geoms", []))
    for p in polys:
        for ring in [p.exterior, *p.interiors]:
            xy = list(ring.coords)
            for (x0, y0), (x1, y1) in zip(xy, xy[1:], strict=False):
                dx, dy = abs(x1 - x0), abs(y1 - y0)
                if dx == 0 and dy == 0:
                    continue
                ang = math.degrees(math.atan2(min(dx, dy), max(dx, dy)))
                if ang > tol_deg:
                    return False
    return True


def _fix(msg: str) -> str:
    return (f"{msg}; correct it in the file and run `geo-corrosion reprice` again (nothing "
            "was written)")


def check_edits(
    original: gpd.GeoDataFrame,
    edits: Sequence[EditedOutline],
    *,
    slab: BaseGeometry,
    exclusions: Sequence[BaseGeometry] = (),
    soundings: Mapping[str, BaseGeometry] | None = None,
    source: str = "the edited file",
) -> tuple[dict[str, BaseGeometry], list[str]]:
    """Check edited repair outlines against the run's repairs, the slab and each other.

    Parameters
    ----------
    original : GeoDataFrame
        The run's repairs of one level (``repair_id``, ``face``, geometry).
    edits : sequence of EditedOutline
        The outlines read from the edited file (every repair of the level, edited or not).
    slab, exclusions
        The level's slab and exclusion polygons.
    soundings : mapping of str to geometry
        Sounded areas of the top surface by number (``D1``, ``S1``).
    source : str
        The file and layer, for the message about a repair missing from it.

    Returns
    -------
    outlines : dict of str to geometry
        Each repair's outline, by id, snapped to :data:`EDIT_GRID`.
    warnings : list of str
        A deleted repair, a sounded area no repair covers, an outline that is not
        rectilinear.

    Raises
    ------
    RepairError
        Naming the feature: not a polygon, no repair id, an unknown or duplicated id,
        outside the slab, in an exclusion, overlapping another.  A repair of the run with no
        feature at all (every feature keeping a known id) was deleted: it is left out of the
        outlines returned, with a warning.
    """
    known = {str(r) for r in original["repair_id"]}
    faces = dict(zip(original["repair_id"].astype(str), original.get(
        "face", ["top"] * len(original)), strict=True))
    tol = 1e-6 * max(slab.area, 1.0)  # area tolerance, plan units squared
    seen: dict[str, str] = {}
    out: dict[str, BaseGeometry] = {}
    notes: list[str] = []
    for e in edits:
        g = e.geometry
        if g is None or g.is_empty:
            raise RepairError(_fix(f"{e.where}: has no outline; draw the repair as one "
                                   "closed polygon"))
        if g.geom_type == "MultiPolygon" and len(getattr(g, "geoms", [])) == 1:
            g = g.geoms[0]  # type: ignore[attr-defined]
        if not isinstance(g, Polygon):
            raise RepairError(_fix(f"{e.where}: is a {g.geom_type}, not a polygon; a repair is "
                                   "one closed polygon"))
        if not g.is_valid:
            raise RepairError(_fix(f"{e.where}: the outline crosses itself "
                                   f"({shapely.is_valid_reason(g)}); redraw it"))
        rid = (e.repair_id or "").strip()
        if not rid:
            raise RepairError(_fix(f"{e.where}: has no repair_id; give it the id it had "
                                   f"(one of {', '.join(sorted(known - set(seen)))})"))
        if rid not in known:
            raise RepairError(_fix(f"{e.where}: repair_id {rid!r} is not a repair of this run "
                                   f"(expected one of {', '.join(sorted(known))}); a new "
                                   "repair cannot be added by editing, re-run the layout"))
        if rid in seen:
            raise RepairError(_fix(f"{e.where}: repair_id {rid} is also the id of {seen[rid]}; "
                                   "each repair keeps its own id"))
        seen[rid] = e.where
        g = shapely.set_precision(g, EDIT_GRID)
        outside = g.difference(slab).area
        if outside > tol:
            raise RepairError(_fix(f"{e.where}: repair {rid} lies {outside:.3g} plan units² "
                                   "outside the slab; keep it on the deck"))
        for x in exclusions:
            if g.intersection(x).area > tol:
                raise RepairError(_fix(f"{e.where}: repair {rid} enters an exclusion; keep it "
                                       "out of the openings and excluded areas"))
        for other, og in out.items():
            if faces.get(other) == faces.get(rid) and g.intersection(og).area > tol:
                raise RepairError(_fix(f"{e.where}: repair {rid} overlaps repair {other} "
                                       f"({seen[other]}); an area is priced once, so join "
                                       "them or move the shared side"))
        if not is_rectilinear(g):
            notes.append(f"{e.where}: repair {rid} has a side not along the survey grid; "
                         "saw cuts run along the grid, so square the outline if it is to be "
                         "cut as drawn")
        out[rid] = g
    # every feature carries a known id (checked above), so a repair with no feature was
    # deleted on purpose: it leaves the schedule, and its sounded areas are checked below
    for rid in sorted(known - set(out)):
        notes.append(f"{source}: repair {rid} was deleted; it leaves the schedule and the "
                     "documents (restore the feature with its repair_id to keep it)")
    top = shapely.union_all([g for r, g in out.items() if faces.get(r, "top") == "top"])
    for label, s in (soundings or {}).items():
        if s.difference(top).area > tol:
            notes.append(f"{source}: sounded area {label} is not fully covered by a repair "
                         "after the edit; enlarge the repair over it or record why it is "
                         "left")
    return out, notes


def apply_edits(
    repairs: gpd.GeoDataFrame,
    outlines: Mapping[str, BaseGeometry],
    *,
    unit: str,
    slab: BaseGeometry,
    soundings: Mapping[str, BaseGeometry] | None = None,
    changed_tol: float = 10 * EDIT_GRID,
) -> tuple[gpd.GeoDataFrame, list[RepairEdit]]:
    """Put checked outlines in place of the layout's and recompute their measures.

    A repair whose outline moved by no more than ``changed_tol`` (Hausdorff distance,
    plan units) is left exactly as laid out.  An edited one gets its area, saw-cut
    perimeter (the outline less the slab edge), outline length, re-entrant corners, volume
    (area times its removal depth), size along the grid axes, and the sounded areas it now
    holds; its area before rounding is its edited area and the rounding note says it was
    edited.  The tender's columns are not recomputed here.

    Returns
    -------
    repairs : GeoDataFrame
        A new frame; the input is not changed.
    edits : list of RepairEdit
        The edited repairs, with their area before and after, m2 (a deleted repair, one
        with no outline in ``outlines``, after 0 and dropped from the frame).
    """
    f = LENGTH_TO_M[unit]
    out = repairs.copy()
    edits: list[RepairEdit] = []
    edge = slab.boundary.buffer(10 * EDIT_GRID)
    deleted = [i for i, rid in enumerate(out["repair_id"].astype(str)) if rid not in outlines]
    for i in deleted:
        edits.append(RepairEdit(str(out["repair_id"].iloc[i]), float(out["area_m2"].iloc[i]),
                                0.0))
    for i, rid in enumerate(out["repair_id"].astype(str)):
        g = outlines.get(rid)
        old = out.geometry.iloc[i]
        if g is None or g.hausdorff_distance(old) <= changed_tol:
            continue
        area = g.area * f * f
        x0, y0, x1, y1 = g.bounds
        depth = float(out["depth_mm"].iloc[i])
        vals = {"area_m2": area, "perimeter_m": g.boundary.difference(edge).length * f,
                "outline_m": g.boundary.length * f,
                "n_reentrant_corners": n_reentrant_corners(g),
                "volume_m3": area * depth / 1000.0, "size_x_m": (x1 - x0) * f,
                "size_y_m": (y1 - y0) * f, "area_before_rounding_m2": area,
                "rounding_note": "outline edited by hand: not rounded"}
        if soundings is not None:
            vals["sounded"] = ", ".join(lab for lab, s in soundings.items()
                                        if s.intersection(g).area > 0)
        edits.append(RepairEdit(rid, float(out["area_m2"].iloc[i]), area))
        col = out.columns.get_loc
        for k, v in vals.items():
            if k in out.columns:
                out.iloc[i, col(k)] = v
        out.iloc[i, col(out.geometry.name)] = g
    if deleted:
        out = out.drop(index=out.index[deleted])
    return out, edits

"""DXF drawing sheet of one level's repair layout (ezdxf).

Model space holds the plan.  Layers, with names of this project's own: ``GC-SLAB``,
``GC-EXCLUSION``, ``GC-JOINT`` (construction and control joints), ``GC-JOINT-BREAK``
(expansion and isolation joints, which break the mat's continuity; only when a level has
one), ``GC-DELAM`` (sounded delaminations), ``GC-SPALL``
(spalls), ``GC-REPAIR-<DEPTH CLASS>`` (one per depth class, outline and hatch),
``GC-ZONE-<ZONE NAME>`` (one per zone, outlines cleaned of the raster's staircase),
``GC-LABEL`` (repair labels and their leaders), ``GC-SOUNDING-LABEL`` (the numbers of the
sounded areas, D1, S1, ..., as the per-repair schedule lists them), ``GC-COLUMN-GRID``
(column lines and their bubbles, when the plans carry them) and ``GC-STATION`` (stations
and offsets along the survey grid).  Coordinates are the level's local grid in its plan
unit by default, or the site CRS (``[drawings].coords = "site"``); ``$INSUNITS`` says which
unit.

Paper space (layout ``<level> sheet``) holds the sheet of
:mod:`geo_corrosion.exporters.sheet_dxf`: border, title block, a viewport at a standard
scale, north arrow, scale bar, legend, general notes and the repair table.
"""

from __future__ import annotations

import math
import os
import re
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

import geopandas as gpd
import numpy as np
import shapely
from shapely.geometry import LineString, Point, Polygon, box
from shapely.geometry.base import BaseGeometry

from geo_corrosion._io import atomic_write
from geo_corrosion.errors import ExportError
from geo_corrosion.exporters.sheet import (
    DEFAULT_SHEET,
    LINE_SPACING,
    Label,
    Placed,
    Scale,
    choose_scale,
    clean_zones,
    format_length,
    place_labels,
    rectangle_sides,
    sheet_frame,
)
from geo_corrosion.exporters.sheet_dxf import LegendRow, SheetInfo, draw_sheet
from geo_corrosion.repair import polygon_parts
from geo_corrosion.units import LENGTH_TO_M, ReportUnits, report_units

__all__ = ["LAYER_SLAB", "LAYER_EXCLUSION", "LAYER_JOINT", "LAYER_JOINT_BREAK", "LAYER_DELAM",
           "LAYER_TEXT", "LAYER_SPALL", "LAYER_LABEL", "LAYER_SOUNDING_LABEL",
           "LAYER_COLUMN_GRID", "LAYER_STATION",
           "DEPTH_HATCH", "XDATA_APP", "layer_name", "repair_dimensions", "write_level_dxf"]

LAYER_SLAB = "GC-SLAB"
LAYER_EXCLUSION = "GC-EXCLUSION"
LAYER_JOINT = "GC-JOINT"
#: Joints that break the electrical continuity of the mat (expansion, isolation): a layer of
#: their own, added only when a level has one.
LAYER_JOINT_BREAK = "GC-JOINT-BREAK"
LAYER_DELAM = "GC-DELAM"
LAYER_TEXT = "GC-TEXT"
LAYER_SPALL = "GC-SPALL"
#: DXF application name of the XDATA that gives a repair outline its repair id, so that
#: ``geo-corrosion reprice --from`` the sheet can read an outline edited in CAD back.
XDATA_APP = "GEO_CORROSION"
LAYER_LABEL = "GC-LABEL"
#: Numbers of the sounded areas (D1, S1, ...), as the per-repair schedule lists them.
LAYER_SOUNDING_LABEL = "GC-SOUNDING-LABEL"
LAYER_COLUMN_GRID = "GC-COLUMN-GRID"
LAYER_STATION = "GC-STATION"

#: DXF $INSUNITS codes: 6 metres, 2 feet, 21 US survey feet.
_INSUNITS = {"m": 6, "ft": 2, "us-ft": 21}
_COLOURS = {LAYER_SLAB: 7, LAYER_EXCLUSION: 8, LAYER_JOINT: 4, LAYER_DELAM: 1,
            LAYER_SPALL: 6, LAYER_LABEL: 7, LAYER_COLUMN_GRID: 8, LAYER_STATION: 8}
_REPAIR_COLOURS = {"PARTIAL-ABOVE-BARS": 3, "PARTIAL-BELOW-BARS": 5, "FULL-DEPTH": 6}
_ZONE_COLOURS = (30, 50, 140, 170, 200, 230, 9)

#: Hatch pattern and short code of each depth class (our own choice; in the legend).
DEPTH_HATCH: dict[str, tuple[str, str, str]] = {
    "PARTIAL-ABOVE-BARS": ("ANSI31", "PA", "Partial-depth repair, above the bars"),
    "PARTIAL-BELOW-BARS": ("ANSI37", "PB", "Partial-depth repair, below the bars"),
    "FULL-DEPTH": ("NET", "FD", "Full-depth repair"),
}
_OTHER_HATCH = ("DOTS", "R", "Repair, depth class not given")
#: Hatch line spacing on paper, mm.
_HATCH_MM = 2.0


def layer_name(prefix: str, name: str) -> str:
    """Return a DXF-safe layer name.

    Examples
    --------
    >>> layer_name("GC-REPAIR", "full_depth")
    'GC-REPAIR-FULL-DEPTH'
    """
    clean = re.sub(r"[^A-Z0-9]+", "-", str(name).upper()).strip("-") or "UNNAMED"
    return f"{prefix}-{clean}"[:250]


def _rings(geom: BaseGeometry) -> list[list[tuple[float, float]]]:
    out = []
    for p in polygon_parts(geom):
        for ring in (p.exterior, *p.interiors):
            out.append([(float(x), float(y)) for x, y in list(ring.coords)[:-1]])
    return out


def repair_dimensions(row: Any, geom: BaseGeometry, unit: str) -> tuple[float, float, bool]:
    """Return a repair's two sides in its plan unit and whether it is a rectangle.

    Read from the repair's attributes when the layout gives them (``size_x_m`` and
    ``size_y_m``, its overall size along the saw-cut axes, in metres), else computed from its
    outline, longer side first (:func:`~geo_corrosion.exporters.sheet.rectangle_sides`).
    """
    sx, sy = getattr(row, "size_x_m", None), getattr(row, "size_y_m", None)
    is_rect = rectangle_sides(geom)[2]
    try:
        if sx is not None and sy is not None and np.isfinite(sx) and np.isfinite(sy):
            return float(sx) / LENGTH_TO_M[unit], float(sy) / LENGTH_TO_M[unit], is_rect
    except TypeError:
        pass
    return rectangle_sides(geom)


def _attr_text(row: Any, name: str) -> str | None:
    """Return a text attribute of a repair, or None when it has none."""
    v = getattr(row, name, None)
    return v if isinstance(v, str) and v.strip() else None


def _column_lines(column_grid: Sequence[Any]) -> list[tuple[str, LineString]]:
    """Return (label, line) of column-grid items: Features (``label``, ``geometry``) or pairs."""
    out = []
    for i, item in enumerate(column_grid):
        if isinstance(item, tuple):
            label, geom = item
        else:
            label, geom = getattr(item, "label", "") or "", item.geometry
        for part in getattr(geom, "geoms", [geom]):
            if part.geom_type in ("LineString", "LinearRing") and part.length > 0:
                out.append((str(label or f"G{i + 1}"), LineString(part.coords)))
    return out


def _station(x: float, unit: str) -> str:
    """Return a station: 100 ft stations (``1+20``) for feet, 1 km ones (``0+120``) for m."""
    v = int(round(x))
    sign = "-" if v < 0 else ""
    v = abs(v)
    if unit == "m":
        return f"{sign}{v // 1000}+{v % 1000:03d}"
    return f"{sign}{v // 100}+{v % 100:02d}"


def _tick_step(min_len: float) -> float:
    for m in (1, 2, 5, 10, 20, 25, 50, 100, 200, 250, 500, 1000, 2000, 5000):
        if m >= min_len:
            return float(m)
    return 10000.0


def write_level_dxf(path: str | os.PathLike[str], *, slab: Polygon,
                    exclusions: Sequence[BaseGeometry], joints: Sequence[BaseGeometry],
                    repairs: gpd.GeoDataFrame | None, zones: gpd.GeoDataFrame | None,
                    delaminations: Sequence[BaseGeometry], unit: str, title: str,
                    cautions: list[str], units: ReportUnits | None = None,
                    text_height: float | None = None, spalls: Sequence[BaseGeometry] = (),
                    column_grid: Sequence[Any] = (), sheet: SheetInfo | None = None,
                    to_model: Callable[[BaseGeometry], BaseGeometry] | None = None,
                    model_unit: str | None = None,
                    zone_tolerance: float | None = None,
                    breaking_joints: Sequence[BaseGeometry] = (),
                    sounding_numbers: Sequence[str] = (),
                    pdf_path: str | os.PathLike[str] | None = None) -> Path:
    """Write the DXF drawing sheet of one level.

    Parameters
    ----------
    path : path-like
        Output file; written atomically.
    slab, exclusions, joints : geometries
        The level's outline, excluded areas and joint lines (local grid, plan unit); a
        joint may be any lineal geometry (LineString, MultiLineString, LinearRing).
    repairs : GeoDataFrame or None
        Frame of :func:`geo_corrosion.repair.layout_repairs` (local grid).
    zones : GeoDataFrame or None
        Frame of :func:`geo_corrosion.zoning.zone`.
    delaminations : sequence of geometry
        Sounded delaminations.
    unit : {"m", "ft", "us-ft"}
        Plan length unit.
    title : str
        The sheet title (the level's name).
    cautions : list of str
        The general notes of the sheet, numbered.
    units : ReportUnits, optional
        Reporting units (default: metric for "m", US for feet): the family of scales,
        the default sheet and how dimensions are written (feet and inches, or mm).
    text_height : float, optional
        Height of the repair labels in model units (default: 2.5 mm on paper).
    spalls : sequence of geometry
        Spalls, on their own layer.
    column_grid : sequence
        Column-grid lines: Features with ``label`` and ``geometry``, or (label, line) pairs.
    sheet : SheetInfo, optional
        Title block and notes (default: ``title`` as the project and the sheet title).
    to_model : callable, optional
        Maps a local-grid geometry to model space (the site CRS); default: none.
    model_unit : str, optional
        Unit of model space (default: ``unit``); sets ``$INSUNITS``.
    zone_tolerance : float, optional
        Tolerance of the zone outlines' cleaning, plan unit (about a kriging cell); None:
        zone outlines as given.
    breaking_joints : sequence of geometry
        Joint lines that break the mat's electrical continuity (expansion, isolation), drawn
        on :data:`LAYER_JOINT_BREAK`; ``joints`` holds the others.
    sounding_numbers : sequence of str
        The numbers of the sounded areas (D1, ..., then S1, ...), one per delamination then
        one per spall, in their order; placed beside each area on
        :data:`LAYER_SOUNDING_LABEL` after the repair labels (empty: none).
    pdf_path : path-like, optional
        Also render the sheet to this PDF
        (:func:`~geo_corrosion.exporters.sheet_pdf.render_sheet_pdf`), from the document
        just written rather than read back from its file.

    Returns
    -------
    Path

    Raises
    ------
    ExportError
        For an unknown unit, a plan that fits the sheet at no standard scale, or a file
        that cannot be written.
    """
    # ezdxf.new is imported from the module defining it: ezdxf's __init__ re-exports it
    # unmarked, which strict mypy does not accept
    from ezdxf.enums import TextEntityAlignment
    from ezdxf.filemanagement import new as new_drawing

    mu = model_unit or unit
    if unit not in _INSUNITS or mu not in _INSUNITS:
        raise ExportError(f"DXF: plan unit {unit!r} has no DXF unit code; use 'm' or 'ft'")
    if not isinstance(slab, Polygon) or slab.is_empty:
        raise ExportError("DXF: the slab must be a polygon")
    units = units or report_units("metric" if unit == "m" else "us")
    system = units.system

    def T(g: BaseGeometry) -> BaseGeometry:
        return to_model(g) if to_model is not None else g

    info = sheet or SheetInfo(project=title, owner="", engineer="", title=title,
                              notes=tuple(cautions))
    if sheet is not None and not info.notes:
        info = SheetInfo(**{**info.__dict__, "notes": tuple(cautions)})
    frame = sheet_frame(info.sheet or DEFAULT_SHEET[system], where=info.where)
    slab_m = T(slab)
    x0, y0, x1, y1 = slab_m.bounds
    scale: Scale = choose_scale((x0, y0, x1, y1), mu, system, frame,
                                what=f"the plan of {title}", where=info.where)
    f = scale.model_per_mm(mu)          # model units per paper mm
    f_local = scale.model_per_mm(unit)  # local-grid units per paper mm
    h = text_height or 2.5 * f
    doc = new_drawing("R2010", setup=True)
    doc.header["$INSUNITS"] = _INSUNITS[mu]
    doc.header["$MEASUREMENT"] = 1 if mu == "m" else 0
    hatch_base = 3.175 if mu == "m" else 0.125  # line spacing of the ANSI patterns
    msp = doc.modelspace()
    legend: list[LegendRow] = []

    def layer(name: str, colour: int, meaning: str = "", pattern: str | None = None,
              linetype: str = "Continuous") -> str:
        if name not in doc.layers:
            doc.layers.add(name, color=colour, linetype=linetype)
            if meaning:
                legend.append(LegendRow(name, colour, meaning, pattern))
        return name

    def outline(geom: BaseGeometry, lay: str, repair_id: str | None = None) -> None:
        for i, ring in enumerate(_rings(T(geom))):
            if len(ring) >= 2:
                pl = msp.add_lwpolyline(ring, close=True, dxfattribs={"layer": lay})
                if repair_id is not None and i == 0:  # read back by `reprice` (#13)
                    if XDATA_APP not in doc.appids:
                        doc.appids.new(XDATA_APP)
                    pl.set_xdata(XDATA_APP, [(1000, repair_id)])

    def text(s: str, x: float, y: float, lay: str, height: float,
             align: TextEntityAlignment = TextEntityAlignment.LEFT) -> None:
        msp.add_text(s, height=height, dxfattribs={"layer": lay}).set_placement(
            (x, y), align=align)

    layer(LAYER_SLAB, 7, "Slab outline")
    layer(LAYER_EXCLUSION, 8, "Exclusion (column, opening, not surveyed)")
    layer(LAYER_JOINT, 4, "Joint", linetype="DASHED")
    layer(LAYER_DELAM, 1, "Delamination (sounding)")
    if spalls:
        layer(LAYER_SPALL, 6, "Spall (sounding)")
    # zones first, so that the slab's and the repairs' own lines are drawn over their edges
    zone_shapes: list[BaseGeometry] = []
    deck = slab.difference(shapely.union_all(list(exclusions))) if exclusions else slab
    if zones is not None and len(zones):
        names = [str(getattr(z, "zone", f"Z{k}")) for k, z in
                 enumerate(zones.itertuples(index=False))]
        geoms = list(zones.geometry)
        if zone_tolerance:  # the repair zone is priced as drawn: kept exact
            geoms = clean_zones(geoms, zone_tolerance, deck,
                                exact=[n == "repair" for n in names])
        for k, (zname, geom) in enumerate(zip(names, geoms, strict=True)):
            lay = layer(layer_name("GC-ZONE", zname), _ZONE_COLOURS[k % len(_ZONE_COLOURS)],
                        f"Zone: {zname.replace('_', ' ')}")
            outline(geom, lay)
            zone_shapes.append(T(geom))
    outline(slab, LAYER_SLAB)
    for e in exclusions:
        outline(e, LAYER_EXCLUSION)
    if any(j is not None and not j.is_empty for j in breaking_joints):
        layer(LAYER_JOINT_BREAK, 6, "Joint breaking continuity (expansion, isolation)",
              linetype="DASHED")
    for lay, lines in ((LAYER_JOINT, joints), (LAYER_JOINT_BREAK, breaking_joints)):
        for j in lines:
            if j is not None and not j.is_empty:
                for part in getattr(T(j), "geoms", [T(j)]):
                    msp.add_lwpolyline([(float(x), float(y)) for x, y in part.coords],
                                       dxfattribs={"layer": lay})
    for d in delaminations:
        outline(d, LAYER_DELAM)
    for s in spalls:
        outline(s, LAYER_SPALL)
    repair_shapes: list[BaseGeometry] = []
    labels: list[Label] = []
    rows: list[list[str]] = []
    if repairs is not None and len(repairs):
        from geo_corrosion.quantities import DEPTH_CLASS_ITEMS

        for r in repairs.itertuples(index=False):
            cls = str(getattr(r, "depth_class", "") or "unclassified")
            lay = layer_name("GC-REPAIR", cls)
            pattern, code, meaning = DEPTH_HATCH.get(lay.removeprefix("GC-REPAIR-"),
                                                     _OTHER_HATCH)
            layer(lay, _REPAIR_COLOURS.get(lay.removeprefix("GC-REPAIR-"), 2),
                  f"{meaning} ({code})", pattern)
            outline(r.geometry, lay, str(r.repair_id))
            gm = T(r.geometry)
            repair_shapes.append(gm)
            hatch = msp.add_hatch(color=256, dxfattribs={"layer": lay})
            hatch.set_pattern_fill(pattern, color=256, scale=_HATCH_MM * f / hatch_base)
            for ring_no, ring in enumerate(_rings(gm)):
                hatch.paths.add_polyline_path(ring, is_closed=True, flags=1 if ring_no == 0
                                              else 0)
            a, b, is_rect = repair_dimensions(r, r.geometry, unit)
            dims = _attr_text(r, "dimensions") or (
                f"{format_length(a, unit, system)} x {format_length(b, unit, system)}")
            if not is_rect:
                dims += " max"
            labels.append(Label(str(r.repair_id), gm, (f"{r.repair_id} {code}", dims)))
            area = float(units.area_from_m2(float(r.area_m2)))
            item = str(getattr(r, "bid_item", "") or DEPTH_CLASS_ITEMS.get(cls, ""))
            lx, ly = r.geometry.bounds[:2]
            where = _attr_text(r, "location") or (
                f"{lx:.1f}, {ly:.1f}" if unit != "m" else f"{lx:.2f}, {ly:.2f}")
            rows.append([str(r.repair_id), dims, f"{area:.1f}", code, item, where])

    hard: list[BaseGeometry] = [*repair_shapes, *(T(d) for d in delaminations),
                                *(T(s) for s in spalls)]
    soft: list[BaseGeometry] = [slab_m, *(T(e) for e in exclusions),
                                *(T(j) for j in joints if j is not None), *zone_shapes]

    # column grid: lines and bubbles at both ends, beyond the slab
    grid_lines = _column_lines(column_grid)
    if grid_lines:
        layer(LAYER_COLUMN_GRID, 8, "Column grid", linetype="CENTER")
        rad = 4.0 * f
        for label, line in grid_lines:
            lm = T(line)
            msp.add_lwpolyline(list(lm.coords), dxfattribs={"layer": LAYER_COLUMN_GRID})
            soft.append(lm)
            (ax, ay), (bx, by) = lm.coords[0], lm.coords[-1]
            ln = math.hypot(bx - ax, by - ay)
            ux, uy = (bx - ax) / ln, (by - ay) / ln
            for (px, py), sgn in (((ax, ay), -1), ((bx, by), 1)):
                c = (px + sgn * ux * rad, py + sgn * uy * rad)
                msp.add_circle(c, rad, dxfattribs={"layer": LAYER_COLUMN_GRID})
                text(label, c[0], c[1], LAYER_COLUMN_GRID, 3.0 * f,
                     TextEntityAlignment.MIDDLE_CENTER)
                hard.append(Point(c).buffer(rad))

    # without a column grid: stations along grid x (bottom edge), offsets along y (left)
    lx0, ly0, lx1, ly1 = slab.bounds
    step = _tick_step(20.0 * f_local)
    th = 2.2 * f
    if not grid_lines:
        layer(LAYER_STATION, 8, "Stations and offsets, survey grid")
    for xv in [] if grid_lines else np.arange(math.ceil(lx0 / step) * step, lx1 + 1e-9, step):
        tick = T(LineString([(xv, ly0), (xv, ly0 - 1.5 * f_local)]))
        msp.add_lwpolyline(list(tick.coords), dxfattribs={"layer": LAYER_STATION})
        px, py = _xy(T(Point(xv, ly0 - 2.5 * f_local)))
        st = _station(float(xv), unit)
        text(st, px, py, LAYER_STATION, th, TextEntityAlignment.TOP_CENTER)
        hard.append(box(px - len(st) * 0.45 * th, py - th, px + len(st) * 0.45 * th, py))
    for yv in [] if grid_lines else np.arange(math.ceil(ly0 / step) * step, ly1 + 1e-9, step):
        tick = T(LineString([(lx0, yv), (lx0 - 1.5 * f_local, yv)]))
        msp.add_lwpolyline(list(tick.coords), dxfattribs={"layer": LAYER_STATION})
        if abs(yv - ly0) < 1e-9:
            continue  # the corner: its station says it
        px, py = _xy(T(Point(lx0 - 2.5 * f_local, yv)))
        st = f"{yv:g}"
        text(st, px, py, LAYER_STATION, th, TextEntityAlignment.MIDDLE_RIGHT)
        hard.append(box(px - len(st) * 0.9 * th, py - th / 2, px, py + th / 2))

    # the viewport's extent in model units, and the labels placed inside it
    dx0, dy0, dx1, dy1 = frame.drawing
    cxm, cym = (x0 + x1) / 2, (y0 + y1) / 2
    half_w, half_h = (dx1 - dx0) / 2 * f, (dy1 - dy0) / 2 * f
    within = box(cxm - half_w + 2 * f, cym - half_h + 2 * f, cxm + half_w - 2 * f,
                 cym + half_h - 2 * f)
    if labels:
        layer(LAYER_LABEL, 7, "Repair label: id, depth class, sides")
        for pl in place_labels(labels, h=h, hard=hard, soft=soft, within=within):
            _draw_label(msp, pl, h)
            hard.append(pl.box)
            if pl.leader is not None:
                hard.append(pl.leader)
    sounded = [*delaminations, *spalls]
    if sounding_numbers and len(sounding_numbers) != len(sounded):
        raise ExportError(f"DXF: {len(sounding_numbers)} sounding numbers for "
                          f"{len(sounded)} sounded areas")
    if sounding_numbers:
        # smaller than the repair labels, placed after them so that they never take a
        # repair label's place
        sh = 0.8 * h
        layer(LAYER_SOUNDING_LABEL, 1, "Sounded area number (D delamination, S spall)")
        slabels = [Label(n, T(g), (n,)) for n, g in zip(sounding_numbers, sounded, strict=True)]
        for pl in place_labels(slabels, h=sh, hard=hard, soft=soft, within=within):
            _draw_label(msp, pl, sh, LAYER_SOUNDING_LABEL)

    unit_name = {"m": "m", "ft": "ft", "us-ft": "US survey ft"}[unit]
    coords = ("Coordinates: site CRS" if to_model is not None else
              f"Coordinates: survey grid, {unit_name}")
    refs = ("Column grid as on the plans" if grid_lines else
            f"Stations along grid x, offsets along grid y ({unit_name})")
    info = SheetInfo(**{**info.__dict__, "coords_note": info.coords_note or (
        f"{coords}. {refs}. Repair corners in the survey grid ({unit_name}). Sides of "
        f"repairs in {'feet and inches' if system == 'us' else 'mm'}.")})
    located = repairs is not None and "location" in repairs.columns
    header = ["REPAIR", "SIDES", f"AREA {units.area}", "CLASS", "BID ITEM",
              "LOCATION" if located else f"CORNER X, Y ({unit_name})"]
    widths = [24.0, 48.0, 20.0, 14.0, 30.0, 44.0]
    paper: Any = doc.layouts.get("Layout1")
    name = f"{title[:60]} sheet".replace("/", "-")
    doc.layouts.rename("Layout1", re.sub(r"[<>/\\\":;?*|=`]", "-", name))
    paper.page_setup(size=(frame.width, frame.height), margins=(0, 0, 0, 0), units="mm")
    draw_sheet(paper, frame, scale, info, view=(x0, y0, x1, y1), model_unit=mu,
               system=system, legend=legend, header=header, rows=rows, widths=widths)

    def save(tmp: Any) -> None:
        doc.saveas(tmp)

    out = atomic_write(Path(path), save)
    if pdf_path is not None:
        from geo_corrosion.exporters.sheet_pdf import render_sheet_pdf

        render_sheet_pdf(doc, pdf_path)
    return out


def _xy(p: BaseGeometry) -> tuple[float, float]:
    """Return the coordinates of a point geometry."""
    x, y = p.coords[0][:2]
    return float(x), float(y)


def _draw_label(msp: Any, pl: Placed, h: float, lay: str = LAYER_LABEL) -> None:
    """Draw a placed label: its lines, left aligned, and its leader."""
    from ezdxf.enums import TextEntityAlignment

    for i, s in enumerate(pl.lines):
        msp.add_text(s, height=h, dxfattribs={"layer": lay}).set_placement(
            (pl.x, pl.y - i * LINE_SPACING * h), align=TextEntityAlignment.LEFT)
    if pl.leader is not None:
        msp.add_lwpolyline(list(pl.leader.coords), dxfattribs={"layer": lay})

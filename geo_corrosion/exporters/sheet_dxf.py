"""The paper space of a drawing sheet in ezdxf: border, title block, viewport, notes, tables.

The title block and the arrangement of the sheet are this project's own design (see
:mod:`geo_corrosion.exporters.sheet` for where things go).  Everything is drawn with lines,
closed polylines, hatches, circles and single-line TEXT on the ``GC-SHEET*`` layers, in
millimetres, so that :mod:`geo_corrosion.exporters.sheet_pdf` can render the same entities.
"""

from __future__ import annotations

import math
import textwrap
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

from geo_corrosion.exporters.sheet import CHAR_WIDTH, Scale, SheetFrame

__all__ = ["LAYER_SHEET", "LAYER_SHEET_TEXT", "LAYER_VIEWPORT", "LegendRow", "SheetInfo",
           "draw_sheet"]

LAYER_SHEET = "GC-SHEET"
LAYER_SHEET_TEXT = "GC-SHEET-TEXT"
LAYER_VIEWPORT = "GC-VIEWPORT"


@dataclass(frozen=True)
class LegendRow:
    """One row of the legend: a layer, how it is drawn and what it means."""

    layer: str
    colour: int
    meaning: str
    pattern: str | None = None  # a hatch pattern; None: a line sample


@dataclass(frozen=True)
class SheetInfo:
    """What the title block and notes say.

    Attributes
    ----------
    project, owner, engineer : str
    title : str
        Sheet title (the level's name, once).
    number : str
        Sheet number, such as ``R-1``; ``of`` says how many sheets.
    date : str
        ISO date of issue.
    sheet : str
        Sheet name (``ANSI-D``, ``ISO-A1``); empty: the default of the reporting system.
    north_deg : float
        Direction of the site CRS's grid north on the sheet, degrees counter-clockwise
        from the sheet's x axis.
    notes : tuple of str
        General notes, numbered in order (the cautions first).
    revisions : tuple of (rev, date, description)
    coords_note : str
        What the model coordinates are.
    where : str
        The site-file key that chose the sheet, for messages (``site.toml: [drawings].sheet``).
    """

    project: str
    owner: str
    engineer: str
    title: str
    number: str = "R-1"
    of: int = 1
    date: str = ""
    sheet: str = ""
    north_deg: float = 90.0
    notes: tuple[str, ...] = ()
    revisions: tuple[tuple[str, str, str], ...] = ()
    coords_note: str = ""
    where: str = "[drawings].sheet"


_CAP = 1.8    # caption height, mm
_TEXT = 2.2   # notes and tables, mm
_VALUE = 3.5  # title block values, mm


def _fit(text: str, width: float, h: float) -> tuple[str, float]:
    """Return text and a height at which it fits a width (shrunk to 60 %, then cut)."""
    need = len(text) * CHAR_WIDTH * h
    if need <= width:
        return text, h
    h2 = max(0.6 * h, width / max(len(text), 1) / CHAR_WIDTH)
    n = int(width / (CHAR_WIDTH * h2))
    return (text if len(text) <= n else text[: max(n - 1, 1)] + "~"), h2


def draw_sheet(layout: Any, frame: SheetFrame, scale: Scale, info: SheetInfo, *,
               view: tuple[float, float, float, float], model_unit: str, system: str,
               legend: Sequence[LegendRow], header: Sequence[str],
               rows: Sequence[Sequence[str]], widths: Sequence[float]) -> dict[str, Any]:
    """Draw the sheet into a paper-space layout (mm) and return where things went.

    Parameters
    ----------
    layout : ezdxf Paperspace
    frame : SheetFrame
    scale : Scale
    info : SheetInfo
    view : (x0, y0, x1, y1)
        Model extent to centre in the viewport, in ``model_unit``.
    legend : sequence of LegendRow
    header, rows, widths
        The repair table: column titles, rows of text, column widths in mm.

    Returns
    -------
    dict
        ``viewport`` (the entity), ``table_rows`` (how many rows were drawn).
    """
    from ezdxf.enums import TextEntityAlignment as A

    doc = layout.doc
    for name, colour in ((LAYER_SHEET, 7), (LAYER_SHEET_TEXT, 7), (LAYER_VIEWPORT, 8)):
        if name not in doc.layers:
            doc.layers.add(name, color=colour)
    if LAYER_VIEWPORT in doc.layers:
        doc.layers.get(LAYER_VIEWPORT).dxf.plot = 0

    def rect(x0: float, y0: float, x1: float, y1: float, layer: str = LAYER_SHEET,
             lw: int = 25) -> None:
        layout.add_lwpolyline([(x0, y0), (x1, y0), (x1, y1), (x0, y1)], close=True,
                              dxfattribs={"layer": layer, "lineweight": lw})

    def line(x0: float, y0: float, x1: float, y1: float, lw: int = 18) -> None:
        layout.add_line((x0, y0), (x1, y1), dxfattribs={"layer": LAYER_SHEET, "lineweight": lw})

    def text(s: str, x: float, y: float, h: float, align: A = A.LEFT,
             width: float | None = None) -> None:
        if width is not None:
            s, h = _fit(s, width, h)
        layout.add_text(s, height=h, dxfattribs={"layer": LAYER_SHEET_TEXT}).set_placement(
            (x, y), align=align)

    # border and the column
    rect(*frame.border, lw=70)
    cx0, cy0, cx1, cy1 = frame.column
    line(cx0, cy0, cx0, cy1, lw=50)
    pad = 2.5
    inner = cx1 - cx0 - 2 * pad

    # the viewport
    dx0, dy0, dx1, dy1 = frame.drawing
    f = scale.model_per_mm(model_unit)
    vx0, vy0, vx1, vy1 = view
    vp = layout.add_viewport(center=((dx0 + dx1) / 2, (dy0 + dy1) / 2),
                             size=(dx1 - dx0, dy1 - dy0),
                             view_center_point=((vx0 + vx1) / 2, (vy0 + vy1) / 2),
                             view_height=(dy1 - dy0) * f, dxfattribs={"layer": LAYER_VIEWPORT})
    vp.dxf.status = 2

    # title block, from the bottom
    y = cy0
    cell_h = 11.0
    # bottom row: sheet number | scale | date
    third = (cx1 - cx0) / 3
    rect(cx0, y, cx1, y + 16.0)
    line(cx0 + third, y, cx0 + third, y + 16.0)
    line(cx0 + 2 * third, y, cx0 + 2 * third, y + 16.0)
    for i, (cap, val, hv) in enumerate((("SHEET", f"{info.number}", 7.0),
                                        ("SCALE", scale.label, _VALUE),
                                        ("DATE", info.date, _VALUE))):
        text(cap, cx0 + i * third + pad, y + 16.0 - pad - _CAP, _CAP)
        text(val, cx0 + i * third + pad, y + pad + 1.0, hv, width=third - 2 * pad)
    text(f"{info.of} SHEET{'S' if info.of != 1 else ''}" if info.of else "",
         cx0 + third - pad, y + 16.0 - pad - _CAP, _CAP, A.RIGHT)
    y += 16.0
    for cap, val in (("SHEET TITLE", info.title), ("DRAWING", "REPAIR PLAN"),
                     ("ENGINEER", info.engineer), ("OWNER", info.owner),
                     ("PROJECT", info.project)):
        rect(cx0, y, cx1, y + cell_h)
        text(cap, cx0 + pad, y + cell_h - pad - _CAP, _CAP)
        text(val, cx0 + pad, y + pad, _VALUE, width=inner)
        y += cell_h
    text("CORROSION CONDITION SURVEY - REPAIR DRAWINGS", cx0 + pad, y + 2.0, _CAP)
    y += 6.0
    line(cx0, y, cx1, y, lw=50)

    # revision table
    rev_rows = list(info.revisions) + [("", "", "")] * max(0, 3 - len(info.revisions))
    rw = (14.0, 28.0, cx1 - cx0 - 14.0 - 28.0)
    rh = 5.0
    rev_table: list[tuple[str, str, str]] = [("REV", "DATE", "DESCRIPTION"), *rev_rows]
    for r in reversed(rev_table):
        rect(cx0, y, cx1, y + rh)
        x = cx0
        for w, s in zip(rw, r, strict=True):
            text(s, x + 1.5, y + 1.5, _TEXT if s != "REV" else _TEXT, width=w - 3.0)
            x += w
            if x < cx1:
                line(x, y, x, y + rh)
        y += rh
    text("REVISIONS", cx0 + pad, y + 2.0, _CAP)
    y += 6.0
    line(cx0, y, cx1, y, lw=50)

    # north arrow and scale bar
    block = 34.0
    ncx, ncy, rad = cx0 + 18.0, y + block / 2, 11.0
    layout.add_circle((ncx, ncy), rad, dxfattribs={"layer": LAYER_SHEET, "lineweight": 25})
    a = math.radians(info.north_deg)
    ux, uy = math.cos(a), math.sin(a)
    px, py = -uy, ux
    tip = (ncx + ux * rad, ncy + uy * rad)
    tail = (ncx - ux * rad * 0.6, ncy - uy * rad * 0.6)
    left = (tail[0] + px * rad * 0.35, tail[1] + py * rad * 0.35)
    right = (tail[0] - px * rad * 0.35, tail[1] - py * rad * 0.35)
    hatch = layout.add_hatch(color=7, dxfattribs={"layer": LAYER_SHEET})
    hatch.paths.add_polyline_path([tip, (ncx, ncy), left], is_closed=True)
    layout.add_lwpolyline([tip, left, (ncx, ncy), right], close=True,
                          dxfattribs={"layer": LAYER_SHEET, "lineweight": 25})
    text("N", ncx + ux * (rad + 4.0), ncy + uy * (rad + 4.0), 4.0, A.MIDDLE_CENTER)
    text("GRID NORTH", ncx, y + 1.0, _CAP, A.BOTTOM_CENTER)
    # scale bar in the reporting system's unit: four divisions of a round length
    bar_unit = "ft" if system == "us" else "m"
    fb = scale.model_per_mm(bar_unit)
    bx0 = cx0 + 45.0
    avail = cx1 - pad - 12.0 - bx0
    step = _bar_step(avail / 4 * fb)
    seg = step / fb
    by = y + block / 2 - 2.0
    for i in range(4):
        xs = bx0 + i * seg
        rect(xs, by, xs + seg, by + 3.0)
        if i % 2 == 0:
            h2 = layout.add_hatch(color=7, dxfattribs={"layer": LAYER_SHEET})
            h2.paths.add_polyline_path([(xs, by), (xs + seg, by), (xs + seg, by + 3.0),
                                        (xs, by + 3.0)], is_closed=True)
    for i in range(5):
        text(f"{i * step:g}", bx0 + i * seg, by - 1.5 - _TEXT, _TEXT, A.LEFT if i == 0 else
             A.CENTER if i < 4 else A.RIGHT)
    text(bar_unit, bx0 + 4 * seg + 2.0, by, _TEXT)
    text(f"SCALE {scale.label}", bx0, by + 7.0, _VALUE)
    y += block
    line(cx0, y, cx1, y, lw=50)

    # legend
    lh = 6.0
    text("LEGEND", cx0 + pad, y + 2.0 + lh * len(legend) + 1.0, _VALUE)
    for i, row in enumerate(reversed(list(legend))):
        ry = y + 2.0 + i * lh
        sx0, sx1 = cx0 + pad, cx0 + pad + 16.0
        if row.pattern:
            layout.add_lwpolyline([(sx0, ry), (sx1, ry), (sx1, ry + 4.0), (sx0, ry + 4.0)],
                                  close=True, dxfattribs={"layer": row.layer})
            hh = layout.add_hatch(color=256, dxfattribs={"layer": row.layer})
            if row.pattern == "SOLID":
                hh.set_solid_fill(color=256)
            else:
                hh.set_pattern_fill(row.pattern, color=256, scale=0.6 / 0.125 if
                                    doc.header.get("$MEASUREMENT", 0) == 0 else 0.6 / 3.175)
            hh.paths.add_polyline_path([(sx0, ry), (sx1, ry), (sx1, ry + 4.0), (sx0, ry + 4.0)],
                                       is_closed=True)
        else:
            layout.add_line((sx0, ry + 2.0), (sx1, ry + 2.0), dxfattribs={"layer": row.layer})
        text(f"{row.meaning} ({row.layer})", sx1 + 3.0, ry + 1.0, _TEXT,
             width=cx1 - sx1 - 3.0 - pad)
    y += lh * len(legend) + 9.0
    line(cx0, y, cx1, y, lw=50)

    # general notes
    chars = int(inner / (CHAR_WIDTH * _TEXT))
    note_lines: list[str] = []
    for i, n in enumerate(info.notes, 1):
        wrapped = textwrap.wrap(n, chars - 4) or [""]
        note_lines += [f"{i}. {wrapped[0]}"] + [f"   {w}" for w in wrapped[1:]]
    nh = _TEXT * 1.55
    top_notes = y + 2.0 + nh * len(note_lines)
    for i, s in enumerate(reversed(note_lines)):
        text(s, cx0 + pad, y + 2.0 + i * nh, _TEXT)
    text("GENERAL NOTES", cx0 + pad, top_notes + 1.0, _VALUE)
    y = top_notes + 7.0
    line(cx0, y, cx1, y, lw=50)

    # the repair table, from the top down
    th = 4.2
    ty = cy1 - pad - _VALUE
    text("REPAIR TABLE", cx0 + pad, ty, _VALUE)
    ty -= 3.0
    room = int((ty - y - 2.0) // th) - 1  # rows that fit under the header
    shown = list(rows)
    more = 0
    if len(shown) > room:
        more = len(shown) - max(room - 1, 0)
        shown = shown[: max(room - 1, 0)]
    drawn = 0
    for cells in [header, *shown]:
        if ty - th < y:
            break
        rect(cx0 + pad, ty - th, cx1 - pad, ty, lw=13)
        x = cx0 + pad
        for w, s in zip(widths, cells, strict=True):
            text(s, x + 1.0, ty - th + 1.0, _TEXT, width=w - 2.0)
            x += w
        ty -= th
        drawn += 1
    if more:
        text(f"{more} more repairs: see quantities.xlsx (sheet of repairs)", cx0 + pad,
             ty - th + 1.0, _TEXT)
    # coordinates note under the viewport's frame, inside the border
    if info.coords_note:
        text(info.coords_note, dx0, frame.border[1] + 1.5, _TEXT, width=dx1 - dx0)
    return {"viewport": vp, "table_rows": drawn - 1, "table_more": more}


def _bar_step(model_len: float) -> float:
    """Return a round length (1, 2, 2.5 or 5 times a power of ten) at most ``model_len``."""
    if model_len <= 0:
        return 1.0
    p = 10 ** math.floor(math.log10(model_len))
    for m in (5.0, 2.5, 2.0, 1.0):
        if m * p <= model_len:
            return float(m * p)
    return float(p)

"""XLSX workbook of the bid schedule (openpyxl).

Sheet ``Schedule``: one row per level and bid item with base, contingency and
total quantities, the totals of all levels in bold, and the cautions below.  One
sheet per level lists every repair; its headers carry the units, e.g.
``Area (ft2)``.

The workbook writes no formulas of its own: every text cell is stored as text
(openpyxl data type ``'s'``), and a text that a spreadsheet would read as a
formula gets a leading ``'`` (:func:`geo_corrosion._io.safe_cell`).
"""

from __future__ import annotations

import os
import re
from pathlib import Path
from typing import Any

import pandas as pd

from geo_corrosion._io import atomic_write, safe_cell
from geo_corrosion.quantities import ALL_LEVELS, schedule_table
from geo_corrosion.units import ReportUnits

__all__ = ["SCHEDULE_SHEET", "column_header", "write_schedule_xlsx"]

SCHEDULE_SHEET = "Schedule"

_UNIT_SUFFIXES = ("m2", "m3", "mm", "m", "ft2", "ft3", "ft", "LF", "in", "EA", "deg", "kg", "lb")
_WORDS = {"repair_id": "Repair", "level_id": "Level", "source_ids": "Sources", "from": "Sources",
          "depth_class": "Depth class", "n_reentrant_corners": "Re-entrant corners",
          "saw_cut": "Saw cut", "perimeter": "Saw cut", "outline": "Outline"}


def column_header(name: str) -> str:
    """Return a readable header with the unit in parentheses.

    Examples
    --------
    >>> column_header("area_ft2")
    'Area (ft2)'
    """
    if name in _WORDS:
        return _WORDS[name]
    stem, _, suffix = str(name).rpartition("_")
    if stem and suffix in _UNIT_SUFFIXES:
        return f"{_WORDS.get(stem, stem.replace('_', ' ').capitalize())} ({suffix})"
    return str(name).replace("_", " ").capitalize()


def _sheet_name(name: str, used: set[str]) -> str:
    base = re.sub(r"[\[\]:*?/\\']", "_", str(name)).strip() or "Level"
    base = base[:28]
    cand, n = base, 2
    while cand.lower() in used:
        cand = f"{base[:25]}-{n}"
        n += 1
    used.add(cand.lower())
    return cand


def _cell(v: Any) -> Any:
    if v is None or (isinstance(v, float) and pd.isna(v)):
        return None
    if hasattr(v, "item"):
        return v.item()
    return v


def _text_as_text(wb: Any) -> None:
    """Store every text cell of ``wb`` as text, never as a formula (OWASP CSV injection).

    openpyxl stores a string starting with ``=`` as a formula; the workbook has no
    formulas of its own, so each text goes through :func:`safe_cell` and is marked
    as a string (data type ``'s'``).
    """
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for c in row:
                if isinstance(c.value, str):
                    c.value = safe_cell(c.value)
                    c.data_type = "s"


def _widths(ws: Any, first_row: int, last_row: int) -> None:
    from openpyxl.utils import get_column_letter

    for col in range(1, ws.max_column + 1):
        best = 8
        for row in range(first_row, last_row + 1):
            v = ws.cell(row=row, column=col).value
            if v is not None:
                best = max(best, len(f"{v:.2f}" if isinstance(v, float) else str(v)) + 2)
        ws.column_dimensions[get_column_letter(col)].width = min(best, 60)


def write_schedule_xlsx(path: str | os.PathLike[str], schedule: pd.DataFrame,
                        repairs_by_level: dict[str, pd.DataFrame], *, units: ReportUnits,
                        cautions: list[str], title: str) -> Path:
    """Write the schedule workbook atomically.

    Parameters
    ----------
    path : path-like
    schedule : DataFrame
        From :func:`geo_corrosion.quantities.bid_schedule`.
    repairs_by_level : dict of str to DataFrame
        Every repair of each level, columns named with their unit suffix
        (``area_ft2``, ``saw_cut_LF``); a ``geometry`` column is dropped.
    units : ReportUnits
    cautions : list of str
    title : str

    Returns
    -------
    Path

    Raises
    ------
    ExportError
        If the file cannot be written; nothing is left half-written.
    """
    from openpyxl import Workbook
    from openpyxl.styles import Alignment, Font

    bold = Font(bold=True)
    wb = Workbook()
    ws = wb.active
    ws.title = SCHEDULE_SHEET
    ws.append([title])
    ws["A1"].font = Font(bold=True, size=14)
    ws.append([f"Reporting units: {units.area}, {units.length}, {units.volume}; EA = each, "
               "LS = lump sum. Quantities are estimates for bidding."])
    ws.append([])
    header = ["Level", "Item", "Description", "Unit", "Base quantity", "Contingency",
              "Total quantity"]
    ws.append(header)
    hrow = ws.max_row
    for c in ws[hrow]:
        c.font = bold
    ws.freeze_panes = ws.cell(row=hrow + 1, column=1)
    table = schedule_table(schedule)
    for r in table.itertuples(index=False):
        ws.append([_cell(v) for v in r])
        fmt = "0" if r.unit in ("EA", "LS") else "#,##0.00"
        for c in ws[ws.max_row][4:7]:
            c.number_format = fmt
        if r.level_id == ALL_LEVELS:
            for c in ws[ws.max_row]:
                c.font = bold
    last = ws.max_row
    if table.empty:
        ws.append(["No repairs or priced zones."])
    ws.append([])
    ws.append(["Cautions"])
    ws.cell(row=ws.max_row, column=1).font = bold
    for i, text in enumerate(cautions, 1):
        ws.append([f"{i}. {text}"])
        row = ws.max_row
        ws.merge_cells(start_row=row, start_column=1, end_row=row, end_column=len(header))
        ws.cell(row=row, column=1).alignment = Alignment(wrap_text=True, vertical="top")
        ws.row_dimensions[row].height = 15 * (1 + len(text) // 110)
    _widths(ws, hrow, max(last, hrow))

    used = {SCHEDULE_SHEET.lower()}
    for lid, frame in repairs_by_level.items():
        wl = wb.create_sheet(_sheet_name(str(lid), used))
        wl.append([f"{title}: repairs of level {lid}"])
        wl["A1"].font = Font(bold=True, size=12)
        f = frame.drop(columns=[c for c in ("geometry",) if c in frame.columns])
        wl.append([column_header(c) for c in f.columns])
        for c in wl[2]:
            c.font = bold
        wl.freeze_panes = "A3"
        for rec in f.itertuples(index=False):
            wl.append([_cell(v) for v in rec])
        if f.empty:
            wl.append(["No repairs on this level."])
        wl.append([])
        wl.append([f"See the cautions on the {SCHEDULE_SHEET} sheet."])
        _widths(wl, 2, max(2, 2 + len(f)))
    _text_as_text(wb)
    return atomic_write(Path(path), lambda tmp: wb.save(tmp))

"""XLSX workbook of the bid schedule (openpyxl).

Sheet ``Schedule``: one row per level and bid item with base, contingency and total
quantities (the bid quantities, rounded up as :mod:`geo_corrosion.quantities` says), the
totals of all levels in bold, and the cautions below.  With a price list it is the
engineer's estimate too: unit price, amount and contingency amount per item, then per level
a subtotal, the contingency on its own line and the level's total, and the same for all
levels.  One sheet per level lists every repair, generic over the columns it is given; its
headers carry the units, e.g. ``Area (ft2)``.

Totals and amounts are formulas of our own (``=E5+F5``, ``=ROUND(E5*H5,2)``,
``=SUM(I5:I8)``), built from cell references only; every cell holds the rounded number, and
quantity cells show their unit through the number format (``#,##0" ft2"``).  No other cell
is a formula: every text cell is stored as text (openpyxl data type ``'s'``), and a text that
a spreadsheet would read as a formula gets a leading ``'`` (:func:`geo_corrosion._io.safe_cell`).
Every sheet prints: landscape, fit to the page width, title rows repeated on each page, the
title and the cautions in the header and footer, and page numbers.
"""

from __future__ import annotations

import math
import os
import re
from pathlib import Path
from typing import Any

import pandas as pd

from geo_corrosion._io import atomic_write, safe_cell
from geo_corrosion.cautions import SHORT_CAUTION
from geo_corrosion.quantities import ALL_LEVELS, bid_decimals, schedule_table
from geo_corrosion.units import ReportUnits

__all__ = ["SCHEDULE_SHEET", "FORMULA_PATTERN", "column_header", "write_schedule_xlsx"]

SCHEDULE_SHEET = "Schedule"
#: The only formulas the workbook writes: cell references joined by ``+``, a product
#: rounded to cents, and sums of a column range (checked on every formula written).
FORMULA_PATTERN = re.compile(
    r"=(?:[A-Z]{1,2}\d+(?:\+[A-Z]{1,2}\d+)*|ROUND\([A-Z]{1,2}\d+\*[A-Z]{1,2}\d+,2\)"
    r"|SUM\([A-Z]{1,2}\d+:[A-Z]{1,2}\d+\))")

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


def _text_as_text(wb: Any, own: set[tuple[str, str]]) -> None:
    """Store every text cell of ``wb`` as text, but for our own formulas (OWASP CSV injection).

    openpyxl stores a string starting with ``=`` as a formula; each text that is not one of
    ``own`` (sheet title, cell coordinate) goes through :func:`safe_cell` and is marked as a
    string (data type ``'s'``).  Our own formulas must match :data:`FORMULA_PATTERN`.
    """
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for c in row:
                if not isinstance(c.value, str):
                    continue
                if (ws.title, c.coordinate) in own:
                    if not FORMULA_PATTERN.fullmatch(c.value):  # pragma: no cover - a bug
                        raise AssertionError(f"{ws.title}!{c.coordinate}: {c.value!r} is not "
                                             "one of our formulas")
                    c.data_type = "f"
                    continue
                c.value = safe_cell(c.value)
                c.data_type = "s"


def _widths(ws: Any, first_row: int, last_row: int, fixed: dict[int, float] | None = None
            ) -> None:
    from openpyxl.utils import get_column_letter

    for col in range(1, ws.max_column + 1):
        if fixed and col in fixed:
            ws.column_dimensions[get_column_letter(col)].width = fixed[col]
            continue
        best = 8
        for row in range(first_row, last_row + 1):
            v = ws.cell(row=row, column=col).value
            if v is not None:
                best = max(best, len(f"{v:.2f}" if isinstance(v, float) else str(v)) + 2)
        ws.column_dimensions[get_column_letter(col)].width = min(best, 60)


def _hf(text: str) -> str:
    """Text for a print header or footer: ``&`` doubled (it starts a code there)."""
    return text.replace("&", "&&")


def _print_setup(ws: Any, *, title_rows: str, units: ReportUnits, title: str) -> None:
    """Make a sheet print: landscape, fit to width, title rows repeated, header and footer.

    Letter paper for US units, A4 for metric; the header gives the title and the sheet, the
    footer the short caution and ``Page n of N``.
    """
    ws.page_setup.orientation = "landscape"
    ws.page_setup.paperSize = (ws.PAPERSIZE_LETTER if units.system == "us"
                               else ws.PAPERSIZE_A4)
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0  # as many pages down as needed
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    ws.print_title_rows = title_rows
    ws.oddHeader.left.text = _hf(title[:120])
    ws.oddHeader.right.text = "&A"  # the sheet's name
    ws.oddFooter.left.text = _hf(SHORT_CAUTION + " Quantities are estimates for bidding; "
                                 f"see all cautions on the {SCHEDULE_SHEET} sheet.")
    ws.oddFooter.left.size = 7
    ws.oddFooter.right.text = "Page &P of &N"


def _qty_format(unit: str) -> str:
    """Return the number format of a bid quantity: its decimals and unit (``#,##0" ft2"``)."""
    nd = bid_decimals(unit)
    return f'#,##0{"." + "0" * nd if nd else ""}" {unit}"'


#: Decimals of a per-repair column by its unit suffix (common practice).
_REPAIR_DECIMALS = {"ft2": 2, "m2": 2, "LF": 2, "ft": 2, "m": 2, "in": 2, "mm": 0, "ft3": 2,
                    "CY": 2, "m3": 3, "EA": 0, "deg": 1, "kg": 1, "lb": 1}


def _price_cells(ws: Any, row: int, priced: bool, price: float, own: set[tuple[str, str]],
                 currency: str, unit: str, refs: list[int]) -> None:
    """Write the unit price (value), amount and contingency amount (formulas) of a row.

    An item row of a level: ``=ROUND(E5*H5,2)``; of all levels (``refs``, the item's rows
    on the levels): the sum of the levels' amounts, so that the totals add up to the cent.
    """
    if not priced or not math.isfinite(price):
        return
    ws.cell(row=row, column=8, value=price).number_format = f'#,##0.00" {currency}/{unit}"'
    for col, q in ((9, "E"), (10, "F")):
        a = "I" if col == 9 else "J"
        c = ws.cell(row=row, column=col, value="=" + "+".join(f"{a}{k}" for k in refs) if refs
                    else f"=ROUND({q}{row}*H{row},2)")
        c.number_format = f'#,##0.00" {currency}"'
        own.add((ws.title, c.coordinate))


def _estimate_rows(ws: Any, lid: str, rows: list[int], own: set[tuple[str, str]],
                   currency: str, bold: Any) -> int:
    """Subtotal, contingency and total of a level (or all levels); return the total's row."""
    what = "all levels" if lid == ALL_LEVELS else f"level {lid}"
    first, last = min(rows), max(rows)
    out = 0
    for label, formula in (
            (f"Subtotal, {what}", f"=SUM(I{first}:I{last})"),
            (f"Contingency, {what} (contingency quantities x unit prices)",
             f"=SUM(J{first}:J{last})"),
            (f"Total, {what}", None)):
        r = ws.max_row + 1
        ws.cell(row=r, column=1, value=lid)
        ws.cell(row=r, column=3, value=label)
        c = ws.cell(row=r, column=9, value=formula or f"=I{r - 2}+I{r - 1}")
        c.number_format = f'#,##0.00" {currency}"'
        own.add((ws.title, c.coordinate))
        if formula is None or lid == ALL_LEVELS:
            for cc in ws[r]:
                cc.font = bold
        out = r
    return out


def write_schedule_xlsx(path: str | os.PathLike[str], schedule: pd.DataFrame,
                        repairs_by_level: dict[str, pd.DataFrame], *, units: ReportUnits,
                        cautions: list[str], title: str, price_list: str | None = None
                        ) -> Path:
    """Write the schedule workbook atomically.

    Parameters
    ----------
    path : path-like
    schedule : DataFrame
        From :func:`geo_corrosion.quantities.bid_schedule`, priced or not
        (:func:`geo_corrosion.pricing.price_schedule`).
    repairs_by_level : dict of str to DataFrame
        Every repair of each level, columns named with their unit suffix
        (``area_ft2``, ``saw_cut_LF``); a ``geometry`` column is dropped.
    units : ReportUnits
    cautions : list of str
    title : str
    price_list : str, optional
        The price list's file name, for the note over a priced schedule.

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
    own: set[tuple[str, str]] = set()
    table = schedule_table(schedule)
    priced = "unit_price" in table.columns and bool(table["unit_price"].notna().any())
    currency = str(schedule["currency"].iloc[0]) if priced else ""
    wb = Workbook()
    ws = wb.active
    ws.title = SCHEDULE_SHEET
    ws.append([title])
    ws["A1"].font = Font(bold=True, size=14)
    shown = list(dict.fromkeys(table["unit"].astype(str))) if len(table) else []
    incr = ", ".join(f"{u} to {10 ** -bid_decimals(u):g}" for u in shown)
    ws.append([f"Bid quantities, rounded up ({incr}); EA = each, LS = lump sum. Quantities "
               "are estimates for bidding."])
    ws.append([f"Engineer's estimate: unit prices from {price_list or 'the price list'}, in "
               f"{currency}; amount = quantity x unit price, to the cent." if priced else None])
    header = ["Level", "Item", "Description", "Unit", "Base quantity", "Contingency",
              "Total quantity"]
    if priced:
        header += [f"Unit price ({currency})", f"Amount ({currency})",
                   f"Contingency amount ({currency})"]
    ws.append(header)
    hrow = ws.max_row
    for c in ws[hrow]:
        c.font = bold
        c.alignment = Alignment(wrap_text=True, vertical="bottom")
    ws.freeze_panes = f"A{hrow + 1}"  # a coordinate: ws.cell() would add an empty row
    item_rows: dict[str, list[int]] = {}  # item -> its rows on the levels
    levels = list(dict.fromkeys(table["level_id"].astype(str))) if len(table) else []
    levels = [lv for lv in levels if lv != ALL_LEVELS] + (
        [ALL_LEVELS] if ALL_LEVELS in levels else [])
    for lid in levels:
        sub = table[table["level_id"].astype(str) == lid]
        rows = []
        for r in sub.to_dict("records"):
            ws.append([_cell(r[c]) for c in ("level_id", "item", "description", "unit")])
            n = ws.max_row
            rows.append(n)
            unit = str(r["unit"])
            if lid == ALL_LEVELS:
                refs = item_rows.get(str(r["item"]), [])
                for col, q in ((5, "E"), (6, "F")):
                    c = ws.cell(row=n, column=col,
                                value="=" + "+".join(f"{q}{k}" for k in refs) if refs
                                else float(r["base" if col == 5 else "contingency"]))
                    if refs:
                        own.add((ws.title, c.coordinate))
            else:
                item_rows.setdefault(str(r["item"]), []).append(n)
                ws.cell(row=n, column=5, value=_cell(r["base"]))
                ws.cell(row=n, column=6, value=_cell(r["contingency"]))
            c = ws.cell(row=n, column=7, value=f"=E{n}+F{n}")
            own.add((ws.title, c.coordinate))
            for col in (5, 6, 7):
                ws.cell(row=n, column=col).number_format = _qty_format(unit)
            _price_cells(ws, n, priced, float(r.get("unit_price", math.nan)), own, currency,
                         unit, item_rows.get(str(r["item"]), []) if lid == ALL_LEVELS else [])
            if lid == ALL_LEVELS:
                for cc in ws[n]:
                    cc.font = bold
        if priced and rows:
            _estimate_rows(ws, lid, rows, own, currency, bold)
    last = ws.max_row
    if table.empty:
        ws.append(["No repairs or priced zones."])
    elif priced:
        missing = list(dict.fromkeys(table.loc[table["unit_price"].isna(), "item"]))
        if missing:
            ws.append([f"Not priced (no row in {price_list or 'the price list'}), left out of "
                       f"the totals: {', '.join(map(str, missing))}."])
    ws.append([])
    ws.append(["Cautions"])
    ws.cell(row=ws.max_row, column=1).font = bold
    for i, text in enumerate(cautions, 1):
        ws.append([f"{i}. {text}"])
        row = ws.max_row
        ws.merge_cells(start_row=row, start_column=1, end_row=row, end_column=len(header))
        ws.cell(row=row, column=1).alignment = Alignment(wrap_text=True, vertical="top")
        ws.row_dimensions[row].height = 15 * (1 + len(text) // 110)
    _widths(ws, hrow, max(last, hrow),
            fixed={c: 16.0 for c in range(5, len(header) + 1)} | {3: 48.0})
    _print_setup(ws, title_rows=f"1:{hrow}", units=units, title=title)

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
        formats = {}
        for j, name in enumerate(f.columns, 1):
            nd = _REPAIR_DECIMALS.get(str(name).rpartition("_")[2])
            if nd is not None and pd.api.types.is_numeric_dtype(f[name]):
                formats[j] = "#,##0" + ("." + "0" * nd if nd else "")
        for rec in f.itertuples(index=False):
            wl.append([_cell(v) for v in rec])
            for j, fmt in formats.items():
                wl.cell(row=wl.max_row, column=j).number_format = fmt
        if f.empty:
            wl.append(["No repairs on this level."])
        wl.append([])
        wl.append([f"See the cautions on the {SCHEDULE_SHEET} sheet."])
        _widths(wl, 2, max(2, 2 + len(f)))
        _print_setup(wl, title_rows="1:2", units=units, title=title)
    _text_as_text(wb, own)
    return atomic_write(Path(path), lambda tmp: wb.save(tmp))

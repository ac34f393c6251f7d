"""Bid items and the schedule of quantities, per level and in total.

Quantities follow common practice (no published source): repair areas by
depth class (and overhead), saw-cut length, an estimated removal volume, galvanic
anodes counted along repair perimeters, joint seals or headers along repair edges on
joints, a bar replacement allowance, and zone treatments by (pay) area.  Areas are measured on the
union of each item's polygons, so no area is counted twice where shapes overlap.
The contingency is carried as its own line beside the base quantity.

The schedule is a long table, one row per (level, item, line) with
``line`` in ``("base", "contingency")``; level ``"ALL"`` holds the totals.
:func:`schedule_table` pivots it to one row per item with base, contingency and
total side by side.

Quantities are bid quantities: each base and contingency quantity of a level is
rounded **up** to the increment its unit is bid in (:data:`BID_INCREMENTS`: whole
ft2, LF, EA; 0.1 CY; 0.1 m2 and 0.1 m; 0.01 m3), so that a bid never carries less
than was measured (common practice, no source), and the ``ALL`` lines are the sums
of the rounded level lines, so that a schedule adds up as printed.  The unrounded
value is kept beside it (``quantity_unrounded``, written to ``run.json``).  Volumes
are bid in cubic yards (CY) in US units.
"""

from __future__ import annotations

import math
import os
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Literal, get_args

import geopandas as gpd
import pandas as pd
import shapely

from geo_corrosion._io import atomic_write, safe_frame
from geo_corrosion.errors import RepairError
from geo_corrosion.units import ReportUnits

__all__ = [
    "ALL_LEVELS",
    "BID_INCREMENTS",
    "DEFAULT_BID_ITEMS",
    "DEPTH_CLASS_ITEMS",
    "SCHEDULE_COLUMNS",
    "BidItem",
    "bid_decimals",
    "bid_round",
    "bid_schedule",
    "roll_up",
    "schedule_table",
    "write_quantities_csv",
]

UnitKind = Literal["area", "length", "volume", "count", "lump_sum"]

#: Level id of the total lines.
ALL_LEVELS = "ALL"

#: Columns of the schedule returned by :func:`bid_schedule`.
SCHEDULE_COLUMNS: tuple[str, ...] = ("level_id", "item", "description", "unit_kind", "unit",
                                     "line", "quantity", "quantity_unrounded")

#: Cubic feet per cubic yard (27, exact: 1 yd = 3 ft [NIST-SP811-2008 App. B]).
FT3_PER_CY = 27.0

#: Bid increment and decimals of each unit label: quantities are rounded up to a whole
#: number of increments (common practice, no source: bid documents show areas to whole ft2
#: or 0.1 m2, lengths to whole LF or 0.1 m, volumes to 0.1 CY or 0.01 m3, counts whole).
BID_INCREMENTS: dict[str, tuple[float, int]] = {
    "ft2": (1.0, 0), "LF": (1.0, 0), "ft": (1.0, 0), "CY": (0.1, 1), "ft3": (1.0, 0),
    "m2": (0.1, 1), "m": (0.1, 1), "m3": (0.01, 2), "EA": (1.0, 0), "LS": (1.0, 0),
}
#: Increment of a unit not in :data:`BID_INCREMENTS` (a plugin's own).
_OTHER_INCREMENT = (0.01, 2)


def bid_decimals(unit: str) -> int:
    """Return the decimals a bid quantity in ``unit`` is shown with.

    Examples
    --------
    >>> bid_decimals("ft2"), bid_decimals("m3")
    (0, 2)
    """
    return BID_INCREMENTS.get(unit, _OTHER_INCREMENT)[1]


def bid_round(q: float, unit: str) -> float:
    """Round a quantity up to the bid increment of its unit (:data:`BID_INCREMENTS`).

    A value within a millionth of an increment above a whole number of increments is
    taken as that number (float noise: 453.9999999999999 ft2 and 454.0000000001 ft2 are
    454 ft2).

    Examples
    --------
    >>> bid_round(490.9696307618297, "ft2"), bid_round(453.9999999999999, "ft2")
    (491.0, 454.0)
    >>> bid_round(4.94, "CY"), bid_round(12.301, "m2"), bid_round(0.1234, "m3")
    (5.0, 12.4, 0.13)
    """
    inc, nd = BID_INCREMENTS.get(unit, _OTHER_INCREMENT)
    if not math.isfinite(q):
        raise RepairError(f"quantity {q!r} {unit} is not a finite number")
    return round(math.ceil(q / inc - 1e-6) * inc, nd)


@dataclass(frozen=True)
class BidItem:
    """One item of the bid schedule.

    Attributes
    ----------
    code : str
        Item code, as in the schedule.
    description : str
    unit_kind : {"area", "length", "volume", "count", "lump_sum"}
        What is measured; the unit label follows the reporting system
        (m2/m/m3 or ft2/LF/CY; EA for counts, LS for lump sums).
    contingency : bool
        Whether the contingency allowance applies (never to lump sums).
    """

    code: str
    description: str
    unit_kind: UnitKind
    contingency: bool = True

    def __post_init__(self) -> None:
        if self.unit_kind not in get_args(UnitKind):
            raise RepairError(f"bid item {self.code!r}: unit kind {self.unit_kind!r} is unknown; "
                              f"use one of {list(get_args(UnitKind))}")
        if not self.code:
            raise RepairError("a bid item needs a code")

    def unit(self, units: ReportUnits) -> str:
        """Return the unit label of this item in the reporting system (volumes in CY for us)."""
        volume = "CY" if units.system == "us" else units.volume
        return {"area": units.area, "length": units.length, "volume": volume,
                "count": "EA", "lump_sum": "LS"}[self.unit_kind]


#: Built-in items (common practice).
DEFAULT_BID_ITEMS: dict[str, BidItem] = {b.code: b for b in (
    BidItem("REP-PD-SURF", "Partial-depth repair, above the bars", "area"),
    BidItem("REP-PD-BARS", "Partial-depth repair, to below the top mat (bars undercut)", "area"),
    BidItem("REP-FD", "Full-depth slab repair", "area"),
    BidItem("REP-OVH", "Overhead (soffit) partial-depth repair", "area"),
    BidItem("REP-VOL", "Concrete removal and replacement volume (estimate)", "volume"),
    BidItem("SAWCUT", "Perimeter saw cut", "length"),
    BidItem("ANODE", "Embedded galvanic anodes along repair perimeters", "count"),
    BidItem("JOINT-RPR", "Joint seal or joint header rebuilt along repair edges on joints",
            "length"),
    BidItem("BAR-REPL", "Reinforcing bar replacement allowance (repairs exposing the bars)",
            "length"),
    BidItem("TREAT-ACTIVE", "Treatment of actively corroding sound concrete", "area"),
    BidItem("PROTECT-LOWCOVER", "Protection of low-cover areas (membrane or sealer)", "area"),
)}

#: Bid item of each depth class of :mod:`geo_corrosion.repair`.
DEPTH_CLASS_ITEMS: dict[str, str] = {
    "partial_above_bars": "REP-PD-SURF",
    "partial_below_bars": "REP-PD-BARS",
    "full_depth": "REP-FD",
}


def _union_ratio(geoms: gpd.GeoSeries) -> float:
    """Area of the union over the sum of areas (1.0 when nothing overlaps)."""
    total = float(geoms.area.sum())
    if total <= 0:
        return 1.0
    return min(1.0, float(shapely.union_all(geoms.to_numpy()).area) / total)


def _repair_lines(repairs: gpd.GeoDataFrame, anode_spacing_mm: float | None
                  ) -> list[dict[str, Any]]:
    need = [c for c in ("level_id", "area_m2") if c not in repairs.columns]
    if "depth_class" not in repairs.columns and "bid_item" not in repairs.columns:
        need.append("depth_class or bid_item")
    if need:
        raise RepairError(f"repairs lack column(s) {need}; pass the frame from layout_repairs")
    lines: list[dict[str, Any]] = []
    r = repairs.copy()
    if "bid_item" not in r.columns or r["bid_item"].isna().all():
        unknown = sorted(set(map(str, r["depth_class"])) - set(DEPTH_CLASS_ITEMS))
        if unknown:
            raise RepairError(f"no bid item for depth class(es) {unknown}; add a 'bid_item' "
                              "column to the repairs")
        r["bid_item"] = [DEPTH_CLASS_ITEMS[str(c)] for c in r["depth_class"]]
    for (lid, item), g in r.groupby(["level_id", "bid_item"], sort=False):
        ratio = _union_ratio(g.geometry) if "geometry" in g and g.geometry.notna().all() else 1.0
        lines.append({"level_id": lid, "item": item, "unit_kind": "area",
                      "q": ratio * float(g["area_m2"].sum())})
        if "volume_m3" in g:
            lines.append({"level_id": lid, "item": "REP-VOL", "unit_kind": "volume",
                          "q": ratio * float(g["volume_m3"].sum())})
    for lid, g in r.groupby("level_id", sort=False):
        if "perimeter_m" in g:
            lines.append({"level_id": lid, "item": "SAWCUT", "unit_kind": "length",
                          "q": float(g["perimeter_m"].sum())})
            if anode_spacing_mm is not None:
                n = sum(math.ceil(float(p) * 1000.0 / anode_spacing_mm - 1e-9)
                        for p in g["perimeter_m"])
                lines.append({"level_id": lid, "item": "ANODE", "unit_kind": "count", "q": n})
        for col, item in (("joint_edge_m", "JOINT-RPR"), ("bar_replacement_m", "BAR-REPL")):
            if col in g and float(g[col].sum()) > 0:  # per repair (repair.tender_columns)
                lines.append({"level_id": lid, "item": item, "unit_kind": "length",
                              "q": float(g[col].sum())})
    return lines


def _zone_lines(zones: gpd.GeoDataFrame) -> tuple[list[dict[str, Any]], dict[str, str]]:
    need = [c for c in ("level_id", "bid_item", "area_m2") if c not in zones.columns]
    if need:
        raise RepairError(f"zones lack column(s) {need}; pass the frame from zoning.zone")
    z = zones[zones["bid_item"].notna() & (zones["bid_item"].astype(str) != "")]
    lines, descr = [], {}
    for (lid, item), g in z.groupby(["level_id", "bid_item"], sort=False):
        ratio = _union_ratio(g.geometry) if "geometry" in g and g.geometry.notna().all() else 1.0
        kind = str(g["unit_kind"].iloc[0]) if "unit_kind" in g else "area"
        lines.append({"level_id": lid, "item": str(item), "unit_kind": kind,
                      "q": ratio * float(g["area_m2"].sum())})
        if "treatment" in g:
            descr[str(item)] = str(g["treatment"].iloc[0])
    return lines, descr


def roll_up(lines: pd.DataFrame, *, units: ReportUnits, items: Mapping[str, BidItem],
            contingency: float = 0.20, levels: list[str] | None = None) -> pd.DataFrame:
    """Roll quantities up by level and item, with contingency lines and totals.

    Parameters
    ----------
    lines : DataFrame
        Columns ``level_id``, ``item``, ``unit_kind`` and ``q`` (m2, m, m3 or a count).
    units : ReportUnits
        Reporting system.
    items : mapping of str to BidItem
        Every item code in ``lines``.
    contingency : float
        Allowance as a fraction of the base quantity (default 0.20, common practice).
    levels : list of str, optional
        Order of the levels in the schedule (default: as met).

    Returns
    -------
    DataFrame
        Columns :data:`SCHEDULE_COLUMNS`, quantities in the reporting units (volumes in CY
        for us): ``quantity`` rounded up to the bid increment (:func:`bid_round`),
        ``quantity_unrounded`` as computed; the ``ALL`` lines sum the levels' lines.

    Raises
    ------
    RepairError
        If one item gets quantities of two unit kinds (common practice), or an
        item code is unknown.

    Examples
    --------
    >>> from geo_corrosion.units import report_units
    >>> li = pd.DataFrame({"level_id": ["P1"], "item": ["REP-FD"], "unit_kind": ["area"],
    ...                    "q": [490.5 * 0.09290304]})
    >>> s = roll_up(li, units=report_units("us"), items=DEFAULT_BID_ITEMS)
    >>> list(s.loc[s.level_id == "ALL", "quantity"])  # 490.5 -> 491; 98.1 -> 99
    [491.0, 99.0]
    """
    if not (0.0 <= contingency <= 1.0) or not math.isfinite(contingency):
        raise RepairError(f"contingency = {contingency!r}; give a fraction from 0 to 1 "
                          "(0.20 for 20 %)")
    if lines.empty:
        return pd.DataFrame({c: pd.Series(dtype=object) for c in SCHEDULE_COLUMNS})
    for code, kinds in lines.groupby("item", sort=False)["unit_kind"]:
        if not isinstance(code, str) or code not in items:  # item codes are str keys
            raise RepairError(f"bid item {code!r} is not declared; add it to the items")
        found = sorted(set(kinds) | {items[code].unit_kind})
        if len(found) > 1:
            raise RepairError(f"bid item {code!r} mixes units ({', '.join(found)}); give each "
                              "unit its own item")
    cy = FT3_PER_CY if units.system == "us" else 1.0
    def _volume(v: float) -> float:
        return float(units.volume_from_m3(v)) / cy

    conv: dict[str, Callable[[float], Any]] = {
        "area": units.area_from_m2, "length": units.length_from_m, "volume": _volume}
    order = levels or list(dict.fromkeys(lines["level_id"]))
    item_order = [c for c in items if c in set(lines["item"])]
    rows = []
    sums: dict[tuple[str, str], list[float]] = {}
    for lid in order:
        sub = lines[lines["level_id"] == lid]
        for code in item_order:
            q = sub.loc[sub["item"] == code, "q"]
            if q.empty:
                continue
            it = items[code]
            unit = it.unit(units)
            base = float(q.sum())
            base = float(conv[it.unit_kind](base)) if it.unit_kind in conv else float(base)
            c = 0.0
            if it.contingency and it.unit_kind != "lump_sum":
                c = base * contingency
                c = float(math.ceil(c - 1e-9)) if it.unit_kind == "count" else c
            for line, v in (("base", base), ("contingency", c)):
                r = bid_round(v, unit)
                rows.append((lid, code, it.description, it.unit_kind, unit, line, r, v))
                acc = sums.setdefault((code, line), [0.0, 0.0])
                acc[0] += r
                acc[1] += v
    for code in item_order:
        it = items[code]
        unit = it.unit(units)
        for line in ("base", "contingency"):
            r, v = sums[(code, line)]
            rows.append((ALL_LEVELS, code, it.description, it.unit_kind, unit, line,
                         round(r, bid_decimals(unit)), v))
    return pd.DataFrame(rows, columns=list(SCHEDULE_COLUMNS))


def bid_schedule(repairs: gpd.GeoDataFrame | None, zones: gpd.GeoDataFrame | None, *,
                 units: ReportUnits, contingency: float = 0.20,
                 anode_spacing_mm: float | None = None,
                 items: Mapping[str, BidItem] | None = None) -> pd.DataFrame:
    """Compute the schedule of quantities of repairs and zones, per level and in total.

    Parameters
    ----------
    repairs : GeoDataFrame or None
        Frame(s) of :func:`geo_corrosion.repair.layout_repairs`, levels concatenated
        (needs ``level_id``, ``area_m2``, ``depth_class`` or ``bid_item``; uses
        ``perimeter_m`` and ``volume_m3`` when present).
    zones : GeoDataFrame or None
        Frame(s) of :func:`geo_corrosion.zoning.zone` (``level_id``, ``bid_item``,
        ``area_m2``); zones without a bid item are not priced.
    units : ReportUnits
        Reporting system.
    contingency : float
        Allowance as a fraction of base quantities (default 0.20, common practice).
    anode_spacing_mm : float, optional
        Spacing of galvanic anodes along repair perimeters, mm; count per repair =
        ceil(perimeter / spacing) (common practice).  None: no anode item.
    items : mapping of str to BidItem, optional
        Items added to or replacing :data:`DEFAULT_BID_ITEMS`.

    Returns
    -------
    DataFrame
        See :func:`roll_up`.

    Raises
    ------
    RepairError
        For missing columns, a bad contingency or spacing, or mixed units in one item.
    """
    if anode_spacing_mm is not None and not (0 < anode_spacing_mm < 1e5):
        raise RepairError(f"anode_spacing_mm = {anode_spacing_mm!r} mm; give a spacing > 0 mm")
    all_items: dict[str, BidItem] = dict(DEFAULT_BID_ITEMS)
    all_items.update(items or {})
    lines: list[dict[str, Any]] = []
    levels: list[str] = []
    if repairs is not None and len(repairs):
        lines += _repair_lines(repairs, anode_spacing_mm)
        levels += list(dict.fromkeys(map(str, repairs["level_id"])))
    if zones is not None and len(zones):
        zl, descr = _zone_lines(zones)
        for code, d in descr.items():
            all_items.setdefault(code, BidItem(code, d, "area"))
        lines += zl
        levels += [lv for lv in dict.fromkeys(map(str, zones["level_id"])) if lv not in levels]
    frame = pd.DataFrame(lines, columns=["level_id", "item", "unit_kind", "q"])
    frame["level_id"] = frame["level_id"].astype(str)
    return roll_up(frame, units=units, items=all_items, contingency=contingency, levels=levels)


def schedule_table(schedule: pd.DataFrame) -> pd.DataFrame:
    """One row per (level, item): base, contingency and total side by side.

    Quantities are the rounded bid quantities (``quantity``); ``total`` is their sum.  A
    priced schedule (:func:`geo_corrosion.pricing.price_schedule`) adds ``unit_price``,
    ``amount`` (of the base quantity) and ``contingency_amount``.
    """
    cols = ["level_id", "item", "description", "unit", "base", "contingency", "total"]
    priced = "unit_price" in schedule.columns and bool(schedule["unit_price"].notna().any())
    if priced:
        cols += ["unit_price", "amount", "contingency_amount"]
    if schedule.empty:
        return pd.DataFrame({c: pd.Series(dtype=object) for c in cols})
    rows: dict[tuple[Any, ...], dict[str, Any]] = {}
    for r in schedule.to_dict("records"):
        key = (r["level_id"], r["item"], r["description"], r["unit"])
        row = rows.setdefault(key, dict(zip(cols[:4], key, strict=True)) | {
            "base": 0.0, "contingency": 0.0})
        row[str(r["line"])] = row.get(str(r["line"]), 0.0) + float(r["quantity"])
        if priced:
            p = r.get("unit_price")
            p = math.nan if p is None else float(p)
            row["unit_price"] = p
            a = r.get("amount")
            a = math.nan if a is None else float(a)
            row["amount" if r["line"] == "base" else "contingency_amount"] = a
    w = pd.DataFrame(list(rows.values()))
    w["total"] = [round(b + c, bid_decimals(str(u)))
                  for b, c, u in zip(w["base"], w["contingency"], w["unit"], strict=True)]
    for c in cols:
        if c not in w:
            w[c] = math.nan
    return w[cols]


def _price_text(v: Any) -> str:
    """Return a unit price or amount as CSV text: 2 decimals, more when the price has them."""
    if v is None or (isinstance(v, float) and math.isnan(v)):
        return ""
    v = float(v)
    return f"{v:.2f}" if round(v, 2) == v else repr(v)


def write_quantities_csv(schedule: pd.DataFrame, path: str | os.PathLike[str]) -> Path:
    """Write the schedule as CSV, atomically (temporary file, then rename).

    Quantities are written as bid: rounded up to their unit's increment, with its decimals
    (:func:`bid_decimals`); ``quantity_unrounded`` is left to ``run.json``.  A priced
    schedule adds ``unit_price``, ``amount`` (values, 2 decimals) and ``currency``.

    Raises
    ------
    ExportError
        If the file cannot be written; nothing is left half-written.
    """
    path = Path(path)
    out = schedule.drop(columns=[c for c in ("quantity_unrounded",) if c in schedule.columns])
    if "quantity" in out and len(out):
        units = (out["unit"] if "unit" in out else pd.Series("", index=out.index)).astype(str)
        out["quantity"] = [f"{q:.{bid_decimals(u)}f}"
                           for q, u in zip(out["quantity"], units, strict=True)]
        for c in ("unit_price", "amount"):
            if c in out:
                out[c] = [_price_text(v) for v in out[c]]
    out = safe_frame(out)  # no text from the input read as a formula (OWASP CSV injection)
    return atomic_write(path, lambda tmp: out.to_csv(tmp, index=False), what="quantities CSV")

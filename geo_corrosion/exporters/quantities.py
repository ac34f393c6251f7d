"""The quantities exporter: the bid schedule (CSV, XLSX) and the condition areas (CSV)."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, ClassVar

import pandas as pd

from geo_corrosion.cautions import CAUTIONS
from geo_corrosion.exporters.base import Exporter
from geo_corrosion.units import report_units

if TYPE_CHECKING:
    from geo_corrosion.model.results import RunResult

__all__ = ["QuantitiesExporter", "QUANTITIES_CSV", "QUANTITIES_XLSX", "CONDITION_CSV",
           "condition_table", "repair_table"]

QUANTITIES_CSV = "quantities.csv"
CONDITION_CSV = "condition_areas.csv"


def condition_table(result: RunResult) -> pd.DataFrame:
    """Areas per level and class (ASTM C876, RILEM, combined) and beyond each threshold.

    Kept apart from the bid schedule on purpose: these are condition statements, not
    bid items, and mixing them into the schedule would invite counting areas twice.
    """
    u = report_units(result.site.config.units)
    rows = []
    for lid, lr in result.levels.items():
        for kind, st in lr.stats.items():
            if kind in ("condition", "planning"):
                continue
            for c in st.get("class_areas", []) or []:
                rows.append({"level_id": lid, "what": f"{kind} class", "class": c["class"],
                             f"area_{u.area}": float(u.area_from_m2(c["area_m2"])),
                             "share_of_mapped_area": c["share_of_mapped_area"]})
        cond = lr.stats.get("condition") or {}
        for c in cond.get("combined_classes", []):
            rows.append({"level_id": lid, "what": "combined condition", "class": c["class"],
                         f"area_{u.area}": float(u.area_from_m2(c["area_m2"]))})
        for key, a in cond.items():
            if key.endswith("_area_beyond_threshold"):
                rows.append({
                    "level_id": lid, "what": "area likely beyond threshold", "class": a["meaning"],
                    f"area_{u.area}": float(u.area_from_m2(a["expected_m2"])),
                    f"interval_90pct_low_{u.area}": float(u.area_from_m2(a["lower_m2"])),
                    f"interval_90pct_high_{u.area}": float(u.area_from_m2(a["upper_m2"]))})
    return pd.DataFrame(rows)
QUANTITIES_XLSX = "quantities.xlsx"


def repair_table(result: RunResult, level_id: str) -> pd.DataFrame:
    """Every repair of a level with its quantities in the reporting units."""
    lr = result.levels[level_id]
    u = report_units(result.site.config.units)
    if lr.repairs is None or not len(lr.repairs):
        return pd.DataFrame()
    r = pd.DataFrame(lr.repairs.drop(columns="geometry"))
    out = pd.DataFrame({"repair_id": r["repair_id"]})
    for c in ("location", "dimensions"):  # repair.tender_columns
        if c in r:
            out[c] = r[c]
    if "depth_class" in r:
        out["depth_class"] = r["depth_class"]
    if "depth_mm" in r:
        out[f"removal_depth_{u.small}"] = u.small_from_mm(r["depth_mm"]).round(2)
    out[f"area_{u.area}"] = u.area_from_m2(r["area_m2"]).round(2)
    if "perimeter_m" in r:
        out[f"saw_cut_{u.length}"] = u.length_from_m(r["perimeter_m"]).round(2)
    if "volume_m3" in r:
        out[f"volume_{u.volume}"] = u.volume_from_m3(r["volume_m3"]).round(3)
    if "joint_edge_m" in r:
        out[f"on_joint_{u.length}"] = u.length_from_m(r["joint_edge_m"]).round(2)
    if "anodes" in r:
        out["anodes_EA"] = r["anodes"]
    if "bar_replacement_m" in r:
        out[f"bar_replacement_{u.length}"] = u.length_from_m(r["bar_replacement_m"]).round(2)
    if "bid_item" in r:
        out["bid_item"] = r["bid_item"]
    if "sounded" in r:  # the numbers of the sounded areas on the sounding plan (D1, S1)
        out["from"] = r["sounded"]
    elif "source_ids" in r:
        out["from"] = r["source_ids"]
    if "rounding_note" in r:
        out["note"] = r["rounding_note"]
    return out


class QuantitiesExporter(Exporter):
    """Write ``quantities.csv`` (the bid schedule) and ``quantities.xlsx`` (schedule + repairs)."""

    name: ClassVar[str] = "quantities"
    description: ClassVar[str] = "bid schedule as CSV and XLSX workbook"

    def export(self, result: RunResult, out_dir: Path) -> list[Path]:
        """Write the schedule files."""
        from geo_corrosion.exporters.xlsx import write_schedule_xlsx
        from geo_corrosion.quantities import write_quantities_csv

        units = report_units(result.site.config.units)
        from geo_corrosion._io import atomic_write, safe_frame

        paths = [write_quantities_csv(result.schedule, out_dir / QUANTITIES_CSV)]
        cond = condition_table(result)
        if len(cond):
            cond = safe_frame(cond.round(3))  # no input text read as a formula
            paths.append(atomic_write(out_dir / CONDITION_CSV, lambda tmp: cond.to_csv(
                tmp, index=False), what="condition areas CSV"))
        paths.append(write_schedule_xlsx(
            out_dir / QUANTITIES_XLSX, result.schedule,
            {lid: repair_table(result, lid) for lid in result.levels},
            units=units, cautions=list(CAUTIONS),
            title=f"{result.site.config.name}: schedule of repair quantities",
            price_list=(None if result.site.prices is None
                        else result.site.prices.path.name)))
        return paths

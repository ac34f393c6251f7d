"""The portfolio summary: each site's run folder read back into tables, a GeoPackage, CSV, XLSX.

Everything comes from the sites' own run folders, read with the readers the run folders
already have: ``run.json`` with :func:`geo_corrosion.model.manifest.read_run` (deck areas,
class areas, the area intervals, the bid schedule and its prices) and ``survey.gpkg`` with
:class:`geo_corrosion.exporters.runfiles.RunLayers` (the slab outlines).  Nothing is
computed again.

Tables (the same in ``portfolio.gpkg``, the CSV files and the sheets of
``portfolio.xlsx``):

``sites``
    one row per site: status (``done``/``failed``) and message, levels, deck area, repairs,
    the bid quantities and the estimate of the whole site (the ``ALL`` rows of its
    schedule), where the site is, its run folder and web map;
``levels``
    one row per site and level: deck area, repairs, the bid quantities by bid item (base
    plus contingency, column ``<item>_<unit>``) and the estimate per currency;
``class_areas``
    one row per site, level and class (the rows of each site's ``condition_areas.csv``):
    area and the interval of the area likely beyond each threshold, in m2 and ft2;
``quantities``
    one row per site and row of each site's ``quantities.csv``.

Every column holding a number names its unit (``_m2``, ``_ft2``, ``_deg``, ``_s``, the
currency); where the unit changes from row to row (bid quantities), the column's name says
which column holds it (``quantity_[unit]``).

The GeoPackage's ``sites`` layer holds one point per site in WGS84 (EPSG:4326; sites of a
portfolio may lie in different projected CRSs, so only a geographic CRS is common to all):
the centroid of the site's slab outlines, or, for a site whose run failed, the mean of the
control points of its site file.  ``site_outlines`` holds each level's slab outline, in
WGS84 too.
"""

from __future__ import annotations

import logging
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import pandas as pd

from geo_corrosion._io import atomic_write, safe_frame
from geo_corrosion.errors import GeoCorrosionError
from geo_corrosion.units import report_units

if TYPE_CHECKING:
    import geopandas as gpd

    from geo_corrosion.model.manifest import Manifest

__all__ = ["SiteStatus", "PortfolioTables", "summary_tables", "write_tables", "run_folders",
           "SUMMARY_GPKG", "SUMMARY_XLSX", "SUMMARY_CSV", "TABLES"]

log = logging.getLogger(__name__)

#: The summary files in the portfolio folder.
SUMMARY_GPKG = "portfolio.gpkg"
SUMMARY_XLSX = "portfolio.xlsx"
#: Table name -> CSV file name.
SUMMARY_CSV = {"sites": "portfolio_sites.csv", "levels": "portfolio_levels.csv",
               "class_areas": "portfolio_class_areas.csv",
               "quantities": "portfolio_quantities.csv"}
TABLES = tuple(SUMMARY_CSV)
_US, _SI = report_units("us"), report_units("metric")


@dataclass(frozen=True)
class SiteStatus:
    """A site of the portfolio as the summary needs it (the orchestration gives these).

    Attributes
    ----------
    id, name : str
        The site's id (its folder under ``sites/``) and name.
    site_file : Path
        The site file.
    run_dir : Path
        The site's run folder (complete only when ``status`` is ``done``).
    status, message : str
        ``done`` or ``failed``, and the failure's message.
    lonlat : tuple of float or None
        Where the site file says the site is (WGS84 degrees), for a site without a run.
    elapsed_s : float
        Wall time of the site's run, s.
    """

    id: str
    name: str
    site_file: Path
    run_dir: Path
    status: str
    message: str = ""
    lonlat: tuple[float, float] | None = None
    elapsed_s: float = 0.0


@dataclass
class PortfolioTables:
    """The summary's tables and its two spatial layers (WGS84)."""

    sites: pd.DataFrame
    levels: pd.DataFrame
    class_areas: pd.DataFrame
    quantities: pd.DataFrame
    points: gpd.GeoDataFrame
    outlines: gpd.GeoDataFrame

    def table(self, name: str) -> pd.DataFrame:
        """Return the table ``name`` (one of :data:`TABLES`)."""
        return getattr(self, name)  # type: ignore[no-any-return]


def _areas(m2: float | None, unit: str | None = None, value: float | None = None
           ) -> tuple[float | None, float | None]:
    """Return (m2, ft2), taking a value already in ``unit`` as it was written."""
    if m2 is None:
        return None, None
    ft2 = value if unit == "ft2" and value is not None else float(_US.area_from_m2(m2))
    si = value if unit == "m2" and value is not None else float(m2)
    return round(si, 3), round(ft2, 3)


def _class_rows(site: SiteStatus, man: Manifest) -> list[dict[str, Any]]:
    """Rows of the site's ``condition_areas.csv``, from ``run.json``, in m2 and ft2."""
    rows: list[dict[str, Any]] = []
    base = {"site_id": site.id, "site_name": site.name}
    for lid, lv in man.levels.items():
        for kind, kv in lv.kinds.items():
            for c in kv.class_areas or ():
                m2, ft2 = _areas(c.area_m2, c.area_unit, c.area_report)
                rows.append({**base, "level_id": lid, "what": f"{kind} class",
                             "class": c.class_name, "area_m2": m2, "area_ft2": ft2,
                             "share_of_mapped_area_fraction": round(c.share_of_mapped_area, 3)})
        cond = lv.condition
        if cond is None:
            continue
        for cc in cond.combined_classes or ():
            m2, ft2 = _areas(cc.area_m2)
            rows.append({**base, "level_id": lid, "what": "combined condition",
                         "class": cc.class_name, "area_m2": m2, "area_ft2": ft2})
        for a in cond.beyond.values():
            pct = round(100 * a.interval_level)
            m2, ft2 = _areas(a.expected_m2)
            lo_m2, lo_ft2 = _areas(a.lower_m2)
            hi_m2, hi_ft2 = _areas(a.upper_m2)
            rows.append({**base, "level_id": lid, "what": "area likely beyond threshold",
                         "class": a.meaning, "area_m2": m2, "area_ft2": ft2,
                         f"interval_{pct}pct_low_m2": lo_m2,
                         f"interval_{pct}pct_high_m2": hi_m2,
                         f"interval_{pct}pct_low_ft2": lo_ft2,
                         f"interval_{pct}pct_high_ft2": hi_ft2})
    return rows


def _quantity_rows(site: SiteStatus, man: Manifest) -> list[dict[str, Any]]:
    """Rows of the site's ``quantities.csv``, from ``run.json``'s schedule."""
    return [{"site_id": site.id, "site_name": site.name, "level_id": r.level_id,
             "item": r.item, "description": r.description, "unit_kind": r.unit_kind,
             "unit": r.unit, "line": r.line, "quantity_[unit]": r.quantity,
             "unit_price_[currency/unit]": r.unit_price, "amount_[currency]": r.amount,
             "currency": r.currency} for r in man.schedule]


#: ``level_id`` of the schedule's rows for the whole site (``quantities.csv``).
SITE_ROWS = "ALL"


def _estimates(man: Manifest, level_id: str) -> dict[str, float]:
    """Return the estimate per currency: the priced amounts of a level (or ``ALL``), summed."""
    out: dict[str, float] = {}
    for r in man.schedule:
        if r.amount is None or not r.currency or r.level_id != level_id:
            continue
        key = f"estimate_{r.currency}"
        out[key] = round(out.get(key, 0.0) + float(r.amount), 2)
    return out


def _item_totals(man: Manifest, level_id: str) -> dict[str, float]:
    """Return the bid quantity of each item, base plus contingency: ``<item>_<unit>``."""
    out: dict[str, float] = {}
    for r in man.schedule:
        if r.level_id == level_id:
            key = f"{r.item}_{r.unit}"
            out[key] = round(out.get(key, 0.0) + float(r.quantity), 3)
    return out


def _level_rows(site: SiteStatus, man: Manifest) -> list[dict[str, Any]]:
    rows = []
    for lid, lv in man.levels.items():
        m2, ft2 = _areas(lv.deck_area_m2)
        row: dict[str, Any] = {"site_id": site.id, "site_name": site.name, "level_id": lid,
                               "level_name": lv.name, "status": site.status, "message": "",
                               "deck_area_m2": m2, "deck_area_ft2": ft2,
                               "repairs_count": lv.repairs}
        row.update(_item_totals(man, lid))
        row.update(_estimates(man, lid))
        rows.append(row)
    return rows


def _outlines(site: SiteStatus, man: Manifest) -> gpd.GeoDataFrame | None:
    """Each level's slab outline in WGS84, from the run's GeoPackage."""
    import geopandas as gpd

    from geo_corrosion.exporters.runfiles import RunLayers

    layers = RunLayers(site.run_dir)
    parts = []
    for lid, lv in man.levels.items():
        slab = layers.get(f"{lid}_slab")
        if slab is None or slab.crs is None:
            continue
        g = slab.to_crs("EPSG:4326").geometry.union_all()
        parts.append({"site_id": site.id, "site_name": site.name, "level_id": lid,
                      "level_name": lv.name, "geometry": g})
    if not parts:
        return None
    return gpd.GeoDataFrame(parts, geometry="geometry", crs="EPSG:4326")


def _rel(path: Path, base: Path) -> str:
    try:
        return path.relative_to(base).as_posix()
    except ValueError:
        return str(path)


def summary_tables(out_dir: Path, sites: Sequence[SiteStatus]) -> PortfolioTables:
    """Read every completed site's run folder back and build the portfolio's tables.

    A site whose run folder cannot be read back is reported as failed, with the reader's
    message (the others are unaffected).
    """
    import geopandas as gpd
    from shapely.geometry import Point

    from geo_corrosion.exporters.webmap import MAP_NAME
    from geo_corrosion.model.manifest import read_run

    site_rows, level_rows, class_rows, qty_rows, points, outlines = [], [], [], [], [], []
    for s in sites:
        man = None
        status, message = s.status, s.message
        if s.status == "done":
            try:
                man = read_run(s.run_dir)
                shapes = _outlines(s, man)
            except GeoCorrosionError as err:
                status, message, man = "failed", f"run folder unreadable: {err}", None
        row: dict[str, Any] = {"site_id": s.id, "site_name": s.name, "status": status,
                               "message": message, "site_file": str(s.site_file)}
        lonlat = s.lonlat
        if man is not None:
            s_done = SiteStatus(s.id, s.name, s.site_file, s.run_dir, status)
            deck = sum(lv.deck_area_m2 for lv in man.levels.values())
            m2, ft2 = _areas(deck)
            row.update({"owner": man.site.owner, "report_units": man.site.report_units,
                        "levels_count": len(man.levels),
                        "levels": ", ".join(man.levels),
                        "deck_area_m2": m2, "deck_area_ft2": ft2,
                        "repairs_count": sum(lv.repairs for lv in man.levels.values()),
                        **_item_totals(man, SITE_ROWS), **_estimates(man, SITE_ROWS)})
            level_rows.extend(_level_rows(s_done, man))
            class_rows.extend(_class_rows(s_done, man))
            qty_rows.extend(_quantity_rows(s_done, man))
            if shapes is not None:
                outlines.append(shapes)
                c = shapes.geometry.union_all().centroid
                lonlat = (float(c.x), float(c.y))
            row["run_folder"] = _rel(s.run_dir, out_dir)
            webmap = s.run_dir / MAP_NAME
            row["webmap"] = _rel(webmap, out_dir) if webmap.is_file() else ""
        else:
            level_rows.append({"site_id": s.id, "site_name": s.name, "level_id": "",
                               "status": status, "message": message})
        row["longitude_deg"] = None if lonlat is None else round(lonlat[0], 7)
        row["latitude_deg"] = None if lonlat is None else round(lonlat[1], 7)
        row["elapsed_s"] = s.elapsed_s
        site_rows.append(row)
        if lonlat is not None:
            points.append({"site_id": s.id, "site_name": s.name, "status": status,
                           "geometry": Point(*lonlat)})
    cols = ["site_id", "site_name", "status", "message", "owner", "report_units",
            "levels_count", "levels", "deck_area_m2", "deck_area_ft2", "repairs_count"]
    sites_df = pd.DataFrame(site_rows)
    sites_df = sites_df.reindex(columns=[*cols, *[c for c in sites_df if c not in cols]])
    levels_df = pd.DataFrame(level_rows)
    for df in (sites_df, levels_df):  # counts stay whole numbers beside a failed site's blanks
        for c in ("levels_count", "repairs_count"):
            if c in df:
                df[c] = df[c].astype("Int64")
    pts = (gpd.GeoDataFrame(points, geometry="geometry", crs="EPSG:4326") if points else
           gpd.GeoDataFrame({"site_id": []}, geometry=[], crs="EPSG:4326"))
    outl = (pd.concat(outlines, ignore_index=True) if outlines else
            gpd.GeoDataFrame({"site_id": []}, geometry=[], crs="EPSG:4326"))
    return PortfolioTables(sites_df, levels_df, pd.DataFrame(class_rows),
                           pd.DataFrame(qty_rows), pts, gpd.GeoDataFrame(outl, crs="EPSG:4326"))


def _write_gpkg(path: Path, t: PortfolioTables) -> Path:
    import pyogrio

    def write(tmp: Path) -> None:
        pts = t.points.merge(t.sites.drop(columns=["site_name", "status"]), on="site_id",
                             how="left") if len(t.points) else t.points
        pyogrio.write_dataframe(pts, tmp, layer="sites", driver="GPKG",
                                geometry_type="Point")
        if len(t.outlines):
            pyogrio.write_dataframe(t.outlines, tmp, layer="site_outlines", driver="GPKG",
                                    append=False, promote_to_multi=True)
        for name in ("sites_table", "levels", "class_areas", "quantities"):
            df = t.sites if name == "sites_table" else t.table(name)
            if len(df.columns):
                pyogrio.write_dataframe(df, tmp, layer=name, driver="GPKG")

    return atomic_write(path, write, what="portfolio GeoPackage")


def _write_xlsx(path: Path, t: PortfolioTables) -> Path:
    def write(tmp: Path) -> None:
        with pd.ExcelWriter(tmp, engine="openpyxl") as xw:
            for name in TABLES:
                safe_frame(t.table(name)).to_excel(xw, sheet_name=name, index=False)

    return atomic_write(path, write, what="portfolio workbook")


def _write_csv(path: Path, df: pd.DataFrame, name: str) -> Path:
    """Write one table (text cells already made safe from formulas) atomically."""
    return atomic_write(path, lambda tmp: df.to_csv(tmp, index=False),
                        what=f"portfolio {name} CSV")


def write_tables(out_dir: Path, t: PortfolioTables) -> list[str]:
    """Write the tables as CSV files, ``portfolio.gpkg`` and ``portfolio.xlsx`` (atomically).

    Returns
    -------
    list of str
        The files written, relative to ``out_dir``.
    """
    files = []
    for name, fname in SUMMARY_CSV.items():
        _write_csv(out_dir / fname, safe_frame(t.table(name)), name)  # no text as a formula
        files.append(fname)
    _write_gpkg(out_dir / SUMMARY_GPKG, t)
    _write_xlsx(out_dir / SUMMARY_XLSX, t)
    return [*files, SUMMARY_GPKG, SUMMARY_XLSX]


def run_folders(out_dir: str | Path) -> list[Path]:
    """Return the run folders of the sites that completed, from a portfolio's summary.

    The hook for exporters of a whole portfolio (a database, say): each is an ordinary
    output folder of ``geo-corrosion run``, in the order of ``portfolio_sites.csv``.

    Raises
    ------
    ExportError
        The folder holds no readable ``portfolio_sites.csv`` (it names the file).
    """
    import csv

    from geo_corrosion.errors import ExportError

    path = Path(out_dir) / SUMMARY_CSV["sites"]
    try:
        with path.open(newline="", encoding="utf-8") as f:
            rows = list(csv.DictReader(f))
    except (OSError, UnicodeDecodeError, csv.Error) as err:
        raise ExportError(f"{path}: cannot be read ({err}); is {out_dir} the output folder "
                          "of `geo-corrosion portfolio`?") from err
    return [Path(out_dir) / r["run_folder"] for r in rows
            if r.get("status") == "done" and r.get("run_folder")]

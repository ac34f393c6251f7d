"""Re-pricing: repair outlines edited in the run's GeoPackage, read, checked and applied.

:func:`read_gpkg_edits` reads the ``<level>_repairs`` layers of a run's ``survey.gpkg`` (in
the site CRS, as a GIS leaves them) back into each level's survey grid with the level's grid
tie; :func:`repair_editor` gives :func:`~geo_corrosion.stages.plan_repairs.plan_level` the
function that checks them against the laid-out repairs
(:func:`geo_corrosion.repair.edits.check_edits`) and puts them in place
(:func:`geo_corrosion.repair.edits.apply_edits`, then the tender's columns again).
:func:`read_dxf_edits` reads the outlines of a level edited in CAD on its drawing sheet.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable
from pathlib import Path
from typing import Any

import geopandas as gpd
import pyogrio
import shapely
from shapely.geometry.base import BaseGeometry

from geo_corrosion.errors import ExportError, GeometryWarning
from geo_corrosion.exporters.dxf import XDATA_APP
from geo_corrosion.model.site import Level, Site
from geo_corrosion.repair.edits import EditedOutline, apply_edits, check_edits
from geo_corrosion.repair.tender import tender_columns
from geo_corrosion.stages.plan_repairs import PlanningParams, sounding_numbers

__all__ = ["LevelEdits", "precheck_edits", "read_dxf_edits", "read_gpkg_edits",
           "repair_editor"]

#: Columns :func:`~geo_corrosion.repair.tender.tender_columns` adds (recomputed after an edit).
_TENDER = ("dimensions", "location", "joint_edge_m", "anodes", "bar_replacement_m")

LevelEdits = tuple[str, list[EditedOutline]]


def read_gpkg_edits(gpkg: str | Path, site: Site) -> dict[str, LevelEdits]:
    """Read every level's repair outlines from a run's GeoPackage, in survey-grid coordinates.

    Returns
    -------
    dict
        By level id: the source (``survey.gpkg layer L2_repairs``) and the outlines, each
        named by its feature id (``fid``).  A level without a repairs layer is absent.

    Raises
    ------
    ExportError
        If the GeoPackage cannot be read, or a repairs layer has no ``repair_id`` column.
    """
    path = Path(gpkg)
    try:
        layers = {str(n) for n, _t in pyogrio.list_layers(path)}
    except Exception as err:  # noqa: BLE001 - any reading error becomes one message
        raise ExportError(f"{path}: cannot be read ({err}); is it the run's GeoPackage?") from err
    out: dict[str, LevelEdits] = {}
    for lid, lv in site.levels.items():
        name = f"{lid}_repairs"
        if name not in layers:
            continue
        source = f"{path} layer {name}"
        df = pyogrio.read_dataframe(path, layer=name, fid_as_index=True)
        if "repair_id" not in df.columns:
            raise ExportError(f"{source}: has no repair_id column; restore it (each repair "
                              "keeps its id) and run `geo-corrosion reprice` again")
        edits = []
        for fid, rid, g in zip(df.index, df["repair_id"], df.geometry, strict=True):
            local = None if g is None or g.is_empty else lv.grid.geom_to_local(g)
            edits.append(EditedOutline(f"{source} feature fid {fid}",
                                       None if rid is None or rid != rid else str(rid), local))
        out[lid] = (source, edits)
    return out


def read_dxf_edits(dxf: str | Path, site: Site, *, level_id: str | None = None
                   ) -> dict[str, LevelEdits]:
    """Read a level's repair outlines from its drawing sheet (``<level>_repairs.dxf``).

    Closed LWPOLYLINEs of model space on the ``GC-REPAIR-*`` layers are the outlines; each
    carries its repair id as XDATA of :data:`XDATA_APP` (kept by CAD when its vertices are
    moved).  Model space is the survey grid unless ``[drawings].coords = "site"``, when the
    outline is brought back with the level's grid tie.  The level is ``level_id`` or the
    file name's prefix.

    Raises
    ------
    ExportError
        If the file cannot be read or names no level of the site.
    """
    from ezdxf import recover
    from ezdxf.entities.lwpolyline import LWPolyline
    from ezdxf.lldxf.const import DXFStructureError

    path = Path(dxf)
    lid = level_id or path.stem.removesuffix("_repairs")
    if lid not in site.levels:
        raise ExportError(f"{path}: names no level of the site ({', '.join(site.levels)}); "
                          "give the sheet of a level, drawings/<level>_repairs.dxf")
    lv = site.levels[lid]
    try:
        doc, _auditor = recover.readfile(str(path))
    except (OSError, DXFStructureError) as err:
        raise ExportError(f"{path}: cannot be read as DXF ({err})") from err
    in_site = site.config.drawings.coords == "site"
    edits = []
    for e in doc.modelspace():
        layer = str(e.dxf.get("layer", ""))
        if not layer.upper().startswith("GC-REPAIR-") or e.dxftype() == "HATCH":
            continue
        where = f"{path} layer {layer} entity handle {e.dxf.handle}"
        rid = None
        if e.has_xdata(XDATA_APP):
            vals = [v for code, v in e.get_xdata(XDATA_APP) if code == 1000]
            rid = str(vals[0]) if vals else None
        if not isinstance(e, LWPolyline):  # not an outline: refused as having none
            edits.append(EditedOutline(f"{where} (a {e.dxftype()}, not a closed polyline)",
                                       rid, None))
            continue
        pts = [(float(x), float(y)) for x, y in e.get_points("xy")]
        geom: BaseGeometry | None = None
        if e.closed and len(pts) >= 3:
            geom = shapely.Polygon(pts)
        elif len(pts) >= 2:
            geom = shapely.LineString(pts)
        if geom is not None and in_site:
            geom = lv.grid.geom_to_local(geom)
        edits.append(EditedOutline(where, rid, geom))
    return {lid: (f"{path} (GC-REPAIR-* layers)", edits)}


def precheck_edits(site: Site, edits: dict[str, LevelEdits],
                   repair_ids: dict[str, list[str]]) -> None:
    """Check the edits against the run's repair ids before any computation.

    ``repair_ids``: by level, the ids ``run.json`` lists (``levels.<id>.repair_list``); a
    soffit repair is one whose id holds ``-OH``.  Refuses as
    :func:`~geo_corrosion.repair.edits.check_edits` does (warnings are left to the run).
    A level of the run whose repairs layer is gone is refused.
    """
    for lid, ids in repair_ids.items():
        if ids and lid not in edits:
            raise ExportError(f"{lid}_repairs: the layer is missing from the run's "
                              "GeoPackage; restore it and run `geo-corrosion reprice` again")
    for lid, found in edits.items():
        lv = site.levels[lid]
        ids = repair_ids.get(lid, [])
        frame = gpd.GeoDataFrame({"repair_id": ids,
                                  "face": ["soffit" if "-OH" in r else "top" for r in ids]},
                                 geometry=gpd.GeoSeries([None] * len(ids)))
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", GeometryWarning)
            check_edits(frame, found[1], slab=lv.slab, exclusions=lv.exclusion_polygons(),
                        source=found[0])


def repair_editor(level: Level, params: PlanningParams, found: LevelEdits,
                  records: list[dict[str, Any]]
                  ) -> Callable[[gpd.GeoDataFrame], gpd.GeoDataFrame]:
    """Return the function that puts a level's edited outlines in place of its layout.

    The function checks the edits (refusing a bad one, warning with
    :class:`~geo_corrosion.errors.GeometryWarning`), applies them, recomputes the tender's
    columns and appends one record per edited repair to ``records`` (``run.json`` edits).
    """
    source, edits = found
    numbers = sounding_numbers(level)
    soundings = {lab: f.geometry for k in ("delamination", "spall")
                 for f, lab in zip(level.overlays.get(k, ()), numbers.get(k, []), strict=True)}

    def edit(repairs: gpd.GeoDataFrame) -> gpd.GeoDataFrame:
        outlines, notes = check_edits(repairs, edits, slab=level.slab,
                                      exclusions=level.exclusion_polygons(),
                                      soundings=soundings, source=source)
        for n in notes:
            warnings.warn(n, GeometryWarning, stacklevel=2)
        new, done = apply_edits(repairs, outlines, unit=level.unit, slab=level.slab,
                                soundings=soundings)
        if not done:
            return repairs
        joints = [j.geometry for j in level.joints]
        base = new.drop(columns=[c for c in _TENDER if c in new.columns])
        new = gpd.GeoDataFrame(tender_columns(
            base, joints=joints, unit=level.unit, units=params.units,
            anode_spacing_mm=params.anode_spacing_mm, bar_share=params.bar_replacement_share,
            bar_spacing_mm=params.bar_spacing_mm,
            column_grid=[(f.geometry, f.label) for f in level.column_grid],
            stations=None if level.config.station_start is None else (
                level.config.station_start, level.config.station_centerline_y)),
            geometry=new.geometry.name)[list(repairs.columns)]
        records.extend({"level_id": level.id, "repair_id": e.repair_id,
                        "old_area_m2": e.old_area_m2, "new_area_m2": e.new_area_m2,
                        "source": source} for e in done)
        return new

    return edit

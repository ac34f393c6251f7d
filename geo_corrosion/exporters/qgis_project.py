"""QGIS project exporter: ``survey.qgs`` in the run folder, every level a group, styled.

The project is plain XML (QGIS's ``.qgs`` format) with paths relative to the run folder
(``./survey.gpkg|layername=L2_classes_potential``, ``./rasters/L2_potential.tif``), so the
folder can be moved or zipped.  Each level is a group, in the site's order; inside it,
top to bottom: QA findings, readings, repairs (with pay areas and the survey-grid nodes),
zones, sounding, the plan (joints, exclusions, slab), contours, classes, surfaces.  The
first level is shown, the others are unticked (levels of a garage lie over each other).
Site-wide layers (readings, QA findings) are shown in each level's group through a filter
on ``level_id``.

Every layer carries the style of :mod:`geo_corrosion.exporters.qgis_styles` (the same as
the GeoPackage's ``layer_styles``); rasters get a ``.qml`` beside them too.  Only the repair
outlines are editable; the project's snapping snaps to the vertices of the survey-grid
nodes (``<level>_grid``, tolerance 0.45 of the reading spacing in map units) and to the
vertices and segments of the other repairs.
"""

from __future__ import annotations

import math
import xml.etree.ElementTree as ET
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any, ClassVar

from geo_corrosion._io import atomic_write
from geo_corrosion.exporters.base import Exporter
from geo_corrosion.exporters.gpkg import GPKG_NAME
from geo_corrosion.exporters.qgis_styles import (
    GRID_SUFFIX,
    QGIS_VERSION,
    StyleSpec,
    grid_spacing_m,
    layer_specs,
    qml_children,
    qml_root_attrs,
    raster_styles,
    run_context,
    split_level,
    write_raster_styles,
)

if TYPE_CHECKING:
    from geo_corrosion.model.results import RunResult

__all__ = ["PROJECT_NAME", "QgisProjectExporter", "SECTIONS", "layer_section",
           "project_xml"]

PROJECT_NAME = "survey.qgs"
#: The sections of a level's group, top to bottom (the order the layers are drawn in reverse).
SECTIONS: tuple[str, ...] = ("qa", "readings", "repairs", "zones", "sounding", "plan",
                             "contours", "classes", "surfaces")
_SOUNDING = ("delaminations", "spalls", "soffit_delaminations", "patches", "cracks")


def layer_section(what: str) -> str:
    """Return the section of a layer from its name without the level (``"repairs"``)."""
    if what == "qa_flags":
        return "qa"
    if what.startswith(("readings_", "points_", "cv_residuals_")):
        return "readings"
    if what in ("repairs", "pay_areas", GRID_SUFFIX):
        return "repairs"
    if what == "zones":
        return "zones"
    if what in _SOUNDING:
        return "sounding"
    if what.startswith("contours_"):
        return "contours"
    if what.startswith(("classes_", "combined_classes", "thiessen_", "bands_")):
        return "classes"
    if what.startswith("surface"):
        return "surfaces"
    return "plan"


@dataclass
class _Entry:
    """One layer of the project (QGIS keeps an id only if it is over 10 characters long)."""

    id: str
    name: str
    kind: str  # vector or raster
    source: str
    provider: str
    section: str
    checked: bool
    spec: StyleSpec | None = None
    raster_qml: str = ""
    editable: bool = False
    grid_tolerance: float = 0.0


def _srs(parent: ET.Element, crs: Any) -> None:
    """Write a ``<spatialrefsys>`` of a pyproj CRS (WKT and authority id)."""
    srs = ET.SubElement(parent, "spatialrefsys")
    if crs is None:
        return
    ET.SubElement(srs, "wkt").text = crs.to_wkt()
    auth = crs.to_authority()
    if auth is not None:
        ET.SubElement(srs, "authid").text = f"{auth[0]}:{auth[1]}"
    ET.SubElement(srs, "description").text = crs.name
    ET.SubElement(srs, "geographicflag").text = "true" if crs.is_geographic else "false"


def _map_units(crs: Any) -> tuple[str, float]:
    """Return QGIS's map unit name of a CRS and metres per map unit."""
    if crs is None:
        return "meters", 1.0
    if crs.is_geographic:
        return "degrees", 111_320.0
    f = float(crs.axis_info[0].unit_conversion_factor or 1.0) if crs.axis_info else 1.0
    return ("meters" if abs(f - 1.0) < 1e-9 else "feet"), f


#: Order inside a section: readings before their classed points and residuals, the class
#: sets of the kinds before the combined condition and the cells; then the rest.
_RANK = ("readings_", "points_", "cv_residuals_", "repairs", "pay_areas", "grid", "classes_",
         "combined_classes", "thiessen_", "bands_")


def _rank(layer_id: str) -> int:
    for i, p in enumerate(_RANK):
        if p in layer_id:
            return i
    return len(_RANK)


def _checked(what: str, first_kind: str) -> bool:
    """Whether a layer is ticked when the project opens (one class fill, one contour set)."""
    if what.startswith(("readings_", "cv_residuals_", "thiessen_", "bands_", "surface")):
        return False
    if what.startswith(("classes_", "contours_")):
        return what.split("_", 1)[1] == first_kind
    return what != "combined_classes"


def _entries(result: RunResult, out_dir: Path,
             rasters: dict[Path, tuple[str, str]] | None = None,
             ) -> tuple[list[tuple[str, str, list[_Entry]]], dict[str, StyleSpec]]:
    """Return (group id, group name, entries in order) per level, and the layer styles."""
    gpkg = out_dir / GPKG_NAME
    specs = layer_specs(gpkg, result) if gpkg.is_file() else {}
    levels, titles, _cs = run_context(result)
    _unit, m_per_unit = _map_units(result.site.crs)
    kinds = [k for lr in result.levels.values() for k in lr.surfaces]
    first_kind = kinds[0] if kinds else ""
    if rasters is None:
        rasters = _raster_styles(result, out_dir)
    groups: list[tuple[str, str, list[_Entry]]] = []
    site_wide = {n: s for n, s in specs.items() if not split_level(n, levels)[0]}
    for lid in levels:
        ents: list[_Entry] = []
        for name, spec in specs.items():
            own, what = split_level(name, levels)
            if own != lid:
                continue
            e = _Entry(f"gclayer_{name}", spec.title, "vector",
                       f"./{GPKG_NAME}|layername={name}", "ogr", layer_section(what),
                       _checked(what, first_kind), spec)
            e.editable = what == "repairs"
            if what == GRID_SUFFIX:
                e.grid_tolerance = 0.45 * grid_spacing_m(result, lid) / m_per_unit
            ents.append(e)
        for name, spec in site_wide.items():  # readings and QA findings of this level
            quoted = lid.replace("'", "''")
            sub = f"\"level_id\" = '{quoted}'"
            ents.append(_Entry(f"gclayer_{lid}_{name}", spec.title, "vector",
                               f"./{GPKG_NAME}|layername={name}|subset={sub}", "ogr",
                               layer_section(name), _checked(name, first_kind), spec))
        for tif, (qml, title) in rasters.items():
            own, what = split_level(tif.stem, levels)
            if own != lid:
                continue
            short = title.split(": ", 1)[1] if title.startswith(f"{titles.get(lid, lid)}: ") \
                else title
            ents.append(_Entry(f"gclayer_{tif.stem}", short, "raster",
                               f"./rasters/{tif.name}", "gdal", "surfaces",
                               False, raster_qml=qml))
        order = {s: i for i, s in enumerate(SECTIONS)}
        ents.sort(key=lambda e: (order[e.section], _rank(e.id)))  # stable: file order else
        groups.append((lid, titles.get(lid, lid), ents))
    return groups, specs


def _raster_styles(result: RunResult, out_dir: Path) -> dict[Path, tuple[str, str]]:
    rdir = out_dir / "rasters"
    return raster_styles(result, sorted(rdir.glob("*.tif"))) if rdir.is_dir() else {}


def project_xml(result: RunResult, out_dir: Path,
                rasters: dict[Path, tuple[str, str]] | None = None) -> str:
    """Return the text of the run's QGIS project (``.qgs``).

    ``rasters`` are the raster styles of :func:`.qgis_styles.raster_styles` (read from the
    run folder when not given).
    """
    groups, _specs = _entries(result, out_dir, rasters)
    crs = result.site.crs
    site_name = str(getattr(result.site.config, "name", "") or "survey")
    root = ET.Element("qgis", {"version": QGIS_VERSION, "projectname": site_name})
    ET.SubElement(root, "homePath", path="")
    ET.SubElement(root, "title").text = site_name
    _srs(ET.SubElement(root, "projectCrs"), crs)
    tree = ET.SubElement(root, "layer-tree-group")
    ET.SubElement(tree, "customproperties")
    all_entries: list[_Entry] = []
    for i, (lid, name, ents) in enumerate(groups):
        g = ET.SubElement(tree, "layer-tree-group", {
            "name": f"{name} ({lid})" if name != lid else lid, "expanded": "1" if i == 0
            else "0", "checked": "Qt::Checked" if i == 0 else "Qt::Unchecked"})
        cp = ET.SubElement(ET.SubElement(g, "customproperties"), "Option", type="Map")
        ET.SubElement(cp, "Option", name="geo_corrosion/level", value=lid, type="QString")
        for e in ents:
            ET.SubElement(g, "layer-tree-layer", {
                "id": e.id, "name": e.name, "source": e.source, "providerKey": e.provider,
                "checked": "Qt::Checked" if e.checked else "Qt::Unchecked",
                "expanded": "1" if e.checked and e.kind == "vector" else "0"})
            all_entries.append(e)
    # snapping: the survey-grid nodes (vertices) and the other repairs (vertices, segments)
    grid = [e for e in all_entries if e.grid_tolerance > 0]
    tol = min((e.grid_tolerance for e in grid), default=0.0)
    snap = ET.SubElement(root, "snapping-settings", {
        "enabled": "1" if grid else "0", "mode": "3", "type": "1",
        "tolerance": f"{tol:.6g}", "unit": "2", "intersection-snapping": "0",
        "self-snapping": "0", "scaleDependencyMode": "0", "minScale": "0", "maxScale": "0"})
    ind = ET.SubElement(snap, "individual-layer-settings")
    for e in all_entries:
        if e.grid_tolerance > 0:
            ET.SubElement(ind, "layer-setting", {"id": e.id, "enabled": "1", "type": "1",
                                                 "tolerance": f"{e.grid_tolerance:.6g}",
                                                 "units": "2", "minScale": "0",
                                                 "maxScale": "0"})
        elif e.editable:
            ET.SubElement(ind, "layer-setting", {"id": e.id, "enabled": "1", "type": "3",
                                                 "tolerance": f"{tol:.6g}", "units": "2",
                                                 "minScale": "0", "maxScale": "0"})
    layers = ET.SubElement(root, "projectlayers")
    for e in all_entries:
        layers.append(_maplayer(e, crs))
    lo = ET.SubElement(root, "layerorder")
    for e in all_entries:
        ET.SubElement(lo, "layer", id=e.id)
    _canvas(root, result, crs)
    props = ET.SubElement(root, "properties")
    paths = ET.SubElement(props, "Paths")
    ET.SubElement(paths, "Absolute", type="bool").text = "false"
    if crs is not None:  # QGIS 3.22 reads <projectCrs> only with this entry set
        srs = ET.SubElement(props, "SpatialRefSys")
        ET.SubElement(srs, "ProjectionsEnabled", type="int").text = "1"
    ET.indent(root)
    return ("<!DOCTYPE qgis PUBLIC 'http://mrcc.com/qgis.dtd' 'SYSTEM'>\n"
            + ET.tostring(root, encoding="unicode"))


def _maplayer(e: _Entry, crs: Any) -> ET.Element:
    if e.kind == "raster":
        qml = ET.fromstring(e.raster_qml.split("\n", 1)[1])
        ml = ET.Element("maplayer", {"type": "raster", **{k: v for k, v in qml.attrib.items()
                                                        if k != "version"}})
    else:
        assert e.spec is not None
        geom = {"point": "Point", "line": "Line", "polygon": "Polygon"}[e.spec.geometry]
        ml = ET.Element("maplayer", {"type": "vector", "geometry": geom,
                                     **qml_root_attrs(e.spec)})
        ml.set("readOnly", "0" if e.editable else "1")
        if e.grid_tolerance > 0:  # the grid nodes show when zoomed in (1:150 and closer)
            ml.set("hasScaleBasedVisibilityFlag", "1")
            ml.set("minScale", "150")
    ET.SubElement(ml, "id").text = e.id
    ET.SubElement(ml, "datasource").text = e.source
    ET.SubElement(ml, "layername").text = e.name
    _srs(ET.SubElement(ml, "srs"), crs)
    prov = ET.SubElement(ml, "provider", encoding="UTF-8")
    prov.text = e.provider
    if e.kind == "raster":
        ml.extend(list(qml))
    else:
        assert e.spec is not None
        ml.extend(qml_children(e.spec))
    return ml


def _canvas(root: ET.Element, result: RunResult, crs: Any) -> None:
    """Open the project on the first level's slab."""
    import shapely

    unit, _f = _map_units(crs)
    mc = ET.SubElement(root, "mapcanvas", name="theMapCanvas", annotationsVisible="1")
    ET.SubElement(mc, "units").text = unit
    if result.levels:
        lr = next(iter(result.levels.values()))
        slab = lr.level.grid.geom_to_site(lr.level.slab)
        x0, y0, x1, y1 = shapely.buffer(slab, max(slab.length * 0.01, 1e-6)).bounds
        ext = ET.SubElement(mc, "extent")
        for tag, v in (("xmin", x0), ("ymin", y0), ("xmax", x1), ("ymax", y1)):
            ET.SubElement(ext, tag).text = repr(float(v)) if math.isfinite(v) else "0"
    ET.SubElement(mc, "rotation").text = "0"
    _srs(ET.SubElement(mc, "destinationsrs"), crs)


class QgisProjectExporter(Exporter):
    """Write ``survey.qgs`` (every level a group, styled) and a ``.qml`` beside each raster."""

    name: ClassVar[str] = "qgis-project"
    description: ClassVar[str] = ("QGIS project survey.qgs: levels as groups, styled layers, "
                                  "repairs editable with snapping to the survey grid")
    run_last: ClassVar[bool] = True  # reads survey.gpkg and the rasters

    def export(self, result: RunResult, out_dir: Path) -> list[Path]:
        """Write the raster styles and the project."""
        out_dir = Path(out_dir)
        rasters = _raster_styles(result, out_dir)
        paths = write_raster_styles(rasters)
        if not (out_dir / GPKG_NAME).is_file() and not paths:
            return paths
        text = project_xml(result, out_dir, rasters)
        dest = out_dir / PROJECT_NAME
        atomic_write(dest, lambda tmp: tmp.write_text(text, encoding="utf-8"),
                     what="QGIS project")
        return [*paths, dest]

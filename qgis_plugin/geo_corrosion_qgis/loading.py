"""Load a run folder's layers, styled, into a QGIS project (main thread only).

The run's own project ``survey.qgs`` (a group per level, styles, relative paths) is read
into a scratch project and its layer tree copied into the target project under one group
named after the run; without it the GeoPackage's layers (each with its default style from
the ``layer_styles`` table) and the rasters (with the ``.qml`` beside each) are added,
grouped by level.
"""

from __future__ import annotations

import json
from pathlib import Path

from qgis.core import (
    QgsLayerTreeGroup,
    QgsLayerTreeLayer,
    QgsProject,
    QgsRasterLayer,
    QgsVectorLayer,
)

__all__ = ["group_name", "load_run", "reload_run_layers", "PROJECT_NAME", "GPKG_NAME"]

PROJECT_NAME = "survey.qgs"
GPKG_NAME = "survey.gpkg"
SCHEDULE_NAME = "quantities.csv"
SCHEDULE_TITLE = "schedule of quantities"


def group_name(run_dir: Path) -> str:
    """Return the name of the run's group in the layer tree."""
    return f"corrosion survey: {Path(run_dir).name}"


def _levels(run_dir: Path) -> list[str]:
    try:
        manifest = json.loads((run_dir / "run.json").read_text(encoding="utf-8"))
        return [str(k) for k in manifest.get("levels", {})]
    except (OSError, ValueError, AttributeError):
        return []


def _copy_tree(src: QgsLayerTreeGroup, dest: QgsLayerTreeGroup, project: QgsProject) -> int:
    n = 0
    for child in src.children():
        if isinstance(child, QgsLayerTreeGroup):
            sub = dest.addGroup(child.name())
            sub.setItemVisibilityChecked(child.itemVisibilityChecked())
            sub.setExpanded(child.isExpanded())
            n += _copy_tree(child, sub, project)
        elif isinstance(child, QgsLayerTreeLayer) and child.layer() is not None:
            layer = child.layer().clone()
            layer.setName(child.name() or child.layer().name())
            project.addMapLayer(layer, False)
            node = dest.addLayer(layer)
            node.setItemVisibilityChecked(child.itemVisibilityChecked())
            node.setExpanded(False)
            n += 1
    return n


def _gpkg_layers(gpkg: Path) -> list[QgsVectorLayer]:
    """Return every vector layer of the GeoPackage, each with its default style."""
    names: list[str] = []
    probe = QgsVectorLayer(str(gpkg), "probe", "ogr")
    for sub in probe.dataProvider().subLayers() if probe.isValid() else []:
        parts = sub.split(probe.dataProvider().sublayerSeparator())
        if len(parts) > 1 and parts[1] not in names and parts[1] != "layer_styles":
            names.append(parts[1])
    out = []
    for name in names:
        layer = QgsVectorLayer(f"{gpkg}|layername={name}", name, "ogr")
        if layer.isValid():
            out.append(layer)  # the default style of layer_styles is applied on load
    return out


def _add_from_files(run_dir: Path, top: QgsLayerTreeGroup, project: QgsProject) -> int:
    levels = _levels(run_dir)
    groups: dict[str, QgsLayerTreeGroup] = {}

    def group_of(name: str) -> QgsLayerTreeGroup:
        lid = next((lv for lv in levels if name.startswith(f"{lv}_")), "")
        key = f"level {lid}" if lid else "whole site"
        if key not in groups:
            groups[key] = top.addGroup(key)
            groups[key].setExpanded(False)
        return groups[key]

    n = 0
    gpkg = run_dir / GPKG_NAME
    if gpkg.is_file():
        for layer in _gpkg_layers(gpkg):
            project.addMapLayer(layer, False)
            group_of(layer.name()).addLayer(layer).setExpanded(False)
            n += 1
    for tif in sorted((run_dir / "rasters").glob("*.tif")):
        raster = QgsRasterLayer(str(tif), tif.stem)  # a .qml beside it is its default style
        if raster.isValid():
            project.addMapLayer(raster, False)
            node = group_of(tif.stem).addLayer(raster)
            node.setItemVisibilityChecked(False)
            node.setExpanded(False)
            n += 1
    return n


def _add_schedule(run_dir: Path, top: QgsLayerTreeGroup, project: QgsProject) -> int:
    csv = run_dir / SCHEDULE_NAME
    if not csv.is_file():
        return 0
    uri = f"{csv.as_uri()}?type=csv&detectTypes=yes&geomType=none"
    table = QgsVectorLayer(uri, SCHEDULE_TITLE, "delimitedtext")
    if not table.isValid():
        return 0
    project.addMapLayer(table, False)
    top.insertLayer(0, table)
    return 1


def load_run(run_dir: Path, project: QgsProject) -> tuple[int, str]:
    """Add the run's layers to ``project`` under one group; return (layers, how).

    A group of the same name from an earlier load is replaced, so re-running or re-pricing
    shows the new outputs.
    """
    run_dir = Path(run_dir)
    root = project.layerTreeRoot()
    name = group_name(run_dir)
    old = root.findGroup(name)
    index = 0
    if old is not None:
        index = root.children().index(old)
        ids = old.findLayerIds()
        root.removeChildNode(old)
        project.removeMapLayers([i for i in ids if root.findLayer(i) is None])
    top = root.insertGroup(index, name)
    qgs = run_dir / PROJECT_NAME
    n, how = 0, ""
    if qgs.is_file():
        scratch = QgsProject()
        if scratch.read(str(qgs)):
            n = _copy_tree(scratch.layerTreeRoot(), top, project)
            how = f"the run's project {qgs.name}"
        scratch.clear()
    if n == 0:
        n = _add_from_files(run_dir, top, project)
        how = f"the layers of {GPKG_NAME} and rasters/ with their default styles"
    n += _add_schedule(run_dir, top, project)
    return n, how


def reload_run_layers(run_dir: Path, project: QgsProject) -> int:
    """Reopen every layer of ``project`` read from a file of ``run_dir``; return how many.

    A re-priced run is written into a new folder and swapped in, so the files a layer had
    open were replaced: its provider is reopened on the new files.
    """
    prefix = str(Path(run_dir).resolve())
    n = 0
    for layer in project.mapLayers().values():
        path = layer.source().split("|")[0]
        if path.startswith("file://"):
            path = path[len("file://"):].split("?")[0]
        try:
            inside = str(Path(path).resolve()).startswith(prefix)
        except (OSError, ValueError):
            inside = False
        if not inside:
            continue
        provider = layer.dataProvider()
        if provider is not None:
            provider.reloadData()
        layer.reload()
        layer.triggerRepaint()
        n += 1
    return n

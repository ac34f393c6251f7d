"""Open a run folder with PyQGIS as a user would, and report what QGIS sees, as JSON.

Run by Debian's ``/usr/bin/python3`` (PyQGIS), not by our venv:
``python3 pyqgis_check.py RUN_DIR OUT_JSON [PNG LEVEL_ID]``.  It

* opens every feature layer of ``survey.gpkg`` and loads its default style from the
  ``layer_styles`` table, recording the renderer, its categories/ranges and the labels;
* renders every layer alone to a small image and counts its colours;
* reads ``survey.qgs``: groups, layers in order, validity, sources, snapping, editability;
* with ``PNG LEVEL_ID``, renders the ticked layers of that level's group to ``PNG``.

The verdicts are the test's (``test_qgis_styles.py``); this script only observes.
"""

from __future__ import annotations

import json
import os
import shutil
import sqlite3
import sys
from pathlib import Path

from qgis.core import (  # type: ignore[import-not-found]
    QgsApplication,
    QgsCategorizedSymbolRenderer,
    QgsGraduatedSymbolRenderer,
    QgsLayerTreeGroup,
    QgsLayerTreeLayer,
    QgsMapRendererParallelJob,
    QgsMapSettings,
    QgsPointXY,
    QgsProject,
    QgsProviderRegistry,
    QgsRasterLayer,
    QgsRectangle,
    QgsSnappingConfig,
    QgsSnappingUtils,
    QgsVectorLayer,
)
from qgis.PyQt.QtCore import QSize  # type: ignore[import-not-found]
from qgis.PyQt.QtGui import QColor, QImage  # type: ignore[import-not-found]


def colours(img: QImage, step: int = 2) -> int:
    """Return the number of distinct colours of an image (every ``step`` pixel)."""
    seen = set()
    for y in range(0, img.height(), step):
        for x in range(0, img.width(), step):
            seen.add(img.pixel(x, y))
    return len(seen)


def render(layers: list, extent: QgsRectangle, crs, size: tuple[int, int]) -> QImage:
    """Render layers (top first) over white and return the image."""
    ms = QgsMapSettings()
    ms.setLayers(layers)
    ms.setDestinationCrs(crs)
    ms.setExtent(extent)
    ms.setOutputSize(QSize(*size))
    ms.setOutputDpi(110)
    ms.setBackgroundColor(QColor(255, 255, 255))
    ms.setFlag(QgsMapSettings.Antialiasing, True)
    ms.setFlag(QgsMapSettings.DrawLabeling, True)
    job = QgsMapRendererParallelJob(ms)
    job.start()
    job.waitForFinished()
    return job.renderedImage()


def gpkg_report(gpkg: Path) -> dict:
    """Open each feature layer with its default style; render it alone."""
    out: dict = {}
    con = sqlite3.connect(gpkg)
    sld_styles = dict(con.execute("SELECT f_table_name, styleSLD FROM layer_styles "
                                  "WHERE useAsDefault").fetchall())
    con.close()
    meta = QgsProviderRegistry.instance().providerMetadata("ogr")
    for sub in meta.querySublayers(str(gpkg)):
        name = sub.name()
        lay = QgsVectorLayer(f"{gpkg}|layername={name}", name, "ogr")
        if not lay.isValid() or not lay.isSpatial():
            continue
        msg, ok = lay.loadDefaultStyle()
        r = lay.renderer()
        rec: dict = {"style_loaded": bool(ok), "message": msg, "renderer": r.type(),
                     "labels": bool(lay.labelsEnabled()), "features": lay.featureCount()}
        if isinstance(r, QgsCategorizedSymbolRenderer):
            rec["attr"] = r.classAttribute()
            rec["categories"] = [[str(c.value()), c.label(), c.symbol().color().name().upper()]
                                 for c in r.categories()]
        if isinstance(r, QgsGraduatedSymbolRenderer):
            rec["attr"] = r.classAttribute()
            rec["ranges"] = [[x.lowerValue(), x.upperValue(), x.label(),
                              x.symbol().color().name().upper()] for x in r.ranges()]
        sld = sld_styles.get(name)
        if sld:  # QGIS as a reader of our SLD: a fresh layer styled from it alone
            path = Path(os.environ.get("HOME", "/tmp")) / f"gc_sld_{name}.sld"
            path.write_text(sld, encoding="utf-8")
            other = QgsVectorLayer(f"{gpkg}|layername={name}", name, "ogr")
            smsg, sok = other.loadSldStyle(str(path))
            path.unlink()
            rules = (other.renderer().rootRule().children()
                     if other.renderer().type() == "RuleRenderer" else [])
            rec["sld"] = {"loaded": bool(sok), "message": smsg,
                          "renderer": other.renderer().type(), "rules": len(rules),
                          "labels": bool(other.labelsEnabled())}
        ext = lay.extent()
        if not ext.isEmpty() or ext.width() > 0 or ext.height() > 0:
            ext = QgsRectangle(ext)
            ext.grow(max(ext.width(), ext.height(), 1.0) * 0.05)
            img = render([lay], ext, lay.crs(), (240, 180))
            rec["colours"] = colours(img, 1)
            if os.environ.get("GC_QGIS_LAYER_PNGS"):  # for a person to look at
                img.save(str(Path(os.environ["GC_QGIS_LAYER_PNGS"]) / f"{name}.png"))
        out[name] = rec
    return out


def tree_report(group: QgsLayerTreeGroup) -> list:
    """Return the groups of a layer tree with their layers in order."""
    out = []
    for child in group.children():
        if isinstance(child, QgsLayerTreeGroup):
            layers = []
            for node in child.children():
                if isinstance(node, QgsLayerTreeLayer):
                    lay = node.layer()
                    layers.append({"id": node.layerId(), "name": node.name(),
                                   "valid": bool(lay is not None and lay.isValid()),
                                   "checked": node.isVisible(),
                                   "source": lay.source() if lay is not None else "",
                                   "type": "raster" if isinstance(lay, QgsRasterLayer)
                                   else "vector",
                                   "renderer": (lay.renderer().type() if isinstance(
                                       lay, QgsVectorLayer) else lay.renderer().type())
                                   if lay is not None else "",
                                   "read_only": bool(lay.readOnly()) if lay else None})
            out.append({"name": child.name(), "checked": child.isVisible(),
                        "level": child.customProperty("geo_corrosion/level"),
                        "layers": layers})
    return out


def snap_probe(proj: QgsProject) -> dict:
    """Snap a point a little off a survey-grid node, as the vertex tool does when editing.

    The map shows the first level's ticked layers at 1:200; the point is 0.3 x the snapping
    tolerance off a node of its ``<level>_grid`` layer, away from every repair.
    """
    grids = [lay for lay in proj.mapLayers().values() if lay.id().endswith("_grid")]
    if not grids:
        return {}
    grid = sorted(grids, key=lambda lay: lay.id())[0]
    tol = proj.snappingConfig().individualLayerSettings()[grid].tolerance()
    repairs = [lay for lay in proj.mapLayers().values() if lay.id().endswith("_repairs")]
    group = proj.layerTreeRoot().findLayer(grid.id()).parent()
    outlines = [rf.geometry() for rl in repairs for rf in rl.getFeatures()]
    node = None
    for f in grid.getFeatures():
        if all(g.distance(f.geometry()) >= 3 * tol for g in outlines):
            node = f.geometry().asPoint()
            break
    if node is None:
        return {}
    ms = QgsMapSettings()
    ms.setLayers([n.layer() for n in group.findLayers() if n.itemVisibilityChecked()])
    ms.setDestinationCrs(proj.crs())
    ext = QgsRectangle(node.x() - 10, node.y() - 10, node.x() + 10, node.y() + 10)
    ms.setExtent(ext)
    ms.setOutputSize(QSize(800, 800))
    utils = QgsSnappingUtils()
    utils.setMapSettings(ms)
    utils.setConfig(proj.snappingConfig())
    utils.setEnableSnappingForInvisibleFeature(True)
    probe = QgsPointXY(node.x() + 0.3 * tol * 0.6, node.y() + 0.3 * tol * 0.8)
    m = utils.snapToMap(probe)
    return {"node": [node.x(), node.y()], "probe": [probe.x(), probe.y()],
            "tolerance": tol, "valid": m.isValid(),
            "layer": m.layer().id() if m.isValid() and m.layer() else "",
            "snapped": [m.point().x(), m.point().y()] if m.isValid() else None}


def edit_probe(run: Path, work: Path) -> dict:
    """Edit a copy of the run as a user would: move a repair corner by one grid spacing.

    Copies ``survey.gpkg`` and ``survey.qgs`` to ``work``, opens the project, moves the first
    vertex of the first repair of the first level one survey-grid spacing east (the distance
    between two ``<level>_grid`` nodes) and saves the layer edits.
    """
    work.mkdir(parents=True, exist_ok=True)
    for name in ("survey.gpkg", "survey.qgs"):
        shutil.copyfile(run / name, work / name)
    proj = QgsProject()
    proj.read(str(work / "survey.qgs"))
    repairs = sorted((lay for lay in proj.mapLayers().values()
                      if lay.id().endswith("_repairs")), key=lambda lay: lay.id())
    grids = sorted((lay for lay in proj.mapLayers().values() if lay.id().endswith("_grid")),
                   key=lambda lay: lay.id())
    if not repairs or not grids:
        return {}
    lay = repairs[0]
    pts = [f.geometry().asPoint() for f in grids[0].getFeatures()]
    step = min(p.distance(pts[0]) for p in pts[1:] if p.distance(pts[0]) > 1e-6)
    started = lay.startEditing()
    f = next(lay.getFeatures())
    v = f.geometry().vertexAt(0)
    moved = lay.moveVertex(v.x() + step, v.y(), f.id(), 0)
    committed = lay.commitChanges()
    return {"layer": lay.id(), "gpkg": str(work / "survey.gpkg"),
            "repair_id": f["repair_id"], "started": started, "moved": moved,
            "committed": committed, "errors": lay.commitErrors(),
            "from": [v.x(), v.y()], "to": [v.x() + step, v.y()], "step": step}


def main() -> None:
    """Observe a run folder with PyQGIS and write the JSON report."""
    run, dest = Path(sys.argv[1]), Path(sys.argv[2])
    QgsApplication.setPrefixPath("/usr", True)
    app = QgsApplication([], False)
    app.initQgis()
    rep: dict = {"gpkg": gpkg_report(run / "survey.gpkg")}
    proj = QgsProject.instance()
    rep["project_read"] = bool(proj.read(str(run / "survey.qgs")))
    rep["crs"] = proj.crs().authid()
    rep["groups"] = tree_report(proj.layerTreeRoot())
    snap = proj.snappingConfig()
    rep["snapping"] = {"enabled": snap.enabled(),
                       "mode": int(snap.mode()),
                       "layers": {lay.id(): {"enabled": s.enabled(),
                                             "tolerance": s.tolerance(),
                                             "units": int(s.units()),
                                             "vertex": bool(int(s.typeFlag())
                                                            & int(QgsSnappingConfig.VertexFlag))}
                                  for lay, s in snap.individualLayerSettings().items()
                                  if s.enabled()}}
    rep["editable"] = {lay.id(): not lay.readOnly() for lay in proj.mapLayers().values()
                       if isinstance(lay, QgsVectorLayer)}
    rep["snap_probe"] = snap_probe(proj)
    rep["edit"] = edit_probe(run, dest.parent / "edited")
    dest.write_text(json.dumps(rep, indent=1), encoding="utf-8")
    if len(sys.argv) > 4:
        png, lid = sys.argv[3], sys.argv[4]
        group = next(g for g in proj.layerTreeRoot().children()
                     if isinstance(g, QgsLayerTreeGroup)
                     and g.customProperty("geo_corrosion/level") == lid)
        layers = [n.layer() for n in group.findLayers()
                  if n.itemVisibilityChecked() and n.layer() is not None]
        slab = next(lay for lay in layers if lay.id() == f"gclayer_{lid}_slab")
        ext = QgsRectangle(slab.extent())
        ext.grow(max(ext.width(), ext.height()) * 0.03)
        w = 1800
        h = int(w * ext.height() / ext.width()) if ext.width() > 0 else w
        img = render(layers, ext, proj.crs(), (w, max(min(h, 2400), 400)))
        img.save(png)
        rep["render"] = {"png": png, "layers": [lay.name() for lay in layers],
                         "colours": colours(img), "size": [img.width(), img.height()]}
    dest.write_text(json.dumps(rep, indent=1), encoding="utf-8")
    app.exitQgis()


if __name__ == "__main__":
    main()

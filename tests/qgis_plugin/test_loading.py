"""Loading a run's layers into a project with Debian's PyQGIS (the plugin's loading.py).

Both paths of ``loading.load_run``: the run's own project ``survey.qgs`` (its groups and
styles copied), and without it the GeoPackage's layers with their default styles from the
``layer_styles`` table, grouped by level. A small run folder is made here with PyQGIS, so
the test does not wait for a run.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from tests.qgis_plugin.conftest import pyqgis, pyqgis_missing

SCRIPT = r"""
import json, shutil
from pathlib import Path
from qgis.core import (QgsProject, QgsVectorLayer, QgsVectorFileWriter, QgsFeature,
                       QgsCoordinateTransformContext as Ctx, QgsGeometry,
                       QgsSingleSymbolRenderer, QgsFillSymbol)
from geo_corrosion_qgis.loading import load_run, group_name, reload_run_layers

run = Path(sys.argv[1])
run.mkdir()
(run / "run.json").write_text(json.dumps({"levels": {"D1": {}}}))
(run / "quantities.csv").write_text("level_id,item,unit,line,quantity\nD1,REP,ft2,base,35\n")
gpkg = str(run / "survey.gpkg")
for i, name in enumerate(["D1_repairs", "readings_potential"]):
    mem = QgsVectorLayer("Polygon?crs=EPSG:26918&field=repair_id:string", name, "memory")
    f = QgsFeature(mem.fields())
    f.setGeometry(QgsGeometry.fromWkt("POLYGON((0 0,1 0,1 1,0 1,0 0))"))
    f["repair_id"] = "D1-R001"
    mem.dataProvider().addFeatures([f])
    opts = QgsVectorFileWriter.SaveVectorOptions()
    opts.driverName = "GPKG"
    opts.layerName = name
    if i:
        opts.actionOnExistingFile = QgsVectorFileWriter.CreateOrOverwriteLayer
    err = QgsVectorFileWriter.writeAsVectorFormatV3(mem, gpkg, Ctx(), opts)
    assert err[0] == 0, err
lyr = QgsVectorLayer(f"{gpkg}|layername=D1_repairs", "D1_repairs", "ogr")
lyr.setRenderer(QgsSingleSymbolRenderer(QgsFillSymbol.createSimple({"color": "#123456"})))
lyr.saveStyleToDatabase("default", "test style", True, "")  # the layer_styles table
del lyr

out = {}
p = QgsProject.instance()
n, how = load_run(run, p)
top = p.layerTreeRoot().findGroup(group_name(run))
out["files"] = {"n": n, "how": how, "groups": [c.name() for c in top.children()]}
rep = next(l for l in p.mapLayers().values() if l.name() == "D1_repairs")
out["files"]["colour"] = rep.renderer().symbol().color().name()

# the run's own project: a group per level, relative paths, a style of its own
proj = QgsProject()
layer = QgsVectorLayer(f"{gpkg}|layername=D1_repairs", "repairs of D1", "ogr")
layer.setRenderer(QgsSingleSymbolRenderer(QgsFillSymbol.createSimple({"color": "#abcdef"})))
proj.addMapLayer(layer, False)
proj.layerTreeRoot().addGroup("level D1").addLayer(layer)
assert proj.write(str(run / "survey.qgs"))
moved = run.parent / "moved_run"
shutil.move(str(run), str(moved))  # relative paths: the project opens where it is now
n, how = load_run(moved, p)
top = p.layerTreeRoot().findGroup(group_name(moved))
lyr = top.findGroup("level D1").children()[0].layer()
out["project"] = {"n": n, "how": how, "groups": [c.name() for c in top.children()],
                  "colour": lyr.renderer().symbol().color().name(),
                  "source": lyr.source().split("|")[0]}
out["again"] = load_run(moved, p)[0]
out["top_groups"] = [c.name() for c in p.layerTreeRoot().children()]
out["reloaded"] = reload_run_layers(moved, p)
print("RESULT" + json.dumps(out))
"""


@pytest.fixture(scope="module")
def loaded(tmp_path_factory: pytest.TempPathFactory) -> dict[str, object]:
    """Make a small run folder with PyQGIS and load it both ways."""
    if why := pyqgis_missing():
        pytest.skip(why)
    run = tmp_path_factory.mktemp("loading") / "run"
    r = pyqgis(SCRIPT, str(run))
    assert r.returncode == 0, r.stderr
    line = next(ln for ln in r.stdout.splitlines() if ln.startswith("RESULT"))
    out: dict[str, object] = json.loads(line[len("RESULT"):])
    out["run"] = str(run)
    return out


def test_layers_of_the_geopackage_come_with_their_default_style(loaded: dict) -> None:
    """Without survey.qgs: GeoPackage layers by level, styled from layer_styles (QGIS)."""
    files = loaded["files"]
    assert "layers of survey.gpkg" in files["how"]
    # a group per level, the site-wide layers apart, the schedule on top (loading.py)
    assert files["groups"] == ["schedule of quantities", "level D1", "whole site"]
    assert files["n"] == 3
    assert files["colour"] == "#123456"  # the default style saved in layer_styles


def test_the_runs_own_project_is_copied(loaded: dict) -> None:
    """With survey.qgs: its groups, layer names and styles, paths resolved where it is now."""
    proj = loaded["project"]
    assert "survey.qgs" in proj["how"]
    assert proj["groups"] == ["schedule of quantities", "level D1"]
    assert proj["colour"] == "#abcdef"
    assert Path(proj["source"]).parent == Path(loaded["run"]).parent / "moved_run"


def test_loading_again_replaces_the_group(loaded: dict) -> None:
    """Re-running or re-pricing replaces the run's group instead of adding a second one."""
    names = loaded["top_groups"]
    assert len(names) == len(set(names)) == 2  # the first run folder and the moved one
    assert loaded["again"] == loaded["project"]["n"]
    assert loaded["reloaded"] == loaded["project"]["n"]

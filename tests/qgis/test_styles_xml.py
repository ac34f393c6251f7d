"""The GIS styles as files, without QGIS: layer_styles rows, QML/SLD XML, the project file.

Sources of the expected values: the class sets of ``condition/classes.py`` (class keys and
their order), the web map's palette (``exporters/webmap/palette.py``: the class colours
are the class set's colours ranked onto ``SEVERITY_RAMP``), the report's words
(``geo_corrosion.vocabulary``), the OGC SLD 1.1 / SE 1.1 namespaces, the OGC GeoPackage
``layer_styles`` convention as QGIS writes it (column names), and QGIS's ``.qgs`` format
(``<layer-tree-group>``, ``<maplayer><datasource>``).
"""

from __future__ import annotations

import sqlite3
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

from geo_corrosion.condition.classes import CLASS_SETS
from geo_corrosion.exporters.qgis_project import SECTIONS, layer_section
from geo_corrosion.exporters.qgis_styles import STYLE_NAME, split_level
from geo_corrosion.exporters.webmap.palette import SEVERITY_RAMP, class_ramp
from geo_corrosion.vocabulary import class_label

SE = "{http://www.opengis.net/se}"
OGC = "{http://www.opengis.net/ogc}"
SLD = "{http://www.opengis.net/sld}"
#: the columns of the layer_styles table QGIS and OGR read (as QGIS 3.22 creates it)
COLUMNS = ["id", "f_table_catalog", "f_table_schema", "f_table_name", "f_geometry_column",
           "styleName", "styleQML", "styleSLD", "useAsDefault", "description", "owner", "ui",
           "update_time"]


def _styles(run: Path) -> dict[str, tuple[str, str, int, str]]:
    con = sqlite3.connect(run / "survey.gpkg")
    try:
        cols = [r[1] for r in con.execute("PRAGMA table_info(layer_styles)")]
        assert cols == COLUMNS  # source: the layer_styles table QGIS writes
        rows = con.execute("SELECT f_table_name, styleQML, styleSLD, useAsDefault, "
                           "f_geometry_column FROM layer_styles WHERE styleName = ?",
                           (STYLE_NAME,)).fetchall()
        feats = [r[0] for r in con.execute(
            "SELECT table_name FROM gpkg_contents WHERE data_type = 'features'")]
        reg = con.execute("SELECT data_type FROM gpkg_contents WHERE table_name = "
                          "'layer_styles'").fetchone()
    finally:
        con.close()
    assert reg == ("attributes",)  # GeoPackage 1.2+: a non-spatial table is registered so
    out = {r[0]: (r[1], r[2], r[3], r[4]) for r in rows}
    assert sorted(out) == sorted(feats)  # one default style for every feature layer
    return out


def test_every_layer_has_a_default_qml_and_sld(synthetic_run: Path) -> None:
    """Every feature layer: one row, useAsDefault, QML and SLD that parse (common practice)."""
    styles = _styles(synthetic_run)
    assert "D1_grid" in styles and "D1_repairs" in styles and "readings_potential" in styles
    for name, (qml, sld, default, gcol) in styles.items():
        assert default == 1, name
        assert gcol == "geom", name  # the geometry column pyogrio/OGR writes
        q = ET.fromstring(qml.split("\n", 1)[1])  # after the DOCTYPE line
        assert q.tag == "qgis" and q.find("renderer-v2") is not None, name
        s = ET.fromstring(sld.split("\n", 1)[1])
        assert s.tag == f"{SLD}StyledLayerDescriptor" and s.get("version") == "1.1.0", name
        assert s.find(f"{SLD}NamedLayer/{SE}Name").text == name  # type: ignore[union-attr]
        assert s.findall(f".//{SE}Rule"), name


def _expected_classes(cs_name: str) -> list[tuple[str, str, str]]:
    """(code, label, colour) from the class set, the web map's palette and the vocabulary."""
    cs = CLASS_SETS[cs_name]
    ramp = class_ramp(cs_name, list(cs.colors))
    return [(str(i), class_label(cs_name, k), ramp[c.upper()].upper())
            for i, (k, c) in enumerate(zip(cs.keys, cs.colors, strict=True))]


def test_sld_class_colours_are_the_palette(synthetic_run: Path) -> None:
    """The class layer's SLD rules: the class codes, report labels and web-map colours."""
    _qml, sld, _d, _g = _styles(synthetic_run)["D1_classes_potential"]
    root = ET.fromstring(sld.split("\n", 1)[1])
    got = []
    for rule in root.iter(f"{SE}Rule"):
        lit = rule.find(f"{OGC}Filter/{OGC}PropertyIsEqualTo/{OGC}Literal")
        fill = rule.find(f"{SE}PolygonSymbolizer/{SE}Fill/{SE}SvgParameter[@name='fill']")
        title = rule.find(f"{SE}Description/{SE}Title")
        assert lit is not None and fill is not None and title is not None
        got.append((lit.text, title.text, (fill.text or "").upper()))
    assert got == _expected_classes("c876")
    # hand check of the palette: the most severe C876 class (code 0, "high") takes the ramp's
    # darkest colour, the least severe its colour at a quarter (palette.class_colors)
    assert got[0][2] == SEVERITY_RAMP[-1].upper()
    assert got[0][1] == "High: over 90 % probability of corrosion"  # vocabulary.VOCABULARY


def test_qml_class_categories_are_the_palette(synthetic_run: Path) -> None:
    """The class layer's QML categories (value, label, r,g,b,a) equal the SLD's classes."""
    qml, _s, _d, _g = _styles(synthetic_run)["D1_classes_potential"]
    root = ET.fromstring(qml.split("\n", 1)[1])
    r = root.find("renderer-v2")
    assert r is not None and r.get("type") == "categorizedSymbol"
    assert r.get("attr") == "class_code"
    cats = r.findall("categories/category")
    colours = {}
    for sym in r.findall("symbols/symbol"):
        opt = sym.find("layer/Option/Option[@name='color']")
        assert opt is not None
        rgb = [int(x) for x in (opt.get("value") or "").split(",")[:3]]
        colours[sym.get("name")] = "#" + "".join(f"{v:02X}" for v in rgb)
    got = [(c.get("value"), c.get("label"), colours[c.get("symbol")]) for c in cats]
    assert got == _expected_classes("c876")


def test_labels_and_hatches(synthetic_run: Path) -> None:
    """Contours are labelled with value and unit, repairs with their id and hatched."""
    styles = _styles(synthetic_run)
    cont = ET.fromstring(styles["D1_contours_potential"][0].split("\n", 1)[1])
    ts = cont.find("labeling/settings/text-style")
    assert cont.get("labelsEnabled") == "1" and ts is not None
    # the unit as the report writes it (vocabulary.UNIT_LABELS["mV"])
    assert ts.get("fieldName") == "format_number(\"value\", 0) || ' mV vs CSE'"
    rep = ET.fromstring(styles["D1_repairs"][0].split("\n", 1)[1])
    lab = rep.find("labeling/settings/text-style")
    assert lab is not None and '"repair_id"' in (lab.get("fieldName") or "")
    brushes = {o.get("value") for o in rep.iter("Option") if o.get("name") == "style"}
    assert brushes & {"b_diagonal", "f_diagonal", "diagonal_x"}  # QGIS brush names: hatched
    sld = ET.fromstring(styles["D1_repairs"][1].split("\n", 1)[1])
    marks = {m.text for m in sld.iter(f"{SE}WellKnownName")}
    assert marks & {"shape://slash", "shape://backslash", "shape://times"}


def test_project_file_groups_order_and_relative_paths(synthetic_run: Path) -> None:
    """``survey.qgs``: one group per level, sections in order, every path relative."""
    root = ET.parse(synthetic_run / "survey.qgs").getroot()
    assert root.tag == "qgis"
    groups = root.findall("layer-tree-group/layer-tree-group")
    assert [g.get("name") for g in groups] == ["Test deck (D1)"]
    order = {s: i for i, s in enumerate(SECTIONS)}
    ranks = []
    for node in groups[0].findall("layer-tree-layer"):
        src = node.get("source") or ""
        assert src.startswith("./"), src  # relative to the project file
        name = src.split("layername=")[1].split("|")[0] if "layername=" in src else (
            "surface")
        ranks.append(order[layer_section(split_level(name, ["D1"])[1])])
    assert ranks == sorted(ranks) and len(set(ranks)) >= 7
    for ds in root.iter("datasource"):
        assert (ds.text or "").startswith("./"), ds.text
    assert root.find("properties/Paths/Absolute").text == "false"  # type: ignore[union-attr]
    assert root.find("projectCrs/spatialrefsys/authid").text == "EPSG:26918"  # type: ignore[union-attr]
    # only the repairs are editable; snapping to the grid nodes' vertices, in map units
    ro = {ml.findtext("id"): ml.get("readOnly") for ml in root.iter("maplayer")}
    assert [k for k, v in ro.items() if v == "0"] == ["gclayer_D1_repairs"]
    snap = root.find("snapping-settings")
    assert snap is not None and snap.get("enabled") == "1"
    grid = snap.find("individual-layer-settings/layer-setting[@id='gclayer_D1_grid']")
    assert grid is not None and grid.get("units") == "2" and grid.get("type") == "1"
    # 0.45 x the 2 ft reading spacing of the synthetic site, in metres (hand computation)
    assert float(grid.get("tolerance") or 0) == pytest.approx(0.45 * 2 * 0.3048, rel=1e-4)


def test_raster_styles_beside_the_rasters(synthetic_run: Path) -> None:
    """Every GeoTIFF has a ``.qml`` with a pseudocolour ramp of the web map's colours."""
    tifs = sorted((synthetic_run / "rasters").glob("*.tif"))
    assert tifs
    for tif in tifs:
        q = ET.fromstring(tif.with_suffix(".qml").read_text().split("\n", 1)[1])
        rr = q.find("pipe/rasterrenderer")
        assert rr is not None and rr.get("type") == "singlebandpseudocolor", tif
        cols = [i.get("color") for i in rr.iter("item")]
        if tif.stem == "D1_potential":  # more negative is worse: dark at the low end
            assert cols == [c.lower() for c in SEVERITY_RAMP[::-1]]


def test_sparse_points_cells_and_joints(sparse_run: Path) -> None:
    """Classed points, their cells and joints: categories from the palette and class set."""
    from geo_corrosion.exporters.webmap.palette import OVERLAY, point_class_colors

    styles = _styles(sparse_run)
    cs = CLASS_SETS["rilem_rate"]  # the corrosion-rate kind's class set
    sld = ET.fromstring(styles["D1_points_corrosion_rate"][1].split("\n", 1)[1])
    got = [(r.findtext(f"{OGC}Filter/{OGC}PropertyIsEqualTo/{OGC}Literal"),
            r.findtext(f"{SE}Description/{SE}Title"),
            r.findtext(f".//{SE}Mark/{SE}Fill/{SE}SvgParameter"))
           for r in sld.iter(f"{SE}Rule")]
    # the web map's point colours (palette.point_class_colors), one per class of the set
    assert got == [(str(i), class_label("rilem_rate", k), c)
                   for i, (k, c) in enumerate(zip(cs.keys, point_class_colors(len(cs.keys)),
                                                  strict=True))]
    cells = ET.fromstring(styles["D1_thiessen_corrosion_rate"][1].split("\n", 1)[1])
    assert [r.findtext(f"{SE}Description/{SE}Title") for r in cells.iter(f"{SE}Rule")] == [
        class_label("rilem_rate", k) for k in cs.keys]
    joints = ET.fromstring(styles["D1_joints"][1].split("\n", 1)[1])
    strokes = {r.findtext(f"{OGC}Filter/{OGC}PropertyIsEqualTo/{OGC}Literal"):
               r.findtext(f".//{SE}Stroke/{SE}SvgParameter[@name='stroke']")
               for r in joints.iter(f"{SE}Rule")}
    assert strokes == {"1": OVERLAY["joint_break"], "0": OVERLAY["joint"]}  # palette.OVERLAY

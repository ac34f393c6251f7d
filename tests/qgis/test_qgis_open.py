"""The run folder opened in QGIS itself (PyQGIS in Debian's /usr/bin/python3).

The reference is QGIS: it must load each layer's default style from ``layer_styles``
(``QgsVectorLayer.loadDefaultStyle``), read ``survey.qgs`` (``QgsProject.read``) with every
layer valid, and render.  Expected classes and colours come from the class set
(``condition/classes.py``), the web map's palette (``palette.class_ramp``) and the report's
words (``vocabulary.class_label``).  Skipped where Debian's QGIS is not installed.
"""

from __future__ import annotations

import shutil
import sqlite3
import xml.etree.ElementTree as ET
from pathlib import Path
from typing import Any

import pytest

from geo_corrosion.condition.classes import CLASS_SETS
from geo_corrosion.exporters.qgis_project import SECTIONS, layer_section
from geo_corrosion.exporters.qgis_styles import STYLE_NAME, split_level
from geo_corrosion.exporters.webmap.palette import class_ramp
from geo_corrosion.vocabulary import class_label
from tests.qgis.conftest import NO_QGIS, REPO, observe

_RENDERERS = {"categorizedSymbol", "graduatedSymbol", "singleSymbol"}


def _written(run: Path) -> dict[str, str]:
    """The renderer type each layer_styles QML names, by layer."""
    con = sqlite3.connect(run / "survey.gpkg")
    try:
        rows = con.execute("SELECT f_table_name, styleQML FROM layer_styles WHERE "
                           "styleName = ?", (STYLE_NAME,)).fetchall()
    finally:
        con.close()
    return {n: ET.fromstring(q.split("\n", 1)[1]).find("renderer-v2").get("type")  # type: ignore[union-attr]
            for n, q in rows}


def test_every_layer_opens_with_its_default_style(synthetic_qgis: dict[str, Any],
                                                  synthetic_run: Path) -> None:
    """QGIS loads our style for each layer, with the renderer we wrote (not its default)."""
    seen = synthetic_qgis["gpkg"]
    written = _written(synthetic_run)
    assert sorted(seen) == sorted(written)
    for name, rec in seen.items():
        assert rec["style_loaded"], (name, rec["message"])
        assert rec["renderer"] == written[name], name
        assert rec["renderer"] in _RENDERERS
    # a layer left to QGIS's default would be a single symbol: these are not
    for name in ("D1_classes_potential", "D1_zones", "D1_repairs", "readings_potential",
                 "D1_combined_classes"):
        assert seen[name]["renderer"] in ("categorizedSymbol", "graduatedSymbol"), name
    for name in ("D1_contours_potential", "D1_repairs", "D1_delaminations"):
        assert seen[name]["labels"], name


def test_qgis_reads_our_sld(synthetic_qgis: dict[str, Any]) -> None:
    """QGIS as an SLD reader: a layer styled from the SLD alone has a rule per class/range.

    QGIS turns SLD rules into its rule-based renderer and a ``TextSymbolizer`` into labels;
    so every categorised or graduated style gives as many rules as it has classes, and the
    layers labelled by the QML are labelled by the SLD too.
    """
    for name, rec in synthetic_qgis["gpkg"].items():
        sld = rec["sld"]
        assert sld["loaded"], (name, sld["message"])
        n = len(rec.get("categories", rec.get("ranges", [])))
        if n:
            assert (sld["renderer"], sld["rules"]) == ("RuleRenderer", n), name
        assert sld["labels"] == rec["labels"], name


def test_class_categories_match_the_report(synthetic_qgis: dict[str, Any]) -> None:
    """The class layer's categories in QGIS: codes, report labels, web-map colours."""
    for layer, cs_name in (("D1_classes_potential", "c876"),
                           ("D1_classes_resistivity", "rilem_resistivity")):
        cs = CLASS_SETS[cs_name]
        ramp = class_ramp(cs_name, list(cs.colors))
        expected = [[str(i), class_label(cs_name, k), ramp[c.upper()].upper()]
                    for i, (k, c) in enumerate(zip(cs.keys, cs.colors, strict=True))]
        rec = synthetic_qgis["gpkg"][layer]
        assert rec["attr"] == "class_code"
        assert rec["categories"] == expected, layer


def test_every_layer_renders(synthetic_qgis: dict[str, Any]) -> None:
    """Each layer rendered alone is not blank (more than the white background)."""
    for name, rec in synthetic_qgis["gpkg"].items():
        assert rec.get("colours", 0) > 1, name


def test_project_groups_order_paths_and_editing(synthetic_qgis: dict[str, Any],
                                                synthetic_run: Path) -> None:
    """QGIS reads survey.qgs: level groups, sections in order, valid layers, snapping."""
    rep = synthetic_qgis
    assert rep["project_read"] and rep["crs"] == "EPSG:26918"
    assert [g["level"] for g in rep["groups"]] == ["D1"]
    layers = rep["groups"][0]["layers"]
    assert all(lay["valid"] for lay in layers), [lay["name"] for lay in layers
                                                 if not lay["valid"]]
    order = {s: i for i, s in enumerate(SECTIONS)}
    ranks = []
    for lay in layers:  # QGIS resolves the relative paths against the project's folder
        src = lay["source"]
        assert src.startswith(str(synthetic_run)), src
        name = src.split("layername=")[1].split("|")[0] if "layername=" in src else "surface"
        ranks.append(order[layer_section(split_level(name, ["D1"])[1])])
    assert ranks == sorted(ranks)
    assert rep["editable"]["gclayer_D1_repairs"] is True
    assert [k for k, v in rep["editable"].items() if v] == ["gclayer_D1_repairs"]
    snap = rep["snapping"]
    assert snap["enabled"] and snap["layers"]["gclayer_D1_grid"]["vertex"]
    assert snap["layers"]["gclayer_D1_grid"]["units"] == 2  # QgsTolerance.ProjectUnits


def test_level_render_is_not_blank(synthetic_qgis: dict[str, Any]) -> None:
    """The level's ticked layers render to a PNG of many colours (class fills, lines)."""
    r = synthetic_qgis["render"]
    assert Path(r["png"]).stat().st_size > 10_000
    assert r["colours"] > 20  # anti-aliased fills, hatches and labels: far more than a few
    assert "Repairs" in r["layers"]


@pytest.mark.slow
def test_sample_site_level_l2(sample_run: Path, has_qgis: bool, tmp_path: Path) -> None:
    """The sample site opens in QGIS; its level L2 rendered, kept for the docs."""
    if not has_qgis:
        pytest.skip(NO_QGIS)
    png = tmp_path / "qgis_level_L2.png"
    rep = observe(sample_run, tmp_path, png, "L2")
    assert [g["level"] for g in rep["groups"]] == ["L2", "RF"]  # the site's order
    for g in rep["groups"]:
        assert all(lay["valid"] for lay in g["layers"]), g["name"]
    for name, rec in rep["gpkg"].items():
        assert rec["style_loaded"] and rec.get("colours", 0) > 1, name
    assert rep["render"]["colours"] > 20
    dest = REPO / "docs" / "images" / "qgis_level_L2.png"
    dest.parent.mkdir(parents=True, exist_ok=True)
    shutil.copyfile(png, dest)


def test_snapping_to_the_survey_grid(synthetic_qgis: dict[str, Any]) -> None:
    """QGIS's snapping (QgsSnappingUtils, the project's config) pulls a point to a grid node."""
    s = synthetic_qgis["snap_probe"]
    assert s["valid"] and s["layer"] == "gclayer_D1_grid"
    assert s["snapped"] == pytest.approx(s["node"], abs=1e-6)
    assert s["probe"] != pytest.approx(s["node"], abs=1e-3)  # it did move the point


def test_a_repair_edited_in_qgis_is_read_back(synthetic_qgis: dict[str, Any],
                                              synthetic_run: Path) -> None:
    """A repair corner moved and saved in QGIS: the GeoPackage holds it, styles kept."""
    import pyogrio
    import shapely

    from geo_corrosion.exporters.built_from import repair_checksums

    e = synthetic_qgis["edit"]
    assert e["started"] and e["moved"] and e["committed"], e["errors"]
    # one survey-grid spacing: 2 ft of the synthetic site, in metres (hand computation)
    assert e["step"] == pytest.approx(2 * 0.3048, abs=1e-6)
    edited = Path(e["gpkg"])
    df = pyogrio.read_dataframe(edited, layer="D1_repairs")
    row = df[df["repair_id"] == e["repair_id"]].iloc[0]
    xy = shapely.get_coordinates(row.geometry)
    assert min(abs(x - e["to"][0]) + abs(y - e["to"][1]) for x, y in xy) < 1e-6
    con = sqlite3.connect(edited)
    try:
        n = con.execute("SELECT count(*) FROM layer_styles WHERE styleName = ?",
                        (STYLE_NAME,)).fetchone()[0]
    finally:
        con.close()
    assert n == len(synthetic_qgis["gpkg"])
    # the run's record of what the documents were built from sees the edit (built_from.py)
    assert repair_checksums(edited) != repair_checksums(synthetic_run / "survey.gpkg")

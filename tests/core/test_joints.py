"""Joints by kind (issue 12 item 1): continuity regions, ground connections, joint outputs.

A synthetic deck (``geo_corrosion.testing.make_synthetic_site``) with one joint line across
it at x = 30 ft; with ``step_mv`` the potentials beyond it are shifted, as on a second mat
that is not electrically continuous with the first.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import numpy as np
import pyogrio
import pytest
import shapely
from pykrige.ok import OrdinaryKriging

from geo_corrosion.errors import GeometryWarning, IngestError, SiteFileError
from geo_corrosion.model.surface import KindSurface
from geo_corrosion.stages.check_site import check_site
from geo_corrosion.stages.map_surfaces import map_level
from geo_corrosion.stages.open_site import open_site
from geo_corrosion.stages.read_site import read_site
from geo_corrosion.surfaces import region_labels
from geo_corrosion.testing import make_synthetic_site
from geo_corrosion.units import report_units

#: A fixed variogram model, so that pykrige can be given the same one (pykrige has no Matern).
SPHERICAL = '\n[run.variogram.potential]\nmodel = "spherical"\n'
BOTH_SIDES = [(5.0, 5.0, "G-west"), (55.0, 5.0, "G-east")]


def _site(root: Path, **kw: Any) -> Path:
    return make_synthetic_site(root, extra_site=SPHERICAL, **kw)


def _potential(site_file: Path) -> tuple[Any, KindSurface, Any]:
    site = open_site(site_file)
    lv = site.levels["D1"]
    flags = check_site(site)
    out = map_level(lv, site.surveys_of("D1"), flags, site.config.run, units=report_units("us"))
    return lv, out.surfaces["potential"], out.readings["potential"]


def _cells(s: KindSurface) -> tuple[np.ndarray, np.ndarray]:
    return np.meshgrid(s.grid.x_centers(), s.grid.y_centers())


# --------------------------------------------------------------------------- the surface


def test_breaking_joint_surface_is_each_side_kriged_alone(tmp_path: Path) -> None:
    lv, s, rd = _potential(_site(tmp_path / "s", joint_type="expansion", step_mv=150.0,
                                 ground_connections=BOTH_SIDES))
    regions = lv.continuity_regions()
    assert len(regions) == 2  # the joint splits the deck in two
    x, y = rd["x_local"].to_numpy(float), rd["y_local"].to_numpy(float)
    z = rd["potential_mv"].to_numpy(float)
    lab = region_labels(regions, x, y)
    assert set(lab[x < 30]) == {0} or set(lab[x < 30]) == {1}
    m = s.fit.model
    assert m.name == "spherical"
    gx, gy = _cells(s)
    for r, reg in enumerate(regions):
        sel = lab == r
        cells = np.isfinite(s.mean) & shapely.contains_xy(reg, gx, gy)
        assert cells.sum() > 1000
        ok = OrdinaryKriging(x[sel], y[sel], z[sel], variogram_model="spherical",
                             variogram_parameters={"psill": m.psill, "range": m.range,
                                                   "nugget": m.nugget})
        zp, sp = ok.execute("points", gx[cells], gy[cells], n_closest_points=16, backend="loop")
        # pykrige as reference library: ordinary kriging of this side's readings alone, the
        # same variogram model and 16 nearest readings; 1e-6 relative as the engine's test
        scale = np.abs(zp).max()
        np.testing.assert_allclose(s.mean[cells], zp, rtol=0, atol=1e-6 * scale)
        np.testing.assert_allclose(s.variance[cells], sp, rtol=0, atol=1e-6 * np.abs(sp).max())
    # the step survives kriging: the two sides' means differ by about the step (derived)
    west = np.nanmean(s.mean[:, :25])
    east = np.nanmean(s.mean[:, 35:])
    assert east - west > 100
    assert any("2 continuity regions" in n for n in s.fit.notes)


def test_contours_do_not_cross_a_breaking_joint(tmp_path: Path) -> None:
    lv, s, _rd = _potential(_site(tmp_path / "s", joint_type="expansion", step_mv=150.0,
                                  ground_connections=BOTH_SIDES))
    joint = lv.joints[0].geometry
    # derived: each region is contoured apart, so no line or band reaches across the joint
    assert s.lines and s.bands
    assert not any(g.crosses(joint) or g.intersects(joint) for _v, g in s.lines)
    assert not any(g.crosses(joint) for _lo, _hi, g in s.bands)


@pytest.mark.parametrize("joint", [
    {"joint_type": "construction"},  # common practice: bars continuous [ACI-224.3R-95]
    {"joint_type": "control"},  # common practice: bars continuous or tied [ACI-224.3R-95]
])
def test_non_breaking_joint_leaves_the_surface_unchanged(tmp_path: Path,
                                                         joint: dict[str, str]) -> None:
    _, plain, _ = _potential(_site(tmp_path / "plain"))
    _, jointed, _ = _potential(_site(tmp_path / "joint", **joint))
    # common practice [ACI-224.3R-95, from memory]: construction and control joints carry
    # the bars, so the surface is the one of the deck with no joint, cell for cell
    np.testing.assert_array_equal(jointed.mean, plain.mean)
    np.testing.assert_array_equal(jointed.variance, plain.variance)
    assert jointed.regions is None


def test_breaks_continuity_overrides_the_type(tmp_path: Path) -> None:
    site = _site(tmp_path / "s", joint_type="expansion")
    text = site.read_text()
    site.write_text(text.replace('type = "expansion" }',
                                 'type = "expansion", breaks_continuity = false }'))
    cfg = read_site(site)
    assert cfg.levels[0].joints[0].joint_type == "expansion"
    assert cfg.levels[0].joints[0].breaks is False  # the site file's word wins
    lv = open_site(site).levels["D1"]
    assert len(lv.continuity_regions()) == 1
    site.write_text(text.replace('type = "expansion" }',
                                 'type = "construction", breaks_continuity = true }'))
    assert len(open_site(site).levels["D1"].continuity_regions()) == 2


# --------------------------------------------------------------------------- the site file


def test_joint_forms_and_default_type(tmp_path: Path) -> None:
    site = make_synthetic_site(tmp_path / "s", joint_type="expansion")
    text = site.read_text()
    # the form before joint types: one { path, layer } table, a construction joint by
    # default (common practice: most joints drawn on a deck are construction joints)
    site.write_text(text.replace('joints = { path = "plans/joints.geojson", type = "expansion" }',
                                 'joints = { path = "plans/joints.geojson" }'))
    (j,) = read_site(site).levels[0].joints
    assert (j.joint_type, j.breaks) == ("construction", False)
    # a list of layers, each with its type (a DXF layer per joint type, say)
    site.write_text(text.replace(
        'joints = { path = "plans/joints.geojson", type = "expansion" }',
        'joints = [ { path = "plans/joints.geojson", type = "isolation" },\n'
        '           "plans/joints.geojson" ]'))
    a, b = read_site(site).levels[0].joints
    assert (a.joint_type, a.breaks, b.joint_type, b.breaks) == (
        "isolation", True, "construction", False)  # [ACI-224.3R-95, from memory]


@pytest.mark.parametrize(("old", "new", "words"), [
    ('type = "expansion"', 'type = "sawcut"',
     ["[[levels]][0].joints.type", "expansion, isolation, construction, control"]),
    ('type = "expansion"', 'typ = "expansion"', ["[[levels]][0].joints", "'typ'"]),
    ('type = "expansion"', 'type = "expansion", breaks_continuity = "yes"',
     ["[[levels]][0].joints.breaks_continuity", "true or false"]),
])
def test_bad_joint_keys_are_refused(tmp_path: Path, old: str, new: str,
                                    words: list[str]) -> None:
    site = make_synthetic_site(tmp_path / "s", joint_type="expansion")
    site.write_text(site.read_text().replace(old, new, 1))
    with pytest.raises(SiteFileError) as err:
        read_site(site)
    for w in words:  # the message names the file and the dotted key (house rule)
        assert w in str(err.value)
    assert "site.toml" in str(err.value)


def test_joint_outside_the_slab_is_refused(tmp_path: Path) -> None:
    site = make_synthetic_site(tmp_path / "s", joint_type="expansion")
    (site.parent / "plans" / "joints.geojson").write_text(json.dumps({
        "type": "FeatureCollection", "features": [{
            "type": "Feature", "properties": {}, "geometry": {
                "type": "LineString", "coordinates": [[100, 0], [100, 40]]}}]}))
    with pytest.raises(IngestError) as err:
        open_site(site)
    msg = str(err.value)
    # names the site file's key, the file and the feature (house rule: file, feature, key)
    assert "[[levels]][0].joints" in msg and "joints.geojson feature #1" in msg
    assert "does not cross the slab" in msg


def test_breaking_joint_stopping_short_warns_with_its_dxf_handle(tmp_path: Path) -> None:
    from ezdxf.filemanagement import new as new_drawing

    site = make_synthetic_site(tmp_path / "s", joint_type="expansion")
    doc = new_drawing("R2010")
    doc.header["$INSUNITS"] = 2
    doc.layers.add("EXP")
    line = doc.modelspace().add_line((30, 0), (30, 25), dxfattribs={"layer": "EXP"})
    doc.saveas(site.parent / "plans" / "joints.dxf")
    site.write_text(site.read_text().replace(
        'joints = { path = "plans/joints.geojson", type = "expansion" }',
        'joints = { path = "plans/joints.dxf", layer = "EXP", type = "expansion" }'))
    with pytest.warns(GeometryWarning) as rec:
        lv = open_site(site).levels["D1"]
    msg = " ".join(str(w.message) for w in rec)
    # common practice: a joint that stops short separates nothing, so say which one
    assert "joints.dxf" in msg and "EXP" in msg and str(line.dxf.handle) in msg
    assert "does not cut the deck" in msg
    assert len(lv.continuity_regions()) == 1


# --------------------------------------------------------------------------- ground connections


def _ground_flags(site_file: Path) -> Any:
    flags = check_site(open_site(site_file))
    return flags[flags["rule"] == "QA-GROUND-CONNECTION"]


def test_ground_connection_missing_in_one_region_is_flagged(tmp_path: Path) -> None:
    f = _ground_flags(_site(tmp_path / "one", joint_type="expansion",
                            ground_connections=[(5.0, 5.0, "G-west")]))
    # common practice [ACI-222R-19, from memory; ASTM-C876-22a]: a half-cell reading needs
    # a connection to the mat it is on, so the east region without one is flagged, once
    assert len(f) == 1
    msg = f["message"].iloc[0]
    assert "'D1-hcp'" in msg and "region 2 of 2" in msg and "'G-west' in region 1" in msg
    assert "a half-cell reading needs a connection to the mat it is on" in msg
    assert f["severity"].iloc[0] == "warning" and f["reading_id"].iloc[0] == ""
    both = _ground_flags(_site(tmp_path / "both", joint_type="expansion",
                               ground_connections=BOTH_SIDES))
    assert both.empty
    # no breaking joint: one mat, one connection (wherever recorded) serves it
    assert _ground_flags(_site(tmp_path / "cj", joint_type="construction")).empty


def test_ground_connection_outside_the_slab_is_refused(tmp_path: Path) -> None:
    site = _site(tmp_path / "s", joint_type="expansion",
                 ground_connections=[(5.0, 5.0, "G1"), (75.0, 5.0, "G2")])
    with pytest.raises(SiteFileError) as err:
        open_site(site)
    msg = str(err.value)
    # house rule: the message names the file and the dotted key
    assert "site.toml: [[surveys]][0].ground_connections[1]" in msg
    assert "'G2'" in msg and "outside the slab" in msg


def test_ground_connection_keys(tmp_path: Path) -> None:
    site = _site(tmp_path / "s", ground_connections=[(5.0, 5.0, "G1")])
    text = site.read_text()
    site.write_text(text.replace('label = "G1"', 'lable = "G1"'))
    with pytest.raises(SiteFileError, match=r"ground_connections\[0\].*'lable'"):
        read_site(site)
    site.write_text(text.replace(', label = "G1"', ''))
    (g,) = read_site(site).surveys[0].ground_connections
    assert (g.x, g.y, g.label) == (5.0, 5.0, "G1")  # label by position, as control points


# --------------------------------------------------------------------------- outputs


@pytest.fixture(scope="module")
def joint_run(tmp_path_factory: pytest.TempPathFactory) -> Path:
    from geo_corrosion.pipeline import run

    root = tmp_path_factory.mktemp("jointrun")
    site = make_synthetic_site(root / "site", joint_type="expansion", step_mv=150.0,
                               ground_connections=BOTH_SIDES)
    out = root / "out"
    run(site, out)
    return out


def test_joints_in_the_geopackage(joint_run: Path) -> None:
    import geopandas as gpd

    assert "D1_joints" in {str(n) for n, _ in pyogrio.list_layers(joint_run / "survey.gpkg")}
    j = gpd.read_file(joint_run / "survey.gpkg", layer="D1_joints")  # pyogrio reads it back
    assert list(j["joint_type"]) == ["expansion"]
    assert [bool(v) for v in j["breaks_continuity"]] == [True]
    man = json.loads((joint_run / "run.json").read_text())
    notes = man["levels"]["D1"]["kinds"]["potential"]["surface"]["variogram"]["notes"]
    assert any("2 continuity regions" in n for n in notes)


def test_joints_in_the_dxf(joint_run: Path) -> None:
    import ezdxf

    from geo_corrosion.exporters.dxf import LAYER_JOINT, LAYER_JOINT_BREAK

    doc = ezdxf.readfile(joint_run / "drawings" / "D1_repairs.dxf")  # ezdxf reads it back
    msp = doc.modelspace()
    brk = [e for e in msp if e.dxf.layer == LAYER_JOINT_BREAK]
    assert len(brk) == 1 and not [e for e in msp if e.dxf.layer == LAYER_JOINT]
    pts = [(round(p[0], 6), round(p[1], 6)) for p in brk[0].get_points("xy")]
    assert pts == [(30.0, 0.0), (30.0, 40.0)]  # the joint as drawn (local grid, ft)


def test_joints_in_the_webmap_page_data(joint_run: Path) -> None:
    import json
    import re

    text = (joint_run / "webmap.html").read_text()
    # the level's page data: a JSON block the page's script reads (issue 14 item 1)
    block = re.search(r'<script type="application/json" id="gc-level-0">(.*?)</script>',
                      text, re.S)
    assert block is not None
    layers = {ly["key"]: ly for ly in json.loads(block.group(1))["layers"]}
    joints = layers["joints"]
    assert joints["label"] == "Joints" and joints["on"] is True  # the layer-control label
    # its legend
    assert "expansion/isolation joint (mat not continuous across it)" in joints["legend"]
    props = [f["properties"] for f in joints["fc"]["features"]]
    assert [p["Joint"] for p in props] == ["Expansion joint"]  # the feature's properties
    assert [p["Bar continuity"] for p in props] == ["broken: kriged apart"]


def test_joint_plot_and_report(joint_run: Path) -> None:
    assert (joint_run / "plots" / "D1_potential_classes.png").stat().st_size > 10_000
    html = (joint_run / "report.html").read_text()
    assert "data:image/png" in html
    # the report says which joints split the deck and that the potential was kriged apart
    assert "1 joint line(s) of type expansion break the electrical continuity" in html
    assert "The potential surface was kriged in each region" in html


def test_no_joint_by_default(tmp_path: Path) -> None:
    site = make_synthetic_site(tmp_path / "s")
    # the synthetic site of every other test is unchanged: no joint unless asked for
    assert not (site.parent / "plans" / "joints.geojson").exists()
    assert "joints" not in site.read_text()

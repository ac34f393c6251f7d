"""The web map in a real browser (Debian's chromium via Playwright, network blocked).

Marked ``browser``; skipped with a reason only when /usr/bin/chromium or playwright is
missing.  Expected layer names come from ``run.json`` and ``survey.gpkg`` of the run.
"""

from __future__ import annotations

import html
import io
import json
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from tests.webmap.conftest import XSS, XSS_IMG, open_page

pytestmark = pytest.mark.browser


def _labels(page: Any) -> list[str]:
    return page.eval_on_selector_all(".leaflet-control-layers label",
                                     "els => els.map(e => e.textContent.trim())")


def _visible_labels(page: Any) -> list[str]:
    return page.eval_on_selector_all(
        ".leaflet-control-layers label",
        "els => els.filter(e => e.offsetParent !== null).map(e => e.textContent.trim())")


def _expected_layers(run_dir: Path) -> dict[str, list[str]]:
    """Per level: the overlay labels the page must list (from run.json and survey.gpkg)."""
    import pyogrio

    man = json.loads((run_dir / "run.json").read_text())
    layers = {str(n) for n, _t in pyogrio.list_layers(run_dir / "survey.gpkg")}
    out: dict[str, list[str]] = {}
    for lid, info in man["levels"].items():
        name = info["name"]
        want = []
        for kind, kv in info["kinds"].items():
            if not kv.get("surface"):
                continue
            k = kind.replace("_", " ")
            want += [f"{name}: {k} surface", f"{name}: {k} contours", f"{name}: {k} readings"]
            if (run_dir / "rasters" / f"{lid}_{kind}_probability.tif").is_file():
                want.append(f"{name}: probability, {k}")
        for what, label in (("classes_potential", "ASTM C876 classes"),
                            ("classes_resistivity", "resistivity classes"),
                            ("classes_corrosion_rate", "corrosion rate classes"),
                            ("combined_classes", "combined condition"),
                            ("delaminations", "delaminations"), ("spalls", "spalls"),
                            ("joints", "joints"),
                            ("zones", "zones"), ("repairs", "repairs")):
            if f"{lid}_{what}" in layers:
                want.append(f"{name}: {label}")
        out[lid] = want
    return out


@pytest.fixture(scope="module")
def xss_page(browser: Any, xss_run: Path) -> Any:
    page, log = open_page(browser, xss_run / "webmap.html")
    yield page, log
    page.context.close()


@pytest.fixture(scope="module")
def sample_page(browser: Any, sample_run: Path) -> Any:
    page, log = open_page(browser, sample_run / "webmap.html")
    yield page, log
    page.context.close()


def test_no_request_leaves_the_page_and_no_script_error(xss_page: Any) -> None:
    page, log = xss_page
    assert log.blocked == []  # self-contained page (issue 6), common practice, no source
    assert log.errors == []
    assert page.locator("#map, .folium-map").count() >= 1
    assert page.evaluate("document.querySelectorAll('.leaflet-container').length") == 1


def test_every_named_layer_is_in_the_layer_control(xss_page: Any, xss_run: Path) -> None:
    page, _ = xss_page
    labels = _labels(page)
    for lid, want in _expected_layers(xss_run).items():
        assert want, lid  # the run has layers to show
        for w in want:
            assert w in labels, f"{w!r} missing from the layer control"
    # the scale bar and the cautions panel are always there
    assert page.locator(".leaflet-control-scale").count() == 1
    assert "not a structural assessment" in page.inner_text("#gc-cautions")


def test_script_tag_in_input_is_shown_as_text(xss_page: Any, xss_run: Path) -> None:
    page, log = xss_page
    assert log.dialogs == []  # nothing ran alert()
    labels = _labels(page)
    assert f"{XSS} (D1)" in labels  # the level name, shown literally
    # the site name and owner in the title panel: text, no <img> element was made
    assert f"Deck {XSS_IMG}" in page.inner_text("#gc-title")
    assert f"Owner {XSS_IMG}" in page.inner_text("#gc-title")
    assert page.evaluate("document.querySelectorAll('#gc-title img').length") == 0
    scripts = page.eval_on_selector_all("script", "els => els.map(e => e.textContent.trim())")
    assert not any(s.startswith("alert(") for s in scripts)
    # the overlay label of the GeoJSON delamination, in its tooltip
    text = page.evaluate("""() => {
      const name = Object.keys(gcLabels).find(k => gcLabels[k].endsWith(': delaminations'));
      const g = gcLayers[name]; let out = null;
      g.eachLayer(l => { if (l.feature.properties.label.includes('alert')) {
          l.fire('mouseover', {latlng: l.getBounds().getCenter()}, true);
          const t = document.querySelector('.leaflet-tooltip');
          out = t ? [t.textContent, t.innerHTML] : null; } });
      return out; }""")
    assert text is not None
    assert XSS in text[0]
    assert "<script" not in text[1].lower()
    assert html.escape(XSS) in text[1]


def test_toggling_a_layer(xss_page: Any) -> None:
    page, _ = xss_page
    label = page.locator(".leaflet-control-layers label", has_text="ASTM C876 classes")
    name = page.evaluate(
        "Object.keys(gcLabels).find(k => gcLabels[k].endsWith('ASTM C876 classes'))")
    assert page.evaluate(f"gcMap.hasLayer(gcLayers['{name}'])") is False  # off by default
    label.locator("input").click()
    assert page.evaluate(f"gcMap.hasLayer(gcLayers['{name}'])") is True
    assert "ASTM C876 classes" in page.inner_text("#gc-legend")  # its legend follows it
    label.locator("input").click()
    assert page.evaluate(f"gcMap.hasLayer(gcLayers['{name}'])") is False
    assert "ASTM C876 classes" not in page.inner_text("#gc-legend")


def _popup_text(page: Any, layer_suffix: str, rid: str) -> str:
    return page.evaluate("""([suffix, rid]) => {
      const name = Object.keys(gcLabels).find(k => gcLabels[k].endsWith(suffix));
      const g = gcLayers[name];
      if (!gcMap.hasLayer(g)) gcMap.addLayer(g);
      let hit = null;
      g.eachLayer(l => { if (l.feature.properties.repair_id === rid) hit = l; });
      gcMap.eachLayer(l => { if (l instanceof L.Popup) gcMap.removeLayer(l); });
      hit.fire('click', {latlng: hit.getBounds().getCenter()}, true);
      const ps = document.querySelectorAll('.leaflet-popup-content');
      const t = ps.length === 1 ? ps[0].innerText : `${ps.length} popups open`;
      gcMap.closePopup();
      return t;
    }""", [layer_suffix, rid])


@pytest.mark.slow
def test_repair_popup_shows_the_geopackage_area(sample_page: Any, sample_run: Path) -> None:
    import geopandas as gpd

    page, log = sample_page
    assert log.blocked == [] and log.errors == []
    rep = gpd.read_file(sample_run / "survey.gpkg", layer="L2_repairs")
    r = rep.sort_values("area_m2").iloc[-1]
    text = _popup_text(page, "Level 2 (supported slab): repairs", r["repair_id"])
    area_ft2 = r["area_m2"] / 0.3048**2  # 1 ft = 0.3048 m exactly [NIST-SP811-2008 App. B]
    assert r["repair_id"] in text
    assert f"{area_ft2:.1f} ft2" in text
    assert "REP-PD" in text or "REP-FD" in text  # bid item of the depth class
    assert r["depth_class"] in text


@pytest.mark.slow
def test_switching_levels(sample_page: Any) -> None:
    page, _ = sample_page
    vis = _visible_labels(page)
    assert any(v.startswith("Level 2") and ":" in v for v in vis)
    assert not any(v.startswith("Roof level") and ":" in v for v in vis)
    page.locator(".leaflet-control-layers-base label",
                 has_text="Roof level").locator("input").click()
    page.wait_for_timeout(200)
    vis = _visible_labels(page)
    assert any(v.startswith("Roof level") and ":" in v for v in vis)
    assert not any(v.startswith("Level 2") and ":" in v for v in vis)
    shown = page.evaluate("""() => Object.keys(gcLabels).filter(k => gcMap.hasLayer(gcLayers[k]))
                                  .map(k => gcLabels[k])""")
    assert shown and all(s.startswith("Roof level") for s in shown)
    page.locator(".leaflet-control-layers-base label", has_text="Level 2").locator("input").click()


@pytest.mark.slow
def test_screenshot_is_not_blank(sample_page: Any, tmp_path: Path) -> None:
    from PIL import Image

    page, _ = sample_page
    png = page.screenshot()
    (tmp_path / "webmap.png").write_bytes(png)
    img = np.asarray(Image.open(io.BytesIO(png)).convert("L"), float)
    # a blank or single-colour page has (near) zero variance; common practice, no source
    assert img.std() > 20
    assert len(np.unique(img.astype(int))) > 64


def test_every_overlay_has_a_legend(xss_page: Any) -> None:
    # issue 6: "Layers, each with a legend"; the legend entry names its unit or classes
    page, _ = xss_page
    missing = page.evaluate("""() => {
      const out = [];
      for (const id in gcLevels) for (const n of gcLevels[id].overlays)
        if (!gcLegends[n] || gcLegends[n].length < 20) out.push(gcLabels[n]);
      return out; }""")
    assert missing == []
    surf = page.evaluate("""() => { const n = Object.keys(gcLabels).find(
        k => gcLabels[k].endsWith('potential surface')); return gcLegends[n]; }""")
    assert "mV" in surf  # units on every scale (project rule)


@pytest.mark.slow
def test_reading_popup_shows_value_and_qa_flags(sample_page: Any, sample_run: Path) -> None:
    import geopandas as gpd

    page, _ = sample_page
    man = json.loads((sample_run / "run.json").read_text())
    rd = gpd.read_file(sample_run / "survey.gpkg", layer="readings_potential")
    flagged = rd[rd["qa_flags"].fillna("").astype(str) != ""]
    assert len(flagged)  # the sample site plants flawed readings (its README)
    r = flagged.iloc[0]
    lid = str(r["level_id"])
    base = f"{man['levels'][lid]['name']} ({lid})"
    page.locator(".leaflet-control-layers-base label", has_text=base).locator("input").click()
    text = page.evaluate("""([suffix, pid]) => {
      gcMap.closePopup();
      const name = Object.keys(gcLabels).find(k => gcLabels[k] === suffix);
      const g = gcLayers[name];
      if (!gcMap.hasLayer(g)) gcMap.addLayer(g);
      let hit = null;
      g.eachLayer(l => { if (l.feature.properties.where === pid) hit = l; });
      gcMap.eachLayer(l => { if (l instanceof L.Popup) gcMap.removeLayer(l); });
      hit.fire('click', {latlng: hit.getLatLng()}, true);
      const ps = document.querySelectorAll('.leaflet-popup-content');
      const t = ps.length === 1 ? ps[0].innerText : `${ps.length} popups open`;
      gcMap.closePopup(); gcMap.removeLayer(g);
      return t; }""", [f"{man['levels'][lid]['name']}: potential readings", str(r["where"])])
    value = f"{r['potential_mv']:.1f} mV" if np.isfinite(r["potential_mv"]) else "no value"
    assert value in text
    assert str(r["qa_flags"]) in text
    assert "_c" not in text  # style-only properties are not shown


def test_basemap_is_off_by_default_and_fails_quietly_offline(browser: Any, xss_run: Path,
                                                             tmp_path: Path) -> None:
    import shutil

    from geo_corrosion.exporters.webmap import write_webmap
    from geo_corrosion.model.manifest import Manifest

    out = tmp_path / "run"
    shutil.copytree(xss_run, out)
    man = json.loads((out / "run.json").read_text())
    man["parameters"]["basemap_url"] = "https://tiles.invalid/{z}/{x}/{y}.png"
    man["parameters"]["basemap_attribution"] = "test tiles"
    write_webmap(out, Manifest.from_json(man))
    page, log = open_page(browser, out / "webmap.html")
    try:
        label = page.locator(".leaflet-control-layers label", has_text="street basemap")
        assert label.count() == 1
        assert not label.locator("input").is_checked()  # off by default (issue 6)
        assert log.blocked == []  # nothing requested while it is off
        label.locator("input").click()
        page.wait_for_timeout(500)
        assert log.blocked and all(u.startswith("https://tiles.invalid/") for u in log.blocked)
        # a tile that cannot load is not a script error (it fails quietly)
        assert not [e for e in log.errors if e.startswith("page error")]
    finally:
        page.context.close()

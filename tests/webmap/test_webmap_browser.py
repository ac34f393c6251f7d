"""The web map in a real browser (Debian's chromium via Playwright, network blocked).

Marked ``browser``; skipped with a reason only when /usr/bin/chromium or playwright is
missing.  The page's hook ``window.__geoCorrosion`` says which level is chosen, which
layers of which level are on the map (read from the map itself: every Leaflet layer the
page builds carries its level and key) and what the boxes of the layer control say.
Expected layers come from ``run.json`` and ``survey.gpkg`` of the run.
"""

from __future__ import annotations

import html
import io
import itertools
import json
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from tests.webmap.colour import clashes
from tests.webmap.conftest import XSS, XSS_IMG, open_page

pytestmark = pytest.mark.browser


def _gc(page: Any, expr: str) -> Any:
    return page.evaluate(f"(() => {{ const gc = window.__geoCorrosion; return {expr}; }})()")


def _levels(page: Any) -> list[str]:
    return _gc(page, "gc.config.levels.map(l => l.id)")


def _switch(page: Any, i: int) -> None:
    """Choose the i-th level with its radio button, as a user does."""
    page.locator("input[name=gc-level]").nth(i).click()
    page.wait_for_timeout(100)


def _box(page: Any, key: str) -> Any:
    return page.locator(f".leaflet-control-layers-overlays input[data-key='{key}']")


def _assert_consistent(page: Any, lid: str) -> None:
    """Only ``lid``'s layers are drawn, and every box of the control says what is drawn.

    Issue 14, item 1: "each level's layers are shown only while that level is chosen,
    their boxes always match what is drawn" (common practice for a layer switcher).
    """
    drawn = _gc(page, "gc.drawn()")
    assert drawn, "nothing drawn"
    assert {d["level"] for d in drawn} == {lid}, drawn
    keys = {d["key"] for d in drawn}
    boxes = _gc(page, "gc.boxes()")
    assert {b["key"] for b in boxes} == {ly["key"] for ly in _gc(page, f"gc.layers('{lid}')")}
    for b in boxes:
        assert b["visible"], b
        assert b["checked"] == (b["key"] in keys), (lid, b, sorted(keys))
    radios = page.eval_on_selector_all("input[name=gc-level]", "els => els.map(e => e.checked)")
    assert radios == [x == lid for x in _levels(page)]


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


def _expected_keys(run_dir: Path) -> dict[str, set[str]]:
    """Per level: the layer keys the page must offer (from run.json and survey.gpkg)."""
    import pyogrio

    man = json.loads((run_dir / "run.json").read_text())
    names = {str(n) for n, _t in pyogrio.list_layers(run_dir / "survey.gpkg")}
    out: dict[str, set[str]] = {}
    for lid, info in man["levels"].items():
        want = set()
        for kind, kv in info["kinds"].items():
            if not kv.get("surface"):
                continue
            want |= {f"surface_{kind}", f"contours_{kind}", f"readings_{kind}"}
            if (run_dir / "rasters" / f"{lid}_{kind}_probability.tif").is_file():
                want.add(f"probability_{kind}")
            if f"{lid}_classes_{kind}" in names:
                want.add(f"classes_{kind}")
        for what, key in (("combined_classes", "classes_combined"),
                          ("delaminations", "delaminations"), ("spalls", "spalls"),
                          ("joints", "joints"), ("zones", "zones"), ("repairs", "repairs")):
            if f"{lid}_{what}" in names:
                want.add(key)
        out[lid] = want
    return out


def test_every_layer_is_in_the_layer_control(xss_page: Any, xss_run: Path) -> None:
    page, _ = xss_page
    for i, want in enumerate(_expected_keys(xss_run).values()):
        _switch(page, i)
        assert want  # the run has layers to show
        assert {b["key"] for b in _gc(page, "gc.boxes()")} == want
        # short names: no internal identifier and no level name repeated (issue 14 item 1)
        text = page.inner_text(".leaflet-control-layers-overlays")
        assert "_" not in text
        groups = page.eval_on_selector_all(".gc-group-title", "els => els.map(e => e.innerText)")
        assert groups[0] == "Level" and "Survey" in groups
    # the scale bar and the cautions panel are always there
    assert page.locator(".leaflet-control-scale").count() == 1
    assert "not a structural assessment" in page.inner_text("#gc-cautions")


def test_script_tag_in_input_is_shown_as_text(xss_page: Any) -> None:
    page, log = xss_page
    assert log.dialogs == []  # nothing ran alert()
    radios = page.eval_on_selector_all(".leaflet-control-layers-base label",
                                       "els => els.map(e => e.textContent.trim())")
    assert XSS in radios  # the level name, shown literally
    # the site name and owner in the title panel: text, no <img> element was made
    assert f"Deck {XSS_IMG}" in page.inner_text("#gc-title")
    assert f"Owner {XSS_IMG}" in page.inner_text("#gc-title")
    assert page.evaluate("document.querySelectorAll('#gc-title img').length") == 0
    scripts = page.eval_on_selector_all("script", "els => els.map(e => e.textContent.trim())")
    assert not any(s.startswith("alert(") for s in scripts)
    # the label of the GeoJSON delamination, in its tooltip
    text = page.evaluate("""() => {
      const gc = window.__geoCorrosion; const lid = gc.current();
      const g = gc.layer(lid, 'delaminations'); let out = null;
      g.eachLayer(l => { if (l.feature.properties.Label.includes('alert')) {
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
    lid = _gc(page, "gc.current()")
    box = _box(page, "classes_potential")
    assert not box.is_checked()  # off by default
    box.click()
    assert box.is_checked()
    assert _gc(page, f"gc.map.hasLayer(gc.layer('{lid}', 'classes_potential'))") is True
    assert "ASTM C876" in page.inner_text("#gc-legend")  # its legend follows it
    # maps are shown one at a time: the surface went off, and its box with it
    assert not _box(page, "surface_potential").is_checked()
    box.click()
    assert _gc(page, f"gc.map.hasLayer(gc.layer('{lid}', 'classes_potential'))") is False
    assert "ASTM C876" not in page.inner_text("#gc-legend")
    _box(page, "surface_potential").click()
    _assert_consistent(page, lid)


@pytest.mark.slow
def test_each_level_switch_then_every_box(sample_page: Any) -> None:
    """Switch to each level, tick and untick every box: only that level is drawn.

    The failure this guards (issue 14): after a switch to the roof, ticking a roof box
    brought Level 2's layers back with hidden boxes.
    """
    page, log = sample_page
    ids = _levels(page)
    assert len(ids) >= 2
    for rnd in range(2):  # twice round: a level shown before keeps its own state only
        for i, lid in enumerate(ids):
            _switch(page, i)
            assert _gc(page, "gc.current()") == lid
            _assert_consistent(page, lid)
            for b in _gc(page, "gc.boxes()"):
                for _ in range(2):  # tick and untick (or untick and tick)
                    _box(page, b["key"]).click()
                    _assert_consistent(page, lid)
            if rnd == 0:  # leave a different mix on for the next visit
                _box(page, "zones").click()
                _assert_consistent(page, lid)
    assert log.errors == []


@pytest.mark.slow
def test_hidden_levels_are_built_on_first_show(browser: Any, sample_run: Path) -> None:
    # issue 14 item 1: "layers of hidden levels built lazily on first show"
    page, log = open_page(browser, sample_run / "webmap.html")
    try:
        ids = _levels(page)
        _assert_fits(_slab_pixels(page, ids[0]))  # the first view fits the first slab
        assert _gc(page, "gc.parsed()") == [ids[0]]
        assert _gc(page, f"gc.built('{ids[1]}')") == []
        _switch(page, 1)
        assert ids[1] in _gc(page, "gc.parsed()")
        assert _gc(page, f"gc.built('{ids[1]}')")
        # readings are drawn on a canvas, not as one SVG element each (issue 16)
        _box(page, "readings_potential").click()
        assert _gc(page, f"""(() => {{ let ok = true, n = 0;
            gc.layer('{ids[1]}', 'readings_potential').eachLayer(l => {{ n++;
              ok = ok && (l.options.renderer instanceof L.Canvas); }});
            return ok && n > 1000; }})()""")
        assert log.errors == []
    finally:
        page.context.close()


def _slab_pixels(page: Any, lid: str) -> dict[str, Any]:
    return page.evaluate("""(lid) => {
      const gc = window.__geoCorrosion, map = gc.map;
      const b = gc.bounds(lid);
      const lb = L.latLngBounds(b), view = map.getBounds();
      let corners = [];
      const i = gc.config.levels.findIndex(l => l.id === lid);
      const el = document.getElementById('gc-level-' + i);
      const slab = JSON.parse(el.textContent).base.find(s => s.key === 'slab');
      slab.fc.features.forEach(f => f.geometry.coordinates[0].forEach(c => {
        const p = map.latLngToContainerPoint([c[1], c[0]]); corners.push([p.x, p.y]); }));
      const a = map.latLngToContainerPoint(lb.getSouthWest());
      const c = map.latLngToContainerPoint(lb.getNorthEast());
      const size = map.getSize();
      const rects = ['#gc-side', '.gc-control', '.leaflet-control-zoom', '.leaflet-control-scale']
        .map(s => document.querySelector(s).getBoundingClientRect())
        .map(r => [r.left, r.top, r.right, r.bottom]);
      return {contains: view.contains(lb), corners: corners, rects: rects,
              share: Math.abs((c.x - a.x) * (c.y - a.y)) / (size.x * size.y)};
    }""", lid)


@pytest.mark.slow
def test_view_fits_the_slab_after_a_switch(sample_page: Any) -> None:
    # issue 14 item 1: a level switch re-fits the view to that slab, the first view too,
    # and no panel covers a corner of the slab
    page, _ = sample_page
    ids = _levels(page)
    for i in range(len(ids)):
        _switch(page, (i + 1) % len(ids))
        page.evaluate("window.__geoCorrosion.map.setView([0, 0], 3)")  # look elsewhere
        _switch(page, i)
        _assert_fits(_slab_pixels(page, ids[i]))


def _assert_fits(got: dict[str, Any]) -> None:
    assert got["contains"]
    # the slab's envelope fills a good share of the map (our bar: a quarter; at
    # 1400 x 900 the side panel and the control take about 40 % of the width)
    assert got["share"] > 0.25, got["share"]
    for x, y in got["corners"]:
        for r in got["rects"]:
            assert not (r[0] <= x <= r[2] and r[1] <= y <= r[3]), ((x, y), r)


def _legend_colours(page: Any) -> dict[str, list[str]]:
    """Colours of each legend entry now shown, by layer key (swatches and ramp stops)."""
    return page.evaluate("""() => {
      const out = {};
      document.querySelectorAll('#gc-legend .gc-leg').forEach(d => {
        const c = [];
        d.querySelectorAll('[data-color]').forEach(e => c.push(e.dataset.color));
        d.querySelectorAll('[data-colors]').forEach(e => c.push(...e.dataset.colors.split(' ')));
        out[d.dataset.key] = (out[d.dataset.key] || []).concat(c); });
      return out; }""")


def _check_colours(page: Any) -> None:
    ids = _levels(page)
    for i, lid in enumerate(ids):
        _switch(page, i)
        layers = _gc(page, f"gc.layers('{lid}')")
        fills = [ly["key"] for ly in layers if ly["excl"] == "maps"]
        lines = [ly["key"] for ly in layers if ly["excl"] == "contours"]
        for b in layers:  # every layer that is not one of a set on
            if not b["excl"] and not _box(page, b["key"]).is_checked():
                _box(page, b["key"]).click()
        for f, c in itertools.product(fills, lines):  # each map with each contour set
            for k in (f, c):
                if not _box(page, k).is_checked():
                    _box(page, k).click()
            assert _box(page, f).is_checked() and _box(page, c).is_checked()
            shown = _legend_colours(page)
            # the slab, its exclusions, every layer that is not one of a set, and 2 of sets
            base = len(_gc(page, f"gc.baseColors('{lid}')"))
            single = [ly for ly in layers if not ly["excl"]]
            assert len(shown) == base + 2 + len(single), sorted(shown)
            assert f in shown and c in shown
            assert clashes(shown) == [], (lid, f, c)
            # what is drawn has the legend's colours (hatching: the pattern's own line)
            drawn = page.evaluate("""([lid, keys]) => {
              const gc = window.__geoCorrosion, out = {};
              keys.forEach(k => { const c = new Set(); const g = gc.layer(lid, k);
                if (g && g.eachLayer) g.eachLayer(function walk(l) {
                  if (l.eachLayer) { l.eachLayer(walk); return; }
                  if (l.options.stroke !== false && l.options.color) c.add(l.options.color);
                  const fc = l.options.fillColor;
                  if (l.options.fill && fc && !fc.startsWith('url(') &&
                      (l.options.fillOpacity > 0)) c.add(fc); });
                out[k] = [...c]; });
              return out; }""", [lid, list(shown)])
            for k, cs in drawn.items():
                assert {c.upper() for c in cs} <= {c.upper() for c in shown[k]}, (k, cs)


@pytest.mark.slow
def test_no_two_shown_layers_share_a_colour(sample_page: Any) -> None:
    # issue 14 item 1: "no two layers shown together share a colour"; CIE76 delta E
    # (CIE 15:2004, tests/webmap/colour.py) computed from the legend the page shows
    page, _ = sample_page
    _check_colours(page)


def test_no_two_shown_layers_share_a_colour_metric(xss_page: Any) -> None:
    page, _ = xss_page
    _check_colours(page)


@pytest.mark.slow
def test_contour_labels_and_joints_are_drawn(sample_page: Any, sample_run: Path) -> None:
    import geopandas as gpd

    page, _ = sample_page
    ids = _levels(page)
    _switch(page, 0)
    lid = ids[0]
    if not _box(page, "contours_potential").is_checked():
        _box(page, "contours_potential").click()
    labels = page.eval_on_selector_all(".gc-clabel", "els => els.map(e => e.textContent)")
    cont = gpd.read_file(sample_run / "survey.gpkg", layer=f"{lid}_contours_potential")
    # one label at least per contour value, each a value of the GeoPackage's contours
    assert {f"{v:g}" for v in cont["value"]} <= set(labels)
    assert set(labels) <= {f"{v:g}" for v in cont["value"]}
    _box(page, "contours_potential").click()
    assert page.locator(".gc-clabel").count() == 0  # labels go with their lines
    joints = gpd.read_file(sample_run / "survey.gpkg", layer=f"{lid}_joints")
    assert len(joints)  # the sample site has joints (its README)
    n = _gc(page, f"(() => {{ let n = 0; gc.layer('{lid}', 'joints').eachLayer(() => n++); "
                  "return n; })()")
    assert n == len(joints)


def _popup(page: Any, lid: str, key: str, pick: str) -> str:
    """Open the popup of the feature for which the JS expression ``pick(l)`` holds."""
    return page.evaluate(f"""() => {{
      const gc = window.__geoCorrosion; const map = gc.map;
      gc.add('{lid}', '{key}');
      const g = gc.layer('{lid}', '{key}'); let hit = null;
      g.eachLayer(l => {{ if (({pick})(l)) hit = l; }});
      map.closePopup();
      hit.fire('click', {{latlng: hit.getLatLng ? hit.getLatLng() : hit.getBounds().getCenter()}},
               true);
      const ps = document.querySelectorAll('.leaflet-popup-content');
      const t = ps.length === 1 ? ps[0].innerText : `${{ps.length}} popups open`;
      map.closePopup();
      return t; }}""").replace("\xa0", " ")  # no-break spaces between numbers and units


@pytest.mark.slow
def test_repair_popup_carries_what_a_contractor_asks(sample_page: Any, sample_run: Path
                                                      ) -> None:
    import geopandas as gpd

    page, log = sample_page
    lid = _levels(page)[0]
    _switch(page, 0)
    rep = gpd.read_file(sample_run / "survey.gpkg", layer=f"{lid}_repairs")
    r = rep.sort_values("area_m2").iloc[-1]
    text = _popup(page, lid, "repairs", f"l => l.feature.properties._id === {r['repair_id']!r}")
    ft = 0.3048  # 1 ft = 0.3048 m exactly [NIST-SP811-2008 App. B]
    assert r["repair_id"] in text
    # areas to whole ft², lengths to 0.1 ft on a US report (issue 14 item 3)
    assert f"Area\t{r['area_m2'] / ft**2:,.0f} ft²" in text
    assert f"Perimeter\t{r['perimeter_m'] / ft:,.1f} ft" in text
    assert f"Saw-cut length\t{r['outline_m'] / ft:,.1f} LF" in text
    assert f"Volume\t{r['volume_m3'] / ft**3:,.1f} ft³" in text
    # removal depth to 1/4 in on a US report, as a mixed number (issue 14 item 3)
    q = round(r["depth_mm"] / 25.4 * 4)
    whole, rest = divmod(q, 4)
    frac = {0: "", 1: "1/4", 2: "1/2", 3: "3/4"}[rest]
    assert f"Removal depth\t{whole}-{frac} in" in text if whole and frac else \
        f"Removal depth\t{frac or whole} in" in text
    assert "REP-PD" in text or "REP-FD" in text  # bid item of the depth class
    assert "Partial depth" in text or "Full depth" in text  # depth class, as words
    # overall dimensions, location and sounded areas: the repair layout's tender columns
    # as a contractor writes them (h/geom, issue 13), shown as written in the GeoPackage
    assert f"Dimensions\t{r['dimensions']}" in text
    assert f"Location\t{r['location']}" in text
    assert f"Sounded areas\t{r['sounded']}" in text
    for word in ("Dimensions", "Location", "Sounded areas", "Depth class", "Removal depth",
                 "Area", "Perimeter", "Saw-cut length", "Volume", "Bid item"):
        assert word in text, word
    assert "_" not in text.replace(str(r["repair_id"]), "")  # no internal identifier
    assert log.errors == []


@pytest.mark.slow
def test_reading_popup_carries_point_grid_value_and_qa(sample_page: Any, sample_run: Path
                                                      ) -> None:
    import geopandas as gpd

    page, _ = sample_page
    rd = gpd.read_file(sample_run / "survey.gpkg", layer="readings_potential")
    flagged = rd[rd["qa_flags"].fillna("").astype(str) != ""]
    assert len(flagged)  # the sample site plants flawed readings (its README)
    r = flagged.iloc[0]
    lid = str(r["level_id"])
    _switch(page, _levels(page).index(lid))
    idx = page.evaluate("""([lid, where]) => {
      const d = JSON.parse(document.getElementById('gc-level-' +
        window.__geoCorrosion.config.levels.findIndex(l => l.id === lid)).textContent);
      const s = d.layers.find(x => x.key === 'readings_potential');
      const w = s.cols.Where; const vals = Array.isArray(w) ? w : w.i.map(i => w.d[i]);
      return vals.indexOf(where); }""",
                             [lid, str(r["where"])])
    text = _popup(page, lid, "readings_potential",
                  f"l => l._gcIndex === {idx}")
    assert str(r["where"]) in text
    assert str(r["point_id"]) in text
    assert f"{r['x_local']:.2f}, {r['y_local']:.2f} ft" in text  # grid position
    if np.isfinite(r["potential_mv"]):
        assert f"Value\t{r['potential_mv']:.0f} mV vs CSE" in text  # to whole mV
    assert f"{r['raw_value']:.1f} mV vs " in text or f"{r['raw_value']:.3g} mV vs " in text
    from geo_corrosion.vocabulary import label

    assert label(f"electrode.{r['electrode']}") in text  # the electrode it was read with
    assert str(r["qa_flags"]) in text
    for word in ("Point", "Grid x, y", "As read", "Value", "QA flags"):
        assert word in text, word


@pytest.mark.slow
def test_screenshots_of_each_level(sample_page: Any, tmp_path: Path) -> None:
    from PIL import Image

    page, _ = sample_page
    for i, lid in enumerate(_levels(page)):
        _switch(page, i)
        page.wait_for_timeout(300)
        png = page.screenshot()
        (tmp_path / f"webmap_{lid}.png").write_bytes(png)
        img = np.asarray(Image.open(io.BytesIO(png)).convert("L"), float)
        # a blank or single-colour page has (near) zero variance; common practice, no source
        assert img.std() > 20
        assert len(np.unique(img.astype(int))) > 64


def test_every_layer_has_a_legend(xss_page: Any) -> None:
    # issue 6: "Layers, each with a legend"; the legend entry names its unit or classes
    page, _ = xss_page
    lid = _gc(page, "gc.current()")
    missing = page.evaluate("""(lid) => {
      const d = JSON.parse(document.getElementById('gc-level-0').textContent);
      return d.layers.filter(s => !s.legend || s.legend.length < 20).map(s => s.key); }""",
                            lid)
    assert missing == []
    surf = page.evaluate("""() => JSON.parse(document.getElementById('gc-level-0').textContent)
                             .layers.find(s => s.key === 'surface_potential').legend""")
    assert "mV vs CSE" in surf  # units on every scale (project rule; C876 reference)


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
        label = page.locator(".leaflet-control-layers label", has_text="Street basemap")
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

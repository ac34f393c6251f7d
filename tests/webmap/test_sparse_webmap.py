"""A kind too sparse for a surface on the web map: its classed points drawn, in the layer control.

Debian's chromium via Playwright, network blocked (see conftest); the synthetic site with a
spot corrosion-rate survey of 18 readings (issue 12 item 2).  The page's hook is
``window.__geoCorrosion`` (issue 14 item 1).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest

from tests.webmap.colour import clashes
from tests.webmap.conftest import open_page

pytestmark = pytest.mark.browser

POINTS = "Corrosion rate readings (points, no surface)"
CELLS = "Corrosion rate Thiessen cells (nearest reading, not a surface)"


def _gc(page: Any, expr: str) -> Any:
    return page.evaluate(f"(() => {{ const gc = window.__geoCorrosion; return {expr}; }})()")


@pytest.fixture(scope="module")
def sparse_run(tmp_path_factory: pytest.TempPathFactory) -> Path:
    from geo_corrosion.pipeline import run
    from geo_corrosion.testing import make_synthetic_site

    root = tmp_path_factory.mktemp("sparse_webmap")
    site = make_synthetic_site(root / "site", sparse_readings=18, max_distance=None)
    run(site, root / "out")
    return root / "out"


@pytest.fixture(scope="module")
def sparse_page(browser: Any, sparse_run: Path) -> Any:
    page, log = open_page(browser, sparse_run / "webmap.html")
    yield page, log
    page.context.close()


def test_points_layer_is_drawn_and_listed(sparse_page: Any, tmp_path: Path) -> None:
    page, log = sparse_page
    assert log.errors == [] and log.blocked == []
    lid = _gc(page, "gc.current()")
    layers = {ly["label"]: ly for ly in _gc(page, f"gc.layers('{lid}')")}
    labels = page.eval_on_selector_all(".leaflet-control-layers-overlays label",
                                       "els => els.map(e => e.textContent.trim())")
    # in the layer control: the points and their Thiessen cells, labelled as not a surface
    assert POINTS in labels and CELLS in labels
    pts, cells = layers[POINTS], layers[CELLS]
    assert pts["group"] == "survey" and cells["group"] == "maps" and cells["excl"] == "maps"
    # drawn when the level opens, one marker per reading on the canvas (18 readings, testing.py)
    assert pts["on"] is True
    n = _gc(page, f"(() => {{ let n = 0; gc.layer('{lid}', '{pts['key']}').eachLayer(l => {{ "
                  "if (l instanceof L.CircleMarker && gc.map.hasLayer(l) && "
                  "l.options.renderer instanceof L.Canvas) n++; }); return n; })()")
    assert n == 18
    # coloured by class: every marker's colour is one of the legend's class swatches
    fills = _gc(page, f"(() => {{ const c = new Set(); gc.layer('{lid}', '{pts['key']}')"
                      ".eachLayer(l => c.add(l.options.fillColor)); return [...c]; })()")
    legend_colours = page.evaluate(f"""() => [...document.querySelectorAll(
        '#gc-legend .gc-leg[data-key="{pts['key']}"] [data-color]')].map(e => e.dataset.color)""")
    assert fills and set(fills) <= set(legend_colours)
    # the legend carries the class swatches and the reason there is no surface
    legend = page.inner_text("#gc-legend")
    assert "no surface: 18 usable readings" in legend
    # the cells are off by default (a map of the "Maps" group, one at a time)
    assert cells["on"] is False
    # no two shown layers share a colour (CIE76, tests/webmap/colour.py): points over the
    # potential surface, and over the cells when the cells are the map shown
    for key in (None, cells["key"]):
        if key:
            _gc(page, f"gc.add('{lid}', '{key}')")
        shown = page.evaluate("""() => { const out = {};
          document.querySelectorAll('#gc-legend .gc-leg').forEach(d => {
            const c = [];
            d.querySelectorAll('[data-color]').forEach(e => c.push(e.dataset.color));
            d.querySelectorAll('[data-colors]').forEach(
              e => c.push(...e.dataset.colors.split(' ')));
            out[d.dataset.key] = (out[d.dataset.key] || []).concat(c); });
          return out; }""")
        assert pts["key"] in shown
        assert clashes(shown) == [], shown
    assert "nearest reading; not a surface" in page.inner_text("#gc-legend")
    shot = tmp_path / "sparse_webmap.png"
    page.screenshot(path=str(shot))
    assert shot.stat().st_size > 20_000

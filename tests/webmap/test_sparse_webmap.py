"""A kind too sparse for a surface on the web map: its classed points drawn, in the layer control.

Debian's chromium via Playwright, network blocked (see conftest); the synthetic site with a
spot corrosion-rate survey of 18 readings (issue 12 item 2).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest

from tests.webmap.conftest import open_page

pytestmark = pytest.mark.browser

POINTS = "Test deck: corrosion rate readings (points, no surface)"
CELLS = "Test deck: corrosion rate Thiessen cells (nearest reading, not a surface)"


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


def _name(page: Any, label: str) -> str:
    name: str = page.evaluate(f"Object.keys(gcLabels).find(k => gcLabels[k] === {label!r})")
    return name


def test_points_layer_is_drawn_and_listed(sparse_page: Any, tmp_path: Path) -> None:
    page, log = sparse_page
    assert log.errors == [] and log.blocked == []
    labels = page.eval_on_selector_all(".leaflet-control-layers label",
                                       "els => els.map(e => e.textContent.trim())")
    # in the layer control: the points and their Thiessen cells, labelled as not a surface
    assert POINTS in labels and CELLS in labels
    name = _name(page, POINTS)
    assert name
    # drawn when the level opens, one marker per reading (18 readings, testing.py)
    assert page.evaluate(f"gcMap.hasLayer(gcLayers['{name}'])") is True
    n = page.evaluate(f"(() => {{ let n = 0; gcLayers['{name}'].eachLayer(l => {{ "
                      "if (l instanceof L.CircleMarker && gcMap.hasLayer(l)) n++; }); "
                      "return n; })()")
    assert n == 18
    # drawn on the page: SVG/canvas paths exist and the legend carries the reason
    assert "no surface: 18 usable readings" in page.inner_text("#gc-legend")
    cells = _name(page, CELLS)
    assert page.evaluate(f"gcMap.hasLayer(gcLayers['{cells}'])") is False  # off by default
    shot = tmp_path / "sparse_webmap.png"
    page.screenshot(path=str(shot))
    assert shot.stat().st_size > 20_000

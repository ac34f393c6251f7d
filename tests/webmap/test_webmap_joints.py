"""The joints layer of the web map in a real browser (Debian's chromium, network blocked).

The page's hook is ``window.__geoCorrosion`` (issue 14 item 1).
"""

from __future__ import annotations

import io
import os
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from geo_corrosion.exporters.webmap.palette import OVERLAY
from tests.webmap.conftest import open_page

pytestmark = pytest.mark.browser


def _gc(page: Any, expr: str) -> Any:
    return page.evaluate(f"(() => {{ const gc = window.__geoCorrosion; return {expr}; }})()")


def _box(page: Any) -> Any:
    return page.locator(".leaflet-control-layers-overlays input[data-key='joints']")


@pytest.fixture(scope="module")
def joint_page(browser: Any, tmp_path_factory: pytest.TempPathFactory) -> Any:
    from geo_corrosion.pipeline import run
    from geo_corrosion.testing import make_synthetic_site

    root = tmp_path_factory.mktemp("webmap_joints")
    site = make_synthetic_site(root / "site", joint_type="expansion", step_mv=150.0,
                               ground_connections=[(5.0, 5.0, "G1"), (55.0, 5.0, "G2")])
    run(site, root / "out")
    page, log = open_page(browser, root / "out" / "webmap.html")
    yield page, log
    page.context.close()


def test_joints_layer_is_listed_shown_and_in_the_legend(joint_page: Any) -> None:
    page, log = joint_page
    assert not log.errors and not log.blocked
    lid = _gc(page, "gc.current()")
    labels = page.eval_on_selector_all(".leaflet-control-layers-overlays label",
                                       "els => els.map(e => e.textContent.trim())")
    assert "Joints" in labels
    # shown when the level opens, like the sounding: the joints frame every other layer
    assert _box(page).is_checked()
    assert {ly["key"]: ly["on"] for ly in _gc(page, f"gc.layers('{lid}')")}["joints"] is True
    legend = page.inner_text("#gc-legend")
    assert "expansion/isolation joint (mat not continuous across it)" in legend
    props = _gc(page, f"""(() => {{ const out = [];
      gc.layer('{lid}', 'joints').eachLayer(l => out.push([l.feature.properties.Joint,
        l.feature.properties['Bar continuity'], l.options.color, l.options.dashArray]));
      return out; }})()""")
    # one expansion joint, drawn in the breaking style (palette.OVERLAY, dashed)
    assert props == [["Expansion joint", "broken: kriged apart", OVERLAY["joint_break"],
                      "8 4"]]
    _box(page).click()
    assert "expansion/isolation joint" not in page.inner_text("#gc-legend")  # legend follows
    _box(page).click()
    assert "expansion/isolation joint" in page.inner_text("#gc-legend")


def _joint_coloured(png: bytes) -> int:
    from PIL import Image

    c = OVERLAY["joint_break"]
    rgb = np.array([int(c[i:i + 2], 16) for i in (1, 3, 5)])
    img = np.asarray(Image.open(io.BytesIO(png)).convert("RGB"), int)
    return int((np.abs(img - rgb).sum(axis=2) < 30).sum())


def test_joints_screenshot(joint_page: Any, tmp_path: Path) -> None:
    page, _ = joint_page
    png = page.screenshot()
    keep = os.environ.get("GC_SCREENSHOT_DIR")
    for d in (tmp_path, *([Path(keep)] if keep else [])):
        (d / "webmap_joints.png").write_bytes(png)
    _box(page).click()
    without = page.screenshot()
    _box(page).click()
    # the joint line is drawn in its colour: pixels of it appear with the layer and go
    # with it (the difference is counted; common practice, no source)
    assert _joint_coloured(png) - _joint_coloured(without) > 50

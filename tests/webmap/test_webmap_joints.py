"""The joints layer of the web map in a real browser (Debian's chromium, network blocked)."""

from __future__ import annotations

import io
import os
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from tests.webmap.conftest import open_page

pytestmark = pytest.mark.browser


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
    labels = page.eval_on_selector_all(".leaflet-control-layers label",
                                       "els => els.map(e => e.textContent.trim())")
    assert "Test deck: joints" in labels
    name = page.evaluate("Object.keys(gcLabels).find(k => gcLabels[k].endsWith(': joints'))")
    # shown when the level opens, like the sounding: the joints frame every other layer
    assert page.evaluate(f"gcMap.hasLayer(gcLayers['{name}'])") is True
    legend = page.inner_text("#gc-legend")
    assert "expansion/isolation joint (mat not continuous across it)" in legend
    props = page.evaluate(f"""() => {{ const out = [];
      gcLayers['{name}'].eachLayer(l => out.push([l.feature.properties.joint_type,
                                                   l.options.color, l.options.dashArray]));
      return out; }}""")
    # one expansion joint, drawn in the breaking style (reddish purple, long dashes)
    assert props == [["expansion", "#CC79A7", "10 4"]]
    page.locator(".leaflet-control-layers label", has_text="Test deck: joints").locator(
        "input").click()
    assert "expansion/isolation joint" not in page.inner_text("#gc-legend")  # legend follows
    page.locator(".leaflet-control-layers label", has_text="Test deck: joints").locator(
        "input").click()


def _joint_coloured(png: bytes) -> int:
    from PIL import Image

    img = np.asarray(Image.open(io.BytesIO(png)).convert("RGB"), int)
    return int((np.abs(img - np.array([0xCC, 0x79, 0xA7])).sum(axis=2) < 30).sum())


def test_joints_screenshot(joint_page: Any, tmp_path: Path) -> None:
    page, _ = joint_page
    png = page.screenshot()
    keep = os.environ.get("GC_SCREENSHOT_DIR")
    for d in (tmp_path, *([Path(keep)] if keep else [])):
        (d / "webmap_joints.png").write_bytes(png)
    toggle = page.locator(".leaflet-control-layers label", has_text="Test deck: joints").locator(
        "input")
    toggle.click()
    without = page.screenshot()
    toggle.click()
    # the joint line is drawn in its colour: pixels of #CC79A7 appear with the layer and go
    # with it (spalls share the hue, so the difference is counted; common practice, no source)
    assert _joint_coloured(png) - _joint_coloured(without) > 50

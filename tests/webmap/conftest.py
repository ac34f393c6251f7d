"""Fixtures of the web map and report tests: runs made once per session, a browser page.

Two runs: the synthetic site of :func:`geo_corrosion.testing.make_synthetic_site` with
metric reporting units and input texts that hold a script tag (fast), and the sample site
(``sample_sites/millbrook_garage``, two levels, US units; slow; with
``GC_WEBMAP_SAMPLE_RUN=<a finished run folder of it>`` only its web map is rebuilt).
Browser tests drive Debian's chromium (``/usr/bin/chromium``) through Playwright with
every request that is not ``file:`` or ``data:`` aborted and recorded; they never
download a browser.
"""

from __future__ import annotations

import json
import os
import shutil
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pytest

REPO = Path(__file__).resolve().parents[2]
SAMPLE = REPO / "sample_sites" / "millbrook_garage"
CHROMIUM = Path("/usr/bin/chromium")
XSS = "<script>alert(1)</script>"
#: in the site name and the owner: an attribute-borne script (OWASP XSS filter evasion)
XSS_IMG = "<img src=x onerror=alert(2)>"
CHROMIUM_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
                 "--no-first-run", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync"]


def _xss_site(root: Path) -> Path:
    """The synthetic site, metric, with script in the site name, owner, level name and a label."""
    from geo_corrosion.testing import make_synthetic_site

    site = make_synthetic_site(root)
    text = site.read_text()
    for old, new in (('units = "us"', 'units = "metric"'),
                     ('name = "Synthetic test deck"',
                      f'name = "Deck {XSS_IMG}"\nowner = "Owner {XSS_IMG}"'),
                     ('name = "Test deck"', f'name = "{XSS}"'),
                     ('{ kind = "spall", path = "sounding/sounding.dxf", layer = "SPALL" } ]',
                      '{ kind = "spall", path = "sounding/sounding.dxf", layer = "SPALL" },\n'
                      '             '
                      '{ kind = "delamination", path = "sounding/labelled.geojson" } ]')):
        assert old in text, old
        text = text.replace(old, new)
    site.write_text(text)
    delam = {"type": "FeatureCollection", "features": [{
        "type": "Feature", "properties": {"label": XSS},
        "geometry": {"type": "Polygon", "coordinates": [[[40, 30], [44, 30], [44, 33],
                                                          [40, 33], [40, 30]]]}}]}
    (root / "sounding" / "labelled.geojson").write_text(json.dumps(delam))
    return site


@pytest.fixture(scope="session")
def xss_run(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """Output folder of the synthetic run (metric, script tags in its input texts)."""
    from geo_corrosion.pipeline import run

    root = tmp_path_factory.mktemp("webmap_xss")
    site = _xss_site(root / "site")
    out = root / "out"
    run(site, out)
    return out


@pytest.fixture(scope="session")
def sample_run(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """Output folder of the sample site's run (two levels, US units)."""
    from geo_corrosion.pipeline import run

    root = tmp_path_factory.mktemp("webmap_sample")
    reuse = os.environ.get("GC_WEBMAP_SAMPLE_RUN")
    if reuse:  # a finished run of the sample site: only the web map is rebuilt (fast edits)
        from geo_corrosion.exporters.webmap import write_webmap

        out = root / "out"
        shutil.copytree(reuse, out)
        write_webmap(out)
        return out
    site = root / "millbrook_garage"
    shutil.copytree(SAMPLE, site, ignore=shutil.ignore_patterns("out"))
    out = root / "out"
    run(site, out)
    return out


@dataclass
class PageLog:
    """What a page did: requests that were blocked, console errors, page errors, dialogs."""

    blocked: list[str] = field(default_factory=list)
    errors: list[str] = field(default_factory=list)
    dialogs: list[str] = field(default_factory=list)


def _need_browser() -> Any:
    if not CHROMIUM.is_file():
        pytest.skip("browser test: /usr/bin/chromium is missing (apt-get install chromium)")
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        pytest.skip("browser test: the playwright package is missing (pip install playwright; "
                    "never `playwright install`: Debian's chromium is used)")
    return sync_playwright


def open_page(browser: Any, path: Path, *, width: int = 1400,
              height: int = 900) -> tuple[Any, PageLog]:
    """Open a local file with the network blocked; wait until the map's script ran."""
    log = PageLog()
    ctx = browser.new_context(viewport={"width": width, "height": height})
    page = ctx.new_page()

    def route(r: Any) -> None:
        url = r.request.url
        if url.startswith(("file:", "data:")):
            r.continue_()
        else:
            log.blocked.append(url)
            r.abort()

    page.route("**/*", route)
    page.on("console", lambda m: log.errors.append(f"console {m.type}: {m.text}")
            if m.type in ("error", "warning") else None)
    page.on("pageerror", lambda e: log.errors.append(f"page error: {e}"))

    def dialog(d: Any) -> None:
        log.dialogs.append(d.message)
        d.dismiss()

    page.on("dialog", dialog)
    page.goto(path.as_uri())
    page.wait_for_function("window.__geoCorrosion !== undefined && window.__geoCorrosion.ready",
                           timeout=60000)
    page.wait_for_timeout(300)
    return page, log

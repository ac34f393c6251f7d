"""The portfolio web map in a real browser (Debian's chromium via Playwright, network blocked)."""

from __future__ import annotations

from pathlib import Path
from typing import Any
from urllib.parse import unquote, urlparse

import pytest

from tests.portfolio.conftest import SITES, PortfolioRun
from tests.webmap.conftest import open_page

pytestmark = [pytest.mark.slow, pytest.mark.browser]


def test_one_marker_per_site_and_links_that_resolve(browser: Any,
                                                    portfolio_run: PortfolioRun) -> None:
    """N markers, no request off the page, each done site's link opens its own map file."""
    page, log = open_page(browser, portfolio_run.out / "portfolio.html")
    try:
        assert not log.blocked and not log.errors, (log.blocked, log.errors)
        markers = page.evaluate("window.__geoCorrosion.markers()")
        assert len(markers) == len(SITES)
        assert len({(m["lat"], m["lon"]) for m in markers}) == len(SITES)
        done = [m for m in markers if m["status"] == "done"]
        assert len(done) == 2
        for m in done:
            pop = page.evaluate(f"window.__geoCorrosion.popup('{m['id']}')")
            assert "deck area" in pop["text"] and "open the site map" in pop["text"]
            href = pop["href"]  # the link in the popup itself
            assert href == m["href"] == f"sites/{m['id']}/webmap.html"  # relative
            target = Path(unquote(urlparse(page.url).path)).parent / href
            assert target.is_file()
        pop = page.evaluate("window.__geoCorrosion.popup('east-deck')")
        assert "failed" in pop["text"] and "line 6" in pop["text"]
        assert pop["href"] is None  # no map to link to
    finally:
        page.context.close()

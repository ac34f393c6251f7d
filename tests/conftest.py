"""Fixtures shared by every test folder.

``browser``: Debian's chromium, headless, driven by Playwright, one for the whole session.
Playwright's sync API allows one instance per thread at a time, so every browser test (web
map, portfolio map, plugin kinds) uses this one fixture; a second ``sync_playwright()`` while
it is open fails with "using Playwright Sync API inside the asyncio loop".
"""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

import pytest

from tests.webmap.conftest import CHROMIUM, CHROMIUM_ARGS, _need_browser


@pytest.fixture(scope="session")
def browser() -> Iterator[Any]:
    """Debian's chromium, headless, driven by Playwright."""
    sync_playwright = _need_browser()
    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=str(CHROMIUM), args=CHROMIUM_ARGS)
        yield b
        b.close()

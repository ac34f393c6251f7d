"""Small HTML helpers shared by the web map and the report: escaping and inlined PNGs."""

from __future__ import annotations

import base64
import html
import re
from typing import Any

import numpy as np

__all__ = ["Raw", "escape", "png_data_url"]

#: The characters html.escape(quote=True) replaces.
_SPECIAL = re.compile(r"[&<>\"']")


class Raw(str):
    """Text that is HTML already (built from escaped parts): not escaped again."""


def escape(value: Any, *, thousands: bool = False) -> str:
    """HTML-escape any value; floats with 2 decimals (and thousands separators if asked).

    Every text that may come from an input file (names, labels, notes, ids) passes here
    before it reaches a page, so a crafted label is shown as text and never runs.
    """
    if isinstance(value, Raw):
        return str(value)
    if isinstance(value, float | np.floating):
        if not np.isfinite(value):
            return ""
        return f"{float(value):,.2f}" if thousands else f"{float(value):.2f}"
    text = "" if value is None else str(value)
    # most texts (ids, numbers, places) hold nothing to escape: returned as they are
    return html.escape(text, quote=True) if _SPECIAL.search(text) else text


def png_data_url(data: bytes) -> str:
    """Return PNG bytes as a ``data:`` URL, so a page needs no other file."""
    return "data:image/png;base64," + base64.b64encode(data).decode()

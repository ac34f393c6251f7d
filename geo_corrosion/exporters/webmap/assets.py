"""Leaflet for the web map: its release files, vendored in ``_vendor/leaflet/``.

The files are Leaflet's own, unmodified, at the version the installed folium declares
(their source, hashes and licence are in ``_vendor/leaflet/README.md``).  They are package
data, read with :mod:`importlib.resources`, so a non-editable install carries them.
"""

from __future__ import annotations

import re
from functools import cache
from importlib.resources import files
from typing import TYPE_CHECKING

from geo_corrosion.errors import ExportError
from geo_corrosion.exporters._html import png_data_url

if TYPE_CHECKING:
    from importlib.resources.abc import Traversable

__all__ = ["LEAFLET_VERSION", "leaflet_assets", "vendor_dir"]

#: The vendored Leaflet release (``_vendor/leaflet/README.md``).
LEAFLET_VERSION = "1.9.3"
_SOURCE_MAP = "//# sourceMappingURL=leaflet.js.map"
_CSS_IMAGE = re.compile(r"url\((images/[^)]+\.png)\)")


def vendor_dir() -> Traversable:
    """Return the folder of the vendored Leaflet files inside the installed package."""
    return files("geo_corrosion.exporters.webmap").joinpath("_vendor").joinpath("leaflet")


def _read_bytes(name: str) -> bytes:
    f = vendor_dir()
    for part in name.split("/"):
        f = f.joinpath(part)
    try:
        return f.read_bytes()
    except (FileNotFoundError, NotADirectoryError) as err:
        raise ExportError(f"Leaflet's file _vendor/leaflet/{name} is missing from the installed "
                          "geo_corrosion package (a broken installation: reinstall it)") from err


def _read_text(name: str) -> str:
    # LICENSE and leaflet.css have CRLF line ends in the release; the page uses LF
    return _read_bytes(name).decode("utf-8").replace("\r\n", "\n")


@cache
def leaflet_assets() -> tuple[str, str, str]:
    """Leaflet's script, stylesheet and licence, ready to be inlined into one page.

    Returns
    -------
    tuple[str, str, str]
        The script without its source-map comment (the map file is not shipped); the
        stylesheet with its images inlined as PNG data URLs, so the page needs no network;
        the licence text (BSD-2-Clause, which a redistribution reproduces) with ``--``
        defused so it can sit inside an HTML comment.

    Raises
    ------
    ExportError
        A vendored file is missing (a broken installation).
    """
    js = _read_text("leaflet.js").replace(_SOURCE_MAP, "")
    css = _read_text("leaflet.css")
    css = _CSS_IMAGE.sub(lambda m: f"url({png_data_url(_read_bytes(m.group(1)))})", css)
    licence = _read_text("LICENSE").replace("--", "- -")
    return js, css, licence

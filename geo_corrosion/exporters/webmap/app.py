"""Read the web map's own script and style sheet (package data, inlined by :mod:`.build`).

``app.js`` and ``app.css`` sit beside this module.
``gcStart(map, config)`` runs when the page is loaded.  Each level's data sits in a
``<script type="application/json" id="gc-level-<i>">`` block and is parsed, and each of
its layers built, only when first shown.  The layer control is ours: a level switch and
the chosen level's layers in groups; a box is ticked exactly when its layer is on the
map (every change re-reads the map).  Maps (surfaces, probabilities, classes) are shown
one at a time under everything else; lines and hatching above them; readings on a
canvas above those.  A level switch takes every layer of the other levels off the map
and fits the view to the new slab, clear of the side panel and the control.
``window.__geoCorrosion`` is the hook for tests and scripts.
"""

from __future__ import annotations

from importlib.resources import files

__all__ = ["APP_CSS", "APP_JS"]


def _read(name: str) -> str:
    return files("geo_corrosion.exporters.webmap").joinpath(name).read_text(encoding="utf-8")


APP_CSS = _read("app.css")
APP_JS = _read("app.js")

"""The web map's words: internal terms through the project's vocabulary, plus its own.

Every internal name from the run (kinds, zones, depth classes, class keys, bid items,
QA codes, electrodes, units) goes through :mod:`geo_corrosion.vocabulary` (the one table
of owner labels and number formats) before it reaches the page.  :data:`WORDS` holds only
the map's own interface words (group and layer names of the layer control), which name
no internal identifier.
"""

from __future__ import annotations

from geo_corrosion.vocabulary import humanise, unit_label
from geo_corrosion.vocabulary import label as term

__all__ = ["WORDS", "term", "unit_label", "word"]

#: The layer control's own words (groups and kinds of layer).
WORDS: dict[str, str] = {
    "maps": "Maps (one at a time)",
    "survey": "Survey",
    "repairs": "Repairs",
    "surface": "surface",
    "probability": "probability",
    "classes": "classes",
    "contours": "contours",
    "readings": "readings",
    "delaminations": "Delaminations (sounding)",
    "spalls": "Spalls (sounding)",
    "joints": "Joints",
    "qa_flags": "QA findings",
    "zones": "Zones",
    "repair_outlines": "Repair outlines",
    "combined": "Combined condition",
}


def word(key: str) -> str:
    """Return one of the map's own words (:data:`WORDS`)."""
    return WORDS.get(key, humanise(key))

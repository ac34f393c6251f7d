"""The web map's words: the one table of labels an owner reads, and their units.

Every name from the run (kinds, zones, depth classes, units, electrodes) goes through
:func:`label` or :func:`unit_label` before it reaches the page, so no internal
identifier (``active_corrosion``, ``partial_below_bars``, ``uA/cm2``) is shown.  A term
not in the table is shown with its underscores as spaces.
"""

from __future__ import annotations

__all__ = ["LABELS", "UNIT_LABELS", "label", "unit_label"]

#: Internal term -> the short label an owner reads.
LABELS: dict[str, str] = {
    # measurement kinds
    "potential": "Half-cell potential",
    "resistivity": "Resistivity",
    "corrosion_rate": "Corrosion rate",
    "cover": "Cover",
    # zones (zoning rules)
    "active_corrosion": "Active corrosion",
    "low_cover": "Low cover",
    "repair": "Repair",
    "no_action": "No action",
    # depth classes of repairs
    "partial_above_bars": "Partial depth, above the bars",
    "partial_below_bars": "Partial depth, below the bars",
    "full_depth": "Full depth",
    # reference electrodes
    "cse": "Cu/CuSO4 (CSE)",
    "ag_agcl_sat_kcl": "Ag/AgCl, saturated KCl",
    "ag_agcl_3m_kcl": "Ag/AgCl, 3 M KCl",
    "sce": "Saturated calomel (SCE)",
    "she": "Standard hydrogen (SHE)",
    # joints (h/joints adds joint types to the GeoPackage)
    "expansion": "Expansion joint",
    "isolation": "Isolation joint",
    "construction": "Construction joint",
    "control": "Control joint",
    # groups and layers of the layer control
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

#: Canonical units of the run -> as printed for an owner.
UNIT_LABELS: dict[str, str] = {
    "mV": "mV vs CSE",
    "kohm.cm": "kΩ·cm",
    "uA/cm2": "µA/cm²",
    "mm": "mm",
    "ft2": "ft²",
    "m2": "m²",
    "ft3": "ft³",
    "m3": "m³",
    "ft": "ft",
    "m": "m",
    "us-ft": "ft",
    "LF": "LF",
}


def label(term: str) -> str:
    """Return the owner's label of an internal term (underscores as spaces if unknown)."""
    return LABELS.get(term, term.replace("_", " "))


def unit_label(unit: str) -> str:
    """Return a unit as printed on the map (potentials always "mV vs CSE")."""
    return UNIT_LABELS.get(unit, unit)

"""The words and number formats of owner documents: one table of labels, one set of formats.

Internal names (measurement kinds, class sets and their class keys, depth classes, zoning
rules, combined condition classes, bid item codes, QA rule codes, electrodes, variogram
models) never reach a report, a web map or a drawing as they are: each goes through
:func:`label`, which reads :data:`VOCABULARY`, the one table that maps them to the words an
owner reads.  Numbers go through the ``fmt_`` functions, in the reporting system's units
(:class:`~geo_corrosion.units.ReportUnits`, the one place of the conversions) and precision
(common practice, no source): areas to whole ft² or 0.1 m², removal depths to 1/4 in or
5 mm, cover in inches on US reports and whole mm on metric ones, potentials as
``"-350 mV vs CSE"``.

Class keys are named as **corrosion risk**, not by the size of the measured value: the
RILEM TC 154 resistivity class ``high`` is *high corrosion risk*, which is *low*
resistivity (below 10 kΩ·cm).  Their term is ``"<class set>.<key>"`` (``"rilem_resistivity.high"``).

An unknown term raises :class:`UnknownTermError` under pytest (or with the environment
variable ``GEO_CORROSION_STRICT_VOCABULARY=1``), so a test finds the missing entry; in a
run it falls back to a humanised form (``"partial_below_bars"`` -> ``"Partial below bars"``)
and logs a warning.  A caller that has a label of its own for a term it may not know (a
plugin kind's ``label``, a user's class label) passes it as ``default``.

This module is of the foundation layer: it imports only :mod:`geo_corrosion.errors` and
:mod:`geo_corrosion.units`.
"""

from __future__ import annotations

import logging
import math
import os
from typing import Any

from geo_corrosion.errors import GeoCorrosionError
from geo_corrosion.units import ReportUnits, report_units

__all__ = [
    "VOCABULARY",
    "UNIT_LABELS",
    "UnknownTermError",
    "label",
    "class_label",
    "humanise",
    "unit_label",
    "fmt_area",
    "fmt_depth",
    "fmt_cover",
    "fmt_potential",
    "fmt_length",
    "fmt_number",
    "area_unit",
]

log = logging.getLogger(__name__)

_NBSP = "\u00a0"  # between a number and its unit

#: Internal name -> the label owners read.  One table for every owner document.
VOCABULARY: dict[str, str] = {
    # measurement kinds (the site file's ``kind``)
    "potential": "Half-cell potential",
    "resistivity": "Resistivity",
    "corrosion_rate": "Corrosion rate",
    "cover": "Concrete cover",
    # class sets (condition/classes.py)
    "c876": "Half-cell potential (corrosion probability, ASTM C876)",
    "c876_severe": "Half-cell potential (corrosion probability, ASTM C876 with a severe class)",
    "rilem_resistivity": "Resistivity (corrosion risk, RILEM TC 154)",
    "langford_broomfield": "Resistivity (corrosion risk, Langford and Broomfield)",
    "aashto_t358": "Surface resistivity (chloride penetration, AASHTO T 358)",
    "aashto_t358_150x300": "Surface resistivity (chloride penetration, AASHTO T 358, "
                           "150 x 300 mm cylinders)",
    "rilem_rate": "Corrosion rate (RILEM TC 154)",
    "clear_rate": "Corrosion rate (Clear)",
    # class keys, by class set: named as corrosion risk or probability
    "c876.high": "High: over 90 % probability of corrosion",
    "c876.uncertain": "Uncertain corrosion activity",
    "c876.low": "Low: over 90 % probability of no corrosion",
    "c876_severe.severe": "Severe corrosion (more negative than -500 mV vs CSE)",
    "c876_severe.high": "High: over 90 % probability of corrosion",
    "c876_severe.uncertain": "Uncertain corrosion activity",
    "c876_severe.low": "Low: over 90 % probability of no corrosion",
    "rilem_resistivity.high": "High corrosion risk (low resistivity)",
    "rilem_resistivity.moderate": "Moderate corrosion risk",
    "rilem_resistivity.low": "Low corrosion risk (high resistivity)",
    "rilem_resistivity.negligible": "Negligible corrosion risk (very high resistivity)",
    "langford_broomfield.very_high": "Very high corrosion risk (very low resistivity)",
    "langford_broomfield.high": "High corrosion risk (low resistivity)",
    "langford_broomfield.low_to_moderate": "Low to moderate corrosion risk",
    "langford_broomfield.low": "Low corrosion risk (high resistivity)",
    "aashto_t358.high": "High chloride penetration",
    "aashto_t358.moderate": "Moderate chloride penetration",
    "aashto_t358.low": "Low chloride penetration",
    "aashto_t358.very_low": "Very low chloride penetration",
    "aashto_t358.negligible": "Negligible chloride penetration",
    "aashto_t358_150x300.high": "High chloride penetration",
    "aashto_t358_150x300.moderate": "Moderate chloride penetration",
    "aashto_t358_150x300.low": "Low chloride penetration",
    "aashto_t358_150x300.very_low": "Very low chloride penetration",
    "aashto_t358_150x300.negligible": "Negligible chloride penetration",
    "rilem_rate.negligible": "Negligible corrosion rate",
    "rilem_rate.low": "Low corrosion rate",
    "rilem_rate.moderate": "Moderate corrosion rate",
    "rilem_rate.high": "High corrosion rate",
    "clear_rate.none_expected": "No corrosion damage expected",
    "clear_rate.possible_10_15_yr": "Damage possible in 10 to 15 years",
    "clear_rate.within_2_10_yr": "Damage expected in 2 to 10 years",
    "clear_rate.within_2_yr": "Damage expected within 2 years",
    # depth classes of a repair (repair/)
    "partial_above_bars": "Partial depth, above bars",
    "partial_below_bars": "Partial depth, below bars",
    "full_depth": "Full depth",
    # zoning rules (zoning/builtin.py)
    "repair": "Repair zone",
    "active_corrosion": "Active corrosion zone",
    "low_cover": "Low cover zone",
    "no_action": "No action",
    # combined condition classes (condition/combined.py)
    "high_priority": "High priority",
    "corrosion_likely": "Corrosion likely",
    "watch": "Watch",
    "low_risk": "Low risk",
    "unclassified": "Unclassified",
    "no_data": "No data",
    # bid items (quantities.py)
    "REP-PD-SURF": "Partial-depth repair, above bars",
    "REP-PD-BARS": "Partial-depth repair, below bars",
    "REP-FD": "Full-depth repair",
    "REP-VOL": "Removal and replacement volume",
    "SAWCUT": "Perimeter saw cut",
    "ANODE": "Galvanic anodes",
    "TREAT-ACTIVE": "Treatment of active corrosion",
    "PROTECT-LOWCOVER": "Protection of low-cover areas",
    # QA rule codes (qa/checks.py, qa/derived.py): short names
    "QA-NAN-VALUE": "Reading without a value",
    "QA-NAN-XY": "Reading without a location",
    "QA-RANGE-LOW": "Below the plausible range",
    "QA-RANGE-HIGH": "Above the plausible range",
    "QA-DUPLICATE": "Duplicate location",
    "QA-OUTSIDE-SLAB": "Outside the slab",
    "QA-IN-EXCLUSION": "Inside an excluded area",
    "QA-ADJ-150": "Neighbours differ by over 150 mV",
    "QA-ADJ-SPIKE": "Local spike",
    "QA-REPEAT": "Repeat reading",
    "QA-REPEATABILITY": "Repeat readings disagree",
    "QA-DRIFT": "Drift during the survey",
    "QA-UNSTABLE": "Unstable reading",
    "QA-POINT-MOVED": "Point read at two locations",
    "QA-REPRO": "Point read in two surveys",
    "QA-REPRODUCIBILITY": "Surveys disagree at a point",
    "QA-DUP-SURVEYS": "Two surveys at one location",
    "QA-OPEN-LEAD": "Open lead",
    "QA-REVERSED-LEADS": "Reversed leads",
    "QA-ALL-OUTSIDE": "All readings outside the slab",
    "QA-NO-VALUES": "No usable readings",
    "QA-FEW-READINGS": "Too few readings",
    "QA-DERIVE": "Value not derived from raw readings",
    "QA-DERIVE-NOTE": "Note on derived values",
    "QA-TEMP-RANGE": "Temperature out of range",
    # reference electrodes (corrections.py)
    "electrode.cse": "Copper/copper sulfate (CSE)",
    "electrode.ag_agcl_sat_kcl": "Silver/silver chloride, saturated KCl",
    "electrode.ag_agcl_3m_kcl": "Silver/silver chloride, 3 M KCl",
    "electrode.sce": "Saturated calomel (SCE)",
    "electrode.she": "Standard hydrogen (SHE)",
    # overlay kinds (plans)
    "delamination": "Delamination",
    "spall": "Spall",
    "patch": "Existing patch",
    "crack": "Crack",
    # variogram models (surfaces/)
    "model.spherical": "Spherical",
    "model.exponential": "Exponential",
    "model.gaussian": "Gaussian",
    "model.matern": "Matérn",
    "model.linear": "Linear",
    "model.nugget": "Pure nugget",
    # QA severities
    "severity.error": "Error",
    "severity.warning": "Warning",
    "severity.info": "Information",
}

#: Canonical and reporting unit spellings -> as owners read them.
UNIT_LABELS: dict[str, str] = {
    "mV": "mV vs CSE", "kohm.cm": "kΩ·cm", "uA/cm2": "µA/cm²", "mm": "mm", "in": "in",
    "m": "m", "ft": "ft", "LF": "LF", "m2": "m²", "ft2": "ft²", "m3": "m³", "ft3": "ft³",
    "degC": "°C", "EA": "EA", "LS": "LS",
}


class UnknownTermError(GeoCorrosionError, KeyError):
    """A term has no entry in :data:`VOCABULARY` (raised under tests only)."""


def _strict() -> bool:
    return (os.environ.get("GEO_CORROSION_STRICT_VOCABULARY") == "1"
            or "PYTEST_CURRENT_TEST" in os.environ)


def humanise(term: str) -> str:
    """Return a readable form of an internal name: underscores to spaces, first letter up.

    Examples
    --------
    >>> humanise("partial_below_bars")
    'Partial below bars'
    """
    t = str(term).replace("_", " ").replace(".", ": ").strip()
    return t[:1].upper() + t[1:]


def label(term: str, default: str | None = None) -> str:
    """Return the label owners read for an internal name.

    Parameters
    ----------
    term : str
        A name of :data:`VOCABULARY` (``"partial_below_bars"``, ``"rilem_resistivity.high"``).
    default : str, optional
        The label to use when the term is not in the table (a plugin's own label).

    Raises
    ------
    UnknownTermError
        The term is unknown, no ``default`` is given, and the code runs under pytest (or
        ``GEO_CORROSION_STRICT_VOCABULARY=1``).  Otherwise a warning is logged and the
        humanised term returned.

    Examples
    --------
    >>> label("active_corrosion")
    'Active corrosion zone'
    >>> label("rilem_resistivity.high")
    'High corrosion risk (low resistivity)'
    """
    t = str(term)
    found = VOCABULARY.get(t)
    if found is not None:
        return found
    if default is not None:
        return default
    if _strict():
        raise UnknownTermError(f"{t!r} has no label in geo_corrosion.vocabulary.VOCABULARY; "
                               "add one")
    log.warning("no owner label for %r; printed as %r", t, humanise(t))
    return humanise(t)


def class_label(class_set: str, key: str, default: str | None = None) -> str:
    """Return the label of a class key of a class set (``"rilem_resistivity"``, ``"high"``)."""
    return label(f"{class_set}.{key}", default)


def unit_label(unit: str) -> str:
    """Return a unit as owners read it (``"kohm.cm"`` -> ``"kΩ·cm"``, ``"mV"`` -> vs CSE)."""
    return UNIT_LABELS.get(str(unit), str(unit))


def _units(units: ReportUnits | str) -> ReportUnits:
    return units if isinstance(units, ReportUnits) else report_units(str(units))


def _finite(v: Any) -> float | None:
    try:
        f = float(v)
    except (TypeError, ValueError):
        return None
    return f if math.isfinite(f) else None


def fmt_number(v: Any, decimals: int = 0) -> str:
    """Format a number with thousands separators and ``decimals`` places; None/NaN: ``"-"``.

    Examples
    --------
    >>> fmt_number(1824.6), fmt_number(0.25, 2), fmt_number(float("nan"))
    ('1,825', '0.25', '-')
    """
    f = _finite(v)
    if f is None:
        return "-"
    text = f"{f:,.{decimals}f}"
    return "0" if text.lstrip("-").strip("0.,") == "" and decimals == 0 else text


def area_unit(units: ReportUnits | str) -> str:
    """Return the area unit of the reporting system as owners read it (ft² or m²)."""
    return unit_label(_units(units).area)


def fmt_area(m2: Any, units: ReportUnits | str, *, unit: bool = True) -> str:
    r"""Format an area held in m² in the reporting units: whole ft², or m² to 0.1.

    Examples
    --------
    >>> fmt_area(169.55, "us")  # 169.55 m2 = 1825.04 ft2 [NIST-SP811-2008 App. B]
    '1,825\xa0ft²'
    >>> fmt_area(170.36, "metric", unit=False)
    '170.4'
    """
    u = _units(units)
    f = _finite(m2)
    if f is None:
        return "-"
    text = fmt_number(float(u.area_from_m2(f)), 0 if u.system == "us" else 1)
    return f"{text}{_NBSP}{area_unit(u)}" if unit else text


def _quarter_inches(inches: float) -> str:
    """Write inches to the nearest 1/4 as a mixed number (``3-1/4``)."""
    q = round(inches * 4)
    whole, rest = divmod(abs(q), 4)
    frac = {0: "", 1: "1/4", 2: "1/2", 3: "3/4"}[rest]
    sign = "-" if q < 0 else ""
    if whole and frac:
        return f"{sign}{whole}-{frac}"
    return f"{sign}{frac or whole}"


def fmt_depth(mm: Any, units: ReportUnits | str, *, unit: bool = True) -> str:
    r"""Format a removal depth held in mm: to 1/4 in on US reports, to 5 mm on metric ones.

    Examples
    --------
    >>> fmt_depth(82.55, "us")  # 3.25 in exactly
    '3-1/4\xa0in'
    >>> fmt_depth(88.3, "metric")
    '90\xa0mm'
    """
    u = _units(units)
    f = _finite(mm)
    if f is None:
        return "-"
    if u.system == "us":
        text = _quarter_inches(float(u.small_from_mm(f)))
    else:
        text = f"{5 * round(f / 5):.0f}"
    return f"{text}{_NBSP}{u.small}" if unit else text


def fmt_cover(mm: Any, units: ReportUnits | str, *, unit: bool = True) -> str:
    r"""Format a cover held in mm: inches to 0.1 on US reports, whole mm on metric ones.

    Examples
    --------
    >>> fmt_cover(38.1, "us"), fmt_cover(38.1, "metric")
    ('1.5\xa0in', '38\xa0mm')
    """
    u = _units(units)
    f = _finite(mm)
    if f is None:
        return "-"
    text = (fmt_number(float(u.small_from_mm(f)), 1) if u.system == "us"
            else fmt_number(f, 0))
    return f"{text}{_NBSP}{u.small}" if unit else text


def fmt_potential(mv: Any, *, unit: bool = True) -> str:
    r"""Format a potential held in mV vs CSE, to whole mV, with its reference electrode.

    Examples
    --------
    >>> fmt_potential(-350.4)
    '-350\xa0mV vs CSE'
    """
    f = _finite(mv)
    if f is None:
        return "-"
    text = f"{round(f):d}"
    return f"{text}{_NBSP}{UNIT_LABELS['mV']}" if unit else text


def fmt_length(m: Any, units: ReportUnits | str, *, unit: bool = True) -> str:
    r"""Format a plan length held in m: ft to 0.1 on US reports, m to 0.01 on metric ones.

    Examples
    --------
    >>> fmt_length(3.048, "us"), fmt_length(3.048, "metric")
    ('10.0\xa0ft', '3.05\xa0m')
    """
    u = _units(units)
    f = _finite(m)
    if f is None:
        return "-"
    if u.system == "us":
        text, name = fmt_number(float(u.length_from_m(f)), 1), "ft"
    else:
        text, name = fmt_number(f, 2), "m"
    return f"{text}{_NBSP}{name}" if unit else text

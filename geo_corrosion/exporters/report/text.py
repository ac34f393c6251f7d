"""Text of the report: tables, units of run.json keys, corrections and condition statements.

Pure functions from run.json entries to escaped HTML fragments, used by
:mod:`geo_corrosion.exporters.report`.  Every text that may come from an input file goes
through :func:`_e` (HTML escape); fragments built here from escaped parts are marked
:class:`_Raw` so they are not escaped twice.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

import numpy as np

from geo_corrosion.exporters._html import Raw, escape
from geo_corrosion.model.manifest import (
    AreaBeyondThreshold,
    ConditionRecord,
    KindRecord,
    LevelRecord,
    SiteThreshold,
    SiteThresholdUnavailable,
    SurveyRecord,
)
from geo_corrosion.units import M_PER_FT, MM_PER_INCH
from geo_corrosion.vocabulary import (
    VOCABULARY,
    class_label,
    fmt_area,
    fmt_cover,
    fmt_number,
    fmt_potential,
    humanise,
    label,
    unit_label,
)

if TYPE_CHECKING:
    from geo_corrosion.model.manifest import KindRecord
    from geo_corrosion.units import ReportUnits

__all__ = ["parameter_unit", "summarize_correction", "sources_and_assumptions", "owner_text",
           "readable_citations", "kind_label", "points_sentences", "points_class_table",
           "no_surface_sentence"]

_NBSP = "\u00a0"  # between a number and its unit, so a line never starts with the unit


_Raw = Raw


def _e(v: Any) -> str:
    """Escape for the report: floats with thousands separators."""
    return escape(v, thousands=True)


# --------------------------------------------------------------------------- owner words

_SNAKE = re.compile(r"\b[a-z][a-z0-9]*(?:_[a-z0-9]+)+\b")
#: A site-file key as messages write it (``[run].pay_area_share``, ``[[surveys]][0].unit``) or
#: a key set in TOML (``pay_area = "zone"``).
_SITE_KEY = re.compile(r"\[\[?[a-z_.<>]+\]\]?(?:\[\d+\])?\.[a-z_]+|\b[a-z]+(?:_[a-z]+)+ = ")
#: Symbols of formulas written with an underscore, as a reader writes them.
_SYMBOLS = {"i_corr": "icorr", "R_p": "Rp", "x_crit": "xcrit", "E_a": "Ea", "t_ref": "tref",
            "R_ohm": "Rohm"}
_CODE_ASIDE = re.compile(r"\.py\b|\b[A-Z][A-Z0-9]*_[A-Z0-9_]+\b|\b[A-Z][a-z]+[A-Z]\w*\.\w+"
                         r"|\bsite keys?\b|\bsample site\b")


#: Where in an input file a message points (``readings/x.csv line 57: ``, ``L2.dxf layer
#: COLUMNS entity #9 (LWPOLYLINE, handle 3D)``): for the engineer at the command line and in
#: run.json, not for the owner's report.
_LOCATION = re.compile(
    r"(?:[\w./\\-]+\.(?:csv|txt|dxf|gpkg|geojson|json|shp|toml)\b)?"
    r"(?:\s*(?:line|row|feature) \d+|\s*layer \S+|\s*entity #\d+(?:\s*\([^)]*\))?)+:?\s*"
    r"|[\w./\\-]+\.(?:csv|txt|dxf|gpkg|geojson|json|shp|toml)\b:\s*")


def readable_citations(text: str) -> str:
    """Mark the citations of a value still to confirm with ``*`` instead of words.

    The project's citation form is kept (``[ASTM-C876-91 §5.1]``, each key listed under
    "Sources"); ``from memory`` and ``to confirm`` become a ``*`` after the brackets, which
    refers the reader to "Assumptions to confirm".

    Examples
    --------
    >>> readable_citations("limit [ASTM-C876-91 §5.1, from memory]; [Cressie-1985]")
    'limit [ASTM-C876-91 §5.1]*; [Cressie-1985]'
    """
    from geo_corrosion.bibliography import CITATION_RE, SOURCES

    def one(m: re.Match[str]) -> str:
        parts, star = [], False
        for part in m.group(1).split(";"):
            part = part.strip()
            for flag in (", from memory", " from memory", ", to confirm"):
                if part.endswith(flag):
                    part, star = part[: -len(flag)].strip(), True
            if part.split(" ")[0].rstrip(",") not in SOURCES:
                return m.group(0)
            parts.append(part)
        return "[" + "; ".join(parts) + "]" + ("*" if star else "")

    return CITATION_RE.sub(one, str(text))


def owner_text(text: Any) -> str:
    """Return a text of the library (a source, an assumption, a note) in owner words.

    Asides in parentheses that name code (a module, a constant, a site key) are dropped,
    internal names of :data:`~geo_corrosion.vocabulary.VOCABULARY` become their labels,
    formula symbols lose their underscore (``i_corr`` -> ``icorr``), "degC" becomes "°C",
    "mV CSE" becomes "mV vs CSE" and citations are written for a reader.

    Examples
    --------
    >>> owner_text("Conditional simulation (surfaces/simulation.py): common practice.")
    'Conditional simulation: common practice.'
    """
    t = _LOCATION.sub("", str(text))
    # a clause telling the engineer which site-file key to change is for the engineer, not
    # the owner: dropped (the run's own messages keep it)
    t = "; ".join(c for c in t.split("; ") if not _SITE_KEY.search(c)) or t
    # a module path with the constants after it (``condition/corrosion_rate.py B_ACTIVE_MV``)
    t = re.sub(r"\s*[\w/]+\.py\b(?:\s+[A-Z][A-Z0-9_]+,?)*", "", t)
    t = t.replace("(; ", "(")

    def aside(m: re.Match[str]) -> str:
        inner = m.group(1)
        if not inner.strip():  # an aside that held only a module path, dropped above
            return ""
        unknown = [w for w in _SNAKE.findall(inner) if w not in VOCABULARY
                   and w not in _SYMBOLS]
        return "" if _CODE_ASIDE.search(inner) or unknown else m.group(0)

    t = re.sub(r"\s*\(([^()]*)\)", aside, t)
    for sym, plain in _SYMBOLS.items():
        t = re.sub(rf"\b{re.escape(sym)}\b", plain, t)
    t = _SNAKE.sub(lambda m: label(m.group(0)) if m.group(0) in VOCABULARY
                   else m.group(0), t)
    t = re.sub(r"\bdegC\b", "°C", t).replace("mV CSE", "mV vs CSE")
    t = t.replace("kOhm.cm", "kΩ·cm").replace("kohm.cm", "kΩ·cm").replace("uA/cm2", "µA/cm²")
    return readable_citations(t)


def _o(v: Any) -> str:
    """Escape a library text for the report in owner words (:func:`owner_text`)."""
    return _e(owner_text(v))


def kind_label(kind: str) -> str:
    """Return a measurement kind's label: the vocabulary's, or a plugin kind's own."""
    if kind in VOCABULARY:
        return label(kind)
    from geo_corrosion.measurements import get_kind

    try:
        return str(get_kind(kind).label).split(" (")[0]
    except Exception:  # noqa: BLE001 - a run's plugin kind not installed here
        return humanise(kind)


def _class_set_of(kind: str, names: list[str]) -> Any:
    """Return the class set whose labels are ``names`` (the kind's own first), or None."""
    from geo_corrosion.condition.classes import CLASS_SETS
    from geo_corrosion.measurements import get_kind

    cands = []
    try:
        own = get_kind(kind).class_set_object()
        if own is not None:
            cands.append(own)
    except Exception:  # noqa: BLE001 - a plugin kind not installed here
        pass
    cands += list(CLASS_SETS.values())
    for cs in cands:
        if set(names) <= set(cs.labels):
            return cs
    return None


def class_name_label(kind: str, name: str, names: list[str] | None = None) -> str:
    """Return the owner label of a class of a kind, named as in run.json (its class label)."""
    cs = _class_set_of(kind, names or [name])
    if cs is None:
        return name
    key = cs.keys[list(cs.labels).index(name)]
    return class_label(cs.name, key, name if f"{cs.name}.{key}" not in VOCABULARY else None)


def _g(v: float, digits: int = 6) -> str:
    """Format a number with ``digits`` significant digits, no trailing zeros."""
    return f"{float(v):.{digits}g}"


def _table(rows: list[dict[str, Any]], cols: list[tuple[str, str]], cls: str = "",
           num: tuple[str, ...] = ()) -> str:
    """Build an HTML table; numbers (and the columns in ``num``) are right-aligned."""
    if not rows:
        return '<p class="none">none</p>'

    def cell(r: dict[str, Any], c: str) -> str:
        n = " num" if c in num or isinstance(r.get(c), int | float) else ""
        return f'<td class="c-{_e(c)}{n}">{_e(r.get(c))}</td>'

    head = "".join(f'<th class="c-{_e(c)}">{_e(label)}</th>' for c, label in cols)
    body = "".join("<tr>" + "".join(cell(r, c) for c, _l in cols) + "</tr>" for r in rows)
    return f'<table class="{cls}"><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>'


# --------------------------------------------------------------------------- units of keys

#: Unit of a run.json key from its suffix (longest first; "_mm" before "_m").
_SUFFIX_UNITS: tuple[tuple[str, str], ...] = (
    ("_kj_mol", "kJ/mol"), ("_m2", "m2"), ("_mm", "mm"), ("_mv", "mV"), ("_deg", "deg"),
    ("_c", "degC"), ("_m", "m"))
#: US customary unit of a metric length or area, and the factor to it
#: (1 ft = 0.3048 m, 1 in = 25.4 mm exactly [NIST-SP811-2008 App. B]).
_US_UNITS: dict[str, tuple[str, float]] = {
    "m": ("ft", 1.0 / M_PER_FT), "mm": ("in", 1.0 / MM_PER_INCH),
    "m2": ("ft2", 1.0 / M_PER_FT**2)}


def parameter_unit(key: str) -> str:
    """Return the unit of a run.json parameter from its key's suffix (``cell_size_m``: m).

    Examples
    --------
    >>> [parameter_unit(k) for k in ("sawcut_depth_mm", "min_zone_area_m2", "n_neighbors")]
    ['mm', 'm2', '']
    """
    for suffix, unit in _SUFFIX_UNITS:
        if key.endswith(suffix):
            return unit
    return ""


def _strip_unit(key: str) -> str:
    for suffix, _u in _SUFFIX_UNITS:
        if key.endswith(suffix):
            return key[: -len(suffix)]
    return key


def _param(key: str, v: Any, system: str) -> tuple[str, str, str]:
    """(value, unit, value in US units or "") of a parameter."""
    if v is None:
        return "none", "", ""
    if isinstance(v, bool):
        return ("true" if v else "false"), "", ""
    if isinstance(v, Mapping):
        return _nested(v, system) or "none", "", ""
    if isinstance(v, list | tuple):
        return ", ".join(map(str, v)) or "none", "", ""
    unit = parameter_unit(key)
    if isinstance(v, int | float | np.number):
        us = ""
        if system == "us" and unit in _US_UNITS:
            u, f = _US_UNITS[unit]
            us = f"{_g(float(v) * f, 4)} {u}"
        return _g(float(v)), unit, us
    return str(v), unit, ""


def _nested(d: Mapping[str, Any], system: str) -> str:
    """Write a nested parameter table as text (``potential: model spherical, range 3 m``)."""
    parts = []
    for k, v in d.items():
        if isinstance(v, Mapping):
            parts.append(f"{k}: {_nested(v, system) or 'none'}")
            continue
        val, unit, us = _param(str(k), v, system)
        parts.append(f"{_strip_unit(str(k)).replace('_', ' ')} {val}"
                     f"{' ' + unit if unit else ''}{f' ({us})' if us else ''}")
    return ("; " if any(isinstance(v, Mapping) for v in d.values()) else ", ").join(parts)


# --------------------------------------------------------------------------- corrections


def _plural(n: Any, word: str) -> str:
    return f"{n} {word}{'' if n == 1 else 's'}"


def _generic_correction(rec: Mapping[str, Any]) -> str:
    name = str(rec.get("correction", "correction"))
    rest = []
    for k, v in rec.items():
        if k in ("correction", "source"):
            continue
        val, unit, _us = _param(str(k), v, "metric")
        rest.append(f"{_strip_unit(str(k)).replace('_', ' ')} {val}{' ' + unit if unit else ''}")
    return f"{name}: {', '.join(rest)}" if rest else name


def summarize_correction(rec: Mapping[str, Any]) -> str:
    """One readable line for a correction record of run.json ``surveys[].corrections``.

    Known records (the built-in kinds') get a sentence; others list their keys.  The
    ``source`` is not included (the report prints it beside the line).

    Examples
    --------
    >>> summarize_correction({"correction": "reference electrode to CSE",
    ...                       "electrode": "Ag/AgCl in saturated KCl", "offset_mv": -119.0})
    'reference electrode Ag/AgCl in saturated KCl to CSE (-119 mV)'
    >>> summarize_correction({"correction": "Arrhenius temperature correction",
    ...                       "t_ref_c": 20.0, "activation_energy_kj_mol": 25.0})
    'Arrhenius to 20 °C, Ea 25 kJ/mol'
    """
    name = str(rec.get("correction", ""))
    r = rec
    try:
        if name == "reference electrode to CSE":
            off = float(r["offset_mv"])
            if off == 0:
                return f"reference electrode {r['electrode']}: already CSE (0 mV)"
            return f"reference electrode {r['electrode']} to CSE ({off:+g} mV)"
        if name == "electrode temperature to reference":
            k = float(r["k_mv_per_c"])
            if k == 0:
                return ("electrode temperature: not corrected (no temperature coefficient for "
                        "this electrode)")
            s = f"electrode temperature, {k:g} mV/°C to {float(r['t_ref_c']):g} °C"
            if r.get("only_outside_band"):
                s += ", only for readings outside the ±5.5 °C band"
            n = int(r.get("readings_outside_0_49_c") or 0)
            if n:
                s += f"; {_plural(n, 'reading')} outside 0 to 49 °C"
            return s
        if name == "Arrhenius temperature correction":
            return (f"Arrhenius to {float(r['t_ref_c']):g} °C, "
                    f"Ea {float(r['activation_energy_kj_mol']):g} kJ/mol")
        if name == "Wenner resistivity from raw voltage and current":
            return (f"Wenner rho = 2 pi a V / I from raw readings, a = {float(r['spacing_cm']):g} "
                    f"cm: {_plural(r['readings'], 'reading')}, {r['readings_not_derived']} not "
                    "derived")
        if name == "Wenner geometry check":
            return f"Wenner geometry check: {r['warning']}"
        if name.startswith("finite-thickness correction"):
            return (f"finite-thickness correction, element {float(r['thickness_mm']):g} mm, "
                    f"probe spacing {float(r['spacing_mm']):g} mm, "
                    f"F = {float(r['thickness_factor']):.3g}")
        if name == "class set":
            return f"class set {r['class_set']}"
        if name == "transients not used":
            return f"transients not used: {r['reason']}"
        if name.startswith("R_p from galvanostatic pulse transients"):
            s = (f"R_p from galvanostatic pulse transients ({r['file']}): "
                 f"{_plural(r['locations_fitted'], 'location')} fitted, "
                 f"{r['locations_failed']} failed")
            extra = int(r.get("locations_in_file_not_in_survey") or 0)
            return s + (f", {extra} in the file but not in the survey" if extra else "")
        if name.startswith("R_p from potentiostatic sweeps"):
            return (f"R_p from potentiostatic sweeps ({r['file']}, "
                    f"{_plural(r['locations'], 'location')})")
        if name.startswith("corrosion rate from polarization resistance"):
            b = (f"B {float(r['b_mv']):g} mV ({r.get('b_source')})" if r.get("b_mv") is not None
                 else "B per reading")
            a = (f"A {float(r['polarized_area_cm2']):g} cm2 ({r.get('area_source')})"
                 if r.get("polarized_area_cm2") is not None else "A per reading")
            return (f"Stern-Geary i_corr = B / (R_p A): {_plural(r['readings'], 'reading')}, "
                    f"{r['readings_not_derived']} not derived; {b}; {a}")
    except (KeyError, TypeError, ValueError):
        pass
    return _generic_correction(rec)


def _corrections_cell(records: list[Any]) -> str:
    if not records:
        return _Raw('<span class="none">none</span>')
    items = []
    for rec in records:
        if not isinstance(rec, Mapping):
            items.append(f"<li>{_e(rec)}</li>")
            continue
        src = rec.get("source")
        items.append(f"<li>{_e(summarize_correction(rec))}"
                     + (f' <span class="src">(source: {_e(src)})</span>' if src else "")
                     + "</li>")
    return _Raw(f'<ul class="corr">{"".join(items)}</ul>')


def _surveys_table(surveys: tuple[SurveyRecord, ...]) -> str:
    """Build the table of surveys: one row per survey, its corrections on the row below."""
    if not surveys:
        return '<p class="none">none</p>'
    cols = (("id", "survey"), ("level", "level"), ("kind", "kind"), ("file", "file"),
            ("readings", "readings"), ("unit", "unit (as read, used)"))
    head = "".join(f'<th class="c-{c}">{_e(label)}</th>' for c, label in cols)
    body = []
    for sv in surveys:
        unit_in, unit = sv.unit_in, sv.unit
        cells = {"id": sv.id, "level": sv.level, "kind": sv.kind, "file": sv.file,
                 "readings": sv.readings,
                 "unit": unit if not unit_in or unit_in == unit else f"{unit_in} to {unit}"}
        row = "".join(f'<td class="c-{c}{" num" if c == "readings" else ""}">{_e(cells.get(c))}'
                      "</td>" for c, _l in cols)
        corr = _corrections_cell(list(sv.corrections))
        body.append(f'<tbody><tr class="survey">{row}</tr><tr class="corr">'
                    f'<td colspan="{len(cols)}">corrections: {corr}</td></tr></tbody>')
    return (f'<table class="surveys"><thead><tr>{head}</tr></thead>{"".join(body)}</table>')


# --------------------------------------------------------------------------- condition


def _area(a_m2: Any, units: ReportUnits) -> str:
    """Format an area as the statements print it: whole ft2, or m2 to one decimal."""
    v = float(units.area_from_m2(float(a_m2)))
    return f"{v:,.0f}" if units.system == "us" else f"{v:,.1f}"


def _pct(f: Any) -> str:
    return f"{100.0 * float(f):.0f}{_NBSP}%"


def _statement_lead(kind: str) -> str:
    """Return the lead a kind's threshold gives its statement ("" if none or kind unknown)."""
    from geo_corrosion.measurements import get_kind

    try:
        t = get_kind(kind).threshold
    except Exception:  # noqa: BLE001 - a run's plugin kind not installed here: the plain lead
        return ""
    return t.statement if t is not None else ""


def _beyond_statement(kind: str, st: AreaBeyondThreshold, units: ReportUnits,
                      rec: KindRecord | None = None) -> str:
    label = kind_label(kind).lower()
    meaning = owner_text(st.meaning or "beyond the threshold")
    meaning = re.sub(r"\s*\((high|low|moderate)( risk)?\)$", "", meaning)
    statement = _statement_lead(kind)
    if statement:
        lead = f"{statement} ({label} {meaning})"
    elif meaning.startswith(label):
        lead = f"The area with {meaning}"
    else:
        lead = f"The area with {label} {meaning}"
    u = _NBSP + unit_label(units.area)
    text = f"{lead} is {_area(st.expected_m2, units)}{u}"
    if st.lower_m2 is not None and st.upper_m2 is not None:
        text += (f" ({_pct(st.interval_level)} interval "
                 f"{_area(st.lower_m2, units)} to {_area(st.upper_m2, units)}{u})")
    if st.mapped_area_m2 is not None:
        text += f" of {_area(st.mapped_area_m2, units)}{u} mapped"
    src = st.source
    rec_text = reconcile(kind, rec, st, units) if rec is not None else ""
    return (f'<li class="statement">{_e(text + ".")}'
            + (f' <span class="reconcile">{_e(rec_text)}</span>' if rec_text else "")
            + (f' <span class="src">Threshold after {_o(src)}.</span>' if src else "") + "</li>")


def _threshold_statement(st: SiteThreshold | SiteThresholdUnavailable, units: ReportUnits
                         ) -> str:
    if isinstance(st, SiteThresholdUnavailable):
        return (f'<li class="statement">No site-specific threshold: '
                f"{_e(st.not_available)}</li>")
    thr = st.threshold_mv
    u = _NBSP + unit_label(units.area)
    text = (f"The site-specific threshold between active and passive potentials is "
            f"{fmt_potential(thr)}.")
    for side, word in (("below", "More negative"), ("above", "Less negative")):
        fr, fa, a = ((st.fraction_readings_below, st.fraction_area_below, st.area_below)
                     if side == "below" else
                     (st.fraction_readings_above, st.fraction_area_above, st.area_above))
        text += f" {word}: {_pct(fr)} of the readings"
        if a is not None:
            text += f" and {_area(a, units)}{u}"
            if fa is not None:
                text += f" ({_pct(fa)} of the mapped area)"
        text += "."
    d = st.ashman_d
    if d is not None:
        text += f" Ashman's D = {float(d):.2f}"
        text += (" (below 2: the two populations are not clearly separated, so the threshold "
                 "is weakly defined)." if float(d) < 2 else ".")
    method = st.method
    return (f'<li class="statement">{_e(text)}'
            + (f' <span class="src">Method: {_o(method)}.</span>' if method else "") + "</li>")


def no_surface_sentence(kind: str, rec: KindRecord) -> str:
    """Say in one sentence why a kind has no surface and is shown as points."""
    reason = rec.representation_reason or rec.skipped or "too few readings for a surface"
    return f"No {kind_label(kind).lower()} surface: {reason}."


def points_sentences(kinds: Mapping[str, KindRecord]) -> str:
    """Return the sentences of the kinds shown as points (empty without any)."""
    items = [f"<li>{_e(owner_text(no_surface_sentence(k, v)))}</li>" for k, v in kinds.items()
             if v.representation == "points"]
    if not items:
        return ""
    return ('<p class="points">Shown as readings, not as surfaces (their statistics and class '
            f'shares are of readings):</p><ul class="statements points">{"".join(items)}</ul>')


def points_class_table(kind: str, rec: KindRecord) -> str:
    """Return the class counts of a kind shown as points: readings and shares of readings."""
    counts = rec.points.class_counts if rec.points is not None else None
    if not counts:
        return ""
    rows = [{"class": c.class_name, "readings": c.readings,
             "share": 100.0 * float(c.share_of_readings)} for c in counts]
    return (f'<div class="col"><h4>{_e(kind_label(kind))} (points: shares of '
            "readings, no surface)</h4>"
            + _table(rows, [("class", "Class"), ("readings", "Readings"),
                            ("share", "Share of readings (%)")], cls="points",
                     num=("readings", "share")) + "</div>")


def _condition_block(info: LevelRecord, units: ReportUnits) -> str:
    cond = info.condition or ConditionRecord()
    parts = ['<h3 class="condition">Condition statements</h3>']
    items = [_beyond_statement(k, v, units, info.kinds.get(k)) for k, v in cond.beyond.items()]
    if cond.site_threshold is not None:
        items.append(_threshold_statement(cond.site_threshold, units))
    items = [i for i in items if i]
    if items:
        parts.append(f'<ul class="statements">{"".join(items)}</ul>')
        assumptions = sorted({v.assumption for v in cond.beyond.values() if v.assumption})
        methods = sorted({v.method for v in cond.beyond.values() if v.method})
        if assumptions and methods:
            parts.append(f'<p class="src">Expected areas, intervals and probability maps: '
                         f"{_e('; '.join(methods))}; assumption: "
                         f"{_e('; '.join(assumptions))}.</p>")
        elif assumptions:
            parts.append(f'<p class="src">Expected areas and intervals from the probability '
                         f"maps; assumption: {_o('; '.join(assumptions))}.</p>")
    else:
        parts.append('<p class="none">no condition statements (no kriged surfaces)</p>')
    deck = float(info.deck_area_m2 or 0.0)
    combined = cond.combined_classes or ()
    if combined:
        parts.append("<h4>Combined condition classes</h4>")
        rows: list[dict[str, Any]] = [
            {"class": c.class_name, "area": fmt_area(c.area_m2, units, unit=False),
                 "share": (f"{100.0 * float(c.area_m2) / deck:.1f}" if deck > 0 else "-")}
                for c in combined]
        parts.append(_table(rows, [("class", "Class"),
                                   ("area", f"Area ({unit_label(units.area)})"),
                                   ("share", "Share of deck (%)")], cls="combined",
                            num=("area", "share")))
        used = [kind_label(k).lower() for k, v in (cond.combined_kinds or {}).items()
                if v.startswith("used")]
        unused = {k: v for k, v in (cond.combined_kinds or {}).items()
                  if not v.startswith("used")}
        if cond.combined_kinds:
            text = ("The combined classes use a kind only where it has a surface: they use "
                    + (", ".join(used) if used else "no kind") + ".")
            text += "".join(f" They do not use {kind_label(k).lower()}: "
                            f"{owner_text(v.removeprefix('not used: '))}."
                            for k, v in unused.items())
            parts.append(f'<p class="src combined-kinds">{_e(text)}</p>')
    life = cond.life or {}
    if life:
        parts.append("<h4>Life indications (corrosion-rate surveys)</h4>")
        parts.append('<p class="caution">Indicative ranges over one survey\'s readings, not '
                     "predictions: instantaneous rates vary with season, temperature and "
                     "moisture, and the model constants are listed under assumptions to "
                     "confirm. A licensed engineer decides what they mean for the "
                     "structure.</p>")
        rows = []
        notes: list[str] = []

        def rng(r: Any, fmt: str) -> str:
            return "not given" if r is None else (f"{format(float(r.p10), fmt)} to "
                                                  f"{format(float(r.p90), fmt)}")

        for sid, v in life.items():
            rows.append({"survey": sid, "readings": v.readings_used,
                         "review": v.readings_needing_bar_review,
                         "crack": rng(v.time_to_cracking_yr, ".1f"),
                         "loss": rng(v.section_loss_pct, ".1f")})
            word = "Basis" if v.supported else "No range given"
            notes.append(f"{sid}: {word}: {v.basis}.")
            if v.time_to_cracking_meaning:
                notes.append(f"Time to cracking: {v.time_to_cracking_meaning}.")
            if v.model:
                notes.append(f"Model: {v.model}.")
            if v.horizon_years is not None and v.bar_diameter_mm is not None:
                d = float(v.bar_diameter_mm)
                dtxt = (f"{d:g} mm ({float(units.small_from_mm(d)):.3g} in)"
                        if units.system == "us" else f"{d:g} mm")
                notes.append(f"Bar review: more than 25 % section loss within "
                             f"{float(v.horizon_years):g} years at the measured rate, bar "
                             f"diameter {dtxt}.")
            if v.sources:
                notes.append("Sources: " + "; ".join(map(str, v.sources)) + ".")
            for a in v.assumptions:
                notes.append(f"Assumption to confirm: {a}.")
        hy = next((float(v.horizon_years) for v in life.values()), 10.0)
        parts.append(_table(rows, [("survey", "Survey"), ("readings", "Readings used"),
                                   ("review", "Readings needing bar review"),
                                   ("crack", "Time to cracking, 10th to 90th percentile "
                                             "(years)"),
                                   ("loss", f"Section loss in {hy:g} years, 10th to 90th "
                                            "percentile (%)")],
                            cls="life", num=("crack", "loss")))
        parts.append("".join(f'<p class="src">{_o(n)}</p>' for n in dict.fromkeys(notes)))
    return "\n".join(parts)


def _parameters(params: Mapping[str, Any], system: str) -> str:
    rows = []
    for k, v in params.items():
        val, unit, us = _param(str(k), v, system)
        rows.append({"k": k, "v": val, "u": unit, "us": us})
    cols = [("k", "parameter"), ("v", "value"), ("u", "unit")]
    if system == "us":
        cols.append(("us", "US units"))
    return _table(rows, cols, cls="params", num=("us",))


# --------------------------------------------------------------------------- sources


def sources_and_assumptions(*texts: Any) -> str:
    """Return the report's "Sources" and "Assumptions to confirm" lists as HTML.

    "Sources" lists, from :data:`geo_corrosion.bibliography.SOURCES`, every source cited
    in ``texts`` in the project's citation form (``[ASTM-C876-22a §4.7]``); ``texts`` are
    any objects whose ``str()`` holds citations (the methods table, the cautions, run.json),
    and the assumptions listed below.
    Keys not in the bibliography are skipped.  "Assumptions to confirm" is
    :data:`geo_corrosion.bibliography.ASSUMPTIONS_TO_CONFIRM`.  All text is escaped.

    Examples
    --------
    >>> html = sources_and_assumptions("0.9 mV/degC [ASTM-C876-22a §5.1.1.2]")
    >>> "ASTM C876-22a" in html and "Assumptions to confirm" in html
    True
    """
    from geo_corrosion.bibliography import ASSUMPTIONS_TO_CONFIRM, SOURCES, cited_keys

    cited = set(cited_keys(" ".join(map(str, (*texts, *ASSUMPTIONS_TO_CONFIRM)))))
    items = []
    for key, s in SOURCES.items():
        if key in cited:
            year = f" ({s.year})" if s.year is not None else ""
            items.append(f"<li>[{_e(key)}] {_e(s.authors)}{year}. <i>{_e(s.title)}</i>. "
                         f"{_e(s.designation)}.</li>")
    parts = ['<h3 class="sources">Sources</h3>',
             f'<ul class="sources">{"".join(items)}</ul>' if items
             else '<p class="none">none cited</p>',
             '<h3 class="assumptions">Assumptions to confirm</h3>',
             '<p class="src">A citation marked * rests on a value recalled from its source or '
             "seen only in a summary, not yet read again in the original; each such value is "
             "listed here, with what to check, before the report is relied on.</p>",
             '<ul class="assumptions">'
             + "".join(f"<li>{_o(a)}</li>" for a in ASSUMPTIONS_TO_CONFIRM) + "</ul>"]
    return "\n".join(parts)


# --------------------------------------------------------------------------- issue 14 parts


def title_block(site: Any, units: ReportUnits) -> str:
    """Return the title block, with a seal and signature area.

    Project, owner, project number, revision, date, engineer and firm; a blank line to fill
    in by hand where the site file gives nothing.
    """
    p = site.project
    blank = '<span class="blank">&#160;</span>'

    def v(x: Any) -> str:
        return _e(x) if x not in (None, "") else blank

    rows = [("Project", site.name), ("Owner", site.owner),
            ("Project number", getattr(p, "number", None)),
            ("Revision", getattr(p, "revision", None)), ("Date", getattr(p, "date", None)),
            ("Engineer", getattr(p, "engineer", None)), ("Firm", getattr(p, "firm", None)),
            ("Reporting units", "US customary (ft², LF, in)" if units.system == "us"
             else "metric (m², m, mm)")]
    body = "".join(f'<tr><th>{_e(k)}</th><td class="tb-{_e(k.lower().replace(" ", "-"))}">'
                   f"{v(x)}</td></tr>" for k, x in rows)
    note = getattr(p, "seal_note", None)
    seal = (f'<div class="seal"><div class="seal-label">Seal</div>'
            f'<div class="seal-note">{_e(note) if note else ""}</div></div>'
            '<div class="sign"><div class="sign-line">Signature</div>'
            '<div class="sign-line">Date</div></div>')
    return (f'<div class="titleblock"><table class="titleblock">{body}</table>'
            f'<div class="sealbox">{seal}</div></div>')


def _temperature(c: Any, units: ReportUnits) -> str:
    if c is None:
        return ""
    f = float(c)
    return (f"{f * 1.8 + 32:.0f}{_NBSP}°F ({f:.0f}{_NBSP}°C)" if units.system == "us"
            else f"{f:.0f}{_NBSP}°C")


def survey_tables(surveys: tuple[SurveyRecord, ...], level_names: Mapping[str, str],
                  units: ReportUnits) -> str:
    """Return the survey tables: who read what, when and how; then the field conditions."""
    if not surveys:
        return '<p class="none">none</p>'
    rows1, rows2 = [], []
    for sv in surveys:
        rows1.append({"survey": sv.id, "level": level_names.get(sv.level, sv.level),
                      "kind": kind_label(sv.kind), "date": sv.date or "",
                      "crew": sv.crew or "", "readings": sv.readings, "file": sv.file})
        el = f"electrode.{sv.electrode}" if sv.electrode else ""
        rows2.append({"survey": sv.id, "instrument": sv.instrument or "",
                      "electrode": label(el, sv.electrode) if el else "",
                      "temperature": _temperature(sv.temperature_c, units),
                      "weather": sv.weather or "", "surface": sv.surface_condition or "",
                      "prewetting": sv.prewetting or ""})
    t1 = _table(rows1, [("survey", "Survey"), ("level", "Level"), ("kind", "Measurement"),
                        ("date", "Date"), ("crew", "Crew"), ("readings", "Readings"),
                        ("file", "Data file")], cls="surveys")
    t2 = _table(rows2, [("survey", "Survey"), ("instrument", "Instrument"),
                        ("electrode", "Reference electrode"), ("temperature", "Temperature"),
                        ("weather", "Weather"), ("surface", "Surface condition"),
                        ("prewetting", "Pre-wetting")], cls="conditions")
    return f'<h3>Surveys</h3>{t1}<h3>Field conditions</h3>{t2}'


def applied(rec: Mapping[str, Any]) -> str | None:
    """Say what a correction record did to a survey; None when it changed nothing.

    Examples
    --------
    >>> applied({"correction": "reference electrode to CSE", "electrode": "CSE",
    ...          "offset_mv": 0.0}) is None
    True
    >>> applied({"correction": "electrode temperature to reference", "k_mv_per_c": 0.9,
    ...          "t_ref_c": 22.2})
    'electrode temperature corrected at 0.9 mV/°C to 22.2 °C'
    """
    name = str(rec.get("correction", ""))
    try:
        if name == "reference electrode to CSE":
            off = float(rec["offset_mv"])
            return (None if off == 0 else
                    f"converted from {rec['electrode']} to CSE ({off:+g} mV)")
        if name == "electrode temperature to reference":
            k = float(rec["k_mv_per_c"])
            if k == 0:
                return None
            s = f"electrode temperature corrected at {k:g} mV/°C to {float(rec['t_ref_c']):g} °C"
            if rec.get("only_outside_band"):
                s += " (only outside the ±5.5 °C band)"
            return s
    except (KeyError, TypeError, ValueError):
        pass
    return owner_text(summarize_correction(rec))


def methods_per_survey(surveys: tuple[SurveyRecord, ...]) -> str:
    """Return the table of what was applied to each survey (nothing claimed for the others)."""
    rows = []
    for sv in surveys:
        done = [a for a in (applied(r) for r in sv.corrections if isinstance(r, Mapping)) if a]
        if not done:
            done = ["none: values used as read" + (" (read with a CSE)" if sv.kind == "potential"
                                                    and sv.electrode in (None, "cse") else "")]
        rows.append({"survey": sv.id, "kind": kind_label(sv.kind), "applied": "; ".join(done)})
    return _table(rows, [("survey", "Survey"), ("kind", "Measurement"),
                         ("applied", "Corrections applied")], cls="applied")


def _variogram_sentence(kind: str, sf: Any, plan_unit: str) -> str:
    vg = sf.variogram
    m = vg.model
    sill = float(m.sill) if m.sill else float(m.nugget) + float(m.psill)
    share = float(m.nugget) / sill if sill > 0 else 0.0
    cv = sf.cross_validation
    before = cv.msse_before_calibration
    word = label(f"model.{m.model}", humanise(m.model)).lower()
    s = (f"{kind_label(kind)}: a {word} model with a range of {float(m.range):.0f} {plan_unit}; ")
    if share < 0.01:
        s += (f"the fitted nugget is practically zero ({float(m.nugget):.2g} "
              f"{_sq(m.nugget_unit)}), so the surface honours each reading almost exactly")
    elif share > 0.5:
        s += (f"the nugget is {share:.0%} of the sill: much of the variation is at shorter "
              "distances than the reading spacing or is measurement scatter, so the surface "
              "is smooth")
    else:
        s += f"the nugget is {share:.0%} of the sill"
    f = vg.variance_factor
    if f is not None and before is not None:
        s += (f"; the kriging variance was scaled by {float(f):.3g} so that the mean "
              f"standardised squared error of the cross-validation is 1 (it was "
              f"{float(before):.3g}: the model "
              + ("overstated" if float(before) < 1 else "understated") + " its errors)")
    return s + "."


def _sq(u: Any) -> str:
    """Write a squared unit of run.json for a reader (``ln(kohm.cm)^2`` -> ``ln(kΩ·cm)²``)."""
    return (str(u).replace("^2", "²").replace("kohm.cm", "kΩ·cm").replace("uA/cm2", "µA/cm²")
            .replace("uA/cm²", "µA/cm²"))


def variogram_table(kinds: Mapping[str, KindRecord], plan_unit: str) -> str:
    """Return the variogram and cross-validation table of a level, with its reading."""
    rows, sentences = [], []
    for k, v in kinds.items():
        sf = v.surface
        if sf is None:
            continue
        m = sf.variogram.model
        cv = sf.cross_validation
        sill = float(m.sill) if m.sill else float(m.nugget) + float(m.psill)
        f = sf.variogram.variance_factor
        log = sf.kriged_in == "log"
        rows.append({
            "kind": kind_label(k), "model": label(f"model.{m.model}", humanise(m.model)),
            "nugget": f"{100 * float(m.nugget) / sill:.1f}{_NBSP}%" if sill > 0 else "-",
            "range": f"{float(m.range):.1f}{_NBSP}{m.range_unit}",
            "rmse": (f"{float(cv.rmse):.3g} (log)" if log else
                     f"{float(cv.rmse):.3g}{_NBSP}{unit_label(cv.value_unit)}"),
            "msse": (f"{float(cv.msse_before_calibration):.3g} → {float(cv.msse):.3g}"
                     if cv.msse_before_calibration is not None else f"{float(cv.msse):.3g}"),
            "factor": "not scaled" if f is None else f"{float(f):.3g}",
            "n": cv.n_tested})
        sentences.append(_variogram_sentence(k, sf, m.range_unit))
    if not rows:
        return '<p class="none">no kriged surface on this level</p>'
    t = _table(rows, [("kind", "Measurement"), ("model", "Model"),
                      ("nugget", "Nugget share of sill"), ("range", "Range"),
                      ("rmse", "Cross-validation RMSE"),
                      ("msse", "Mean standardised squared error"),
                      ("factor", "Variance calibration factor"), ("n", "Readings tested")],
               cls="variogram", num=("nugget", "range", "rmse", "msse", "factor", "n"))
    return t + "".join(f'<p class="reading">{_e(x)}</p>' for x in sentences)


def unmapped_sentences(kinds: Mapping[str, KindRecord]) -> str:
    """Return one sentence for each kind of the level that got no kriged surface."""
    out = []
    for k, v in kinds.items():
        if v.surface is not None or v.representation == "points":  # points: points_sentences
            continue
        why = owner_text(v.skipped) if v.skipped else "too few readings for a surface"
        out.append(f'<p class="unmapped">{_e(kind_label(k))}: not mapped as a surface '
                   f"({_e(why)}); its {v.readings} readings are summarised in the statistics "
                   "table only.</p>")
    return "".join(out)


def reconcile(kind: str, rec: KindRecord, st: AreaBeyondThreshold, units: ReportUnits
              ) -> str:
    """One sentence relating the class area beyond a threshold to the expected area.

    The class map counts the cells whose kriged value is beyond the threshold; the
    expected area sums each mapped cell's probability of being beyond it (the probability
    map), so the two differ by the cells near the limit.  Empty when no class of the kind
    lies wholly beyond the threshold.
    """
    areas = list(rec.class_areas or ())
    if not areas:
        return ""
    names = [a.class_name for a in areas]
    cs = _class_set_of(kind, names)
    if cs is None:
        return ""
    from geo_corrosion.measurements import get_kind

    try:
        thr = get_kind(kind).threshold
    except Exception:  # noqa: BLE001 - plugin kind not installed: no sentence
        return ""
    if thr is None:
        return ""
    direction = thr.direction
    t = float(st.threshold)
    lo = [-np.inf, *cs.edges]
    hi = [*cs.edges, np.inf]
    beyond = {cs.labels[i] for i in range(cs.n_classes)
              if (direction == "below" and hi[i] <= t) or (direction == "above" and lo[i] >= t)}
    if not beyond:
        return ""
    cls_m2 = sum(float(a.area_m2) for a in areas if a.class_name in beyond)
    which = " and ".join(f"“{class_name_label(kind, n, names)}”" for n in
                         [x for x in cs.labels if x in beyond])
    return (f"The class table gives {fmt_area(cls_m2, units)} in {which}, the area whose "
            f"kriged value is beyond the threshold; the statement above gives "
            f"{fmt_area(st.expected_m2, units)}, the sum of each cell's probability of being "
            "beyond it, which also counts part of the cells just inside the limit and not "
            "all of those just beyond it, so the two differ by the uncertain cells near the "
            "limit.")


def statistics_rows(kinds: Mapping[str, KindRecord], units: ReportUnits
                    ) -> tuple[list[dict[str, Any]], list[tuple[str, str]]]:
    """Rows of the statistics table in owner units (cover in inches on US reports)."""
    rows = []
    for k, v in kinds.items():
        st = v.statistics
        unit = v.unit
        if unit == "mm" and k == "cover":
            def f(x: Any) -> str:
                return fmt_cover(x, units, unit=False)
            shown = units.small
        elif unit == "mV":
            def f(x: Any) -> str:
                return fmt_potential(x, unit=False)
            shown = "mV vs CSE"
        else:
            def f(x: Any) -> str:
                return "-" if x is None else f"{float(x):.3g}"
            shown = unit_label(unit)
        rows.append({"kind": kind_label(k), "unit": shown, "readings": v.readings,
                     "mapped": v.readings_mapped,
                     **{q: f(st.get(q)) for q in ("mean", "p10", "median", "p90")},
                     "std": ("-" if st.get("std") is None else
                             fmt_cover(st["std"], units, unit=False) if unit == "mm"
                             else f"{float(st['std']):.3g}")})
    cols = [("kind", "Measurement"), ("unit", "Unit"), ("readings", "Readings"),
            ("mapped", "Used for the map"), ("mean", "Mean"), ("std", "Std. dev."),
            ("p10", "10 %"), ("median", "Median"), ("p90", "90 %")]
    return rows, cols


def qa_rows(summary: Any, lid: str) -> list[dict[str, Any]]:
    """Rows of a level's QA summary, rules and severities by their owner names."""
    return [{"survey_id": r.survey_id, "rule": f"{label(r.rule, r.rule)} ({r.rule})",
             "severity": label(f"severity.{r.severity}", str(r.severity).capitalize()),
             "count": r.count} for r in summary if r.level_id == lid]


def parameter_rows(params: Mapping[str, Any], units: ReportUnits) -> list[dict[str, Any]]:
    """Rows of the run's parameters: the site-file key's meaning and the value in owner units."""
    from geo_corrosion.config import TABLES
    from geo_corrosion.vocabulary import fmt_depth, fmt_length

    by_record: dict[str, Any] = {}
    for t in ("run", "webmap"):
        for k in TABLES[t].keys:
            by_record[k.record or k.field] = k
    rows = []
    for rec, v in params.items():
        decl = by_record.get(str(rec))
        what = decl.help if decl is not None and decl.help else humanise(str(rec))
        unit = parameter_unit(str(rec))
        if v is None or v == {} or v == []:
            shown = "none"
        elif isinstance(v, bool):
            shown = "yes" if v else "no"
        elif isinstance(v, Mapping):
            shown = owner_text(_nested(v, units.system))
        elif isinstance(v, int | float) and unit == "m":
            shown = fmt_length(v, units)
        elif isinstance(v, int | float) and unit == "mm":
            shown = fmt_depth(v, units) if units.system == "metric" else (
                f"{float(units.small_from_mm(v)):.3g}{_NBSP}in")
        elif isinstance(v, int | float) and unit == "m2":
            shown = fmt_area(v, units) if units.system == "us" else f"{float(v):g}{_NBSP}m²"
        elif isinstance(v, int | float) and unit == "mV":
            shown = f"{float(v):g}{_NBSP}mV"
        elif isinstance(v, int | float):
            shown = f"{float(v):g}" + (f"{_NBSP}{unit_label(unit)}" if unit else "")
            if str(rec) == "contingency":
                shown = f"{100 * float(v):g}{_NBSP}%"
        else:
            shown = owner_text(label(str(v), str(v)) if str(v) in VOCABULARY else str(v))
        rows.append({"k": what, "v": shown})
    return rows


def quantity_text(value: Any, unit: str) -> str:
    """Format a bid quantity as the schedule bids it (``quantities.bid_decimals``).

    Whole ft², LF, EA and LS; 0.1 CY, m² and m; 0.01 m³: the same figures as
    ``quantities.csv``.
    """
    from geo_corrosion.quantities import bid_decimals

    return fmt_number(value, bid_decimals(str(unit)))

"""Text of the report: tables, units of run.json keys, corrections and condition statements.

Pure functions from run.json entries to escaped HTML fragments, used by
:mod:`geo_corrosion.exporters.report`.  Every text that may come from an input file goes
through :func:`_e` (HTML escape); fragments built here from escaped parts are marked
:class:`_Raw` so they are not escaped twice.
"""

from __future__ import annotations

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

if TYPE_CHECKING:
    from geo_corrosion.units import ReportUnits

__all__ = ["parameter_unit", "summarize_correction", "sources_and_assumptions",
           "points_sentences", "points_class_table", "no_surface_sentence"]

_NBSP = "\u00a0"  # between a number and its unit, so a line never starts with the unit


_Raw = Raw


def _e(v: Any) -> str:
    """Escape for the report: floats with thousands separators."""
    return escape(v, thousands=True)


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
    'Arrhenius to 20 degC, Ea 25 kJ/mol'
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
            s = f"electrode temperature, {k:g} mV/degC to {float(r['t_ref_c']):g} degC"
            if r.get("only_outside_band"):
                s += ", only for readings outside 0 to 49 degC"
            n = int(r.get("readings_outside_0_49_c") or 0)
            if n:
                s += f"; {_plural(n, 'reading')} outside 0 to 49 degC"
            return s
        if name == "Arrhenius temperature correction":
            return (f"Arrhenius to {float(r['t_ref_c']):g} degC, "
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


def _beyond_statement(kind: str, st: AreaBeyondThreshold, units: ReportUnits) -> str:
    label = kind.replace("_", " ")
    meaning = str(st.meaning or "beyond the threshold")
    statement = _statement_lead(kind)
    if statement:
        lead = f"{statement} ({label} {meaning})"
    elif meaning.startswith(label):
        lead = f"The area with {meaning}"
    else:
        lead = f"The area with {label} {meaning}"
    u = _NBSP + units.area
    text = f"{lead} is {_area(st.expected_m2, units)}{u}"
    if st.lower_m2 is not None and st.upper_m2 is not None:
        text += (f" ({_pct(st.interval_level)} interval "
                 f"{_area(st.lower_m2, units)} to {_area(st.upper_m2, units)}{u})")
    if st.mapped_area_m2 is not None:
        text += f" of {_area(st.mapped_area_m2, units)}{u} mapped"
    src = st.source
    return (f'<li class="statement">{_e(text + ".")}'
            + (f' <span class="src">Threshold after {_e(src)}.</span>' if src else "") + "</li>")


def _threshold_statement(st: SiteThreshold | SiteThresholdUnavailable, units: ReportUnits
                         ) -> str:
    if isinstance(st, SiteThresholdUnavailable):
        return (f'<li class="statement">No site-specific threshold: '
                f"{_e(st.not_available)}</li>")
    thr = st.threshold_mv
    u = _NBSP + units.area
    text = (f"The site-specific threshold between active and passive potentials is "
            f"{float(thr):.0f}{_NBSP}mV CSE.")
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
            + (f' <span class="src">Method: {_e(method)}.</span>' if method else "") + "</li>")


def no_surface_sentence(kind: str, rec: KindRecord) -> str:
    """Say in one sentence why a kind has no surface and is shown as points."""
    reason = rec.representation_reason or rec.skipped or "too few readings for a surface"
    return f"No {kind.replace('_', ' ')} surface: {reason}."


def points_sentences(kinds: Mapping[str, KindRecord]) -> str:
    """Return the sentences of the kinds shown as points (empty without any)."""
    items = [f"<li>{_e(no_surface_sentence(k, v))}</li>" for k, v in kinds.items()
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
    return (f'<div class="col"><h4>{_e(kind.replace("_", " "))} (points: shares of '
            "readings, no surface)</h4>"
            + _table(rows, [("class", "class"), ("readings", "readings"),
                            ("share", "share of readings (%)")], cls="points") + "</div>")


def _condition_block(info: LevelRecord, units: ReportUnits) -> str:
    cond = info.condition or ConditionRecord()
    parts = ['<h3 class="condition">Condition statements</h3>']
    items = [_beyond_statement(k, v, units) for k, v in cond.beyond.items()]
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
                         f"maps; assumption: {_e('; '.join(assumptions))}.</p>")
    else:
        parts.append('<p class="none">no condition statements (no kriged surfaces)</p>')
    deck = float(info.deck_area_m2 or 0.0)
    combined = cond.combined_classes or ()
    if combined:
        parts.append("<h4>Combined condition classes</h4>")
        rows = [{"class": c.class_name, "area": float(units.area_from_m2(c.area_m2)),
                 "share": 100.0 * float(c.area_m2) / deck if deck > 0 else None}
                for c in combined]
        parts.append(_table(rows, [("class", "class"), ("area", f"area ({units.area})"),
                                   ("share", "share of deck (%)")], cls="combined"))
        used = [k for k, v in (cond.combined_kinds or {}).items() if v.startswith("used")]
        unused = {k: v for k, v in (cond.combined_kinds or {}).items()
                  if not v.startswith("used")}
        if cond.combined_kinds:
            text = ("The combined classes use a kind only where it has a surface: they use "
                    + (", ".join(used) if used else "no kind") + ".")
            text += "".join(f" They do not use {k}: {v.removeprefix('not used: ')}."
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
        rows, notes = [], []

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
        parts.append(_table(rows, [("survey", "survey"), ("readings", "readings used"),
                                   ("review", "readings needing bar review"),
                                   ("crack", "time to cracking, 10th to 90th percentile "
                                             "(years)"),
                                   ("loss", f"section loss in {hy:g} years, 10th to 90th "
                                            "percentile (%)")],
                            cls="life", num=("crack", "loss")))
        parts.append("".join(f'<p class="src">{_e(n)}</p>' for n in dict.fromkeys(notes)))
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
             '<ul class="assumptions">'
             + "".join(f"<li>{_e(a)}</li>" for a in ASSUMPTIONS_TO_CONFIRM) + "</ul>"]
    return "\n".join(parts)

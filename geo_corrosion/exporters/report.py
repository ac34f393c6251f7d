"""Report for the project file: ``report.html`` and ``report.pdf``, built from an output folder.

Like the web map, the report is built **from a run's output folder** (``run.json``,
``survey.gpkg``, ``plots/*.png``), so ``geo-corrosion report RUN_DIR`` rebuilds it.
A title page with the cautions and the contents; one section per level: statistics and
class areas, the condition statements (areas beyond the thresholds with their intervals,
the site-specific threshold, the combined condition classes, the life summary), the class
maps, the cumulative-frequency plot and histograms, the repair layout with its repair list
and quantities, the QA summary; then the site's total quantities, the methods with their
sources, the parameters of the run and the surveys with their corrections.  The short
caution is in the footer of every PDF page.  The PDF is made with WeasyPrint (BSD licence,
on PyPI), which needs the system library pango; the page size is US letter for ``us``
reporting units and A4 for ``metric``.  Every text from input files is HTML-escaped.
"""

from __future__ import annotations

import base64
import html
import io
import logging
from collections.abc import Mapping
from pathlib import Path
from types import ModuleType
from typing import TYPE_CHECKING, Any, ClassVar

import numpy as np

from geo_corrosion._io import atomic_write
from geo_corrosion.cautions import CAUTIONS, SHORT_CAUTION
from geo_corrosion.errors import ExportError
from geo_corrosion.exporters.base import Exporter
from geo_corrosion.exporters.webmap import read_run, result_manifest
from geo_corrosion.units import M_PER_FT, MM_PER_INCH

if TYPE_CHECKING:
    import geopandas as gpd
    import pandas as pd

    from geo_corrosion.results import RunResult
    from geo_corrosion.units import ReportUnits

__all__ = ["ReportExporter", "PdfUnavailableError", "build_report_html", "write_report",
           "REPORT_HTML", "REPORT_PDF", "METHODS", "PDF_INSTALL", "page_size",
           "parameter_unit", "summarize_correction"]

log = logging.getLogger(__name__)
REPORT_HTML = "report.html"
REPORT_PDF = "report.pdf"

#: What to install for the PDF: WeasyPrint and its system library pango.
PDF_INSTALL = ("pip install weasyprint; on Debian: "
               "apt-get install libpango-1.0-0 libpangoft2-1.0-0")
_NO_PDF_NOTE = "report.pdf not written"  # start of the run's note without WeasyPrint
_NBSP = "\u00a0"  # between a number and its unit, so a line never starts with the unit

#: Methods in brief, with their published sources (the full text with the status of each
#: source is docs/methods.md of the geo_corrosion distribution).
METHODS: tuple[tuple[str, str, str], ...] = (
    ("Corrections", "Potentials converted to the copper/copper-sulfate electrode (CSE) and "
     "corrected for electrode temperature (0.9 mV/degC); resistivity referred to 20 degC by an "
     "Arrhenius factor.", "ASTM C876-22a §5.1.1.2; Coyle, Spragg, Suraneni et al. (activation "
     "energy)"),
    ("QA", "Plausible ranges, adjacent-reading differences over 150 mV, repeatability and "
     "reproducibility of repeated points, readings outside the slab or in exclusions.",
     "ASTM C876 (grid and precision sections)"),
    ("Surfaces", "Ordinary kriging in a local neighbourhood; variogram models fitted by "
     "weighted least squares and chosen by leave-one-out cross-validation; resistivity and "
     "rate kriged in logarithms.", "Cressie (1985) WLS criterion; pykrige as reference "
     "library"),
    ("Class sets", "Half-cell potential classes after ASTM C876 (< -350 mV high, -350 to "
     "-200 mV uncertain, > -200 mV low probability of corrosion); resistivity and corrosion "
     "rate classes after RILEM TC 154.", "ASTM C876; RILEM TC 154-EMC (Polder 2000; Andrade, "
     "Alonso et al. 2004)"),
    ("Probability maps", "Probability that the kriged value is beyond the class threshold, "
     "assuming Gaussian kriging errors; areas with intervals; a two-component mixture for the "
     "site threshold.", "RILEM TC 154 statistical evaluation; Gulikers & Elsener (2008)"),
    ("Repair layout", "Sounded delaminations and spalls enlarged by the margin, merged, squared "
     "to saw-cut rectangles aligned with the grid, clipped to the slab; depth class from the "
     "kriged cover; undercut clearance max(3/4 in, 1/4 in + largest aggregate).",
     "ICRI concrete repair guidelines; UFGS 03931"),
    ("Quantities", "Bid items per depth class and zone, in the reporting units, with a "
     "contingency line.", "common practice"),
)



class PdfUnavailableError(ExportError):
    """WeasyPrint, or its system library pango, cannot be loaded: no PDF can be made.

    Attributes
    ----------
    reason : str
        The import error, e.g. ``"OSError: cannot load library 'libpango-1.0-0' ..."``.
    """

    def __init__(self, reason: str) -> None:
        self.reason = reason
        super().__init__(
            f"the PDF report needs WeasyPrint and its system library pango, which cannot be "
            f"loaded ({reason}); install them ({PDF_INSTALL}), or write report.html only "
            "(`geo-corrosion report RUN_DIR --no-pdf`; pdf=False in Python)")


def _load_weasyprint() -> ModuleType:
    """Import WeasyPrint (its import loads pango through cffi and raises OSError without it).

    Raises
    ------
    PdfUnavailableError
        WeasyPrint is not installed or pango is missing.
    """
    try:
        import weasyprint
    except (ImportError, OSError) as err:
        raise PdfUnavailableError(f"{type(err).__name__}: {err}") from err
    return weasyprint


def page_size(system: str) -> str:
    """CSS page size of a reporting unit system: ``letter`` for ``us``, ``A4`` otherwise."""
    return "letter" if system == "us" else "A4"


class _Raw(str):
    """Text that is HTML already (built here from escaped parts): not escaped again."""


def _e(v: Any) -> str:
    if isinstance(v, _Raw):
        return str(v)
    if isinstance(v, float | np.floating):
        return "" if not np.isfinite(v) else f"{float(v):,.2f}"
    return html.escape("" if v is None else str(v), quote=True)


def _g(v: float, digits: int = 6) -> str:
    """Format a number with ``digits`` significant digits, no trailing zeros."""
    return f"{float(v):.{digits}g}"


def _data_url(path: Path) -> str:
    return "data:image/png;base64," + base64.b64encode(path.read_bytes()).decode()


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


def _figure(path: Path, caption: str) -> str:
    if not path.is_file():
        return ""
    return (f'<figure><img src="{_data_url(path)}" alt="{_e(caption)}">'
            f"<figcaption>{_e(caption)}</figcaption></figure>")


# --------------------------------------------------------------------------- units of keys

#: Unit of a run.json key from its suffix (longest first; "_mm" before "_m").
_SUFFIX_UNITS: tuple[tuple[str, str], ...] = (
    ("_kj_mol", "kJ/mol"), ("_m2", "m2"), ("_mm", "mm"), ("_mv", "mV"), ("_deg", "deg"),
    ("_c", "degC"), ("_m", "m"))
#: US customary unit of a metric length or area, and the factor to it
#: (1 ft = 0.3048 m, 1 in = 25.4 mm exactly; REFERENCE.md §0).
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
        return _g(v), unit, us
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


def _surveys_table(surveys: list[dict[str, Any]]) -> str:
    """Build the table of surveys: one row per survey, its corrections on the row below."""
    if not surveys:
        return '<p class="none">none</p>'
    cols = (("id", "survey"), ("level", "level"), ("kind", "kind"), ("file", "file"),
            ("readings", "readings"), ("unit", "unit (as read, used)"))
    head = "".join(f'<th class="c-{c}">{_e(label)}</th>' for c, label in cols)
    body = []
    for sv in surveys:
        unit_in, unit = sv.get("unit_in"), sv.get("unit")
        cells = {**sv, "unit": unit if not unit_in or unit_in == unit else f"{unit_in} to {unit}"}
        row = "".join(f'<td class="c-{c}{" num" if c == "readings" else ""}">{_e(cells.get(c))}'
                      "</td>" for c, _l in cols)
        corr = _corrections_cell(list(sv.get("corrections") or []))
        body.append(f'<tbody><tr class="survey">{row}</tr><tr class="corr">'
                    f'<td colspan="{len(cols)}">corrections: {corr}</td></tr></tbody>')
    return (f'<table class="surveys"><thead><tr>{head}</tr></thead>{"".join(body)}</table>')


# --------------------------------------------------------------------------- survey.gpkg


class _Gpkg:
    """Layers of ``survey.gpkg`` read on demand (missing or empty layers are ``None``)."""

    def __init__(self, run_dir: Path) -> None:
        import pyogrio

        self.path = run_dir / "survey.gpkg"
        self.names: set[str] = set()
        self._cache: dict[str, Any] = {}
        if self.path.is_file():
            try:
                self.names = {str(n) for n, _t in pyogrio.list_layers(self.path)}
            except Exception as err:  # noqa: BLE001 - GDAL's errors vary by driver
                raise ExportError(f"{self.path}: cannot be read as a GeoPackage ({err}); "
                                  "re-run `geo-corrosion run` to rewrite the output folder"
                                  ) from err

    def get(self, name: str) -> gpd.GeoDataFrame | None:
        import geopandas as gpd

        if name not in self.names:
            return None
        if name not in self._cache:
            try:
                g = gpd.read_file(self.path, layer=name)
            except Exception as err:  # noqa: BLE001 - GDAL's errors vary by driver
                raise ExportError(f"{self.path}: layer {name!r} cannot be read ({err}); "
                                  "re-run `geo-corrosion run`") from err
            self._cache[name] = g if len(g) else None
        return self._cache[name]


def _repair_layout_png(gpkg: _Gpkg, lid: str) -> str | None:
    """Draw the level's slab, sounding and repairs (site CRS); return a PNG data URL."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    slab, rep = gpkg.get(f"{lid}_slab"), gpkg.get(f"{lid}_repairs")
    if slab is None:
        return None
    fig, ax = plt.subplots(figsize=(7.5, 5.0), dpi=150)
    slab.boundary.plot(ax=ax, color="#303030", linewidth=1.2)
    for what, kw in (("exclusions", {"color": "#BBBBBB"}),
                     ("delaminations", {"color": "#D55E00", "alpha": 0.6}),
                     ("spalls", {"color": "#CC79A7", "alpha": 0.6})):
        g = gpkg.get(f"{lid}_{what}")
        if g is not None:
            g.plot(ax=ax, **kw)
    if rep is not None:
        rep.boundary.plot(ax=ax, color="#0072B2", linewidth=1.0)
        for rid, geom in zip(rep["repair_id"], rep.geometry, strict=True):
            c = geom.centroid
            ax.annotate(str(rid).split("-")[-1], (c.x, c.y), fontsize=7, color="#0072B2",
                        ha="center", va="bottom", xytext=(0, 4), textcoords="offset points")
    ax.set_aspect("equal")
    unit = slab.crs.axis_info[0].unit_name if slab.crs is not None else ""
    ax.set_xlabel(f"easting ({unit})")
    ax.set_ylabel(f"northing ({unit})")
    ax.ticklabel_format(useOffset=False, style="plain")
    ax.tick_params(labelsize=6)
    ax.set_title("repair layout: saw-cut outlines (blue, numbered as in the repair list), "
                 "delaminations (vermillion), spalls (pink)", fontsize=7)
    fig.text(0.01, 0.005, SHORT_CAUTION, fontsize=6, wrap=True)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", bbox_inches="tight")
    plt.close(fig)
    return "data:image/png;base64," + base64.b64encode(buf.getvalue()).decode()


def _repair_list(rep: gpd.GeoDataFrame | None, units: ReportUnits) -> str:
    """List the repairs of a level: id, zone, depth class, bid item, depth and area."""
    from geo_corrosion.quantities import DEPTH_CLASS_ITEMS

    if rep is None or not len(rep):
        return '<p class="none">no repairs</p>'
    cols = rep.columns
    has_item = "bid_item" in cols and bool(rep["bid_item"].notna().any())
    rows = []
    for r in rep.drop(columns="geometry").to_dict("records"):
        item = r.get("bid_item") if has_item else None
        if item is None or (isinstance(item, float) and not np.isfinite(item)):
            # the schedule prices a repair without a bid item by its depth class
            item = DEPTH_CLASS_ITEMS.get(str(r.get("depth_class")), "")
        depth = r.get("depth_mm")
        rows.append({
            "repair_id": r.get("repair_id"), "zone": r.get("zone"),
            "depth_class": r.get("depth_class"), "bid_item": item,
            "depth": None if depth is None else float(units.small_from_mm(depth)),
            "area": float(units.area_from_m2(r.get("area_m2") or 0.0))})
    table_cols = [("repair_id", "repair")]
    if "zone" in cols:
        table_cols.append(("zone", "zone"))
    table_cols += [("depth_class", "depth class"), ("bid_item", "bid item")]
    if "depth_mm" in cols:
        table_cols.append(("depth", f"removal depth ({units.small})"))
    table_cols.append(("area", f"area ({units.area})"))
    return _table(rows, table_cols, cls="repairs")


def _quantities(schedule: list[dict[str, Any]], lid: str | None) -> str:
    import pandas as pd

    from geo_corrosion.quantities import schedule_table

    if not schedule:
        return '<p class="none">no quantities</p>'
    t: pd.DataFrame = schedule_table(pd.DataFrame(schedule))
    if lid is not None:
        t = t[t["level_id"].astype(str) == lid]
    rows = []
    for r in t.to_dict("records"):
        # as in quantities.csv: 2 decimals, counts and lump sums as whole numbers
        fmt = "{:,.0f}" if str(r.get("unit")) in ("EA", "LS") else "{:,.2f}"
        rows.append({**r, **{c: fmt.format(float(r[c])) for c in ("base", "contingency", "total")}})
    return _table(rows, [("level_id", "level"), ("item", "item"), ("description", "description"),
                         ("unit", "unit"), ("base", "base"), ("contingency", "contingency"),
                         ("total", "total")], cls="quantities",
                  num=("base", "contingency", "total"))


# --------------------------------------------------------------------------- condition


def _area(a_m2: Any, units: ReportUnits) -> str:
    """Format an area as the statements print it: whole ft2, or m2 to one decimal."""
    v = float(units.area_from_m2(float(a_m2)))
    return f"{v:,.0f}" if units.system == "us" else f"{v:,.1f}"


def _pct(f: Any) -> str:
    return f"{100.0 * float(f):.0f}{_NBSP}%"


def _beyond_statement(kind: str, st: Mapping[str, Any], units: ReportUnits) -> str:
    label = kind.replace("_", " ")
    meaning = str(st.get("meaning") or "beyond the threshold")
    if kind == "potential":
        lead = f"The area likely to be corroding ({label} {meaning})"
    elif meaning.startswith(label):
        lead = f"The area with {meaning}"
    else:
        lead = f"The area with {label} {meaning}"
    u = _NBSP + units.area
    text = f"{lead} is {_area(st.get('expected_m2', np.nan), units)}{u}"
    if st.get("lower_m2") is not None and st.get("upper_m2") is not None:
        text += (f" ({_pct(st.get('interval_level', 0.9))} interval "
                 f"{_area(st['lower_m2'], units)} to {_area(st['upper_m2'], units)}{u})")
    if st.get("mapped_area_m2") is not None:
        text += f" of {_area(st['mapped_area_m2'], units)}{u} mapped"
    src = st.get("source")
    return (f'<li class="statement">{_e(text + ".")}'
            + (f' <span class="src">Threshold after {_e(src)}.</span>' if src else "") + "</li>")


def _threshold_statement(st: Mapping[str, Any], units: ReportUnits) -> str:
    if "not_available" in st:
        return (f'<li class="statement">No site-specific threshold: '
                f"{_e(st['not_available'])}</li>")
    thr = st.get("threshold_mv")
    if thr is None:
        return ""
    u = _NBSP + units.area
    text = (f"The site-specific threshold between active and passive potentials is "
            f"{float(thr):.0f}{_NBSP}mV CSE.")
    for side, word in (("below", "More negative"), ("above", "Less negative")):
        fr, fa, a = (st.get(f"fraction_readings_{side}"), st.get(f"fraction_area_{side}"),
                     st.get(f"area_{side}"))
        if fr is None:
            continue
        text += f" {word}: {_pct(fr)} of the readings"
        if a is not None:
            text += f" and {_area(a, units)}{u}"
            if fa is not None:
                text += f" ({_pct(fa)} of the mapped area)"
        text += "."
    d = st.get("ashman_d")
    if d is not None:
        text += f" Ashman's D = {float(d):.2f}"
        text += (" (below 2: the two populations are not clearly separated, so the threshold "
                 "is weakly defined)." if float(d) < 2 else ".")
    method = st.get("method")
    return (f'<li class="statement">{_e(text)}'
            + (f' <span class="src">Method: {_e(method)}.</span>' if method else "") + "</li>")


def _condition_block(info: Mapping[str, Any], units: ReportUnits) -> str:
    cond = info.get("condition") or {}
    parts = ['<h3 class="condition">Condition statements</h3>']
    items = [_beyond_statement(k[: -len("_area_beyond_threshold")], v, units)
             for k, v in cond.items()
             if k.endswith("_area_beyond_threshold") and isinstance(v, Mapping)]
    if isinstance(cond.get("site_threshold"), Mapping):
        items.append(_threshold_statement(cond["site_threshold"], units))
    items = [i for i in items if i]
    if items:
        parts.append(f'<ul class="statements">{"".join(items)}</ul>')
        assumptions = sorted({str(v["assumption"]) for k, v in cond.items()
                              if k.endswith("_area_beyond_threshold")
                              and isinstance(v, Mapping) and v.get("assumption")})
        if assumptions:
            parts.append(f'<p class="src">Expected areas and intervals from the probability '
                         f"maps; assumption: {_e('; '.join(assumptions))}.</p>")
    else:
        parts.append('<p class="none">no condition statements (no kriged surfaces)</p>')
    deck = float(info.get("deck_area_m2") or 0.0)
    combined = cond.get("combined_classes") or []
    if combined:
        parts.append("<h4>Combined condition classes</h4>")
        rows = [{"class": c.get("class"), "area": float(units.area_from_m2(c.get("area_m2") or 0)),
                 "share": 100.0 * float(c.get("area_m2") or 0) / deck if deck > 0 else None}
                for c in combined]
        parts.append(_table(rows, [("class", "class"), ("area", f"area ({units.area})"),
                                   ("share", "share of deck (%)")], cls="combined"))
    life = cond.get("life") or {}
    if life:
        parts.append("<h4>Life summary (corrosion-rate surveys)</h4>")
        rows, notes = [], []
        for sid, v in life.items():
            med = v.get("median_time_to_cracking_yr")
            rows.append({"survey": sid, "readings": v.get("readings"),
                         "review": v.get("readings_needing_bar_review"),
                         "median": "n/a" if med is None else f"{float(med):.1f}"})
            for key in ("time_to_cracking_meaning",):
                if v.get(key):
                    notes.append(f"Time to cracking: {v[key]}.")
            if v.get("horizon_years") is not None and v.get("bar_diameter_mm") is not None:
                d = float(v["bar_diameter_mm"])
                dtxt = (f"{d:g} mm ({float(units.small_from_mm(d)):.3g} in)"
                        if units.system == "us" else f"{d:g} mm")
                notes.append(f"Bar review: more than 25 % section loss within "
                             f"{float(v['horizon_years']):g} years at the measured rate, bar "
                             f"diameter {dtxt}.")
            if v.get("sources"):
                notes.append("Sources: " + "; ".join(map(str, v["sources"])) + ".")
        parts.append(_table(rows, [("survey", "survey"), ("readings", "readings"),
                                   ("review", "readings needing bar review"),
                                   ("median", "median time to cracking (years)")],
                            cls="life", num=("median",)))
        parts.append("".join(f'<p class="src">{_e(n)}</p>' for n in dict.fromkeys(notes)))
    return "\n".join(parts)


# --------------------------------------------------------------------------- sections


def _level_section(run_dir: Path, lid: str, info: dict[str, Any], man: dict[str, Any],
                   units: ReportUnits, gpkg: _Gpkg) -> str:
    plots = run_dir / "plots"
    name = _e(info.get("name") or lid)
    parts = [f'<section class="level" id="level-{_e(lid)}"><h2>Level {_e(lid)}: {name}</h2>']
    kinds = info.get("kinds") or {}
    # statistics of the readings
    srows = []
    for k, v in kinds.items():
        st = v.get("statistics") or {}
        srows.append({"kind": k, "unit": v.get("unit", ""), "readings": v.get("readings"),
                      "mapped": v.get("readings_mapped"), **{q: st.get(q) for q in
                      ("mean", "std", "p10", "median", "p90")}})
    parts.append('<h3 class="stats">Statistics of the readings</h3>')
    parts.append(_table(srows, [("kind", "kind"), ("unit", "unit"), ("readings", "readings"),
                                ("mapped", "mapped"), ("mean", "mean"), ("std", "std. dev."),
                                ("p10", "10 %"), ("median", "median"), ("p90", "90 %")]))
    parts.append('<h3 class="classes">Class areas</h3><div class="cols">')
    for k, v in kinds.items():
        rows = [{"class": r.get("class"), "area": r.get(f"area_{units.area}"),
                 "share": 100 * float(r.get("share_of_deck") or 0)}
                for r in v.get("class_areas") or []]
        if rows:
            parts.append(f'<div class="col"><h4>{_e(k.replace("_", " "))}</h4>')
            parts.append(_table(rows, [("class", "class"), ("area", f"area ({units.area})"),
                                       ("share", "share of deck (%)")]) + "</div>")
    parts.append("</div>")
    parts.append(_condition_block(info, units))
    parts.append('<h3 class="maps">Maps</h3><div class="figs">')
    for k in kinds:
        parts.append(_figure(plots / f"{lid}_{k}_classes.png", f"{info.get('name', lid)}: "
                             f"{k.replace('_', ' ')} classes"))
    parts.append('</div><h3 class="plots">Cumulative frequency and histograms</h3>'
                 '<div class="figs">')
    parts.append(_figure(plots / f"{lid}_potential_cumulative.png",
                         "cumulative frequency of potentials"))
    for k in kinds:
        parts.append(_figure(plots / f"{lid}_{k}_histogram.png",
                             f"histogram of {k.replace('_', ' ')}"))
    parts.append(_figure(plots / f"{lid}_potential_vs_resistivity.png",
                         "kriged potential at resistivity readings"))
    parts.append("</div>")
    parts.append('<h3 class="repairs">Repair layout and quantities</h3>')
    img = _repair_layout_png(gpkg, lid)
    if img:
        parts.append(f'<figure class="wide"><img src="{img}" alt="repair layout">'
                     f"<figcaption>{name}: repair layout ({int(info.get('repairs') or 0)} "
                     "repairs)</figcaption></figure>")
    parts.append("<h4>Repair list</h4>")
    parts.append(_repair_list(gpkg.get(f"{lid}_repairs"), units))
    parts.append("<h4>Quantities</h4>")
    parts.append(_quantities(man.get("schedule") or [], lid))
    zrows = [{"zone": z.get("zone"), "treatment": z.get("treatment"), "bid_item": z.get("bid_item"),
              "area": float(units.area_from_m2(z.get("area_m2") or 0.0))}
             for z in info.get("zones") or []]
    if zrows:
        parts.append("<h4>Zones</h4>")
        parts.append(_table(zrows, [("zone", "zone"), ("treatment", "treatment"),
                                    ("bid_item", "bid item"), ("area", f"area ({units.area})")]))
    parts.append('<h3 class="qa">QA summary</h3>')
    qrows = [r for r in (man.get("qa") or {}).get("summary") or [] if str(r.get("level_id")) == lid]
    parts.append(_table(qrows, [("survey_id", "survey"), ("rule", "rule"),
                                ("severity", "severity"), ("count", "findings")]))
    parts.append("</section>")
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


_CSS = """
@page { size: %(size)s; margin: 16mm 14mm 26mm 14mm;
  @bottom-left { content: element(gcfooter); width: 80%%; }
  @bottom-right { content: "page " counter(page) " of " counter(pages); font: 8pt sans-serif; } }
body { font: 10pt/1.35 sans-serif; color: #111; }
h1 { font-size: 17pt; margin: 0 0 4pt }
h2 { font-size: 14pt; border-bottom: 1px solid #555; margin-top: 14pt }
h3 { font-size: 11.5pt; margin: 10pt 0 4pt } h4 { font-size: 10pt; margin: 6pt 0 2pt }
h2, h3, h4 { page-break-after: avoid; break-after: avoid }
section.level, section.site { page-break-before: always; }
table { border-collapse: collapse; margin: 4pt 0 8pt; font-size: 8.5pt; }
th, td { border: 1px solid #999; padding: 2pt 4pt; text-align: left; vertical-align: top }
td.num { text-align: right } th { background: #eee } tr { page-break-inside: avoid }
figure { margin: 4pt 0; page-break-inside: avoid; display: inline-block; width: 48%%;
  vertical-align: top } figure img { width: 100%%; } figcaption { font-size: 8pt; color: #333 }
figure.wide { display: block; width: 75%%; }
.figs { orphans: 1; widows: 1 }
.cols { display: flex; flex-wrap: wrap; gap: 0 12pt } .col { flex: 0 0 auto }
.gc-footer { position: running(gcfooter); font: 7pt/1.2 sans-serif; color: #333; }
.cautions li { margin-bottom: 3pt } .none { color: #666; font-style: italic }
.meta td:first-child { font-weight: bold }
ul.statements { padding-left: 14pt; margin: 2pt 0 4pt } ul.statements li { margin-bottom: 4pt }
.src { font-size: 7.5pt; color: #444; margin: 1pt 0 }
ul.corr { margin: 0; padding-left: 10pt } ul.corr li { margin-bottom: 2pt }
table.params td { white-space: nowrap }
nav.toc ol { padding-left: 16pt; margin: 2pt 0 } nav.toc a { color: #114; text-decoration: none }
nav.toc a::after { content: leader('.') target-counter(attr(href), page); }
nav.toc h2, section.cautions h2 { margin-top: 8pt }
ol.cautions { font-size: 9pt; line-height: 1.25 }
table { page-break-inside: avoid }
table.repairs, table.surveys, table.params { page-break-inside: auto }
table.quantities td.c-item, table.repairs td { white-space: nowrap }
table.surveys { width: 100%% } table.surveys tbody { page-break-inside: avoid }
table.surveys tr.corr td { border-top: none; padding-left: 12pt }
table.surveys tr.survey td { border-bottom: none; font-weight: bold }
"""


def build_report_html(run_dir: str | Path, manifest: dict[str, Any] | None = None) -> str:
    """Build the report of an output folder; return the HTML text (images as data URLs).

    Parameters
    ----------
    run_dir : str or Path
        Output folder of a run.
    manifest : dict, optional
        The run manifest; read from ``run_dir/run.json`` when omitted.

    Raises
    ------
    ExportError
        No readable ``run.json``, or ``survey.gpkg`` cannot be read.
    """
    from geo_corrosion.units import report_units

    run_dir = Path(run_dir)
    man = manifest if manifest is not None else read_run(run_dir)
    site = man.get("site") or {}
    system = str(site.get("report_units", "metric"))
    units = report_units(system)
    gpkg = _Gpkg(run_dir)
    title = _e(site.get("name", "survey"))
    cautions = man.get("cautions") or list(CAUTIONS)
    levels = man.get("levels") or {}
    meta = [{"k": "owner", "v": site.get("owner")}, {"k": "site CRS", "v": site.get("crs")},
            {"k": "reporting units", "v": system}, {"k": "site file", "v": site.get("site_file")},
            {"k": "run created (UTC)", "v": man.get("created_utc")},
            {"k": "geo_corrosion", "v": (man.get("versions") or {}).get("geo_corrosion")}]
    toc = [("cautions", "Cautions")]
    toc += [(f"level-{lid}", f"Level {lid}: {info.get('name') or lid}")
            for lid, info in levels.items()]
    toc += [("quantities", "Quantities, all levels"), ("methods", "Methods and sources"),
            ("parameters", "Parameters of the run"), ("inputs", "Surveys and corrections")]
    parts = [
        "<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\">",
        f"<title>{title}: corrosion condition survey</title>",
        f"<style>{_CSS % {'size': page_size(system)}}</style></head><body>",
        f'<div class="gc-footer">{_e(SHORT_CAUTION)}</div>',
        f'<header><h1>{title}</h1><p>Corrosion condition survey: maps, statistics, repair '
        "layout and quantities (estimates for bidding).</p>",
        _table(meta, [("k", "item"), ("v", "value")], cls="meta"),
        '<nav class="toc"><h2>Contents</h2><ol>'
        + "".join(f'<li><a href="#{_e(a)}">{_e(t)}</a></li>' for a, t in toc) + "</ol></nav>",
        '<section class="cautions" id="cautions"><h2>Cautions</h2><ol class="cautions">'
        + "".join(f"<li>{_e(c)}</li>" for c in cautions) + "</ol></section></header>",
    ]
    for lid, info in levels.items():
        parts.append(_level_section(run_dir, str(lid), info, man, units, gpkg))
    parts.append('<section class="site" id="quantities"><h2>Quantities, all levels</h2>')
    parts.append(_quantities(man.get("schedule") or [], "ALL"))
    parts.append("<p>Repair areas and quantities are estimates for bidding; final removal "
                 "limits are set in the field by sounding.</p></section>")
    parts.append('<section class="site" id="methods"><h2>Methods and sources</h2>')
    parts.append(_table([{"m": m, "d": d, "s": s} for m, d, s in METHODS],
                        [("m", "step"), ("d", "method"), ("s", "source")]))
    parts.append("<p>The full description, with the status of each source (sourced, from "
                 "memory, common practice), is docs/methods.md of geo_corrosion.</p></section>")
    parts.append('<section class="site" id="parameters"><h2>Parameters of the run</h2>')
    parts.append(_parameters(man.get("parameters") or {}, system))
    parts.append('<p class="src">Units from the key suffix; lengths are held in metres '
                 "(1 ft = 0.3048 m, 1 in = 25.4 mm).</p>")
    surveys = man.get("surveys") or []
    parts.append('<h2 id="inputs">Surveys and corrections</h2>')
    parts.append(_surveys_table(surveys))
    warns = man.get("warnings") or []
    if warns:
        parts.append('<h2 id="notes">Notes of the run</h2><ul>' +
                     "".join(f"<li>{_e(w)}</li>" for w in warns) + "</ul>")
    parts.append("</section></body></html>")
    return "\n".join(parts)


def _write(run_dir: Path, man: dict[str, Any], weasyprint: ModuleType | None) -> list[Path]:
    if weasyprint is not None and man.get("warnings"):
        # a rebuild with pango installed: the run's note about the missing PDF is outdated
        man = {**man, "warnings": [w for w in man["warnings"]
                                   if not str(w).startswith(_NO_PDF_NOTE)]}
    text = build_report_html(run_dir, man)
    out = [atomic_write(run_dir / REPORT_HTML,
                        lambda tmp: tmp.write_text(text, encoding="utf-8"), what="report")]
    if weasyprint is not None:
        logging.getLogger("weasyprint").setLevel(logging.ERROR)
        logging.getLogger("fontTools").setLevel(logging.ERROR)

        def _pdf(tmp: Path) -> None:
            weasyprint.HTML(string=text, base_url=str(run_dir)).write_pdf(str(tmp))

        out.append(atomic_write(run_dir / REPORT_PDF, _pdf, what="PDF report"))
    return out


def write_report(run_dir: str | Path, manifest: dict[str, Any] | None = None, *,
                 pdf: bool = True) -> list[Path]:
    """Write ``report.html`` (and ``report.pdf``) into ``run_dir`` atomically.

    Parameters
    ----------
    run_dir : str or Path
        Output folder of a run.
    manifest : dict, optional
        The run manifest; read from ``run_dir/run.json`` when omitted.
    pdf : bool
        Also write ``report.pdf`` (needs WeasyPrint and pango).

    Raises
    ------
    ExportError
        No ``run.json``, or the PDF fails.
    PdfUnavailableError
        ``pdf`` is true and WeasyPrint or pango cannot be loaded (the message says what
        to install); nothing is written then.
    """
    run_dir = Path(run_dir)
    man = manifest if manifest is not None else read_run(run_dir)
    return _write(run_dir, man, _load_weasyprint() if pdf else None)


class ReportExporter(Exporter):
    """Write ``report.html`` and ``report.pdf`` from the files the other exporters wrote.

    Without WeasyPrint or pango, only ``report.html`` is written and a note is added to
    the run's warnings; the run does not fail for that.
    """

    name: ClassVar[str] = "report"
    description: ClassVar[str] = "the survey report as HTML and PDF (report.html, report.pdf)"

    def export(self, result: RunResult, out_dir: Path) -> list[Path]:
        """Write the report (needs ``plots/`` and ``survey.gpkg`` in ``out_dir``)."""
        try:
            weasyprint: ModuleType | None = _load_weasyprint()
        except PdfUnavailableError as err:
            note = (f"{_NO_PDF_NOTE}: WeasyPrint cannot be loaded ({err.reason}); "
                    f"install WeasyPrint and pango ({PDF_INSTALL}), then run "
                    "`geo-corrosion report RUN_DIR`")
            log.warning("%s", note)
            result.warnings.append(note)
            weasyprint = None
        return _write(Path(out_dir), result_manifest(result), weasyprint)

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

import dataclasses
import importlib
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
from geo_corrosion.exporters._html import png_data_url
from geo_corrosion.exporters.base import Exporter
from geo_corrosion.exporters.report.text import (
    _condition_block,
    _e,
    _parameters,
    _surveys_table,
    _table,
    parameter_unit,
    points_class_table,
    points_sentences,
    sources_and_assumptions,
    summarize_correction,
)
from geo_corrosion.exporters.runfiles import RunLayers
from geo_corrosion.model.manifest import (
    LevelRecord,
    Manifest,
    ScheduleRow,
    read_run,
    result_manifest,
)

if TYPE_CHECKING:
    import geopandas as gpd
    import pandas as pd

    from geo_corrosion.model.results import RunResult
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

#: Methods in brief, with their published sources, cited by bibliography key (the full text
#: with the status of each source is docs/methods.md of the geo_corrosion distribution).
METHODS: tuple[tuple[str, str, str], ...] = (
    ("Corrections", "Potentials converted to the copper/copper-sulfate electrode (CSE) and "
     "corrected for electrode temperature (0.9 mV/degC); resistivity referred to 20 degC by an "
     "Arrhenius factor.", "[IJCorros-2010 Table 2; ASTM-C876-22a §5.1.1.2; Coyle-Spragg-2019] "
     "(activation energy)"),
    ("QA", "Plausible ranges, adjacent-reading differences over 150 mV, repeatability and "
     "reproducibility of repeated points, readings outside the slab or in exclusions.",
     "[ASTM-C876-91 §5.1, from memory; ASTM-C876-15 precision section, from memory]"),
    ("Surfaces", "Ordinary kriging in a local neighbourhood; variogram models fitted by "
     "weighted least squares and chosen by leave-one-out cross-validation; resistivity and "
     "rate kriged in logarithms.", "[Cressie-1985] WLS criterion; pykrige as reference "
     "library"),
    ("Class sets", "Half-cell potential classes after ASTM C876 (< -350 mV high, -350 to "
     "-200 mV uncertain, > -200 mV low probability of corrosion); resistivity and corrosion "
     "rate classes after RILEM TC 154.", "[ASTM-C876-91 App. X1, from memory]; "
     "[RILEM-TC154-2000, from memory; Andrade-Alonso-2004, from memory]"),
    ("Probability maps", "Probability that the value is beyond the class threshold and the "
     "area beyond it with a 90 % interval, from conditional simulations of the Gaussian field "
     "(conditioning by kriging, the nugget taken as measurement error, areas at sub-cell "
     "resolution; the number of realisations is stated with each area), or from the kriging "
     "errors when [run].interval_method is the separable approximation; a two-component "
     "mixture for the site threshold.",
     "[Journel-Huijbregts-1978 ch. VII, from memory; Chiles-Delfiner-2012 §7.3.1, from memory] "
     "[Wood-Chan-1994; Dietrich-Newsam-1997]; "
     "RILEM TC 154 statistical evaluation [Gulikers-Elsener-2008]"),
    ("Repair layout", "Sounded delaminations and spalls enlarged by the margin, merged, squared "
     "to saw-cut rectangles aligned with the grid, clipped to the slab; depth class from the "
     "kriged cover; undercut clearance max(3/4 in, 1/4 in + largest aggregate).",
     "[ICRI-310.1R-2008; UFGS-03931 §3.3.1.4]"),
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
        # import_module gives a typed module; `import weasyprint` (untyped package) is Any
        return importlib.import_module("weasyprint")
    except (ImportError, OSError) as err:
        raise PdfUnavailableError(f"{type(err).__name__}: {err}") from err


def page_size(system: str) -> str:
    """CSS page size of a reporting unit system: ``letter`` for ``us``, ``A4`` otherwise."""
    return "letter" if system == "us" else "A4"


def _data_url(path: Path) -> str:
    return png_data_url(path.read_bytes())


def _figure(path: Path, caption: str) -> str:
    if not path.is_file():
        return ""
    return (f'<figure><img src="{_data_url(path)}" alt="{_e(caption)}">'
            f"<figcaption>{_e(caption)}</figcaption></figure>")


# --------------------------------------------------------------------------- survey.gpkg


def _repair_layout_png(gpkg: RunLayers, lid: str) -> str | None:
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
    joints = gpkg.get(f"{lid}_joints")
    joint_note = ""
    if joints is not None and len(joints):
        from geo_corrosion.condition.plots import JOINT_STYLES

        brk = (joints["breaks_continuity"].astype(bool) if "breaks_continuity" in joints.columns
               else [False] * len(joints))
        for geom, b in zip(joints.geometry, brk, strict=True):
            st = JOINT_STYLES[bool(b)]
            for part in getattr(geom, "geoms", [geom]):
                xy = list(part.coords)
                ax.plot([p[0] for p in xy], [p[1] for p in xy], color=st["color"],
                        lw=st["lw"], linestyle=st["ls"])
        joint_note = ("\njoints dashed (thick purple: expansion/isolation, the mat is not "
                      "continuous across it)")
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
                 f"delaminations (vermillion), spalls (pink){joint_note}", fontsize=7)
    fig.text(0.01, 0.005, SHORT_CAUTION, fontsize=6, wrap=True)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", bbox_inches="tight")
    plt.close(fig)
    return png_data_url(buf.getvalue())


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


def _quantities(schedule: tuple[ScheduleRow, ...], lid: str | None) -> str:
    import pandas as pd

    from geo_corrosion.quantities import bid_decimals, schedule_table

    if not schedule:
        return '<p class="none">no quantities</p>'
    t: pd.DataFrame = schedule_table(pd.DataFrame(list(schedule)))
    if lid is not None:
        t = t[t["level_id"].astype(str) == lid]
    rows = []
    for r in t.to_dict("records"):
        # as in quantities.csv: the bid quantities with their unit's decimals
        fmt = f"{{:,.{bid_decimals(str(r.get('unit')))}f}}"
        totals = {c: fmt.format(float(r[c])) for c in ("base", "contingency", "total")}
        rows.append({**{str(k): v for k, v in r.items()}, **totals})
    return _table(rows, [("level_id", "level"), ("item", "item"), ("description", "description"),
                         ("unit", "unit"), ("base", "base"), ("contingency", "contingency"),
                         ("total", "total")], cls="quantities",
                  num=("base", "contingency", "total"))


# --------------------------------------------------------------------------- sections


def _joints_note(gpkg: RunLayers, lid: str, kinds: Mapping[str, Any]) -> str:
    """Say which joints break the mat's continuity and how the surfaces treated them."""
    j = gpkg.get(f"{lid}_joints")
    if j is None or not len(j) or "breaks_continuity" not in j.columns:
        return ""
    brk = j["breaks_continuity"].astype(bool)
    if not brk.any():
        return ""
    types = ", ".join(sorted({str(t) for t in j.loc[brk, "joint_type"]}))
    split = [k.replace("_", " ") for k, v in kinds.items()
             if v.surface is not None
             and any("continuity regions" in n for n in v.surface.variogram.notes)]
    how = (f" The {', '.join(split)} surface{'s were' if len(split) > 1 else ' was'} kriged in "
           "each region from that region's readings only; no contour crosses such a joint."
           if split else "")
    return (f'<p class="joints">{int(brk.sum())} joint line(s) of type {_e(types)} break the '
            "electrical continuity of the reinforcing mat and split the deck into continuity "
            f"regions (drawn thick and dashed).{_e(how)} A half-cell reading needs a connection "
            "to the mat it is on [ACI-222R-19, from memory; ASTM-C876-22a].</p>")


def _level_section(run_dir: Path, lid: str, info: LevelRecord, man: Manifest,
                   units: ReportUnits, gpkg: RunLayers) -> str:
    plots = run_dir / "plots"
    name = _e(info.name or lid)
    parts = [f'<section class="level" id="level-{_e(lid)}"><h2>Level {_e(lid)}: {name}</h2>']
    kinds = info.kinds
    # statistics of the readings
    srows = []
    for k, v in kinds.items():
        st = v.statistics
        srows.append({"kind": k, "unit": v.unit, "readings": v.readings,
                      "mapped": v.readings_mapped, **{q: st.get(q) for q in
                      ("mean", "std", "p10", "median", "p90")}})
    parts.append('<h3 class="stats">Statistics of the readings</h3>')
    parts.append(_table(srows, [("kind", "kind"), ("unit", "unit"), ("readings", "readings"),
                                ("mapped", "mapped"), ("mean", "mean"), ("std", "std. dev."),
                                ("p10", "10 %"), ("median", "median"), ("p90", "90 %")]))
    parts.append(points_sentences(kinds))
    parts.append('<h3 class="classes">Class areas</h3><div class="cols">')
    for k, v in kinds.items():
        rows = [{"class": r.class_name, "area": r.area_report,
                 "share": 100 * float(r.share_of_deck)}
                for r in v.class_areas or ()]
        if rows:
            parts.append(f'<div class="col"><h4>{_e(k.replace("_", " "))}</h4>')
            parts.append(_table(rows, [("class", "class"), ("area", f"area ({units.area})"),
                                       ("share", "share of deck (%)")]) + "</div>")
        parts.append(points_class_table(k, v))
    parts.append("</div>")
    parts.append(_condition_block(info, units))
    parts.append('<h3 class="maps">Maps</h3>')
    parts.append(_joints_note(gpkg, lid, kinds))
    parts.append('<div class="figs">')
    for k, v in kinds.items():
        shown = " of the readings (points, no surface)" if v.representation == "points" else ""
        parts.append(_figure(plots / f"{lid}_{k}_classes.png", f"{info.name}: "
                             f"{k.replace('_', ' ')} classes{shown}"))
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
                     f"<figcaption>{name}: repair layout ({info.repairs} "
                     "repairs)</figcaption></figure>")
    parts.append("<h4>Repair list</h4>")
    parts.append(_repair_list(gpkg.get(f"{lid}_repairs"), units))
    parts.append("<h4>Quantities</h4>")
    parts.append(_quantities(man.schedule, lid))
    zrows = [{"zone": z.zone, "treatment": z.treatment, "bid_item": z.bid_item,
              "area": float(units.area_from_m2(z.area_m2))}
             for z in info.zones]
    if zrows:
        parts.append("<h4>Zones</h4>")
        parts.append(_table(zrows, [("zone", "zone"), ("treatment", "treatment"),
                                    ("bid_item", "bid item"), ("area", f"area ({units.area})")]))
    parts.append('<h3 class="qa">QA summary</h3>')
    qrows = [{"survey_id": r.survey_id, "rule": r.rule, "severity": r.severity, "count": r.count}
             for r in man.qa.summary if r.level_id == lid]
    parts.append(_table(qrows, [("survey_id", "survey"), ("rule", "rule"),
                                ("severity", "severity"), ("count", "findings")]))
    parts.append("</section>")
    return "\n".join(parts)


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


def build_report_html(run_dir: str | Path, manifest: Manifest | None = None) -> str:
    """Build the report of an output folder; return the HTML text (images as data URLs).

    Parameters
    ----------
    run_dir : str or Path
        Output folder of a run.
    manifest : Manifest, optional
        The run manifest; read from ``run_dir/run.json`` when omitted.

    Raises
    ------
    ExportError
        No readable ``run.json``, or ``survey.gpkg`` cannot be read.
    """
    from geo_corrosion.units import report_units

    run_dir = Path(run_dir)
    man = manifest if manifest is not None else read_run(run_dir)
    site = man.site
    system = site.report_units
    units = report_units(system)
    gpkg = RunLayers(run_dir)
    title = _e(site.name)
    cautions = man.cautions or list(CAUTIONS)
    levels = man.levels
    meta: list[dict[str, Any]] = [{"k": "owner", "v": site.owner}, {"k": "site CRS", "v": site.crs},
            {"k": "reporting units", "v": system}, {"k": "site file", "v": site.site_file},
            {"k": "run created (UTC)", "v": man.created_utc},
            {"k": "geo_corrosion", "v": man.versions.get("geo_corrosion")}]
    toc = [("cautions", "Cautions")]
    toc += [(f"level-{lid}", f"Level {lid}: {info.name or lid}")
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
    parts.append(_quantities(man.schedule, "ALL"))
    parts.append("<p>Repair areas and quantities are estimates for bidding; final removal "
                 "limits are set in the field by sounding.</p></section>")
    parts.append('<section class="site" id="methods"><h2>Methods and sources</h2>')
    parts.append(_table([{"m": m, "d": d, "s": s} for m, d, s in METHODS],
                        [("m", "step"), ("d", "method"), ("s", "source")]))
    parts.append(sources_and_assumptions([s for _m, _d, s in METHODS], cautions, man))
    parts.append("<p>The full description, with the status of each source (sourced, from "
                 "memory, common practice), is docs/methods.md of geo_corrosion; the sources "
                 "are in its docs/bibliography.md.</p></section>")
    parts.append('<section class="site" id="parameters"><h2>Parameters of the run</h2>')
    parts.append(_parameters(dataclasses.asdict(man.parameters), system))
    parts.append('<p class="src">Units from the key suffix; lengths are held in metres '
                 "(1 ft = 0.3048 m, 1 in = 25.4 mm).</p>")
    surveys = man.surveys
    parts.append('<h2 id="inputs">Surveys and corrections</h2>')
    parts.append(_surveys_table(surveys))
    warns = man.warnings
    if warns:
        parts.append('<h2 id="notes">Notes of the run</h2><ul>' +
                     "".join(f"<li>{_e(w)}</li>" for w in warns) + "</ul>")
    parts.append("</section></body></html>")
    return "\n".join(parts)


def _write(run_dir: Path, man: Manifest, weasyprint: ModuleType | None) -> list[Path]:
    if weasyprint is not None and man.warnings:
        # a rebuild with pango installed: the run's note about the missing PDF is outdated
        man = dataclasses.replace(man, warnings=tuple(w for w in man.warnings
                                                      if not w.startswith(_NO_PDF_NOTE)))
    text = build_report_html(run_dir, man)
    pdf: Path | None = None
    if weasyprint is not None:
        # the PDF first: if it fails, report.html is not replaced either, so the two
        # never disagree
        logging.getLogger("weasyprint").setLevel(logging.ERROR)
        logging.getLogger("fontTools").setLevel(logging.ERROR)

        def _pdf(tmp: Path) -> None:
            weasyprint.HTML(string=text, base_url=str(run_dir)).write_pdf(str(tmp))

        pdf = atomic_write(run_dir / REPORT_PDF, _pdf, what="PDF report")
    out = [atomic_write(run_dir / REPORT_HTML,
                        lambda tmp: tmp.write_text(text, encoding="utf-8"), what="report")]
    return out + ([pdf] if pdf is not None else [])


def write_report(run_dir: str | Path, manifest: Manifest | None = None, *,
                 pdf: bool = True) -> list[Path]:
    """Write ``report.html`` (and ``report.pdf``) into ``run_dir`` atomically.

    Parameters
    ----------
    run_dir : str or Path
        Output folder of a run.
    manifest : Manifest, optional
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
    run_last: ClassVar[bool] = True
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

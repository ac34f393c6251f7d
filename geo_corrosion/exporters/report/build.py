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
import dataclasses
import hashlib
import importlib
import io
import logging
import re
import struct
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
    _table,
    class_name_label,
    kind_label,
    methods_per_survey,
    owner_text,
    parameter_rows,
    parameter_unit,
    points_class_table,
    points_sentences,
    qa_rows,
    quantity_text,
    readable_citations,
    sources_and_assumptions,
    statistics_rows,
    summarize_correction,
    survey_tables,
    title_block,
    unmapped_sentences,
    variogram_table,
)
from geo_corrosion.exporters.runfiles import RunLayers
from geo_corrosion.model.manifest import (
    LevelRecord,
    Manifest,
    ScheduleRow,
    read_run,
    result_manifest,
)
from geo_corrosion.vocabulary import fmt_area, fmt_depth, humanise, label, unit_label

if TYPE_CHECKING:
    import geopandas as gpd
    import pandas as pd

    from geo_corrosion.crs import LocalGrid
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
    ("Corrections", "Potentials read with another reference electrode converted to the "
     "copper/copper-sulfate electrode (CSE); potentials corrected for electrode temperature "
     "where the electrode has a temperature coefficient; resistivity referred to 20 °C by an "
     "Arrhenius factor. What was applied to each survey is in the table below.",
     "[IJCorros-2010 Table 2; ASTM-C876-22a §5.1.1.2; Coyle-Spragg-2019] (activation energy)"),
    ("Quality checks", "Plausible ranges, adjacent-reading differences over 150 mV, "
     "repeatability and reproducibility of repeated points, readings outside the slab or in "
     "excluded areas.",
     "[ASTM-C876-91 §5.1, from memory; ASTM-C876-15 precision section, from memory]"),
    ("Surfaces", "Ordinary kriging in a local neighbourhood; variogram models fitted by "
     "weighted least squares and chosen by leave-one-out cross-validation; resistivity and "
     "rate kriged in logarithms.", "[Cressie-1985] weighted least squares; pykrige as "
     "reference library"),
    ("Classes", "Half-cell potential classes after ASTM C876 (more negative than -350 mV vs "
     "CSE: high, -350 to -200 mV vs CSE: uncertain, less negative than -200 mV vs CSE: low "
     "probability of corrosion); resistivity and corrosion-rate classes after RILEM TC 154, "
     "named by corrosion risk.", "[ASTM-C876-91 App. X1, from memory]; "
     "[RILEM-TC154-2000, from memory; Andrade-Alonso-2004, from memory]"),
    ("Probability maps", "Probability that the value is beyond the class threshold and the "
     "area beyond it with a 90 % interval, from conditional simulations of the Gaussian field "
     "(conditioning by kriging, the nugget taken as measurement error, areas at sub-cell "
     "resolution; the number of realisations is stated with each area), or from the kriging "
     "errors when the site file asks for the faster separable approximation; a two-component "
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


def _figure(path: Path, caption: str, *, wide: bool = False) -> str:
    if not path.is_file():
        return ""
    cls = ' class="map"' if wide else ""
    return (f'<figure{cls}><img src="{_data_url(path)}" alt="{_e(caption)}">'
            f"<figcaption>{_e(caption)}</figcaption></figure>")


# --------------------------------------------------------------------------- survey.gpkg


def _local_grid(info: LevelRecord) -> LocalGrid:
    """Return the level's survey grid from its georeference in run.json."""
    from geo_corrosion.crs import LocalGrid

    g = info.georeference
    return LocalGrid(g.local_unit, g.crs_unit, float(g.rotation_deg), float(g.scale),
                     float(g.origin_site[0]), float(g.origin_site[1]))


def _plan_size(bounds: tuple[float, float, float, float], width_in: float = 7.2
               ) -> tuple[float, float]:
    """Figure size (inches) that follows the deck's aspect ratio, within a page."""
    x0, y0, x1, y1 = bounds
    aspect = (y1 - y0) / (x1 - x0) if x1 > x0 else 1.0
    return width_in, float(min(max(width_in * aspect + 1.1, 2.4), 8.6))


def _repair_layout_png(gpkg: RunLayers, lid: str, info: LevelRecord) -> str | None:
    """Draw the level's slab, sounding and repairs in its survey grid; return a PNG data URL.

    The plan is drawn in the level's local survey grid (the axes of the deck, in its plan
    unit), not in the site CRS, so it reads like the survey drawings; the figure follows
    the deck's aspect ratio and the repair numbers are printed at 8 pt.
    """
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    slab = gpkg.get(f"{lid}_slab")
    if slab is None:
        return None
    grid = _local_grid(info)

    def local(gdf: gpd.GeoDataFrame | None) -> gpd.GeoSeries | None:
        if gdf is None or not len(gdf):
            return None
        import geopandas as gpd

        return gpd.GeoSeries([grid.geom_to_local(g) for g in gdf.geometry])

    sl = local(slab)
    assert sl is not None
    fig, ax = plt.subplots(figsize=_plan_size(tuple(sl.total_bounds)), dpi=150)
    # geopandas' GeoSeries.plot ends with pyplot.draw(), a whole draw of the figure per
    # layer; the figure is drawn once, by savefig below (same pixels)
    fig.canvas.draw_idle = lambda *_a, **_k: None  # type: ignore[method-assign]
    sl.boundary.plot(ax=ax, color="#303030", linewidth=1.2)
    for what, kw in (("exclusions", {"color": "#BBBBBB"}),
                     ("delaminations", {"color": "#D55E00", "alpha": 0.6}),
                     ("spalls", {"color": "#CC79A7", "alpha": 0.6})):
        g = local(gpkg.get(f"{lid}_{what}"))
        if g is not None:
            g.plot(ax=ax, **kw)
    joints = local(gpkg.get(f"{lid}_joints"))
    raw_joints = gpkg.get(f"{lid}_joints")
    if joints is not None and raw_joints is not None:
        from geo_corrosion.condition.plots import JOINT_STYLES

        brk = (raw_joints["breaks_continuity"].astype(bool)
               if "breaks_continuity" in raw_joints.columns else [False] * len(raw_joints))
        for geom, b in zip(joints, brk, strict=True):
            st = JOINT_STYLES[bool(b)]
            for part in getattr(geom, "geoms", [geom]):
                xy = list(part.coords)
                ax.plot([p[0] for p in xy], [p[1] for p in xy], color=st["color"],
                        lw=st["lw"], linestyle=st["ls"])
    rep = gpkg.get(f"{lid}_repairs")
    rl = local(rep)
    if rep is not None and rl is not None:
        rl.boundary.plot(ax=ax, color="#0072B2", linewidth=1.0)
    ax.set_aspect("equal")
    if rep is not None and rl is not None:
        _label_repairs(fig, ax, rep, rl, sl, gpkg, lid, local, joints)
    unit = info.georeference.local_unit
    ax.set_xlabel(f"Survey grid x ({unit})", fontsize=8)
    ax.set_ylabel(f"Survey grid y ({unit})", fontsize=8)
    ax.tick_params(labelsize=7)
    ax.set_title("Repair layout: saw-cut outlines (blue, numbered as in the repair list), "
                 "delaminations (vermillion), spalls (pink), joints (dashed; thick purple "
                 "where the mat is not continuous across it), excluded areas (grey)",
                 fontsize=7.5, wrap=True)
    fig.text(0.01, 0.005, SHORT_CAUTION, fontsize=6, wrap=True)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", bbox_inches="tight")
    plt.close(fig)
    # opaque RGB, as the plots (figure_png): the PDF takes it without compressing it again
    from PIL import Image

    rgb = io.BytesIO()
    with Image.open(io.BytesIO(buf.getvalue())) as im:
        im.convert("RGB").save(rgb, format="png", dpi=im.info.get("dpi", (150, 150)),
                               pnginfo=_png_text(im))
    return png_data_url(rgb.getvalue())


def _png_text(im: Any) -> Any:
    """Return the text chunks of a PNG (matplotlib's "Software") to write them again."""
    from PIL import PngImagePlugin

    info = PngImagePlugin.PngInfo()
    for k, v in getattr(im, "text", {}).items():
        info.add_text(k, v)
    return info


def _label_repairs(fig: Any, ax: Any, rep: gpd.GeoDataFrame, rl: gpd.GeoSeries,
                   sl: gpd.GeoSeries, gpkg: RunLayers, lid: str, local: Any,
                   joints: gpd.GeoSeries | None) -> None:
    """Write the repair numbers at 8 pt, so that no two touch and none sits on an outline.

    The numbers are placed with the drawing sheets' label search
    (:func:`geo_corrosion.exporters.sheet.place_labels`), in the plan's units: two repairs
    split by a joint no longer print "1" and "2" side by side where they read as "12".
    """
    import matplotlib.patheffects as pe
    from shapely.geometry import box
    from shapely.ops import nearest_points

    from geo_corrosion.exporters.sheet import Label, place_labels

    x0, y0, x1, y1 = (float(v) for v in sl.total_bounds)
    pad = 0.08 * max(x1 - x0, y1 - y0)
    ax.set_xlim(x0 - pad, x1 + pad)
    ax.set_ylim(y0 - pad, y1 + pad)
    fig.canvas.draw()  # settles the equal-aspect box, so that a point is a known length
    ppu = abs(ax.transData.transform((1.0, 0.0))[0] - ax.transData.transform((0.0, 0.0))[0])
    h = 8 / 72 * fig.dpi / ppu if ppu > 0 else (x1 - x0) / 60
    hard = list(rl)
    for what in ("delaminations", "spalls"):
        g = local(gpkg.get(f"{lid}_{what}"))
        if g is not None:
            hard.extend(g)
    soft = list(sl.boundary) + (list(joints) if joints is not None else [])
    labels = [Label(str(rid), geom,
                    (str(rid).split("-")[-1].lstrip("R").lstrip("0") or "0",))
              for rid, geom in zip(rep["repair_id"], rl, strict=True)]
    halo = [pe.withStroke(linewidth=2.2, foreground="white")]
    within = box(x0 - pad + h / 2, y0 - pad + h / 2, x1 + pad - h / 2, y1 + pad - h / 2)
    pl_shape = {lab.key: lab.shape for lab in labels}
    for pl in place_labels(labels, h=h, hard=hard, soft=soft, within=within):
        ax.text(pl.x, pl.y, pl.lines[0], fontsize=8, color="#003F66", ha="left",
                va="baseline", path_effects=halo)
        # a leader for every number not touching its outline: which small repair a number
        # belongs to must never be a guess
        if pl.box.distance(pl_shape[pl.key]) > 0.15 * h:
            a, b = nearest_points(pl.box, pl_shape[pl.key])
            ax.plot([a.x, b.x], [a.y, b.y], color="#003F66", linewidth=0.5)


def _repair_list(rep: gpd.GeoDataFrame | None, units: ReportUnits) -> str:
    """List the repairs of a level: number, zone, depth class, bid item, depth and area."""
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
        zone = r.get("zone")
        rows.append({
            "repair_id": r.get("repair_id"),
            "zone": label(str(zone), humanise(str(zone))) if zone is not None else "",
            "depth_class": label(str(r.get("depth_class"))), "bid_item": item,
            "depth": fmt_depth(r.get("depth_mm"), units, unit=False),
            "area": fmt_area(r.get("area_m2") or 0.0, units, unit=False)})
    table_cols = [("repair_id", "Repair")]
    if "zone" in cols:
        table_cols.append(("zone", "Zone"))
    table_cols += [("depth_class", "Depth class"), ("bid_item", "Bid item")]
    if "depth_mm" in cols:
        table_cols.append(("depth", f"Removal depth ({units.small})"))
    table_cols.append(("area", f"Area ({unit_label(units.area)})"))
    return _table(rows, table_cols, cls="repairs", num=("depth", "area"))


def _quantities(schedule: tuple[ScheduleRow, ...], lid: str | None) -> str:
    import pandas as pd

    from geo_corrosion.quantities import schedule_table

    if not schedule:
        return '<p class="none">no quantities</p>'
    t: pd.DataFrame = schedule_table(pd.DataFrame(list(schedule)))
    if lid is not None:
        t = t[t["level_id"].astype(str) == lid]
    rows = []
    for r in t.to_dict("records"):
        unit = str(r.get("unit"))
        totals = {c: quantity_text(r[c], unit) for c in ("base", "contingency", "total")}
        lv = str(r.get("level_id"))
        rows.append({**{str(k): v for k, v in r.items()}, **totals,
                     "level_id": "all levels" if lv == "ALL" else lv,
                     "unit": unit_label(unit)})
    return _table(rows, [("level_id", "Level"), ("item", "Item"), ("description", "Description"),
                         ("unit", "Unit"), ("base", "Base"), ("contingency", "Contingency"),
                         ("total", "Total")], cls="quantities",
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
    parts.append('<h3 class="stats">Statistics of the readings</h3>')
    srows, scols = statistics_rows(kinds, units)
    parts.append(_table(srows, scols, cls="stats",
                        num=("mean", "std", "p10", "median", "p90")))
    parts.append(points_sentences(kinds))
    parts.append(unmapped_sentences(kinds))
    parts.append('<h3 class="variogram">Variogram and cross-validation</h3>')
    parts.append(variogram_table(kinds, info.georeference.local_unit))
    parts.append('<h3 class="classes">Class areas</h3><div class="cols">')
    for k, v in kinds.items():
        names = [r.class_name for r in v.class_areas or ()]
        rows = [{"class": class_name_label(k, r.class_name, names),
                 "area": fmt_area(r.area_m2, units, unit=False),
                 "share": f"{100 * float(r.share_of_deck):.1f}"}
                for r in v.class_areas or ()]
        if rows:
            parts.append(f'<div class="col"><h4>{_e(kind_label(k))}</h4>')
            parts.append(_table(rows, [("class", "Class"),
                                       ("area", f"Area ({unit_label(units.area)})"),
                                       ("share", "Share of deck (%)")],
                                num=("area", "share")) + "</div>")
        parts.append(points_class_table(k, v))
    parts.append("</div>")
    parts.append(_condition_block(info, units))
    parts.append('<h3 class="maps">Maps</h3>')
    parts.append(_joints_note(gpkg, lid, kinds))
    parts.append('<div class="figs">')
    for k, v in kinds.items():
        shown = " of the readings (points, no surface)" if v.representation == "points" else ""
        parts.append(_figure(plots / f"{lid}_{k}_classes.png", f"{info.name}: "
                             f"{kind_label(k).lower()} classes{shown}", wide=True))
    parts.append('</div><h3 class="plots">Cumulative frequency and histograms</h3>'
                 '<div class="figs">')
    parts.append(_figure(plots / f"{lid}_potential_cumulative.png",
                         "cumulative frequency of potentials"))
    for k in kinds:
        parts.append(_figure(plots / f"{lid}_{k}_histogram.png",
                             f"histogram of {kind_label(k).lower()}"))
    parts.append(_figure(plots / f"{lid}_potential_vs_resistivity.png",
                         "kriged potential at resistivity readings"))
    parts.append("</div>")
    parts.append('<h3 class="repairs">Repair layout and quantities</h3>')
    img = _repair_layout_png(gpkg, lid, info)
    if img:
        parts.append(f'<figure class="plan"><img src="{img}" alt="repair layout">'
                     f"<figcaption>{name}: repair layout in the survey grid ({info.repairs} "
                     "repairs)</figcaption></figure>")
    parts.append("<h4>Repair list</h4>")
    parts.append(_repair_list(gpkg.get(f"{lid}_repairs"), units))
    parts.append("<h4>Quantities</h4>")
    parts.append(_quantities(man.schedule, lid))
    zrows = [{"zone": label(z.zone, humanise(z.zone)), "treatment": z.treatment,
              "bid_item": z.bid_item, "area": fmt_area(z.area_m2, units, unit=False)}
             for z in info.zones]
    if zrows:
        parts.append("<h4>Zones</h4>")
        parts.append(_table(zrows, [("zone", "Zone"), ("treatment", "Treatment"),
                                    ("bid_item", "Bid item"),
                                    ("area", f"Area ({unit_label(units.area)})")],
                            num=("area",)))
    parts.append('<h3 class="qa">Quality checks</h3>')
    parts.append(_table(qa_rows(man.qa.summary, lid),
                        [("survey_id", "Survey"), ("rule", "Check"),
                         ("severity", "Severity"), ("count", "Findings")]))
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
figure.map { display: block; width: 100%%; } figure.plan { display: block; width: 100%%; }
div.titleblock { display: flex; gap: 10pt; align-items: stretch; margin: 6pt 0 }
table.titleblock { flex: 1 1 auto; font-size: 9.5pt; margin: 0 }
table.titleblock th { width: 28%%; text-align: left } .blank { display: inline-block; width: 60mm }
div.sealbox { flex: 0 0 62mm; border: 1px solid #555; padding: 4pt; display: flex;
  flex-direction: column; }
div.seal { flex: 1 1 auto; min-height: 42mm; border: 1px dashed #888; text-align: center;
  padding: 3pt } .seal-label { font-size: 8pt; color: #555 } .seal-note { font-size: 8.5pt;
  margin-top: 14mm; color: #333 }
div.sign .sign-line { border-bottom: 1px solid #333; height: 9mm; font-size: 7.5pt;
  color: #555; display: flex; align-items: flex-end }
p.reading, p.unmapped { font-size: 8.5pt; margin: 2pt 0 } span.reconcile { display: block;
  font-size: 8.5pt; margin-top: 2pt }
p.subtitle { margin: 0 0 4pt }
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
    toc = [("cautions", "Cautions")]
    toc += [(f"level-{lid}", f"Level {lid}: {info.name or lid}")
            for lid, info in levels.items()]
    toc += [("quantities", "Quantities, all levels"), ("methods", "Methods and sources"),
            ("inputs", "Surveys and field conditions"), ("parameters", "Parameters of the run"),
            ("record", "Record of the run")]
    parts = [
        "<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\">",
        f"<title>{title}: corrosion condition survey</title>",
        f"<style>{_CSS % {'size': page_size(system)}}</style></head><body>",
        f'<div class="gc-footer">{_e(SHORT_CAUTION)}</div>',
        f'<header><h1>{title}</h1><p class="subtitle">Corrosion condition survey: maps, '
        "statistics, repair layout and quantities (estimates for bidding).</p>",
        title_block(site, units),
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
    parts.append(_table([{"m": m, "d": d, "s": readable_citations(s)} for m, d, s in METHODS],
                        [("m", "Step"), ("d", "Method"), ("s", "Source")]))
    parts.append("<h3>Corrections applied to each survey</h3>")
    parts.append(methods_per_survey(man.surveys))
    parts.append(sources_and_assumptions([s for _m, _d, s in METHODS], cautions, man))
    parts.append("</section>")
    level_names = {str(lid): str(info.name or lid) for lid, info in levels.items()}
    parts.append('<section class="site" id="inputs"><h2>Surveys and field conditions</h2>')
    parts.append(survey_tables(man.surveys, level_names, units))
    parts.append("</section>")
    parts.append('<section class="site" id="parameters"><h2>Parameters of the run</h2>')
    parts.append(_table(parameter_rows(dataclasses.asdict(man.parameters), units),
                        [("k", "Parameter"), ("v", "Value")], cls="params"))
    parts.append('<p class="src">Lengths in the reporting units (1 ft = 0.3048 m, '
                 "1 in = 25.4 mm exactly).</p>")
    parts.append('<h2 id="record">Record of the run</h2>')
    record: list[dict[str, Any]] = [{"k": "Site file", "v": site.site_file},
              {"k": "Site coordinate reference system", "v": site.crs},
              {"k": "Run created (UTC)", "v": man.created_utc},
              {"k": "geo-corrosion version", "v": man.versions.get("geo_corrosion")}]
    parts.append(_table(record, [("k", "Item"), ("v", "Value")], cls="meta"))
    warns = man.warnings
    if warns:
        parts.append('<h3 id="notes">Notes of the run</h3><ul>' +
                     "".join(f"<li>{_e(owner_text(w))}</li>" for w in warns) + "</ul>")
    parts.append("</section></body></html>")
    return "\n".join(parts)


_DATA_PNG = re.compile(r'src="(data:image/png;base64,[A-Za-z0-9+/=]+)"')


def _rgb_png_idat(png: bytes) -> bytes | None:
    """Return the compressed pixel data of an opaque 8-bit RGB PNG, or None for any other PNG.

    That data (the IDAT chunks, joined) is a zlib stream of PNG-filtered rows: what a PDF
    image takes as it is with ``/FlateDecode`` and ``/Predictor 15`` [ISO 32000-1 §7.4.4.4;
    PNG (ISO/IEC 15948) §11.2.2, §11.2.4].
    """
    if png[:8] != b"\x89PNG\r\n\x1a\n":
        return None
    pos, idat = 8, []
    while pos + 8 <= len(png):
        n, kind = struct.unpack(">I4s", png[pos:pos + 8])
        data = png[pos + 8:pos + 8 + n]
        if kind == b"IHDR":
            # bit depth 8, colour type 2 (RGB), deflate, adaptive filtering, not interlaced
            if data[8:13] != bytes((8, 2, 0, 0, 0)):
                return None
        elif kind in (b"tRNS", b"PLTE"):
            return None
        elif kind == b"IDAT":
            idat.append(data)
        pos += 12 + n
    return b"".join(idat) or None


def _png_cache(text: str) -> dict[str, Any]:
    """Return WeasyPrint's image cache holding the report's RGB PNGs, to be taken as they are.

    WeasyPrint decodes every PNG and compresses it again for the PDF (and for an RGBA PNG its
    colour and alpha apart); the figures are opaque RGB PNGs already
    (:func:`geo_corrosion.condition.plots.figure_png`), whose compressed rows a PDF image
    takes unchanged (:func:`_rgb_png_idat`): the same pixels, not compressed twice.  An image
    is keyed by its URL as WeasyPrint resolves it.  Should WeasyPrint's image class change,
    the cache stays empty and WeasyPrint reads the images itself (the same PDF, slower).
    """
    cache: dict[str, Any] = {}
    try:
        from PIL import Image
        from weasyprint import DEFAULT_OPTIONS
        from weasyprint.images import RasterImage
        from weasyprint.urls import iri_to_uri

        class _SamePng(RasterImage):  # type: ignore[misc]
            def _get_png_data(self, pillow_image: Any) -> bytes:  # noqa: ARG002
                return bytes(self.gc_idat)

        for url in dict.fromkeys(_DATA_PNG.findall(text)):
            png = base64.b64decode(url.split(",", 1)[1])
            idat = _rgb_png_idat(png)
            if idat is None:
                continue
            with Image.open(io.BytesIO(png)) as im:  # the header only, nothing decoded
                img = _SamePng(im, hashlib.md5(url.encode(), usedforsecurity=False).hexdigest(),
                               png, None, cache, "none", DEFAULT_OPTIONS)
            img.gc_idat = idat
            cache[iri_to_uri(url)] = img
    except Exception as err:  # noqa: BLE001 - WeasyPrint's internals moved: let it read them
        log.debug("images left to WeasyPrint: %s", err)
        return {}
    return cache


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
            weasyprint.HTML(string=text, base_url=str(run_dir)).write_pdf(
                str(tmp), cache=_png_cache(text))

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
    needs: ClassVar[tuple[str, ...] | None] = ("geopackage", "plots")
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

"""Report figures: histogram, cumulative frequency, class map, potential vs resistivity.

All figures are made with :class:`matplotlib.figure.Figure` and the Agg canvas
directly (no ``pyplot``, so no global figure state), carry units on every axis
and a caution footer, and are written atomically: to a temporary file in the
target folder, then moved into place with :func:`os.replace`.  Each function
returns the path written.

The cumulative-frequency plot uses the plotting position r/(n+1) on a
normal-probability axis [ASTM-C876-91 §6.3, from memory],
with the C876 limits at -200 and -350 mV CSE and, when given, the site-specific
mixture threshold (:mod:`geo_corrosion.condition.potential`).
"""

from __future__ import annotations

import io
import os
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.colors import BoundaryNorm, ListedColormap
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch
from matplotlib.ticker import FuncFormatter
from numpy.typing import ArrayLike
from scipy import stats

from geo_corrosion._io import atomic_write
from geo_corrosion.condition.classes import POTENTIAL_C876, RESISTIVITY_RILEM, ClassSet
from geo_corrosion.condition.potential import MixtureThreshold, cumulative_frequency
from geo_corrosion.errors import ConditionError, ExportError
from geo_corrosion.vocabulary import VOCABULARY, class_label, label

__all__ = [
    "CAUTION",
    "plot_histogram",
    "plot_cumulative_frequency",
    "plot_class_map",
    "plot_potential_vs_resistivity",
    "JOINT_STYLES",
    "plot_class_points",
    "figure_png",
]

#: Footer printed on every figure (wording ours, after [ASTM-C876-22a §4.8]).
CAUTION = "Survey data, not a structural assessment; a licensed engineer decides."

_UNIT_LABEL = {"mV vs CSE": "mV vs CSE", "kohm.cm": "kΩ·cm", "uA/cm2": "µA/cm²"}


def _figure(width_in: float = 7.0, height_in: float = 5.0) -> Figure:
    fig = Figure(figsize=(width_in, height_in), dpi=100)
    FigureCanvasAgg(fig)
    return fig


def _finish(fig: Figure, path: str | os.PathLike[str], dpi: int, bottom: float = 0.03) -> Path:
    fig.text(0.01, 0.005, CAUTION, fontsize=7, color="#444444", ha="left", va="bottom")
    fig.tight_layout(rect=(0.0, bottom, 1.0, 1.0))
    # the layout is fixed now: without this, tight_layout leaves a placeholder layout engine
    # and savefig lays out every text once more before drawing (a third pass; same pixels)
    fig.set_layout_engine(None)
    out = Path(path)
    if out.suffix.lower() != ".png":
        raise ExportError(f"{out}: figures are written as PNG; give a path ending in .png")
    if not out.parent.is_dir():
        raise ExportError(f"{out}: folder {out.parent} does not exist; create it first")
    atomic_write(out, lambda tmp: tmp.write_bytes(figure_png(fig, dpi)), what="figure")
    return out


def figure_png(fig: Figure, dpi: float) -> bytes:
    """Draw a figure at ``dpi`` and return it as an opaque 8-bit RGB PNG.

    The same pixels as ``fig.savefig(..., format="png", dpi=dpi)`` without its alpha channel
    (the figures are opaque: a white figure face).  Without alpha, the report's PDF takes the
    PNG's compressed data as it is (:func:`geo_corrosion.exporters.report.build`), where
    WeasyPrint would decode an RGBA PNG and compress its colour and alpha again.
    """
    import matplotlib
    from PIL import Image, PngImagePlugin

    fig.set_dpi(dpi)  # what savefig does for the time of its draw
    fig.canvas.draw()
    rgba = np.asarray(fig.canvas.buffer_rgba())  # type: ignore[attr-defined]
    info = PngImagePlugin.PngInfo()
    info.add_text("Software", f"Matplotlib version{matplotlib.__version__}, "
                              "https://matplotlib.org/")
    buf = io.BytesIO()
    Image.fromarray(np.ascontiguousarray(rgba[..., :3]), "RGB").save(
        buf, format="png", dpi=(dpi, dpi), pnginfo=info)
    return buf.getvalue()


def _finite(values: ArrayLike, what: str) -> np.ndarray:
    try:
        v = np.asarray(values, dtype=float).ravel()
    except (TypeError, ValueError) as err:
        raise ConditionError(f"{what} must be numeric ({err})") from err
    f = v[np.isfinite(v)]
    if f.size == 0:
        raise ConditionError(f"no finite {what} to plot")
    out: np.ndarray = f
    return out


def _class_labels(class_set: ClassSet) -> list[str]:
    """Return the owner labels of a class set's classes (:mod:`geo_corrosion.vocabulary`)."""
    return [class_label(class_set.name, k, lab if f"{class_set.name}.{k}" not in VOCABULARY
                        else None)
            for k, lab in zip(class_set.keys, class_set.labels, strict=True)]


def _axis_label(quantity: str, unit: str) -> str:
    return f"{quantity} ({_UNIT_LABEL.get(unit, unit)})"


def plot_histogram(
    values: ArrayLike,
    path: str | os.PathLike[str],
    *,
    class_set: ClassSet | None = None,
    quantity: str = "Half-cell potential",
    unit: str | None = None,
    bins: int | str = "auto",
    log_x: bool = False,
    title: str | None = None,
    dpi: int = 150,
) -> Path:
    """Write a histogram of readings with the class bands shaded; return the path.

    Parameters
    ----------
    values : array_like
        Readings in ``unit`` (NaN ignored).
    path : path-like
        Target PNG.
    class_set : ClassSet, optional
        Shade its classes and draw its edges.
    quantity : str
        Axis quantity name.
    unit : str, optional
        Unit label; default the class set's unit (required without one).
    bins : int or str
        As :func:`numpy.histogram_bin_edges`.
    log_x : bool
        Logarithmic value axis (resistivity, corrosion rate); bins log-spaced.
    """
    v = _finite(values, "values")
    u = unit if unit is not None else (class_set.unit if class_set else None)
    if u is None:
        raise ConditionError("plot_histogram needs a unit (or a class set that has one)")
    if log_x:
        if np.any(v <= 0):
            raise ConditionError("a logarithmic histogram needs positive values")
        edges = 10 ** np.histogram_bin_edges(np.log10(v), bins=bins)
    else:
        edges = np.histogram_bin_edges(v, bins=bins)
    fig = _figure()
    ax = fig.add_subplot(1, 1, 1)
    lo, hi = float(edges[0]), float(edges[-1])
    if class_set is not None:
        bounds = [lo] + [e for e in class_set.edges if lo < e < hi] + [hi]
        codes = class_set.codes([(a + b) / 2 for a, b in zip(bounds[:-1], bounds[1:], strict=True)])
        for (a, b), c in zip(zip(bounds[:-1], bounds[1:], strict=True), codes, strict=True):
            ax.axvspan(a, b, color=class_set.colors[c], alpha=0.18, lw=0)
        for e in class_set.edges:
            if lo < e < hi:
                ax.axvline(e, color="#333333", lw=1.0, ls="--")
        handles = [Patch(color=col, alpha=0.4, label=lab)
                   for col, lab in zip(class_set.colors, _class_labels(class_set), strict=True)]
        ax.legend(handles=handles, fontsize=7, loc="upper right",
                  title=label(class_set.name, class_set.name), title_fontsize=7)
    ax.hist(v, bins=list(edges), color="#0072B2", edgecolor="white")
    if log_x:
        ax.set_xscale("log")
        # plain numbers (20, 30, 50), not powers of ten: owners read values
        ax.xaxis.set_major_formatter(FuncFormatter(lambda x, _p: f"{x:g}"))
        ax.xaxis.set_minor_formatter(FuncFormatter(
            lambda x, _p: f"{x:g}" if f"{x:.1g}"[0] in "235" else ""))
        ax.tick_params(axis="x", which="minor", labelsize=7)
    ax.set_xlabel(_axis_label(quantity, u))
    ax.set_ylabel("Number of readings (count)")
    ax.set_title(title or f"{quantity}: {v.size} readings")
    return _finish(fig, path, dpi)


_PROB_TICKS = (0.1, 1, 5, 10, 20, 30, 50, 70, 80, 90, 95, 99, 99.9)


def plot_cumulative_frequency(
    potential_mv: ArrayLike,
    path: str | os.PathLike[str],
    *,
    mixture: MixtureThreshold | None = None,
    c876_lines: bool = True,
    title: str | None = None,
    dpi: int = 150,
) -> Path:
    """Write the cumulative frequency of potentials on a normal-probability axis.

    Parameters
    ----------
    potential_mv : array_like
        Readings, mV vs CSE.
    path : path-like
        Target PNG.
    mixture : MixtureThreshold, optional
        Adds the site-specific threshold and the fitted mixture CDF.
    c876_lines : bool
        Draw the ASTM C876 limits at -350 and -200 mV.
    """
    cfd = cumulative_frequency(potential_mv)
    fig = _figure()
    ax = fig.add_subplot(1, 1, 1)
    ax.plot(cfd.potential_mv, cfd.z, "o", ms=3, color="#0072B2", label="readings, r/(n+1)")
    zmin = min(float(cfd.z.min()), stats.norm.ppf(0.01)) - 0.1
    zmax = max(float(cfd.z.max()), stats.norm.ppf(0.99)) + 0.1
    ticks = [p for p in _PROB_TICKS if zmin <= stats.norm.ppf(p / 100) <= zmax]
    ax.set_yticks([stats.norm.ppf(p / 100) for p in ticks])
    ax.set_yticklabels([f"{p:g}" for p in ticks])
    ax.set_ylim(zmin, zmax)
    if c876_lines:
        for e, lab in zip(POTENTIAL_C876.edges, ("C876 -350 mV vs CSE", "C876 -200 mV vs CSE"),
                          strict=True):
            ax.axvline(e, color="#D55E00" if e < -300 else "#E69F00", lw=1.2, ls="--", label=lab)
    if mixture is not None:
        x = np.linspace(float(cfd.potential_mv.min()), float(cfd.potential_mv.max()), 300)
        cdf = (mixture.active_weight * stats.norm.cdf(x, mixture.active_mean_mv,
                                                      mixture.active_std_mv)
               + mixture.passive_weight * stats.norm.cdf(x, mixture.passive_mean_mv,
                                                         mixture.passive_std_mv))
        cdf = np.clip(cdf, 1e-6, 1 - 1e-6)
        ax.plot(x, stats.norm.ppf(cdf), "-", color="#333333", lw=1.0, label="mixture fit")
        ax.axvline(mixture.threshold_mv, color="#CC79A7", lw=1.6,
                   label=f"site threshold {mixture.threshold_mv:.0f} mV vs CSE")
    ax.grid(True, color="#DDDDDD", lw=0.6)
    ax.set_xlabel(_axis_label("Half-cell potential", "mV vs CSE"))
    ax.set_ylabel("Cumulative frequency (%, normal-probability scale)")
    ax.set_title(title or f"Cumulative frequency of potentials, n = {cfd.potential_mv.size}")
    ax.legend(fontsize=8, loc="lower right")
    return _finish(fig, path, dpi)


def _polygon_rings(poly: Any) -> list[np.ndarray]:
    if hasattr(poly, "geoms"):
        out: list[np.ndarray] = []
        for g in poly.geoms:
            out.extend(_polygon_rings(g))
        return out
    if hasattr(poly, "exterior"):
        rings = [np.asarray(poly.exterior.coords)]
        rings += [np.asarray(r.coords) for r in poly.interiors]
        return rings
    if hasattr(poly, "coords"):
        return [np.asarray(poly.coords)]
    a = np.asarray(poly, dtype=float)
    if a.ndim != 2 or a.shape[1] != 2:
        raise ConditionError("a polygon must be a shapely geometry or an (n, 2) array of x, y")
    return [a]


#: How a joint is drawn on a plan map: breaking (expansion, isolation) or not (construction,
#: control); Okabe & Ito reddish purple and grey, told apart by width and dash as well.
JOINT_STYLES: dict[bool, dict[str, Any]] = {
    True: {"color": "#CC79A7", "lw": 2.4, "ls": (0, (6, 2)),
           "label": "expansion/isolation joint (mat not continuous)"},
    False: {"color": "#555555", "lw": 1.0, "ls": (0, (2, 2)),
            "label": "construction/control joint"},
}


def plot_class_map(
    grid: ArrayLike,
    extent: tuple[float, float, float, float],
    path: str | os.PathLike[str],
    *,
    class_set: ClassSet,
    quantity: str = "Half-cell potential",
    plan_unit: str = "m",
    contour_interval: float | None = None,
    polygons: Sequence[Any] | None = None,
    polygon_label: str = "delamination",
    lines: Sequence[Any] | None = None,
    origin: str = "lower",
    title: str | None = None,
    dpi: int = 150,
    joints: Sequence[tuple[Any, bool]] | None = None,
    contour_groups: ArrayLike | None = None,
) -> Path:
    """Write a plan map of classes with value contours and optional polygons.

    Parameters
    ----------
    grid : array_like, 2-D
        Surface values in the class set's unit; NaN outside the element.
    extent : (xmin, xmax, ymin, ymax)
        Outer edges of the grid, plan units.
    path : path-like
        Target PNG.
    class_set : ClassSet
    quantity : str
        Name for the title and colour key.
    plan_unit : str
        Plan length unit for the axes (m, ft).
    contour_interval : float, optional
        Contour interval in the class set's unit (e.g. 50 mV); None: no contours.
    polygons : sequence, optional
        Shapely polygons or (n, 2) coordinate arrays drawn as outlines.
    lines : sequence, optional
        Shapely lines (joints) drawn dashed.
    origin : {"lower", "upper"}
        Row 0 of ``grid`` at ``ymin`` ("lower") or at ``ymax`` ("upper").
    joints : sequence of (line, breaks), optional
        Joint lines (shapely lineal geometries or (n, 2) arrays) and whether each breaks the
        mat's electrical continuity: breaking joints (expansion, isolation) are drawn thick
        and dashed, the others (construction, control) thin, each kind in the legend.
    contour_groups : array_like of int, optional
        Same shape and orientation as ``grid``: the continuity region of each cell (-1 for
        none).  Contours are then traced region by region, so none runs along a breaking
        joint where the surface steps across it.
    """
    try:
        g = np.asarray(grid, dtype=float)
    except (TypeError, ValueError) as err:
        raise ConditionError(f"grid must be numeric ({err})") from err
    if g.ndim != 2:
        raise ConditionError(f"grid must be 2-D, got shape {g.shape}")
    if origin not in ("lower", "upper"):
        raise ConditionError("origin must be 'lower' or 'upper'")
    xmin, xmax, ymin, ymax = (float(e) for e in extent)
    if not (xmax > xmin and ymax > ymin):
        raise ConditionError(f"extent must be (xmin, xmax, ymin, ymax) with max > min: {extent}")
    if not np.any(np.isfinite(g)):
        raise ConditionError("grid has no finite value to map")
    codes = class_set.codes(g).astype(float)
    codes[codes < 0] = np.nan
    cmap = ListedColormap(list(class_set.colors)).with_extremes(bad=(1.0, 1.0, 1.0, 0.0))
    norm = BoundaryNorm(np.arange(-0.5, class_set.n_classes + 0.5), class_set.n_classes)
    # the figure follows the deck's aspect ratio (a long deck is a long figure, not a strip in
    # a 4:3 frame), with the key below the plan
    aspect = (ymax - ymin) / (xmax - xmin)
    fig = _figure(7.5, float(min(max(7.0 * aspect + 1.6, 3.0), 9.5)))
    ax = fig.add_subplot(1, 1, 1)
    ax.imshow(np.ma.masked_invalid(codes), cmap=cmap, norm=norm, extent=(xmin, xmax, ymin, ymax),
              origin="lower" if origin == "lower" else "upper", interpolation="nearest",
              aspect="equal")
    if contour_interval is not None:
        if not contour_interval > 0:
            raise ConditionError("contour interval must be positive")
        ny, nx = g.shape
        xs = xmin + (np.arange(nx) + 0.5) * (xmax - xmin) / nx
        ys = ymin + (np.arange(ny) + 0.5) * (ymax - ymin) / ny
        gg = g if origin == "lower" else g[::-1]
        fmin, fmax = float(np.nanmin(g)), float(np.nanmax(g))
        levels = np.arange(np.ceil(fmin / contour_interval) * contour_interval, fmax + 1e-9,
                           contour_interval)
        if contour_groups is None:
            parts = [gg]
        else:
            grp = np.asarray(contour_groups)
            if grp.shape != g.shape:
                raise ConditionError(f"contour_groups has shape {grp.shape}, the grid {g.shape}")
            grp = grp if origin == "lower" else grp[::-1]
            parts = [np.where(grp == k, gg, np.nan) for k in np.unique(grp[grp >= 0])]
        for part in parts:
            if levels.size and np.isfinite(part).any():
                cs = ax.contour(xs, ys, np.ma.masked_invalid(part), levels=levels,
                                colors="#333333", linestyles="solid", linewidths=0.6)
                # labels at 7 pt on every second level, spaced along the lines
                ax.clabel(cs, levels=list(cs.levels)[::2], fontsize=7, fmt="%g", inline=True,
                          inline_spacing=2)
    if polygons:
        for k, poly in enumerate(polygons):
            for ring in _polygon_rings(poly):
                ax.plot(ring[:, 0], ring[:, 1], color="black", lw=1.2,
                        label=polygon_label if k == 0 else None)
    handles: list[Any] = [Patch(color=c, label=lab) for c, lab in
                          zip(class_set.colors, _class_labels(class_set), strict=True)]
    if polygons:
        handles.append(Patch(facecolor="none", edgecolor="black", label=polygon_label))
    kinds_drawn = set()
    # ``lines`` are joints of no stated type: drawn as joints that keep the mat continuous
    for line, breaks in [*(joints or ()), *((ln, False) for ln in lines or ())]:
        style = JOINT_STYLES[bool(breaks)]
        kinds_drawn.add(bool(breaks))
        for part in getattr(line, "geoms", [line]):
            xy = np.asarray(part.coords if hasattr(part, "coords") else part, dtype=float)
            ax.plot(xy[:, 0], xy[:, 1], color=style["color"], lw=style["lw"],
                    linestyle=style["ls"], solid_capstyle="butt")
    for breaks in sorted(kinds_drawn, reverse=True):
        style = JOINT_STYLES[breaks]
        handles.append(Line2D([], [], color=style["color"], lw=style["lw"],
                              linestyle=style["ls"], label=style["label"]))
    ncol = min(3, len(handles))
    rows = -(-len(handles) // ncol)
    key_h = (0.2 * (rows + 1) + 0.25) / fig.get_figheight()  # the key's share of the height
    fig.legend(handles=handles, fontsize=7, loc="lower center", bbox_to_anchor=(0.5, 0.035),
               ncol=ncol, title=f"{label(class_set.name, quantity)}, "
                                f"{_UNIT_LABEL.get(class_set.unit, class_set.unit)}",
               title_fontsize=7, frameon=False)
    ax.set_xlabel(f"Survey grid x ({plan_unit})", fontsize=8)
    ax.set_ylabel(f"Survey grid y ({plan_unit})", fontsize=8)
    ax.tick_params(labelsize=7)
    ttl = title or f"{quantity} classes ({label(class_set.name, class_set.name)})"
    if contour_interval is not None:
        ttl += f", contours every {contour_interval:g} {_UNIT_LABEL.get(class_set.unit, '')}"
    ax.set_title(ttl, fontsize=10)
    return _finish(fig, path, dpi, bottom=0.035 + key_h)


def plot_potential_vs_resistivity(
    potential_mv: ArrayLike,
    resistivity_kohm_cm: ArrayLike,
    path: str | os.PathLike[str],
    *,
    log_resistivity: bool = True,
    resistivity_class_set: ClassSet = RESISTIVITY_RILEM,
    title: str | None = None,
    dpi: int = 150,
) -> Path:
    """Write a scatter of potential against resistivity at co-located readings.

    Parameters
    ----------
    potential_mv, resistivity_kohm_cm : array_like
        Paired readings (same length); pairs with a NaN are dropped.
    path : path-like
        Target PNG.
    log_resistivity : bool
        Logarithmic resistivity axis.
    resistivity_class_set : ClassSet
        Its edges are drawn as horizontal lines.
    """
    e = np.asarray(potential_mv, dtype=float).ravel()
    r = np.asarray(resistivity_kohm_cm, dtype=float).ravel()
    if e.shape != r.shape:
        raise ConditionError(
            f"potential ({e.size}) and resistivity ({r.size}) readings must pair up"
        )
    ok = np.isfinite(e) & np.isfinite(r)
    if log_resistivity:
        ok &= r > 0
    if not np.any(ok):
        raise ConditionError("no co-located potential and resistivity readings to plot")
    e, r = e[ok], r[ok]
    fig = _figure()
    ax = fig.add_subplot(1, 1, 1)
    ax.scatter(e, r, s=12, color="#0072B2", alpha=0.8, label=f"readings (n = {e.size})")
    for edge in POTENTIAL_C876.edges:
        ax.axvline(edge, color="#D55E00", lw=1.0, ls="--")
    for edge in resistivity_class_set.edges:
        ax.axhline(edge, color="#009E73", lw=1.0, ls=":")
    if log_resistivity:
        ax.set_yscale("log")
    if e.size > 2 and np.ptp(e) > 0 and np.ptp(r) > 0:
        rho = stats.spearmanr(e, r).statistic
        ax.text(0.02, 0.97, f"Spearman rank correlation {rho:.2f}", transform=ax.transAxes,
                fontsize=8, va="top")
    ax.set_xlabel(_axis_label("Half-cell potential", "mV vs CSE"))
    ax.set_ylabel(_axis_label("Resistivity", "kohm.cm"))
    ax.set_title(title or "Potential vs resistivity (dashed: C876 limits; dotted: "
                 f"{label(resistivity_class_set.name, resistivity_class_set.name)} limits)",
                 fontsize=9)
    ax.legend(fontsize=8, loc="lower right")
    return _finish(fig, path, dpi)


def plot_class_points(
    x: ArrayLike,
    y: ArrayLike,
    values: ArrayLike,
    path: str | os.PathLike[str],
    *,
    class_set: ClassSet | None,
    reason: str,
    quantity: str = "Corrosion rate",
    unit: str = "",
    plan_unit: str = "m",
    cells: Sequence[Any] | None = None,
    cell_label: str = "Thiessen (nearest-reading) cells, not a surface",
    outline: Any = None,
    title: str | None = None,
    dpi: int = 150,
) -> Path:
    """Write a plan of readings coloured by class, for a kind too sparse for a surface.

    Parameters
    ----------
    x, y, values : array_like
        Reading locations (plan units) and values (the class set's unit); one reading is enough.
    class_set : ClassSet or None
        Colours the points by class; None: one colour.
    reason : str
        Why there is no surface; printed under the title.
    cells : sequence of shapely polygons, optional
        The readings' Thiessen cells, shaded lightly in the class colour and labelled as such.
    outline : shapely geometry, optional
        The deck, drawn as an outline.
    """
    xa = np.asarray(x, dtype=float).ravel()
    ya = np.asarray(y, dtype=float).ravel()
    v = np.asarray(values, dtype=float).ravel()
    if not (xa.size == ya.size == v.size) or xa.size == 0:
        raise ConditionError("plot_class_points needs one x, y and value per reading, at least one")
    if class_set is not None:
        codes = class_set.codes(v)
        colors = [class_set.colors[c] if c >= 0 else "#999999" for c in codes]
    else:
        colors = ["#0072B2"] * v.size
    fig = _figure(7.5, 6.0)
    ax = fig.add_subplot(1, 1, 1)
    if outline is not None:
        for ring in _polygon_rings(outline):
            ax.plot(ring[:, 0], ring[:, 1], color="#303030", lw=1.0)
    if cells is not None:
        for cell, col in zip(cells, colors, strict=True):
            for ring in _polygon_rings(cell):
                ax.fill(ring[:, 0], ring[:, 1], facecolor=col, alpha=0.18, edgecolor="#777777",
                        lw=0.5)
    ax.scatter(xa, ya, c=colors, s=46, edgecolors="black", linewidths=0.7, zorder=3,
               label="reading")
    handles: list[Any] = []
    if class_set is not None:
        handles = [Patch(color=c, label=lab)
                   for c, lab in zip(class_set.colors, class_set.labels, strict=True)]
    if cells is not None:
        handles.append(Patch(facecolor="#DDDDDD", edgecolor="#777777", label=cell_label))
    if handles:
        ax.legend(handles=handles, fontsize=7, loc="upper left", bbox_to_anchor=(1.01, 1.0),
                  title=f"{quantity} ({_UNIT_LABEL.get(unit, unit)})", title_fontsize=7)
    ax.set_aspect("equal")
    ax.set_xlabel(f"x ({plan_unit})")
    ax.set_ylabel(f"y ({plan_unit})")
    ttl = title or f"{quantity}: {v.size} readings"
    ax.set_title(f"{ttl}\nreadings shown as points, no surface", fontsize=10)
    fig.text(0.01, 0.035, f"No surface: {reason}.", fontsize=6.5, color="#222222", wrap=True)
    return _finish(fig, path, dpi)

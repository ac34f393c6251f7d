"""The drawing sheet as a vector PDF: the DXF's paper space rendered with matplotlib.

The renderer draws the entities of the sheet's DXF document (the one just written, or one
read back with ezdxf): lines, polylines, circles, hatches and single-line TEXT, in paper
space and, through the viewport, in model space (scaled, translated and clipped to the
viewport).  So the PDF shows what the DXF holds, for those without CAD.  Lines of one
style drawn one after another go into one collection (the same paint order as one line
each).  Text stays text, in Helvetica, one of the PDF's standard fonts (not embedded;
every PDF reader has it or its metric equivalent), so a PDF reader can search it and no
font is subset for each sheet.  Other entity types are not drawn.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterable
from pathlib import Path
from typing import Any

from geo_corrosion._io import atomic_write

__all__ = ["HATCHES", "render_sheet_pdf", "write_sheet_pdf"]

#: matplotlib hatch of each DXF pattern this project uses.
HATCHES = {"ANSI31": "///", "ANSI37": "xx", "NET": "++", "DOTS": "..",
           "ANSI32": "///", "ANSI33": "///"}
#: Linetypes as matplotlib dashes (on, off in points).
_DASHES = {"DASHED": (0, (5.0, 3.0)), "CENTER": (0, (10.0, 2.0, 2.0, 2.0))}
#: Cap height of Helvetica as a share of the font size (its AFM's CapHeight, 718).
_CAP = 0.718
_PT_PER_MM = 72.0 / 25.4
#: The sheet's text in Helvetica, a standard PDF font (matplotlib's AFM metrics).
_RC: dict[Any, Any] = {"pdf.use14corefonts": True, "font.family": "sans-serif",
                       "font.sans-serif": ["Helvetica"]}
#: Weight of the text: "medium", as Helvetica's AFM names its regular face (asked for
#: "normal", matplotlib warns that it found "medium" instead).
_WEIGHT = "medium"


def _rgb(aci: int) -> tuple[float, float, float]:
    from ezdxf.colors import aci2rgb

    if aci in (0, 7, 256, 257) or aci < 0:
        return (0.0, 0.0, 0.0)
    r, g, b = aci2rgb(aci)
    k = 0.75 if r + g + b > 500 else 1.0  # light colours a little darker on white paper
    return (r / 255 * k, g / 255 * k, b / 255 * k)


def write_sheet_pdf(dxf_path: str | os.PathLike[str], pdf_path: str | os.PathLike[str]
                    ) -> Path:
    """Render the first paper-space layout of a DXF file to a one-page vector PDF.

    Parameters
    ----------
    dxf_path : path-like
        A sheet written by :func:`geo_corrosion.exporters.dxf.write_level_dxf` (paper
        space in mm).
    pdf_path : path-like
        Output; written atomically.

    Returns
    -------
    Path
    """
    from ezdxf.filemanagement import readfile

    return render_sheet_pdf(readfile(str(dxf_path)), pdf_path)


def render_sheet_pdf(doc: Any, pdf_path: str | os.PathLike[str]) -> Path:
    """Render the first paper-space layout of an ezdxf document to a one-page vector PDF.

    Parameters
    ----------
    doc : ezdxf Drawing
        A sheet as :func:`geo_corrosion.exporters.dxf.write_level_dxf` builds it (paper
        space in mm), in memory or read back from its file.
    pdf_path : path-like
        Output; written atomically.

    Returns
    -------
    Path
    """
    import matplotlib as mpl

    mpl.use("Agg")
    with mpl.rc_context(_RC):  # text takes its font when made: all in the context
        return _render(doc, Path(pdf_path))


def _render(doc: Any, pdf_path: Path) -> Path:
    import matplotlib as mpl
    from matplotlib.figure import Figure
    from matplotlib.patches import Rectangle

    layout = next(lay for lay in doc.layouts if not lay.is_modelspace)
    w_mm, h_mm = layout.dxf.paper_width, layout.dxf.paper_height
    if not w_mm or not h_mm:
        w_mm, h_mm = 841.0, 594.0
    fig = Figure(figsize=(w_mm / 25.4, h_mm / 25.4))
    ax = fig.add_axes((0.0, 0.0, 1.0, 1.0))
    ax.set_xlim(0, w_mm)
    ax.set_ylim(0, h_mm)
    ax.set_aspect("equal")
    ax.axis("off")

    def layer_of(e: Any) -> tuple[tuple[float, float, float], str, bool]:
        name = e.dxf.layer
        lay = doc.layers.get(name) if name in doc.layers else None
        aci = e.dxf.color if e.dxf.hasattr("color") and e.dxf.color not in (256, 0) else (
            lay.color if lay is not None else 7)
        lt = lay.dxf.linetype.upper() if lay is not None else "CONTINUOUS"
        plots = lay is None or lay.dxf.plot != 0
        return _rgb(aci), lt, plots

    lines = _Lines(ax)
    for e in layout:
        if e.dxftype() == "VIEWPORT":
            if e.dxf.status < 2 or e.dxf.get("id", 0) == 1:
                continue
            cx, cy = e.dxf.center.x, e.dxf.center.y
            vw, vh = e.dxf.width, e.dxf.height
            f = e.dxf.view_height / vh
            mx, my = e.dxf.view_center_point.x, e.dxf.view_center_point.y

            def to_paper(x: float, y: float, cx: float = cx, cy: float = cy, f: float = f,
                         mx: float = mx, my: float = my) -> tuple[float, float]:
                return cx + (x - mx) / f, cy + (y - my) / f

            clip = Rectangle((cx - vw / 2, cy - vh / 2), vw, vh, transform=ax.transData,
                             fill=False, lw=0)
            _draw(ax, doc.modelspace(), to_paper, 1.0 / f, layer_of, clip, lines)
            continue
        _draw(ax, [e], lambda x, y: (x, y), 1.0, layer_of, None, lines)
    lines.flush()

    def save(tmp: Any) -> None:
        fig.savefig(tmp, format="pdf", metadata={"Title": "Repair drawing sheet",
                                                 "Creator": "geo_corrosion"})

    # as before: a hatch's width is the one of the context its patch was made in
    # (matplotlib >= 3.10 reads it then); this setting only when saving
    with mpl.rc_context({"hatch.linewidth": 0.3}):
        return atomic_write(pdf_path, save)


class _Lines:
    """Lines to draw, gathered into one LineCollection per run of the same style.

    matplotlib paints a figure's lines (zorder 2) after its patches and before its text,
    each group in the order added; a run of lines of one style, one after another, painted
    as one collection keeps that order, and every line keeps its colour, width, dashes,
    caps, joins and clip.
    """

    def __init__(self, ax: Any) -> None:
        self.ax = ax
        self.key: tuple[Any, ...] | None = None
        self.segs: list[list[tuple[float, float]]] = []

    def add(self, pts: list[tuple[float, float]], key: tuple[Any, ...]) -> None:
        """Add a line; ``key``: colour, width, linestyle, join style, clip."""
        if key != self.key:
            self.flush()
            self.key = key
        self.segs.append(pts)

    def flush(self) -> None:
        """Draw the lines gathered so far as one collection."""
        if self.key is None or not self.segs:
            self.segs = []
            return
        from matplotlib.collections import LineCollection

        colour, lw, ls, join, clip = self.key
        dashed = ls != "solid"
        # Line2D's own caps and joins (rc lines.*): solid lines projecting caps, dashed
        # ones butt caps and round joins
        coll = LineCollection(self.segs, colors=[colour], linewidths=[lw], linestyles=[ls],
                              capstyle="butt" if dashed else "projecting",
                              joinstyle="round" if dashed else join, zorder=2)
        self.ax.add_collection(coll, autolim=False)
        if clip is not None:
            coll.set_clip_path(clip)
        self.segs = []


def _draw(ax: Any, entities: Iterable[Any], tr: Callable[[float, float], tuple[float, float]],
          k: float, layer_of: Callable[[Any], tuple[Any, str, bool]], clip: Any,
          lines: _Lines) -> None:
    """Draw entities with ``tr`` mapping their coordinates to paper mm (``k`` mm per unit)."""
    from matplotlib.patches import Circle
    from matplotlib.patches import Polygon as MplPolygon

    def finish(artist: Any) -> None:
        if clip is not None:
            artist.set_clip_path(clip)

    for e in entities:
        kind = e.dxftype()
        colour, lt, plots = layer_of(e)
        if not plots:
            continue
        lw_mm = e.dxf.lineweight / 100.0 if e.dxf.hasattr("lineweight") and \
            e.dxf.lineweight > 0 else 0.18
        lw = lw_mm * _PT_PER_MM
        ls = _DASHES.get(lt, "solid")
        if kind == "LWPOLYLINE":
            pts = [tr(x, y) for x, y in e.get_points("xy")]
            if e.closed:
                pts.append(pts[0])
            lines.add(pts, (colour, lw, ls, "miter", clip))
        elif kind == "LINE":
            a, b = tr(e.dxf.start.x, e.dxf.start.y), tr(e.dxf.end.x, e.dxf.end.y)
            lines.add([a, b], (colour, lw, ls, "round", clip))
        elif kind == "CIRCLE":
            c = tr(e.dxf.center.x, e.dxf.center.y)
            circle = Circle(c, e.dxf.radius * k, fill=False, edgecolor=colour, lw=lw)
            ax.add_patch(circle)
            finish(circle)
        elif kind == "HATCH":
            for path in e.paths:
                verts = [tr(v[0], v[1]) for v in getattr(path, "vertices", [])]
                if len(verts) < 3:
                    continue
                if e.dxf.solid_fill:
                    art = MplPolygon(verts, closed=True, facecolor=colour, edgecolor="none")
                else:
                    art = MplPolygon(verts, closed=True, fill=False, lw=0, edgecolor=colour,
                                     hatch=HATCHES.get(e.dxf.pattern_name.upper(), "//"))
                ax.add_patch(art)
                finish(art)
        elif kind == "TEXT":
            align, p1, p2 = e.get_placement()
            name = align.name
            ha = "left" if name.endswith("LEFT") else "right" if name.endswith("RIGHT") else \
                "center"
            va = ("top" if name.startswith("TOP") else "center" if name.startswith("MIDDLE")
                  else "bottom" if name.startswith("BOTTOM") else "baseline")
            x, y = tr(p1.x, p1.y)
            size = e.dxf.height * k / _CAP * _PT_PER_MM
            art = ax.text(x, y, e.dxf.text, ha=ha, va=va, fontsize=size, color=colour,
                          rotation=e.dxf.rotation, fontweight=_WEIGHT)
            finish(art)

"""The drawing sheet as a vector PDF: the DXF's paper space rendered with matplotlib.

The renderer reads the written DXF back (ezdxf) and draws the entities the sheet is made
of: lines, polylines, circles, hatches and single-line TEXT, in paper space and, through
the viewport, in model space (scaled, translated and clipped to the viewport).  So the PDF
shows what the DXF holds, for those without CAD.  Text stays text (TrueType fonts
embedded), so a PDF reader can search it.  Other entity types are not drawn.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterable
from pathlib import Path
from typing import Any

from geo_corrosion._io import atomic_write

__all__ = ["HATCHES", "write_sheet_pdf"]

#: matplotlib hatch of each DXF pattern this project uses.
HATCHES = {"ANSI31": "///", "ANSI37": "xx", "NET": "++", "DOTS": "..",
           "ANSI32": "///", "ANSI33": "///"}
#: Linetypes as matplotlib dashes (on, off in points).
_DASHES = {"DASHED": (0, (5.0, 3.0)), "CENTER": (0, (10.0, 2.0, 2.0, 2.0))}
#: Cap height of DejaVu Sans as a share of the font size.
_CAP = 0.73
_PT_PER_MM = 72.0 / 25.4


def _rgb(aci: int) -> tuple[float, float, float]:
    from ezdxf.colors import aci2rgb

    if aci in (0, 7, 256, 257) or aci < 0:
        return (0.0, 0.0, 0.0)
    r, g, b = aci2rgb(aci)
    k = 0.75 if r + g + b > 500 else 1.0  # light colours a little darker on white paper
    return (r / 255 * k, g / 255 * k, b / 255 * k)


def write_sheet_pdf(dxf_path: str | os.PathLike[str], pdf_path: str | os.PathLike[str]
                    ) -> Path:
    """Render the first paper-space layout of a DXF to a one-page vector PDF.

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
    import matplotlib
    from ezdxf.filemanagement import readfile

    matplotlib.use("Agg")
    from matplotlib.figure import Figure

    doc = readfile(str(dxf_path))
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

            from matplotlib.patches import Rectangle

            clip = Rectangle((cx - vw / 2, cy - vh / 2), vw, vh, transform=ax.transData,
                             fill=False, lw=0)
            _draw(ax, doc.modelspace(), to_paper, 1.0 / f, layer_of, clip)
            continue
        _draw(ax, [e], lambda x, y: (x, y), 1.0, layer_of, None)

    def save(tmp: Any) -> None:
        fig.savefig(tmp, format="pdf", metadata={"Title": "Repair drawing sheet",
                                                 "Creator": "geo_corrosion"})

    import matplotlib as mpl

    with mpl.rc_context({"pdf.fonttype": 42, "font.family": "DejaVu Sans",
                         "hatch.linewidth": 0.3}):
        return atomic_write(Path(pdf_path), save)


def _draw(ax: Any, entities: Iterable[Any], tr: Callable[[float, float], tuple[float, float]],
          k: float, layer_of: Callable[[Any], tuple[Any, str, bool]], clip: Any) -> None:
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
            (line,) = ax.plot([p[0] for p in pts], [p[1] for p in pts], color=colour, lw=lw,
                              linestyle=ls, solid_joinstyle="miter")
            finish(line)
        elif kind == "LINE":
            a, b = tr(e.dxf.start.x, e.dxf.start.y), tr(e.dxf.end.x, e.dxf.end.y)
            (line,) = ax.plot([a[0], b[0]], [a[1], b[1]], color=colour, lw=lw, linestyle=ls)
            finish(line)
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
                          rotation=e.dxf.rotation)
            finish(art)

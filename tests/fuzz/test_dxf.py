"""DXF outline troubles of the sounding drawing: read, or refused by layer and handle (issue 11).

The synthetic site's ``sounding/sounding.dxf`` (feet, ``$INSUNITS = 2``) has a delamination
outline on layer DELAM and a spall circle on SPALL.  Each case draws one more entity on DELAM
(with ezdxf, as ``tests/core/test_dxf_outlines.py`` does).  Curves (bulges, arcs in a closed
polyline, splines, ellipses, circles) are flattened and read, so ``check`` passes; what cannot
be an outline (NaN or infinite vertices, zero-radius circles, block inserts, open lines) is
refused naming the file, the layer and the entity's handle.  Contract: ``tests/fuzz/contract.py``.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest

from tests.fuzz.contract import Case, edit, holds

GROUP = "dxf"
DXF = "sounding/sounding.dxf"


def drawing(draw: Callable[[Any], Any], layer: str = "DELAM", base: bool = True
            ) -> Callable[[Path], None]:
    """Redraw the sounding drawing: its SPALL circle, its DELAM outline (``base``), ``draw``."""
    def breaks(site: Path) -> None:
        import ezdxf

        doc = ezdxf.new("R2010")
        doc.header["$INSUNITS"] = 2
        for name in {layer, "SPALL"}:
            doc.layers.add(name)
        msp = doc.modelspace()
        msp.add_circle((15, 10), 0.8, dxfattribs={"layer": "SPALL"})
        if base and layer == "DELAM":
            msp.add_lwpolyline([(12, 8), (18, 8), (18, 12), (12, 12)], close=True, dxfattribs=D)
        draw(msp)
        doc.saveas(site / DXF)
    return breaks


D = {"layer": "DELAM"}


def _insert(msp: Any) -> None:
    block = msp.doc.blocks.new("DELAM_BLOCK")
    block.add_lwpolyline([(0, 0), (2, 0), (2, 2), (0, 2)], close=True)
    msp.add_blockref("DELAM_BLOCK", (20, 20), dxfattribs=D)


def _quote_layer(site: Path) -> None:
    drawing(lambda m: m.add_lwpolyline([(12, 8), (18, 8), (18, 12), (12, 12)], close=True,
                                       dxfattribs={"layer": "DELQQAM"}), layer="DELQQAM")(site)
    dxf = site / DXF  # ezdxf will not write a quote in a layer name; other CAD programs do
    dxf.write_text(dxf.read_text().replace("DELQQAM", 'DEL"AM'))
    edit(site / "site.toml", 'layer = "DELAM"', "layer = 'DEL\"AM'")


def _closed_spline(msp: Any) -> None:
    msp.add_spline([(30, 30), (33, 31), (34, 34), (31, 33), (30, 30)], dxfattribs=D).closed = True


ERRORS = [
    Case("nan-vertex", drawing(lambda m: m.add_lwpolyline(
        [(12, 8), (float("nan"), 8), (18, 12), (12, 12)], close=True, dxfattribs=D)),
        ("sounding.dxf", "layer DELAM", "handle", "not a finite number")),
    Case("inf-vertex", drawing(lambda m: m.add_lwpolyline(
        [(12, 8), (18, float("inf")), (18, 12), (12, 12)], close=True, dxfattribs=D)),
        ("sounding.dxf", "layer DELAM", "handle", "not a finite number")),
    Case("nan-circle-centre", drawing(lambda m: m.add_circle((float("nan"), 20), 1.0,
                                                             dxfattribs=D)),
         ("sounding.dxf", "layer DELAM", "handle", "not a finite number")),
    Case("zero-radius-circle", drawing(lambda m: m.add_circle((20, 20), 0.0, dxfattribs=D)),
         ("sounding.dxf", "layer DELAM", "handle", "zero-radius circle")),
    Case("block-insert", drawing(_insert),
         ("sounding.dxf", "layer DELAM", "handle", "block reference")),
    Case("open-arc", drawing(lambda m: m.add_arc((30, 30), 2, 0, 270, dxfattribs=D)),
         ("sounding.dxf", "layer DELAM", "handle", "ARC")),
    Case("open-line", drawing(lambda m: m.add_line((1, 1), (5, 5), dxfattribs=D)),
         ("sounding.dxf", "layer DELAM", "handle", "LINE")),
    Case("open-polyline", drawing(lambda m: m.add_lwpolyline([(1, 1), (5, 1), (5, 5)],
                                                             dxfattribs=D)),
         ("sounding.dxf", "layer DELAM", "handle")),
    Case("only-an-open-line", drawing(lambda m: m.add_line((1, 1), (5, 5), dxfattribs=D),
                                      base=False),
         ("site.toml", "[[levels]][0].overlays[0]", "sounding.dxf", "'DELAM'", "no closed")),
    Case("layer-not-in-drawing", drawing(lambda m: None, layer="OTHER"),
         ("site.toml", "[[levels]][0].overlays[0]", "DELAM")),
    Case("not-a-drawing", lambda s: (s / DXF).write_text("this is not a DXF file\n"),
         ("sounding.dxf",)),
    Case("empty-drawing-file", lambda s: (s / DXF).write_bytes(b""), ("sounding.dxf",)),
    Case("truncated-drawing", lambda s: (s / DXF).write_bytes((s / DXF).read_bytes()[:4000]),
         ("sounding.dxf",)),
]

READ = [
    Case("bulged-polyline", drawing(lambda m: m.add_lwpolyline(
        [(13, 9, 0, 0, 0), (15, 9, 0, 0, 1), (15, 11, 0, 0, 0), (13, 11, 0, 0, 1)],
        format="xyseb", close=True, dxfattribs=D)), expect="ok"),
    Case("ellipse", drawing(lambda m: m.add_ellipse((20, 20), major_axis=(2, 0), ratio=0.5,
                                                    dxfattribs=D)), expect="ok"),
    Case("closed-spline", drawing(_closed_spline), expect="ok"),
    Case("circle", drawing(lambda m: m.add_circle((20, 20), 1.5, dxfattribs=D)), expect="ok"),
    Case("old-style-polyline", drawing(lambda m: m.add_polyline2d(
        [(12, 8), (18, 8), (18, 12), (12, 12)], close=True, dxfattribs=D)), expect="ok"),
    Case("quote-in-layer-name", _quote_layer, expect="ok"),
]


@pytest.mark.parametrize("case", [c.param() for c in ERRORS + READ])
def test_dxf_outline_is_read_or_refused_by_handle(site: Path, case: Case) -> None:
    """Each drawing: read (check passes) or refused naming file, layer, handle (issue 11)."""
    case.breaks(site)
    holds(site, case, GROUP)

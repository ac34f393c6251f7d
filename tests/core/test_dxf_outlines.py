"""Sounding outlines drawn with every entity a drafter uses are read, or refused by handle.

A fuzz pass found NaN coordinates and a quote in a layer name ending in internal errors, and
arcs, bulged polylines, splines, ellipses, block inserts and zero-radius circles taken or
dropped without a word (issue 11).  Each case is one drawing of the synthetic site's sounding
layer (feet, $INSUNITS = 2).
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from geo_corrosion.io.plans import read_layer
from tests.core.conftest import edit
from tests.core.test_site_file import _fails


def _drawing(site_dir: Path, draw, layer: str = "DELAM") -> None:  # type: ignore[no-untyped-def]
    import ezdxf

    doc = ezdxf.new("R2010")
    doc.header["$INSUNITS"] = 2
    for name in {layer, "SPALL"}:
        doc.layers.add(name)
    msp = doc.modelspace()
    msp.add_circle((15, 10), 0.8, dxfattribs={"layer": "SPALL"})
    draw(msp, layer)
    doc.saveas(site_dir / "sounding" / "sounding.dxf")


def _areas(site_dir: Path, layer: str = "DELAM") -> list[float]:
    """Areas (ft2) of the outlines read from the drawing's layer, through the package's reader."""
    from geo_corrosion.stages.open_site import open_site

    lv = next(iter(open_site(site_dir).levels.values()))
    kind = "delamination" if layer.upper() != "SPALL" else "spall"
    return sorted(f.geometry.area for f in lv.overlays[kind])


def test_bulged_polyline_is_flattened(site_dir: Path) -> None:
    """A closed polyline with two half-circle bulges (a 4 x 2 ft stadium) is read with its arcs.

    Area = 2 x 2 + pi x 1^2 = 7.1416 ft2 (geometry); the flattened outline is within a 1 mm
    chord of the arcs, so its area is within 0.1 % of the exact one.
    """
    def draw(msp, layer):  # type: ignore[no-untyped-def]
        # bulge 1 = a half circle between the two vertices
        msp.add_lwpolyline([(13, 9, 0, 0, 0), (15, 9, 0, 0, 1), (15, 11, 0, 0, 0),
                            (13, 11, 0, 0, 1)], format="xyseb", close=True,
                           dxfattribs={"layer": layer})
    _drawing(site_dir, draw)
    (area,) = _areas(site_dir)
    assert area == pytest.approx(4.0 + math.pi, rel=1e-3)


def test_ellipse_and_spline_outlines_are_read(site_dir: Path) -> None:
    """A closed ellipse (a = 2, b = 1 ft: area pi a b = 6.2832 ft2) is read as a polygon.

    Flattened with chords no farther than 1 mm (0.00328 ft) from the curve, the polygon's area
    falls short of the ellipse's by less than perimeter x chord distance (Ramanujan's
    perimeter, 9.688 ft).
    """
    def draw(msp, layer):  # type: ignore[no-untyped-def]
        msp.add_ellipse((20, 20), major_axis=(2, 0), ratio=0.5, dxfattribs={"layer": layer})
    _drawing(site_dir, draw)
    (area,) = _areas(site_dir)
    a, b, chord_ft = 2.0, 1.0, 0.001 / 0.3048
    perimeter = math.pi * (3 * (a + b) - math.sqrt((3 * a + b) * (a + 3 * b)))
    assert 0 <= math.pi * a * b - area <= perimeter * chord_ft


@pytest.mark.parametrize("case, expected", [
    ("zero_circle", "zero-radius circle"),
    ("insert", "block reference"),
    ("nan", "not a finite number"),
])
def test_unreadable_outlines_refused_by_handle(site_dir: Path, case: str, expected: str) -> None:
    """A zero-radius circle, a block insert and a NaN vertex are refused with layer and handle."""
    def draw(msp, layer):  # type: ignore[no-untyped-def]
        if case == "zero_circle":
            msp.add_circle((20, 20), 0.0, dxfattribs={"layer": layer})
        elif case == "insert":
            block = msp.doc.blocks.new("DELAM_BLOCK")
            block.add_lwpolyline([(0, 0), (2, 0), (2, 2), (0, 2)], close=True)
            msp.add_blockref("DELAM_BLOCK", (20, 20), dxfattribs={"layer": layer})
        else:
            msp.add_lwpolyline([(12, 8), (float("nan"), 8), (18, 12), (12, 12)], close=True,
                               dxfattribs={"layer": layer})
    _drawing(site_dir, draw)
    msg = _fails(site_dir, expected, "layer DELAM", "handle")
    assert "internal error" not in msg


def test_layer_name_with_a_quote(site_dir: Path) -> None:
    """A layer named DEL"AM (a quote broke the entity query: an internal error) is read.

    ezdxf will not create such a name, other CAD programs do: the name is put in the file's text.
    """
    def draw(msp, layer):  # type: ignore[no-untyped-def]
        msp.add_lwpolyline([(12, 8), (18, 8), (18, 12), (12, 12)], close=True,
                           dxfattribs={"layer": layer})
    _drawing(site_dir, draw, layer="DELQQAM")
    dxf = site_dir / "sounding" / "sounding.dxf"
    dxf.write_text(dxf.read_text().replace("DELQQAM", 'DEL"AM'))
    edit(site_dir / "site.toml", 'layer = "DELAM"', "layer = 'DEL\"AM'")
    assert _areas(site_dir) == [pytest.approx(24.0)]  # 6 x 4 ft, hand computation


def test_reader_is_the_package_s() -> None:
    """The tests above go through the package's layer reader (not a copy of it)."""
    assert read_layer.__module__ == "geo_corrosion.io.plans"


def test_a_drawing_named_by_several_layers_is_parsed_once_per_opening(
        site_dir: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """Opening a site parses each DXF file once however many layers name it; a redrawn file anew.

    Source: hand count of the site file's references (the sounding drawing is named by its
    DELAM and SPALL layers, one file), and the outlines read are those of a fresh parse.
    """
    from ezdxf import recover

    _drawing(site_dir, lambda msp, layer: msp.add_lwpolyline(
        [(2, 2), (6, 2), (6, 5), (2, 5)], close=True, dxfattribs={"layer": layer}))
    parsed: list[str] = []
    real = recover.readfile

    def counting(name: str, *a: object, **kw: object):  # type: ignore[no-untyped-def]
        parsed.append(Path(name).name)
        return real(name, *a, **kw)

    monkeypatch.setattr(recover, "readfile", counting)
    assert _areas(site_dir) == pytest.approx([12.0])
    assert parsed.count("sounding.dxf") == 1
    # outside an opening every read parses the file; a redrawn file is parsed again
    _drawing(site_dir, lambda msp, layer: msp.add_lwpolyline(
        [(2, 2), (8, 2), (8, 5), (2, 5)], close=True, dxfattribs={"layer": layer}))
    assert _areas(site_dir) == pytest.approx([18.0])
    assert parsed.count("sounding.dxf") == 2

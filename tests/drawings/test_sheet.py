"""Drawing sheets (issue 13 item 1) written and read back with ezdxf and pdftotext.

ezdxf is the reference reader of the DXF; pdftotext (poppler) reads the PDF's text.  The
level is invented: a 60 x 40 ft deck with a crowd of delaminations, a spall, a joint and an
exclusion.
"""

from __future__ import annotations

import math
import re
import shutil
import subprocess
from itertools import combinations

import ezdxf
import pytest
import shapely
from repair.helpers import sources
from shapely.geometry import LineString, Point, Polygon, box
from shapely.ops import unary_union

from geo_corrosion.errors import ExportError
from geo_corrosion.exporters.dxf import write_level_dxf
from geo_corrosion.exporters.sheet import CHAR_WIDTH, LINE_SPACING
from geo_corrosion.exporters.sheet_dxf import SheetInfo
from geo_corrosion.exporters.sheet_pdf import write_sheet_pdf
from geo_corrosion.repair import LayoutParams, layout_repairs
from geo_corrosion.units import report_units
from geo_corrosion.zoning import ZoningLayers, default_rules, zone

SLAB = box(0, 0, 60, 40)  # feet
EXCL = [box(20, 0, 21, 1)]
JOINTS = [LineString([(45, 0), (45, 40)])]
DELAMS = [Point(10, 10).buffer(1.0), box(30, 20, 32, 21), box(33, 20, 35, 22),
          Point(12, 13).buffer(0.8), Point(14, 9.5).buffer(0.6), box(50, 30, 51, 31.5)]
SPALLS = [Point(40, 8).buffer(0.7)]
INFO = SheetInfo(project="Test Garage Restoration", owner="Test Parking Authority",
                 engineer="A. Engineer, PE", title="Level P1", number="R-1", of=1,
                 date="2026-12-03", revisions=(("0", "2026-12-03", "Issued for review"),))


@pytest.fixture(scope="module")
def level():
    rep = layout_repairs(sources(DELAMS + SPALLS, kind="delamination"), slab=SLAB,
                         exclusions=EXCL, joints=JOINTS, unit="ft",
                         params=LayoutParams(margin_mm=152.4), level_id="P1")
    zones = zone(SLAB, EXCL, ZoningLayers(delaminated=unary_union(DELAMS),
                                          low_cover=Point(50, 20).buffer(8)),
                 default_rules(), unit="ft", level_id="P1")
    return rep, zones


def _write(path, level, **kw):
    rep, zones = level
    args = dict(slab=SLAB, exclusions=EXCL, joints=JOINTS, repairs=rep, zones=zones,
                delaminations=DELAMS, spalls=SPALLS, unit="ft", title="Level P1",
                cautions=["Survey data, not a structural assessment.",
                          "Never cut into tendons or reinforcement."],
                units=report_units("us"), sheet=INFO, zone_tolerance=1.0)
    args.update(kw)
    return write_level_dxf(path, **args)


@pytest.fixture(scope="module")
def sheet(tmp_path_factory, level):
    out = _write(tmp_path_factory.mktemp("sheet") / "P1_repairs.dxf", level)
    return out, ezdxf.readfile(out)


def _paper(doc):
    return next(lay for lay in doc.layouts if not lay.is_modelspace)


def _labels(doc):
    """Label blocks: the TEXT lines on GC-LABEL grouped by left x, in reading order."""
    texts = sorted(doc.modelspace().query('TEXT[layer=="GC-LABEL"]'),
                   key=lambda t: (round(t.dxf.insert.x, 6), -t.dxf.insert.y))
    blocks, cur = [], []
    for t in texts:
        if cur and (abs(t.dxf.insert.x - cur[-1].dxf.insert.x) > 1e-6 or abs(
                cur[-1].dxf.insert.y - t.dxf.insert.y - LINE_SPACING * t.dxf.height) > 1e-6):
            blocks.append(cur)
            cur = []
        cur.append(t)
    return blocks + ([cur] if cur else [])


def _box(t):
    """A TEXT's box from its left base point, height and length (CHAR_WIDTH per character)."""
    x, y, h = t.dxf.insert.x, t.dxf.insert.y, t.dxf.height
    return box(x, y, x + len(t.dxf.text) * CHAR_WIDTH * h, y + h)


def _feet(s: str) -> float:
    m = re.fullmatch(r"(\d+)'-(\d+)(?: (\d)/(\d))?\"", s)
    assert m, s
    frac = int(m[3]) / int(m[4]) if m[3] else 0.0
    return int(m[1]) + (int(m[2]) + frac) / 12.0


def test_layers_of_their_own(sheet, level) -> None:
    _, doc = sheet
    names = {ly.dxf.name for ly in doc.layers}
    # this project's own layer names (exporters/dxf.py), one per kind of thing drawn
    assert {"GC-SLAB", "GC-EXCLUSION", "GC-JOINT", "GC-DELAM", "GC-SPALL", "GC-LABEL",
            "GC-STATION", "GC-REPAIR-PARTIAL-BELOW-BARS", "GC-ZONE-REPAIR",
            "GC-ZONE-LOW-COVER", "GC-SHEET", "GC-SHEET-TEXT"} <= names
    msp = doc.modelspace()
    # spalls on their own layer, not with the delaminations (hand count of the inputs)
    assert len(msp.query('LWPOLYLINE[layer=="GC-DELAM"]')) == len(DELAMS)
    assert len(msp.query('LWPOLYLINE[layer=="GC-SPALL"]')) == len(SPALLS)
    assert doc.header["$INSUNITS"] == 2  # DXF code 2 = feet (ezdxf.units.FT)
    assert "GC-COLUMN-GRID" not in names  # no column grid given: none drawn


def test_title_block_and_scale_in_paper_space(sheet) -> None:
    _, doc = sheet
    paper = _paper(doc)
    texts = [t.dxf.text for t in paper.query("TEXT")]
    for want in ("Test Garage Restoration", "Test Parking Authority", "A. Engineer, PE",
                 "Level P1", "R-1", "2026-12-03", "Issued for review", "GENERAL NOTES",
                 "LEGEND", "REPAIR TABLE", "GRID NORTH", "1\" = 10'"):
        assert want in texts, want
    assert texts.count("Level P1") == 1  # the title once, not repeated
    assert any("tendons" in t for t in texts)
    # the viewport shows model space at the scale the title block names (1" = 10' is
    # 120 model in per paper in: 10 ft per 25.4 mm; hand computation)
    vps = [v for v in paper.query("VIEWPORT") if v.dxf.status >= 2 and v.dxf.id != 1]
    assert len(vps) == 1
    vp = vps[0]
    assert vp.dxf.view_height / vp.dxf.height == pytest.approx(10.0 / 25.4)
    # scale bar in feet: its divisions of 10 ft are 1 in = 25.4 mm apart at 1" = 10' (hand
    # computation)
    marks = {}
    for t in paper.query('TEXT[layer=="GC-SHEET-TEXT"]'):
        if t.dxf.text in ("0", "10", "20", "ft"):
            _, p, _ = t.get_placement()
            marks.setdefault(round(p.y, 3), {})[t.dxf.text] = p.x
    (bar,) = [m for m in marks.values() if {"0", "10", "20"} <= set(m)]
    assert bar["10"] - bar["0"] == pytest.approx(25.4)
    assert bar["20"] - bar["10"] == pytest.approx(25.4)
    # the sheet is ANSI D, 34 x 22 in (common practice for US sites)
    assert (paper.dxf.paper_width, paper.dxf.paper_height) == pytest.approx((863.6, 558.8))


def test_every_repair_labelled_with_its_sides(sheet, level) -> None:
    rep, _ = level
    _, doc = sheet
    blocks = {b[0].dxf.text.split()[0]: b for b in _labels(doc)}
    assert set(blocks) == set(rep.repair_id)
    for r in rep.itertuples():
        first, dims = (t.dxf.text for t in blocks[r.repair_id])
        assert first == f"{r.repair_id} PB"  # id and depth class code (legend)
        a, b = dims.removesuffix(" max").split(" x ")
        # sides of the rectangle, by hand from its bounds (the layout is axis-aligned)
        x0, y0, x1, y1 = r.geometry.bounds
        # the label gives grid x by grid y when the layout sets the sides (h/geom's
        # `dimensions`), the longer side first otherwise: compare the pair unordered
        want = sorted((x1 - x0, y1 - y0), reverse=True)
        got = sorted((_feet(a), _feet(b)), reverse=True)
        assert got[0] == pytest.approx(want[0], abs=1 / 96)  # to 1/4 in: half is 1/96 ft
        assert got[1] == pytest.approx(want[1], abs=1 / 96)
        assert dims.endswith(" max") == (abs(r.geometry.area - (x1 - x0) * (y1 - y0)) > 1e-6)


def test_labels_overlap_neither_each_other_nor_outlines(sheet, level) -> None:
    rep, _ = level
    _, doc = sheet
    texts = list(doc.modelspace().query('TEXT[layer=="GC-LABEL"]'))
    assert len(texts) == 2 * len(rep)
    boxes = [_box(t) for t in texts]
    for (i, a), (j, b) in combinations(enumerate(boxes), 2):
        assert a.intersection(b).area < 1e-9, (texts[i].dxf.text, texts[j].dxf.text)
    outlines = unary_union([g.boundary for g in [*rep.geometry, *DELAMS, *SPALLS]])
    for t, b in zip(texts, boxes, strict=True):
        assert not b.intersects(outlines), t.dxf.text
    # a label that stands off its repair has a leader touching the repair
    leaders = doc.modelspace().query('LWPOLYLINE[layer=="GC-LABEL"]')
    repairs = unary_union(list(rep.geometry)).boundary
    for ld in leaders:
        end = Point(ld.get_points("xy")[-1])
        assert end.distance(repairs) < 1e-6


def test_sounded_areas_numbered_as_the_schedule_lists_them(tmp_path, level) -> None:
    # issue 13: the per-repair schedule names the sounded areas it covers (D1, S1, ...), so
    # the sheet carries those numbers beside each area; the numbering is the library's own
    # (repair.tender.sounding_labels: top of the plan down, then left to right)
    from geo_corrosion.repair.tender import sounding_labels

    numbers = [*sounding_labels(DELAMS, "D"), *sounding_labels(SPALLS, "S")]
    doc = ezdxf.readfile(_write(tmp_path / "P1.dxf", level, sounding_numbers=numbers))
    msp = doc.modelspace()
    texts = list(msp.query('TEXT[layer=="GC-SOUNDING-LABEL"]'))
    assert sorted(t.dxf.text for t in texts) == sorted(numbers)
    # hand: the top-most delamination (box 50-51 x 30-31.5) is D1, the spall S1
    assert numbers[DELAMS.index(DELAMS[5])] == "D1" and numbers[-1] == "S1"
    by_text = {t.dxf.text: t for t in texts}
    others = [_box(t) for t in msp.query('TEXT[layer=="GC-LABEL"]')]
    outlines = unary_union([g.boundary for g in [*level[0].geometry, *DELAMS, *SPALLS]])
    leaders = list(msp.query('LWPOLYLINE[layer=="GC-SOUNDING-LABEL"]'))
    for n, g in zip(numbers, [*DELAMS, *SPALLS], strict=True):
        b = _box(by_text[n])
        # beside its own area (within a few text heights, or joined to it by a leader),
        # on no repair label and no outline
        near = b.distance(g) < 4 * by_text[n].dxf.height or any(
            Point(ld.get_points("xy")[-1]).distance(g) < 1e-6 for ld in leaders)
        assert near, n
        assert not any(b.intersection(o).area > 1e-9 for o in others), n
        assert not b.intersects(outlines), n


def test_a_hatch_per_repair_by_depth_class(sheet, level) -> None:
    rep, _ = level
    _, doc = sheet
    hatches = doc.modelspace().query('HATCH[layer=="GC-REPAIR-PARTIAL-BELOW-BARS"]')
    assert len(hatches) == len(rep)
    assert {h.dxf.pattern_name for h in hatches} == {"ANSI37"}  # our choice for PB
    legend = [t.dxf.text for t in _paper(doc).query("TEXT")]
    assert any("below the bars (PB)" in t for t in legend)


def _drawn(doc, layer):
    """The polygons of a layer's closed polylines, rings inside another ring as holes."""
    rings = [Polygon(p.get_points("xy")) for p in
             doc.modelspace().query(f'LWPOLYLINE[layer=="{layer}"]')]
    holes = [r for r in rings if any(o is not r and o.contains(r) for o in rings)]
    outer = [r for r in rings if all(r is not h for h in holes)]
    return unary_union(outer).difference(unary_union(holes)) if holes else unary_union(outer)


def test_zone_outlines_cleaned(sheet, level) -> None:
    _, zones = level
    _, doc = sheet
    for z in zones.itertuples():
        lay = f"GC-ZONE-{z.zone.upper().replace('_', '-')}"
        drawn = _drawn(doc, lay)
        # area kept within the stated 2 % (exporters/sheet.py clean_outline; derived)
        assert drawn.area == pytest.approx(z.geometry.area, rel=0.02), z.zone
        # the deck's own notch (the exclusion) stays cut out of every zone (derived)
        assert drawn.intersection(EXCL[0]).area < 1e-9, z.zone
        n_in = shapely.get_num_coordinates(z.geometry)
        assert shapely.get_num_coordinates(drawn) <= n_in, z.zone
    # the cleaned zones still partition the deck: neighbours share their edges, no gap and
    # no overlap (derived: the zones partition the deck before cleaning)
    drawn = [_drawn(doc, f"GC-ZONE-{n.upper().replace('_', '-')}") for n in zones.zone]
    deck = SLAB.difference(EXCL[0])
    assert sum(d.area for d in drawn) == pytest.approx(deck.area, rel=1e-9)
    assert unary_union(drawn).symmetric_difference(deck).area < 1e-9
    # the repair zone is priced as drawn: it stays exact
    rep_zone = zones.geometry[list(zones.zone).index("repair")]
    assert drawn[list(zones.zone).index("repair")].symmetric_difference(rep_zone).area < 1e-9


def test_column_grid_drawn_when_given(tmp_path, level) -> None:
    grid = [("A", LineString([(0, -2), (0, 42)])), ("B", LineString([(30, -2), (30, 42)])),
            ("1", LineString([(-2, 20), (62, 20)]))]
    doc = ezdxf.readfile(_write(tmp_path / "g.dxf", level, column_grid=grid))
    msp = doc.modelspace()
    assert {t.dxf.text for t in msp.query('TEXT[layer=="GC-COLUMN-GRID"]')} == {"A", "B", "1"}
    assert len(msp.query('CIRCLE[layer=="GC-COLUMN-GRID"]')) == 6  # a bubble at each end
    assert len(msp.query('TEXT[layer=="GC-STATION"]')) == 0


def test_site_crs_option(tmp_path, level) -> None:
    # a grid turned 30 degrees and moved, in metres: model space in the site CRS
    a = math.radians(30.0)

    def to_site(g):
        return shapely.transform(g, lambda xy: (xy * 0.3048) @ [[math.cos(a), math.sin(a)],
                                                                 [-math.sin(a), math.cos(a)]]
                                 + [500000.0, 4500000.0])

    doc = ezdxf.readfile(_write(tmp_path / "s.dxf", level, to_model=to_site, model_unit="m"))
    assert doc.header["$INSUNITS"] == 6  # DXF code 6 = metres
    slab = doc.modelspace().query('LWPOLYLINE[layer=="GC-SLAB"]')[0]
    assert Polygon(slab.get_points("xy")).equals_exact(to_site(SLAB), 1e-6) or \
        Polygon(slab.get_points("xy")).symmetric_difference(to_site(SLAB)).area < 1e-6


def test_plan_too_big_is_refused(tmp_path) -> None:
    big = box(0, 0, 3000, 2000)  # ft: at 1" = 100' it needs 30 x 20 in, more than ANSI D holds
    with pytest.raises(ExportError, match=r"\[drawings\]\.sheet.*does not fit the drawing "
                                          r"area of the ANSI-D sheet.*1\" = 100'"):
        write_level_dxf(tmp_path / "big.dxf", slab=big, exclusions=[], joints=[],
                        repairs=None, zones=None, delaminations=[], unit="ft", title="Big",
                        cautions=[], units=report_units("us"))
    assert not list(tmp_path.iterdir())
    # the exporter names the site file and the key (exporters/drawings.py)
    named = SheetInfo(project="P", owner="O", engineer="E", title="Big", sheet="ANSI-C",
                      where="/x/site.toml: [drawings].sheet")
    with pytest.raises(ExportError, match=r"^/x/site\.toml: \[drawings\]\.sheet: the plan of "
                                          r"Big \(3000 x 2000 ft\) does not fit .* ANSI-C"):
        write_level_dxf(tmp_path / "big.dxf", slab=big, exclusions=[], joints=[],
                        repairs=None, zones=None, delaminations=[], unit="ft", title="Big",
                        cautions=[], units=report_units("us"), sheet=named)
    assert not list(tmp_path.iterdir())


@pytest.mark.skipif(shutil.which("pdftotext") is None, reason="poppler's pdftotext needed")
def test_pdf_reads_back(tmp_path, sheet) -> None:
    dxf, _ = sheet
    pdf = write_sheet_pdf(dxf, tmp_path / "P1_sheet.pdf")
    assert pdf.read_bytes().startswith(b"%PDF")
    text = subprocess.run(["pdftotext", "-layout", str(pdf), "-"], capture_output=True,
                          text=True, check=True).stdout
    # poppler as the reference reader: the title block and the scale are text in the PDF
    for want in ("Test Garage Restoration", "Level P1", "REPAIR TABLE", "1\" = 10'",
                 "P1-R001 PB", "GENERAL NOTES"):
        assert want in text, want
    info = subprocess.run(["pdfinfo", str(pdf)], capture_output=True, text=True,
                          check=True).stdout
    # one page of 34 x 22 in = 2448 x 1584 pt (common practice: ANSI D)
    assert re.search(r"Page size:\s+2448(\.\d+)? x 1584(\.\d+)? pts", info)
    assert re.search(r"Pages:\s+1\b", info)


@pytest.mark.skipif(shutil.which("pdftotext") is None, reason="poppler's pdftotext needed")
def test_pdf_from_the_sheet_in_memory_is_the_one_read_back(tmp_path, level) -> None:
    # the drawings exporter renders the document it has just written (pdf_path) instead of
    # reading the file back: poppler (pdftotext -bbox, the reference reader) finds the same
    # words at the same places in both PDFs, in Helvetica, a standard PDF font, not embedded
    dxf = _write(tmp_path / "P1_repairs.dxf", level, pdf_path=tmp_path / "mem.pdf")
    back = write_sheet_pdf(dxf, tmp_path / "back.pdf")

    def words(pdf):
        out = subprocess.run(["pdftotext", "-bbox", str(pdf), "-"], capture_output=True,
                             text=True, check=True).stdout
        return [w for w in out.splitlines() if "<word " in w]  # not the dates in <head>

    assert words(tmp_path / "mem.pdf") == words(back)
    assert any(">P1-R001<" in w for w in words(back))
    fonts = subprocess.run(["pdffonts", str(back)], capture_output=True, text=True,
                           check=True).stdout.splitlines()[2:]
    assert [f.split()[0] for f in fonts] == ["Helvetica"] and " no " in fonts[0]


def test_sides_and_location_from_the_repairs_attributes(tmp_path, level) -> None:
    # the layout's own figures win where it gives them (size_x_m, size_y_m in metres; the
    # contractor's text 'dimensions'; 'location'): the sheet then agrees with the schedule
    rep, zones = level
    rep = rep.copy()
    rep["size_x_m"] = 2.5 * 0.3048  # 2'-6" (NIST SP 811: 1 ft = 0.3048 m exactly)
    rep["size_y_m"] = 4.5 * 0.3048
    rep["dimensions"] = None
    rep.loc[rep.index[0], "dimensions"] = "2'-6\" x 4'-6\" (as cut)"
    rep["location"] = [f"near B/{i}" for i in range(len(rep))]
    doc = ezdxf.readfile(_write(tmp_path / "a.dxf", level, repairs=rep))
    blocks = {b[0].dxf.text.split()[0]: [t.dxf.text for t in b] for b in _labels(doc)}
    first, *others = rep.repair_id
    assert blocks[first][1].startswith("2'-6\" x 4'-6\" (as cut)")
    for rid in others:
        assert blocks[rid][1].removesuffix(" max") == "2'-6\" x 4'-6\""
    paper = [t.dxf.text for t in _paper(doc).query("TEXT")]
    assert "LOCATION" in paper and "near B/0" in paper

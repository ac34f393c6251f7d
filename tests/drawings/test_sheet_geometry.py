"""Sheet geometry: sheet sizes, scale choice, label placement and cleaned outlines."""

from __future__ import annotations

from itertools import combinations

import pytest
import shapely
from shapely.geometry import LineString, box

from geo_corrosion.errors import ExportError
from geo_corrosion.exporters.sheet import (
    SHEET_SIZES_MM,
    Label,
    choose_scale,
    clean_outline,
    clean_zones,
    format_length,
    place_labels,
    sheet_frame,
)


def test_sheet_sizes() -> None:
    # common practice: ANSI D is 34 x 22 in, ISO 216 A1 is 841 x 594 mm
    assert SHEET_SIZES_MM["ANSI-D"] == pytest.approx((863.6, 558.8))
    assert SHEET_SIZES_MM["ISO-A1"] == (841.0, 594.0)
    with pytest.raises(ExportError, match=r"\[drawings\]\.sheet: unknown sheet 'A4'"):
        sheet_frame("A4")


def test_scale_is_the_largest_standard_one_that_fits() -> None:
    frame = sheet_frame("ANSI-D")
    dw = frame.drawing[2] - frame.drawing[0] - 50.0  # 25 mm kept each side
    # hand computation: 180 ft at 1" = 10' is 18 in = 457 mm, within the drawing width
    assert dw > 457.2
    assert choose_scale((0, 0, 180, 120), "ft", "us", frame).label == "1\" = 10'"
    # 300 ft needs 762 mm at 1" = 10' (too wide) and 381 mm at 1" = 20'
    assert choose_scale((0, 0, 300, 100), "ft", "us", frame).label == "1\" = 20'"
    # metric: 60 m at 1:100 is 600 mm (too wide on A1's drawing area), 300 mm at 1:200
    a1 = sheet_frame("ISO-A1")
    assert choose_scale((0, 0, 60, 20), "m", "metric", a1).label == "1:200"
    assert choose_scale((0, 0, 30, 20), "m", "metric", a1).label == "1:100"
    with pytest.raises(ExportError, match="does not fit .* at any standard scale down to 1:1000"):
        choose_scale((0, 0, 900, 100), "m", "metric", a1)


def test_lengths_as_drawings_write_them() -> None:
    # hand computation: 2.4375 ft = 2 ft 5.25 in; 4.41 ft = 52.92 in -> 53 in to 1/4 in
    assert format_length(2.4375, "ft", "us") == "2'-5 1/4\""
    assert format_length(4.41, "ft", "us") == "4'-5\""
    assert format_length(3.0, "ft", "us") == "3'-0\""
    assert format_length(2.466, "m", "metric") == "2466"


def test_labels_in_a_crowd_do_not_overlap() -> None:
    # a row of small touching repairs: labels must go beside each other, with leaders
    shapes = [box(i * 1.2, 0, i * 1.2 + 1.0, 1.0) for i in range(8)]
    labels = [Label(f"R{i}", s, (f"L-R00{i} PB", "1'-0\" x 1'-0\"")) for i, s in
              enumerate(shapes)]
    placed = place_labels(labels, h=0.25, hard=shapes)
    assert [p.key for p in placed] == [f"R{i}" for i in range(8)]
    for a, b in combinations(placed, 2):
        assert not a.box.intersects(b.box), (a.key, b.key)
    outlines = shapely.union_all([s.boundary for s in shapes])
    for p in placed:
        assert not p.box.intersects(outlines)
        if p.leader is not None:
            assert p.leader.intersects(shapes[int(p.key[1:])])
    assert any(p.leader is not None for p in placed)  # the crowd needs leaders


def test_labels_avoid_soft_lines_when_they_can() -> None:
    shape = box(0, 0, 1, 1)
    wall = LineString([(1.25, -5), (1.25, 5)])  # a joint just east of the repair
    (p,) = place_labels([Label("R1", shape, ("R1",))], h=0.2, hard=[shape], soft=[wall])
    assert not p.box.intersects(wall)


def test_staircase_cleaned_within_two_percent() -> None:
    # a raster staircase of 1 ft cells along a diagonal, as the zone outlines come
    cells = [box(i, 0, i + 1, 20 - i) for i in range(20)]
    stair = shapely.union_all(cells)
    clean = clean_outline(stair, 1.0)
    assert len(clean.exterior.coords) < len(stair.exterior.coords) / 4
    assert abs(clean.area - stair.area) < 0.02 * stair.area  # the stated share
    assert clean.is_valid


def test_drawings_keys_read_and_checked(tmp_path) -> None:
    from geo_corrosion.errors import SiteFileError
    from geo_corrosion.stages.read_site import read_site
    from geo_corrosion.testing import make_synthetic_site

    make_synthetic_site(tmp_path)
    site = tmp_path / "site.toml"
    text = site.read_text()
    assert read_site(site).drawings.coords == "grid"  # the default (config.py)
    site.write_text(text + '\n[drawings]\ncoords = "site"\nsheet = "ISO-A0"\n'
                           'engineer = "A. Engineer"\n')
    d = read_site(site).drawings
    assert (d.coords, d.sheet, d.engineer) == ("site", "ISO-A0", "A. Engineer")
    site.write_text(text + '\n[drawings]\nsheet = "A4"\n')
    with pytest.raises(SiteFileError, match=r"\[drawings\]\.sheet.*ANSI-D"):
        read_site(site)


def test_cleaned_zones_still_partition_the_deck() -> None:
    # a staircase zone A with an exact zone R cut into its steps, and the rest B: cleaning A
    # must neither overlap R nor leave a gap (derived: the inputs partition the deck)
    deck = box(0, 0, 40, 40)
    stair = shapely.union_all([box(i, 0, i + 1, 40 - i) for i in range(40)])
    r = box(19.5, 19.5, 21.5, 21.5)  # short sides: a cleaned neighbour would cut into it
    a = stair.difference(r)
    b = deck.difference(stair).difference(r)
    out = clean_zones([r, a, b], 1.0, deck, exact=[True, False, False])
    assert out[0].equals(r)  # exact: as given
    assert shapely.get_num_coordinates(out[1]) < shapely.get_num_coordinates(a) / 2
    assert sum(g.area for g in out) == pytest.approx(deck.area, rel=1e-9)
    for g, h in combinations(out, 2):
        assert g.intersection(h).area < 1e-9
    for g, z in zip(out, (r, a, b), strict=True):
        assert abs(g.area - z.area) < 0.02 * z.area  # the stated share
    # a staircase zone marked exact is not cleaned
    kept = clean_zones([stair, deck.difference(stair)], 1.0, deck, exact=[True, False])
    assert kept[0].equals(stair)
    assert not clean_zones([stair, deck.difference(stair)], 1.0, deck)[0].equals(stair)

"""The planning stage's tender data on the synthetic site (issue 13 item 3).

Soffit delaminations become overhead repairs of their own; treatments are priced on
whole bays; the sounded areas carry their numbers.  Hand-worked on invented geometry.
"""

from __future__ import annotations

import json
from pathlib import Path

import geopandas as gpd
import pytest
from shapely.geometry import LineString, box

from geo_corrosion.errors import GeometryWarning
from geo_corrosion.stages.open_site import open_site
from geo_corrosion.stages.plan_repairs import (
    pay_area_frame,
    plan_level,
    planning_params,
    sounding_numbers,
)
from geo_corrosion.stages.read_site import read_site
from geo_corrosion.testing import make_synthetic_site

FT2 = 0.3048**2


def _geojson(path: Path, geoms: list[list[list[float]]]) -> None:
    feats = [{"type": "Feature", "properties": {},
              "geometry": {"type": "Polygon", "coordinates": [g]}} for g in geoms]
    path.write_text(json.dumps({"type": "FeatureCollection", "features": feats}))


@pytest.fixture(scope="module")
def site(tmp_path_factory: pytest.TempPathFactory):
    p = make_synthetic_site(tmp_path_factory.mktemp("tender") / "site")
    # a soffit delamination under the deck, 2 x 2 ft at (40, 30), away from the columns
    _geojson(p.parent / "sounding" / "soffit.geojson",
             [[[40, 30], [42, 30], [42, 32], [40, 32], [40, 30]]])
    text = p.read_text().replace(
        "overlays = [ ", 'overlays = [ { kind = "soffit_delamination", '
        'path = "sounding/soffit.geojson" }, ')
    p.write_text(text)
    return open_site(read_site(p)), read_site(p)


def test_soffit_delaminations_are_overhead_repairs(site) -> None:
    s, cfg = site
    lv = next(iter(s.levels.values()))
    repairs, zones, _ = plan_level(lv, {}, planning_params(cfg))  # our warnings are errors
    oh = repairs[repairs["face"] == "soffit"]
    top = repairs[repairs["face"] == "top"]
    # one overhead repair, its own id series, priced as REP-OVH
    assert list(oh["repair_id"]) == ["D1-OH001"]
    assert list(oh["bid_item"]) == ["REP-OVH"]
    assert list(oh["sounded"]) == ["OD1"]
    # hand computation: 2 ft + 2 x 6 in margin = 3 ft, a multiple of 3 in: 3'-0" x 3'-0"
    assert list(oh["dimensions"]) == ["3'-0\" x 3'-0\""]
    assert len(top) >= 1 and set(top["bid_item"]) <= {"REP-PD-SURF", "REP-PD-BARS"}
    # the soffit repair is no part of the top surface's repair zone
    rz = zones[zones["zone"] == "repair"]
    assert rz.geometry.union_all().intersection(oh.geometry.iloc[0]).area == pytest.approx(0)


def test_sounded_areas_are_numbered_per_kind(site) -> None:
    s, _ = site
    lv = next(iter(s.levels.values()))
    nums = sounding_numbers(lv)
    assert nums["soffit_delamination"] == ["OD1"]
    for kind, prefix in (("delamination", "D"), ("spall", "S")):
        n = len(lv.overlays.get(kind, ()))
        assert sorted(nums.get(kind, []), key=lambda t: int(t[len(prefix):])) == [
            f"{prefix}{i}" for i in range(1, n + 1)]


def test_pay_area_frame_by_bay_and_by_level(site) -> None:
    # the synthetic deck is 60 x 40 ft with a joint drawn here at x = 30: two bays of
    # 1200 ft2 less the columns; a treatment zone of 10 x 10 ft in the west bay covers
    # 100 / 1200 = 8.3 % (more than 5 %: the west bay is paid whole), none of the east one
    import dataclasses

    from geo_corrosion.io.plans import Feature

    s, cfg = site
    lv = next(iter(s.levels.values()))
    lv = dataclasses.replace(lv, joints=(Feature(LineString([(30, -1), (30, 41)]), "j"),))
    zones = gpd.GeoDataFrame({"level_id": ["D1"], "zone": ["active"], "treatment": ["t"],
                              "bid_item": ["TREAT-ACTIVE"], "area_m2": [100 * FT2]},
                             geometry=[box(5, 25, 15, 35)])
    p = dataclasses.replace(planning_params(cfg), pay_area="bay", pay_area_share=0.05)
    pa = pay_area_frame(lv, zones, p)
    west = box(0, 0, 30, 40).intersection(lv.deck)
    assert list(pa["bay"]) == ["D1-B01"]
    assert pa["area_m2"].iloc[0] == pytest.approx(west.area * FT2)
    # the whole level
    pl = pay_area_frame(lv, zones, dataclasses.replace(p, pay_area="level"))
    assert pl["area_m2"].iloc[0] == pytest.approx(lv.deck.area * FT2)
    # priced as zoned: no pay areas
    assert pay_area_frame(lv, zones, dataclasses.replace(p, pay_area="zone")) is None
    # a share no bay reaches: not priced, and said so
    with pytest.warns(GeometryWarning, match="covers no bay"):
        none = pay_area_frame(lv, zones, dataclasses.replace(p, pay_area_share=0.5))
    assert none is not None and none.empty


def _grid_dxf(path: Path, *, label_x40: bool = True) -> None:
    import ezdxf

    doc = ezdxf.new("R2010")
    doc.header["$INSUNITS"] = 2  # feet
    msp = doc.modelspace()
    doc.layers.add("GRID")
    for x, name in ((20, "2"), (40, "3")):
        msp.add_line((x, -2), (x, 42), dxfattribs={"layer": "GRID"})
        if x != 40 or label_x40:
            msp.add_text(name, dxfattribs={"layer": "GRID", "insert": (x, 43)})
    msp.add_line((-2, 20), (62, 20), dxfattribs={"layer": "GRID"})
    msp.add_text("B", dxfattribs={"layer": "GRID", "insert": (-4, 20)})
    doc.saveas(path)


def test_column_grid_locates_repairs_and_splits_bays(tmp_path: Path) -> None:
    # hand-worked: column lines 2 (x = 20), 3 (x = 40) and B (y = 20) on the 60 x 40 ft
    # synthetic deck; each repair is located from the nearest of B/2 (20, 20) and B/3
    # (40, 20) to its centre; the bays are the deck cut at the three lines: 6 bays
    import dataclasses

    from geo_corrosion.repair.tender import bays

    p = make_synthetic_site(tmp_path / "site")
    _grid_dxf(p.parent / "plans" / "grid.dxf")
    p.write_text(p.read_text().replace(
        "[levels.grid]", 'column_grid = { path = "plans/grid.dxf", layer = "GRID" }\n'
        "[levels.grid]", 1))
    cfg = read_site(p)
    lv = next(iter(open_site(cfg).levels.values()))
    assert sorted(f.label for f in lv.column_grid) == ["2", "3", "B"]
    repairs, _, _ = plan_level(lv, {}, planning_params(cfg))
    # the stock delamination 12..18 x 8..12 ft grown by 6 in: 11.5..18.5 x 7.5..12.5,
    # 7 x 5 ft (multiples of 3 in already), centre (15, 10): 5 ft short of line 2 in x,
    # 10 ft short of line B in y
    assert list(repairs["location"]) == ["B/2 -5.00 ft x, -10.00 ft y"]
    assert list(repairs["dimensions"]) == ["7'-0\" x 5'-0\""]
    for g, loc in zip(repairs.geometry, repairs["location"], strict=True):
        x0, y0, x1, y1 = g.bounds
        cx, cy = (x0 + x1) / 2, (y0 + y1) / 2
        name, px = ("B/2", 20.0) if abs(cx - 20) <= abs(cx - 40) else ("B/3", 40.0)
        assert loc == f"{name} {cx - px:+.2f} ft x, {cy - 20:+.2f} ft y"
    cuts = [f.geometry for f in (*lv.joints, *lv.column_grid)]
    assert len(bays(lv.slab, cuts, 1e-9)) == 6
    # and the pay areas use them: a zone over the bay 0..20 x 0..20 alone pays that bay
    zones = gpd.GeoDataFrame({"level_id": ["D1"], "zone": ["z"], "treatment": ["t"],
                              "bid_item": ["PROTECT-LOWCOVER"], "area_m2": [0.0]},
                             geometry=[box(2, 2, 18, 18)])
    pa = pay_area_frame(lv, zones, dataclasses.replace(planning_params(cfg), pay_area="bay"))
    assert len(pa) == 1
    assert pa["area_m2"].iloc[0] == pytest.approx(box(0, 0, 20, 20).intersection(
        lv.deck).area * FT2)


def test_a_column_line_without_label_is_refused(tmp_path: Path) -> None:
    from geo_corrosion.errors import IngestError

    p = make_synthetic_site(tmp_path / "site")
    _grid_dxf(p.parent / "plans" / "grid.dxf", label_x40=False)
    # without a text near its ends, line 3 takes the nearest text: refused only when the
    # layer has no text at all, so drop every text here
    import ezdxf

    doc = ezdxf.readfile(p.parent / "plans" / "grid.dxf")
    for e in list(doc.modelspace().query("TEXT")):
        doc.modelspace().delete_entity(e)
    doc.saveas(p.parent / "plans" / "grid.dxf")
    p.write_text(p.read_text().replace(
        "[levels.grid]", 'column_grid = { path = "plans/grid.dxf", layer = "GRID" }\n'
        "[levels.grid]", 1))
    with pytest.raises(IngestError, match="without a label"):
        open_site(read_site(p))


def test_a_deck_locates_repairs_by_station_and_offset(tmp_path: Path) -> None:
    # hand-worked: the synthetic repair is centred at (15, 10) ft; with station 12+50 at
    # x = 0 and the centreline at y = 20: Sta. 12+65.00, 10.00 ft right of it
    p = make_synthetic_site(tmp_path / "site")
    p.write_text(p.read_text().replace(
        "[levels.grid]", "station_start = 1250.0\nstation_centerline_y = 20.0\n[levels.grid]", 1))
    cfg = read_site(p)
    lv = next(iter(open_site(cfg).levels.values()))
    repairs, _, _ = plan_level(lv, {}, planning_params(cfg))
    assert list(repairs["location"]) == ["Sta. 12+65.00, 10.00 ft Rt"]

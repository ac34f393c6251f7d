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

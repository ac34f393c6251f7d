"""The web map's repair popup names the zone holding most of the repair, invalid zones too.

A zone read back from the GeoPackage may not be a valid polygon (a staircase ring touching
itself, as a 100,000-reading synthetic garage gave: GEOS "TopologyException" stopped the
whole run).

Reference: shapely/GEOS themselves (the overlay of an invalid polygon raises; after
``make_valid`` it does not); the expected zone is a hand reading of the figures.
"""

from __future__ import annotations

import geopandas as gpd
import pytest
import shapely
from shapely.geometry import Polygon, box

from geo_corrosion.exporters.webmap.build import _zone_of


def test_zone_of_a_repair_over_an_invalid_zone() -> None:
    bow = Polygon([(0, 0), (10, 10), (10, 0), (0, 10)])  # self-intersecting at (5, 5)
    zones = gpd.GeoDataFrame({"zone": ["active", "none"]},
                             geometry=[bow, box(20, 0, 30, 10)])
    repairs = gpd.GeoDataFrame({"repair_id": ["L1-R001", "L1-R002"]},
                               geometry=[box(1, 4, 9, 6), box(22, 2, 24, 4)])
    assert not bow.is_valid
    with pytest.raises(shapely.errors.GEOSException):  # the failure this guards against
        zones.geometry.intersection(repairs.geometry.iloc[0])
    # hand: the first repair lies in the bow tie's two triangles, the second in the box
    assert _zone_of(repairs, zones) == ["active", "none"]
    assert _zone_of(repairs, None) == ["", ""]

# ruff: noqa: D103  (test names say what they check)
"""GeoTIFF writer."""

from __future__ import annotations

import numpy as np
import pyproj
import pytest
import rasterio

from geo_corrosion.errors import ExportError
from geo_corrosion.exporters.geotiff import write_geotiff
from geo_corrosion.surfaces import GridSpec


def test_geotiff_layout_and_metadata(tmp_path):
    g = GridSpec(1000.0, 2000.0, 0.5, nx=700, ny=600)
    mean = np.linspace(-500, -100, g.size).reshape(g.shape)
    mean[:10, :10] = np.nan
    var = np.full(g.shape, 25.0)
    out = write_geotiff(
        tmp_path / "L1_potential.tif", {"potential_mv": mean, "potential_variance_mv2": var},
        transform=g.affine(), crs=pyproj.CRS.from_epsg(32618),
        units={"potential_mv": "mV", "potential_variance_mv2": "mV^2"}, tags={"level": "L1"},
    )
    assert sorted(p.name for p in tmp_path.iterdir()) == ["L1_potential.tif"]  # no temp file left
    with rasterio.open(out) as ds:
        assert ds.count == 2 and ds.shape == (600, 700)
        assert ds.profile["tiled"] and ds.block_shapes[0] == (256, 256)
        assert ds.compression.name.lower() == "deflate"
        assert ds.overviews(1) == [2, 4, 8]
        assert ds.nodata == -9999.0
        assert ds.crs.to_epsg() == 32618
        assert ds.descriptions == ("potential_mv", "potential_variance_mv2")
        assert ds.units == ("mV", "mV^2")
        assert ds.tags()["level"] == "L1"
        assert ds.transform == g.affine()
        band = ds.read(1, masked=True)
        assert band.mask[:10, :10].all() and not band.mask[10:, 10:].any()
        np.testing.assert_allclose(band[10:, 10:], mean[10:, 10:], rtol=1e-6)


def test_geotiff_refusals(tmp_path):
    a = np.zeros((4, 4))
    g = GridSpec(0.0, 0.0, 1.0, nx=4, ny=4)
    with pytest.raises(ExportError, match="no unit"):
        write_geotiff(tmp_path / "a.tif", {"x": a}, transform=g.affine(), crs=None, units={})
    p = write_geotiff(tmp_path / "a.tif", {"x": a}, transform=g.affine(), crs=None,
                      units={"x": "mV"})
    with pytest.raises(ExportError, match="overwrite"):
        write_geotiff(p, {"x": a}, transform=g.affine(), crs=None, units={"x": "mV"},
                      overwrite=False)
    with pytest.raises(ExportError, match="one shape"):
        write_geotiff(tmp_path / "b.tif", {"x": a, "y": np.zeros((3, 3))}, transform=g.affine(),
                      crs=None, units={"x": "mV", "y": "mV"})
    with pytest.raises(ExportError, match="does not exist"):
        write_geotiff(tmp_path / "no" / "c.tif", {"x": a}, transform=g.affine(), crs=None,
                      units={"x": "mV"})

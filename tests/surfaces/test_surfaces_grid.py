# ruff: noqa: D103  (test names say what they check)
"""Grids, masks and gridded kriging."""

from __future__ import annotations

import numpy as np
import pytest
import shapely

from geo_corrosion.errors import KrigingError, KrigingWarning
from geo_corrosion.surfaces import (
    GridSpec,
    VariogramModel,
    grid_for_polygon,
    krige,
    krige_grid,
    surface_mask,
)


def test_gridspec_geometry():
    g = GridSpec(10.0, 20.0, 2.0, nx=4, ny=3)
    assert g.shape == (3, 4) and g.bounds == (10.0, 20.0, 18.0, 26.0)
    np.testing.assert_allclose(g.x_centers(), [11, 13, 15, 17])
    np.testing.assert_allclose(g.y_centers(), [25, 23, 21])  # row 0 is the top (GeoTIFF)
    t = g.affine()
    assert (t.c, t.f, t.a, t.e) == (10.0, 26.0, 2.0, -2.0)  # upper-left corner, GeoTIFF style
    with pytest.raises(KrigingError):
        GridSpec(0.0, 0.0, 0.0, 1, 1)


def test_grid_snapped_to_cell_multiples():
    poly = shapely.box(0.3, -1.7, 10.7, 4.2)
    g = grid_for_polygon(poly, 0.5)
    assert (g.x0, g.y0, g.nx, g.ny) == (0.0, -2.0, 22, 13)
    xmin, ymin, xmax, ymax = g.bounds
    assert xmin <= 0.3 and ymin <= -1.7 and xmax >= 10.7 and ymax >= 4.2
    exact = grid_for_polygon(shapely.box(0.0, 0.0, 3.0, 1.5), 0.5)
    assert (exact.nx, exact.ny) == (6, 3)  # no extra cell when the edges are on multiples


def test_absurd_grid_refused():
    with pytest.raises(KrigingError, match="larger cell size"):
        grid_for_polygon(shapely.box(0, 0, 10_000, 10_000), 0.001)


def test_surface_mask_polygon_holes_and_distance():
    slab = shapely.Polygon([(0, 0), (10, 0), (10, 10), (0, 10)], [[(4, 4), (6, 4), (6, 6), (4, 6)]])
    g = grid_for_polygon(slab, 1.0)
    x = np.array([1.0, 9.0])
    y = np.array([1.0, 9.0])
    m = surface_mask(g, slab, x, y, max_distance=3.0)
    r_hole, c_hole = 5, 4  # cell centre (4.5, 4.5): in the exclusion
    assert g.x_centers()[c_hole] == 4.5 and g.y_centers()[r_hole] == 4.5
    m_all = surface_mask(g, slab, x, y, max_distance=None)
    assert not m_all[r_hole, c_hole] and m_all.sum() == 100 - 4
    cx, cy = np.meshgrid(g.x_centers(), g.y_centers())
    near = np.minimum(np.hypot(cx - 1, cy - 1), np.hypot(cx - 9, cy - 9)) <= 3.0
    np.testing.assert_array_equal(m, m_all & near)


@pytest.fixture(scope="module")
def readings():
    rng = np.random.default_rng(4)
    x, y = rng.uniform(0, 30, 300), rng.uniform(0, 20, 300)
    z = -300 + 50 * np.sin(x / 5) + rng.normal(0, 5, 300)
    return x, y, z


def test_krige_grid_equals_pointwise_and_masks(readings):
    x, y, z = readings
    g = GridSpec(0.0, 0.0, 0.5, nx=60, ny=40)
    m = VariogramModel("spherical", 20.0, 1200.0, 12.0)
    mask = np.zeros(g.shape, bool)
    mask[5:30, 10:50] = True
    calls = []
    mean, var = krige_grid(x, y, z, g, m, mask=mask, progress=lambda d, t: calls.append((d, t)))
    assert np.isnan(mean[~mask]).all() and np.isfinite(mean[mask]).all()
    cx, cy = np.meshgrid(g.x_centers(), g.y_centers())
    pm, pv = krige(x, y, z, cx[mask], cy[mask], m)
    np.testing.assert_allclose(mean[mask], pm, rtol=1e-12)  # same engine on cell centres
    np.testing.assert_allclose(var[mask], pv, rtol=1e-12)
    assert calls[-1] == (mask.sum(), mask.sum())
    with pytest.raises(KrigingError, match="mask shape"):
        krige_grid(x, y, z, g, m, mask=np.ones((3, 3), bool))


def test_empty_mask_warns(readings):
    x, y, z = readings
    g = GridSpec(0.0, 0.0, 1.0, nx=5, ny=5)
    with pytest.warns(KrigingWarning, match="no cell"):
        mean, _ = krige_grid(x, y, z, g, VariogramModel("exponential", 0, 1, 5),
                             mask=np.zeros((5, 5), bool))
    assert np.isnan(mean).all()


def test_log_transform_on_grid(readings):
    x, y, _ = readings
    res = np.exp(2.5 + 0.3 * np.cos(y / 4))  # resistivity, kOhm.cm
    g = GridSpec(0.0, 0.0, 1.0, nx=30, ny=20)
    mean, var = krige_grid(x, y, res, g, VariogramModel("exponential", 0.001, 0.05, 10.0),
                           transform="log")
    assert (mean > 0).all() and (var >= 0).all()
    assert mean.min() > res.min() * 0.8 and mean.max() < res.max() * 1.2

# ruff: noqa: D103  (test names say what they check)
"""Contour lines and bands."""

from __future__ import annotations

import numpy as np
import pytest
import shapely

from geo_corrosion.errors import KrigingError
from geo_corrosion.surfaces import GridSpec, check_contour_interval, contour_bands, contour_lines


@pytest.fixture()
def ramp():
    g = GridSpec(0.0, 0.0, 1.0, nx=41, ny=11)
    vals = np.linspace(-100.0, -500.0, 41)  # linear ramp along x, mV
    return g, np.tile(vals, (11, 1))


def test_hcp12_levels_on_ramp(ramp):
    g, a = ramp
    lines = contour_lines(a, g, interval=100.0)
    # interval 100 mV on a ramp -100..-500 -> levels {-200, -300, -400} (derived)
    assert [lev for lev, _ in lines] == [-400.0, -300.0, -200.0]
    for lev, geom in lines:
        x_expect = 0.5 + (lev + 100.0) / -10.0  # ramp: -10 mV per cell, first centre at x=0.5
        xs = np.asarray(geom.geoms[0].coords)[:, 0]
        np.testing.assert_allclose(xs, x_expect, atol=1e-9)


def test_interval_checks():
    # the limit is the kind's: the potential kind's 100 mV [ASTM-C876-91 §6.2, from memory];
    # the message names the limit's source
    with pytest.raises(KrigingError, match="ASTM C876 allows at most 100 mV"):
        check_contour_interval(150.0, 100.0, unit="mV", source="ASTM C876")
    check_contour_interval(100.0, 100.0, unit="mV")  # the 100 mV maximum itself is allowed
    check_contour_interval(150.0)  # no limit: only positivity (common practice)
    with pytest.raises(KrigingError, match="positive"):
        check_contour_interval(0.0)


def test_interval_limit_comes_from_the_kind():
    # [ASTM-C876-91 §6.2, from memory]: potentials at most 100 mV; other kinds
    # declare no limit
    from geo_corrosion.measurements import BUILTIN_KINDS, get_kind

    assert get_kind("potential").max_contour_interval == 100.0
    assert [n for n, k in BUILTIN_KINDS.items() if k.max_contour_interval is not None] == [
        "potential"]


def test_bands_partition_the_surface(ramp):
    g, a = ramp
    a = a.copy()
    a[0:3, 0:5] = np.nan  # masked corner
    bands = contour_bands(a, g, interval=100.0)
    assert [(lo, hi) for lo, hi, _ in bands] == [(-500, -400), (-400, -300), (-300, -200),
                                                 (-200, -100)]
    union = shapely.union_all([p for _, _, p in bands])
    total = sum(p.area for _, _, p in bands)
    assert total == pytest.approx(union.area, rel=1e-9)  # bands do not overlap
    full = 40.0 * 10.0  # area spanned by the cell centres
    assert 0.9 * full < total < full  # the masked corner is left out
    for lo, hi, poly in bands:
        c = poly.representative_point()
        v = -100.0 - 10.0 * (c.x - 0.5)
        assert lo - 1e-9 <= v <= hi + 1e-9


def test_constant_surface_is_one_band():
    g = GridSpec(0.0, 0.0, 1.0, nx=5, ny=5)
    bands = contour_bands(np.full((5, 5), -250.0), g, interval=50.0)
    assert len(bands) == 1 and bands[0][0] <= -250.0 < bands[0][1]
    assert bands[0][2].area == pytest.approx(16.0)
    assert contour_lines(np.full((5, 5), -250.0), g, interval=50.0) == []

"""Units and the local-grid tie."""

from __future__ import annotations

import math

import numpy as np
import pytest

from geo_corrosion.config import ControlPoint
from geo_corrosion.crs import LocalGrid, fit_similarity, site_crs
from geo_corrosion.errors import CRSError, GeoreferenceError, SiteFileError, UnitError
from geo_corrosion.units import convert, convert_with, normalize_unit, parse_length, report_units


def test_res02_resistivity_units() -> None:
    # exact: 100 ohm.m = 10 kOhm.cm; 1000 ohm.m = 100 kOhm.cm
    np.testing.assert_allclose(convert([100.0, 1000.0], "ohm.m", "kohm.cm"), [10.0, 100.0])


def test_bid01_area_conversion() -> None:
    # 6.00 ft2 -> 0.5574 m2 (1 ft = 0.3048 m exactly [NIST-SP811-2008 App. B])
    assert 6.0 * 0.3048**2 == pytest.approx(0.5574, abs=1e-4)
    assert float(report_units("us").area_from_m2(0.55741824)) == pytest.approx(6.0)


def test_unknown_unit() -> None:
    with pytest.raises(UnitError, match="unknown unit 'furlong'"):
        convert(1.0, "furlong", "mm")


def test_parse_length() -> None:
    assert parse_length("150 mm", where="x") == pytest.approx(0.15)
    assert parse_length("6 in", where="x") == pytest.approx(0.1524)  # 1 in = 25.4 mm exactly
    with pytest.raises(SiteFileError, match="with its unit"):
        parse_length(150, where="[run].repair_margin")
    with pytest.raises(SiteFileError, match="unknown unit"):
        parse_length("6 cubits", where="[run].repair_margin")


def test_crs_checks() -> None:
    crs, unit = site_crs("EPSG:26918", where="crs")
    assert unit == "m" and crs.is_projected
    assert site_crs("EPSG:2263", where="crs")[1] == "us-ft"  # NY Long Island, US survey feet
    with pytest.raises(CRSError, match="geographic"):
        site_crs("EPSG:4326", where="crs")
    with pytest.raises(CRSError, match="unknown CRS"):
        site_crs("EPSG:999999", where="crs")


def test_fit_recovers_known_transform() -> None:
    # a known similarity transform, local feet to UTM metres, with 2 mm noise
    truth = LocalGrid("ft", "m", 17.25, 0.9996, 583100.0, 4507200.0)
    rng = np.random.default_rng(0)
    pts = [(0, 0), (180, 0), (180, 120), (0, 120), (90, 60)]
    cps = []
    for i, (x, y) in enumerate(pts):
        X, Y = truth.to_site(x, y)
        cps.append(ControlPoint(f"CP{i}", (x, y), (float(X) + rng.normal(0, 0.002),
                                                   float(Y) + rng.normal(0, 0.002))))
    g = fit_similarity(cps, "ft", "m")
    assert g.rotation_deg == pytest.approx(17.25, abs=0.01)
    assert g.scale == pytest.approx(0.9996, abs=5e-5)
    assert g.tx == pytest.approx(583100.0, abs=0.01)
    assert 0 < g.rms_residual < 0.01
    x, y = g.to_local(*g.to_site(37.0, 81.0))
    assert (float(x), float(y)) == pytest.approx((37.0, 81.0), abs=1e-6)  # round trip, µft


def test_fit_rejects_bad_control_points() -> None:
    cp = ControlPoint("A", (0.0, 0.0), (1.0, 1.0))
    with pytest.raises(GeoreferenceError, match="at least 2"):
        fit_similarity([cp], "ft", "m")
    with pytest.raises(GeoreferenceError, match="coincide"):
        fit_similarity([cp, ControlPoint("B", (0.0, 0.0), (1.0, 1.0))], "ft", "m")
    # local in feet but site given as if the local were metres: scale 3.28 -> refused
    a = math.radians(10)
    cps = [ControlPoint(f"P{i}", (x, y), (x * math.cos(a) - y * math.sin(a),
                                         x * math.sin(a) + y * math.cos(a)))
           for i, (x, y) in enumerate([(0, 0), (100, 0), (0, 50)])]
    with pytest.raises(GeoreferenceError, match="scale"):
        fit_similarity(cps, "ft", "m")


def test_accepted_spelling_unknown_to_the_module_is_accepted() -> None:
    # common practice: a message never lists a unit that the same lookup refuses (it said
    # "unknown unit '%'; expected one of: %")
    assert normalize_unit(" % ", accepted=("%",)) == "%"
    with pytest.raises(UnitError, match=r"unknown unit 'ppb'; expected one of: %, ppm$"):
        normalize_unit("ppb", accepted=("%", "ppm"))
    # 1 ohm.m = 0.1 kOhm.cm (exact: 1 ohm.m = 100 ohm.cm), also through an alias of this module
    assert convert_with([800.0], "Ω·m", {"kohm.cm": 1.0, "ohm.m": 0.1}).tolist() == [80.0]


def test_builtin_kinds_convert_exactly_as_before() -> None:
    # the built-in kinds' unit tables come from this module's factors: the same numbers,
    # bit for bit, as convert() (the sample site's outputs must not change)
    from geo_corrosion.measurements import BUILTIN_KINDS

    v = np.array([-0.2512, 1.0, 37.3, 152.0])
    for k in BUILTIN_KINDS.values():
        kind = k()
        assert set(kind.unit_factors()) == set(kind.accepted_units)
        for u in kind.accepted_units:
            assert np.array_equal(kind.to_canonical(v, u), convert(v, u, kind.canonical_unit))

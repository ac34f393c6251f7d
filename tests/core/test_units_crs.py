"""Units and the local-grid tie."""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest

from geo_corrosion.config import ControlPoint
from geo_corrosion.crs import LocalGrid, fit_similarity, site_crs
from geo_corrosion.errors import (
    CRSError,
    GeoreferenceError,
    GeoreferenceWarning,
    SiteFileError,
    UnitError,
)
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


def _five_points(shift_m: float, crs_unit: str = "m") -> list[ControlPoint]:
    """Four corners and the centre of a 180 x 120 ft grid, exact; the centre moved east."""
    truth = LocalGrid("ft", crs_unit, 17.25, 1.0, 583100.0, 4507200.0)
    pts = [(0, 0), (180, 0), (180, 120), (0, 120), (90, 60)]
    cps = []
    for i, (x, y) in enumerate(pts):
        X, Y = truth.to_site(x, y)
        cps.append(ControlPoint(f"CP{i}", (x, y), (float(X) + (shift_m if i == 4 else 0.0),
                                                   float(Y))))
    return cps


def test_control_point_residual_above_tolerance_warns() -> None:
    # hand computation: the centre point is the centroid of the five, so its centred local
    # coordinates are 0 and it only moves the translation: a shift d of it leaves a residual
    # d (1 - 1/5) = 0.8 d on it and d / 5 on each corner. Tolerance 0.1 m (common practice).
    with pytest.warns(GeoreferenceWarning) as caught:
        g = fit_similarity(_five_points(1.0), "ft", "m", where="site.toml: level 'L2' grid")
    assert len(caught) == 1
    msg = str(caught[0].message)
    assert msg.startswith("site.toml: level 'L2' grid: control point residual(s) above the "
                          "0.100 m tolerance (0.1 m, common practice): 'CP4' 0.800 m, ")
    assert "'CP0' 0.200 m" in msg and "over 5 points" in msg
    assert g.large_residuals()[0] == ("CP4", pytest.approx(0.8))
    # 0.13 m: 0.104 m on the centre (above), 0.026 m on the corners (below)
    with pytest.warns(GeoreferenceWarning, match=r": 'CP4' 0\.104 m \(RMS"):
        g = fit_similarity(_five_points(0.13), "ft", "m")
    assert [i for i, _ in g.large_residuals()] == ["CP4"]


def test_control_point_residual_within_tolerance_is_quiet() -> None:
    # 0.12 m: 0.096 m on the centre, below the 0.1 m tolerance -> no warning
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        g = fit_similarity(_five_points(0.12), "ft", "m")
    assert g.redundant and g.large_residuals() == [] and g.residual_warning() is None
    assert max(math.hypot(dx, dy) for _, dx, dy in g.residuals) == pytest.approx(0.096)
    # a site CRS in feet: the tolerance is 0.1 m = 0.328 ft, and 0.096 m stays below it
    assert LocalGrid("ft", "ft", 0.0, 1.0, 0.0, 0.0).residual_tolerance == pytest.approx(
        0.1 / 0.3048)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        fit_similarity(_five_points(0.12 / 0.3048, "ft"), "ft", "ft")


def test_two_control_points_have_no_redundancy() -> None:
    # with two points the similarity fit is exact: residuals 0 by construction, nothing to warn
    # about even when the points disagree by 0.5 % in distance (under the 1 % scale limit)
    cps = [ControlPoint("A", (0.0, 0.0), (1000.0, 2000.0)),
           ControlPoint("B", (100.0, 0.0), (1000.0 + 30.48 * 1.005, 2000.0))]
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        g = fit_similarity(cps, "ft", "m")
    assert not g.redundant and g.large_residuals() == []
    assert g.rms_residual == pytest.approx(0.0, abs=1e-9)

"""Tests of geo_corrosion.condition.resistivity."""

from __future__ import annotations

import numpy as np
import pytest

from geo_corrosion.condition import resistivity as R
from geo_corrosion.errors import ConditionError


def test_wenner() -> None:
    """Check wenner."""
    # rho = 2 pi a V / I [Wenner-1916], value derived
    assert float(R.wenner_resistivity_kohm_cm(5.0, 0.100, 100e-6)) == pytest.approx(31.42, abs=0.01)
    out = R.wenner_resistivity_kohm_cm([5.0, 3.8], [0.1, 0.05], [1e-4, 1e-4])
    np.testing.assert_allclose(out, 2 * np.pi * np.array([5.0, 3.8]) * [0.1, 0.05] / 1e-4 / 1000)


@pytest.mark.parametrize(
    ("a", "v", "i", "match"),
    [(5.0, 0.1, 0.0, "zero"), (5.0, -0.1, 1e-4, "negative Wenner voltage"),
     (5.0, 0.1, -1e-4, "negative Wenner current"), (0.0, 0.1, 1e-4, "spacing")],
)
def test_wenner_errors(a: float, v: float, i: float, match: str) -> None:
    """Check wenner errors."""
    # I = 0 or V < 0 -> error, no division by zero (common practice)
    with pytest.raises(ConditionError, match=match):
        R.wenner_resistivity_kohm_cm(a, v, i)


def test_wenner_error_names_index() -> None:
    """Check wenner error names index."""
    # common practice, no source
    with pytest.raises(ConditionError, match="index 1"):
        R.wenner_resistivity_kohm_cm([5.0, 5.0], [0.1, 0.1], [1e-4, 0.0])


@pytest.mark.parametrize(("ratio", "f"), [(1.0, 1.5045), (2.0, 1.0939), (4.0, 1.0134)])
def test_thickness_factor(ratio: float, f: float) -> None:
    """Check thickness factor."""
    # derived (method of images), tolerance 5e-4
    assert float(R.thickness_factor(ratio)) == pytest.approx(f, abs=5e-4)


def test_thickness_factor_table_and_direct_sum() -> None:
    """Check thickness factor table and direct sum."""
    # derived table, and a 10^6-term direct sum as independent check
    table = {0.5: 2.780, 1.5: 1.197, 2.5: 1.051, 3.0: 1.031, 5.0: 1.007}
    for r, f in table.items():
        assert float(R.thickness_factor(r)) == pytest.approx(f, abs=1e-3)
    k = 2 * 1.0
    u = k * np.arange(1, 1_000_001, dtype=float)
    direct = 1 + 4 * np.sum(1 / np.sqrt(1 + u * u) - 1 / np.sqrt(4 + u * u))
    assert float(R.thickness_factor(1.0)) == pytest.approx(direct, abs=1e-9)
    # the analytic tail makes even few terms accurate
    assert float(R.thickness_factor(1.0, n_terms=20)) == pytest.approx(direct, abs=1e-5)


def test_thickness_factor_limits() -> None:
    """Check thickness factor limits."""
    # derived: thick element -> 1; thin element -> apparent too high (F > 1, cf. [Robles-Yee-2021])
    f = R.thickness_factor([np.inf, 100.0, 0.2])
    assert f[0] == 1.0
    assert f[1] == pytest.approx(1.0, abs=1e-5)
    assert f[2] > 2.78
    with pytest.raises(ConditionError, match="positive"):
        R.thickness_factor(0.0)


def test_correct_for_thickness() -> None:
    """Check correct for thickness."""
    # D: rho_true = rho_app / F(h/a)
    assert float(R.correct_for_thickness(10.9388, 100.0, 50.0)) == pytest.approx(10.0, abs=1e-3)


def test_geometry_check() -> None:
    """Check geometry check."""
    # edge distance < 2a or h < 4a -> warning [Gowers-Millard-1999, from memory]
    assert R.check_wenner_geometry(50.0, thickness_mm=200.0, edge_distance_mm=100.0) == []
    w = R.check_wenner_geometry(50.0, edge_distance_mm=99.0)
    assert len(w) == 1 and "edge" in w[0]
    w = R.check_wenner_geometry(50.0, thickness_mm=199.0)
    assert len(w) == 1 and "thick" in w[0]
    w = R.check_wenner_geometry(50.0, thickness_mm=100.0, edge_distance_mm=50.0,
                                max_aggregate_mm=40.0)
    assert len(w) == 3  # a >= 1.5 D_max [Polder-2001, from memory]
    # configurable factor
    assert R.check_wenner_geometry(50.0, thickness_mm=199.0, min_thickness_factor=3.0) == []


def test_arrhenius() -> None:
    """Check arrhenius."""
    # Arrhenius form [Coyle-Spragg-2019], values derived
    assert 10.0 * float(R.arrhenius_factor(10.0)) == pytest.approx(6.961, abs=0.005)
    assert float(R.arrhenius_factor(20.0)) == 1.0
    assert float(R.correct_to_reference_temperature(10.0, 10.0)) == pytest.approx(6.961, abs=5e-3)
    # D: linearised sensitivity at 20 °C is about 3.5 %/K for 25 kJ/mol (derived)
    slope = (np.log(R.arrhenius_factor(20.5)) - np.log(R.arrhenius_factor(19.5))) / 1.0
    assert float(slope) == pytest.approx(0.035, abs=0.001)


def test_arrhenius_matches_corrections_module() -> None:
    """Check arrhenius matches corrections module."""
    # the lead's corrections.arrhenius_factor must agree (single formula)
    from geo_corrosion import corrections

    t = np.array([0.0, 10.0, 35.0])
    np.testing.assert_allclose(R.arrhenius_factor(t, ea_kj_mol=30.0),
                               corrections.arrhenius_factor(t, ea_kj_mol=30.0))


def test_arrhenius_bad() -> None:
    """Check arrhenius bad."""
    # common practice, no source
    with pytest.raises(ConditionError, match="activation energy"):
        R.arrhenius_factor(10.0, ea_kj_mol=0.0)
    with pytest.raises(ConditionError, match="absolute zero"):
        R.arrhenius_factor(-300.0)


def test_icorr_estimate() -> None:
    """Check icorr estimate."""
    # [Alonso-Andrade-1988, from memory] (low confidence)
    assert float(R.icorr_estimate_from_resistivity(26.0)) == pytest.approx(1.0)
    with pytest.raises(ConditionError):
        R.icorr_estimate_from_resistivity(0.0)

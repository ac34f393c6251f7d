"""Corrections against published values (the source beside each check, by bibliography key)."""

from __future__ import annotations

import numpy as np
import pytest

from geo_corrosion.corrections import (
    arrhenius_factor,
    convert_potential,
    cse_temperature_correction_mv,
    electrode,
    electrode_offset_mv,
)
from geo_corrosion.errors import UnitError


def test_ref01_agagcl_to_cse() -> None:
    # -200 mV vs Ag/AgCl(sat KCl) -> -319 mV CSE (0.197, 0.316 V vs SHE [IJCorros-2010 Table 2])
    assert convert_potential(-200.0, "ag_agcl_sat_kcl") == pytest.approx(-319.0, abs=0.5)


@pytest.mark.parametrize(("code", "expected"), [
    ("ag_agcl_sat_kcl", -231.0),  # [IJCorros-2010 Table 2], derived
    ("ag_agcl_3m_kcl", -244.0),  # 0.210 V [Ives-Janz-1961], to confirm
    ("sce", -275.0),  # [IJCorros-2010 Table 2], derived
    ("she", -34.0),  # -350 + 316 (CSE +0.316 V vs SHE [IJCorros-2010 Table 2])
])
def test_ref02_cse_threshold_in_other_electrodes(code: str, expected: float) -> None:
    assert convert_potential(-350.0, "cse", code) == pytest.approx(expected, abs=0.5)


def test_ref03_cse_to_she() -> None:
    # -700 mV CSE -> -384 mV SHE [IJCorros-2010 Table 2], derived
    assert convert_potential(-700.0, "cse", "she") == pytest.approx(-384.0, abs=0.5)


def test_ref04_round_trip_is_exact() -> None:
    # CSE -> SCE -> Ag/AgCl -> CSE returns the input exactly (derived)
    v = np.array([-123.4, -456.7])
    back = convert_potential(convert_potential(convert_potential(v, "cse", "sce"), "sce",
                                               "ag_agcl_sat_kcl"), "ag_agcl_sat_kcl", "cse")
    np.testing.assert_array_equal(back, v)


def test_ref05_unknown_electrode_raises() -> None:
    # an unknown electrode code raises; no default conversion is applied (common practice)
    with pytest.raises(UnitError, match="unknown reference electrode 'zinc'"):
        electrode("zinc")
    with pytest.raises(UnitError):
        electrode_offset_mv("hg_hgo")


@pytest.mark.parametrize(("t_c", "expected"), [
    (32.2, -341.0),  # 0.5 mV/degF [ASTM-C876-22a §5.1.1.2], derived
    (12.2, -359.0),  # 0.9 mV/degC [ASTM-C876-22a §5.1.1.2], derived
    (22.2, -350.0),  # at the reference temperature: unchanged
])
def test_hcp03_04_cse_temperature(t_c: float, expected: float) -> None:
    assert -350.0 + cse_temperature_correction_mv(t_c) == pytest.approx(expected, abs=0.01)


def test_hcp05_band_mode() -> None:
    # 25.0 degC is inside 22.2 +- 5.5 degC [ASTM-C876-22a §4.7]: unchanged in band mode
    assert cse_temperature_correction_mv(25.0, only_outside_band=True) == 0.0
    assert cse_temperature_correction_mv(25.0) == pytest.approx(0.9 * 2.8)
    assert cse_temperature_correction_mv(32.2, only_outside_band=True) == pytest.approx(9.0)


def test_hcp06_fahrenheit() -> None:
    # -350 mV at 90 degF -> -341.0 mV (0.5 mV/degF about 72 degF [ASTM-C876-22a §5.1.1.2, §4.7])
    assert -350.0 + cse_temperature_correction_mv(90.0, unit="F") == pytest.approx(-341.0, abs=0.01)
    assert cse_temperature_correction_mv(80.0, unit="F", only_outside_band=True) == 0.0


def test_res07_arrhenius() -> None:
    # 10.0 kOhm.cm at 10 degC, Ea 25 kJ/mol -> 6.961 kOhm.cm at 20 degC [Coyle-Spragg-2019]
    assert 10.0 * float(arrhenius_factor(10.0)) == pytest.approx(6.961, abs=0.005)
    # T = T_ref -> unchanged (derived)
    assert float(arrhenius_factor(20.0)) == 1.0

"""Tests of geo_corrosion.condition.corrosion_rate."""

from __future__ import annotations

import math

import numpy as np
import pytest

from geo_corrosion.condition import corrosion_rate as CR
from geo_corrosion.condition import life as LF
from geo_corrosion.condition.classes import RATE_RILEM
from geo_corrosion.errors import ConditionError


def test_stern_geary_b() -> None:
    """Check stern geary b."""
    # B from the Tafel slopes [Roberge-2008 eqs. 5.22-5.23], values derived
    assert float(CR.stern_geary_b_mv(120.0, 120.0)) == pytest.approx(26.05, abs=0.05)
    assert float(CR.stern_geary_b_mv(math.inf, 120.0)) == pytest.approx(52.1, abs=0.1)
    assert float(CR.stern_geary_b_mv(120.0, math.inf)) == pytest.approx(52.1, abs=0.1)
    np.testing.assert_allclose(CR.stern_geary_b_mv([60.0, 120.0], [120.0, 60.0]),
                               60 * 120 / (math.log(10) * 180))


@pytest.mark.parametrize(("ba", "bc"), [(20.0, 120.0), (120.0, 10.0), (math.nan, 120.0),
                                        (math.inf, math.inf), (-120.0, 120.0)])
def test_stern_geary_out_of_range(ba: float, bc: float) -> None:
    """Check stern geary out of range."""
    # issue 4 "Tafel slopes out of range" -> clear error (common practice bound 30 mV/dec)
    with pytest.raises(ConditionError, match="Tafel|infinite"):
        CR.stern_geary_b_mv(ba, bc)


def test_resolve_b() -> None:
    """Check resolve b."""
    # B = 26 mV active, 52 mV passive [Andrade-Gonzalez-1978; Andrade-Alonso-2004, from memory]
    assert CR.resolve_b_mv(["active", "PASSIVE", 30.0]).tolist() == [26.0, 52.0, 30.0]
    with pytest.raises(ConditionError, match="active"):
        CR.resolve_b_mv(["rusty"])
    with pytest.raises(ConditionError, match="positive"):
        CR.resolve_b_mv([-1.0])


def test_icorr() -> None:
    """Check icorr."""
    # i_corr = B / (R_p A) [Stern-Geary-1957], values derived
    assert float(CR.icorr_ua_cm2(1000.0, 26.0, 26.0)) == pytest.approx(1.0, abs=1e-3)
    assert float(CR.icorr_from_specific_rp(52_000.0, 52.0)) == pytest.approx(1.0, abs=1e-3)
    assert float(CR.icorr_from_specific_rp(52_000.0, 26.0)) == pytest.approx(0.5, abs=1e-3)


def test_icorr_bad_input() -> None:
    """Check icorr bad input."""
    # issue 4 bad input: missing area, negative Rp; never without A_pol (common practice)
    with pytest.raises(ConditionError, match="polarized area"):
        CR.icorr_ua_cm2(1000.0, np.nan, 26.0)
    with pytest.raises(ConditionError, match="polarized area"):
        CR.icorr_ua_cm2(1000.0, 0.0, 26.0)
    with pytest.raises(ConditionError, match="polarization resistance"):
        CR.icorr_ua_cm2(-5.0, 26.0, 26.0)


def test_ohmic_correction() -> None:
    """Check ohmic correction."""
    # R_p = dE/dI - R_ohm [Andrade-Alonso-2004, from memory], values derived
    assert float(CR.ohmic_corrected_rp_ohm(10.0, 8.0, 250.0)) == pytest.approx(1000.0, abs=1e-6)
    with pytest.raises(ConditionError, match="not positive"):
        CR.ohmic_corrected_rp_ohm(10.0, 8.0, 2000.0)
    with pytest.raises(ConditionError, match="zero"):
        CR.ohmic_corrected_rp_ohm(10.0, 0.0, 250.0)


def test_polarized_area() -> None:
    """Check polarized area."""
    # A = pi d L [Andrade-Alonso-2004, from memory], value derived
    assert float(CR.polarized_area_cm2(16.0, 105.0)) == pytest.approx(52.78, abs=0.01)
    assert float(CR.polarized_area_cm2(16.0, 105.0, n_bars=2)) == pytest.approx(105.56, abs=0.02)
    with pytest.raises(ConditionError):
        CR.polarized_area_cm2(0.0, 105.0)


def test_faraday() -> None:
    """Check faraday."""
    # Faraday's law, derived: 11.60 um/yr and 0.457 mpy per uA/cm2
    assert float(CR.faraday_um_per_year(1.0)) == pytest.approx(11.60, abs=0.02)
    np.testing.assert_allclose(CR.faraday_um_per_year([0.5, 2.0]), [5.80, 23.2], atol=0.02)
    assert float(CR.faraday_mpy(1.0)) == pytest.approx(0.457, abs=0.002)
    # derived variants: rho 7.85 -> 11.63; 365-day year -> 11.59; mass loss 91.3 g/m2/yr
    assert float(CR.faraday_um_per_year(1.0, density_g_cm3=7.85)) == pytest.approx(11.63, abs=0.01)
    assert float(CR.faraday_um_per_year(1.0, year_s=365 * 86400)) == pytest.approx(11.59, abs=0.01)
    assert float(CR.faraday_mass_loss_g_m2_year(1.0)) == pytest.approx(91.3, abs=0.1)


def test_linearity_check() -> None:
    """Check linearity check."""
    # 20 mV linear range [Andrade-Alonso-2004, from memory]
    assert CR.check_linearity(15.0) is None
    msg = CR.check_linearity(25.0)
    assert msg is not None and "linearity" in msg


def test_sweep() -> None:
    """Check sweep."""
    # D: linear E(I) with slope 1 kOhm -> Rp = 1000 ohm
    i = np.linspace(-40.0, 40.0, 81)  # uA
    e = -300.0 + 1.0 * i  # mV, slope 1 mV/uA = 1000 ohm
    res = CR.rp_from_sweep(e, i, window_mv=15.0)
    assert res.rp_ohm == pytest.approx(1000.0, rel=1e-9)
    assert res.e_corr_mv == pytest.approx(-300.0)
    assert res.warnings == ()
    wide = CR.rp_from_sweep(e, i, window_mv=25.0)  # beyond 20 mV -> warning
    assert any("linearity" in w for w in wide.warnings)


def test_sweep_curved_and_bad() -> None:
    """Check sweep curved and bad."""
    # D: a Butler-Volmer-like sinh curve gives lower r2 than a line; errors are clear
    e = np.linspace(-60, 60, 121)
    i = 10.0 * np.sinh(e / 20.0)
    res = CR.rp_from_sweep(e - 300.0, i, window_mv=60.0, linear_limit_mv=100.0, min_r2=0.999)
    assert any("not linear" in w for w in res.warnings)
    with pytest.raises(ConditionError, match="at least 3"):
        CR.rp_from_sweep([-300.0, -290.0], [0.0, 1.0])
    with pytest.raises(ConditionError, match="negative polarization"):
        CR.rp_from_sweep([-290.0, -300.0, -310.0], [-1.0, 0.0, 1.0])


def test_section_loss_uniform() -> None:
    """Check section loss uniform."""
    # derived: d = d0 - 2P; P = 0.0116 i t mm
    s = LF.section_loss(16.0, 1.0, 50.0, um_per_year_per_ua_cm2=11.6)
    assert s.penetration_mm == pytest.approx(0.58)
    assert s.residual_diameter_mm == pytest.approx(16.0 - 1.16)
    assert s.loss_fraction == pytest.approx(1 - (14.84 / 16.0) ** 2)
    assert not s.review_required


def test_review_trigger() -> None:
    """Check review trigger."""
    # 25 % section loss [UFGS-03931 §3.3.1.4]
    assert LF.bar_review_required(0.26)
    assert not LF.bar_review_required(0.24)
    assert LF.bar_review_required(0.21, adjacent_loss_fraction=0.22)
    assert not LF.bar_review_required(0.21, adjacent_loss_fraction=0.19)
    # a heavily corroded bar triggers it through section_loss
    s = LF.section_loss(12.0, 5.0, 30.0)
    assert s.loss_fraction > 0.25 and s.review_required and "engineer" in s.message


def test_pit_area_properties() -> None:
    """Check pit area properties."""
    # [Val-Melchers-1997, from memory]: small pit ~ half disc, continuity,
    # full section at p = D0, monotone
    d0 = 16.0
    assert float(LF.pit_area_mm2(0.01, d0)) == pytest.approx(math.pi * 0.01**2 / 2, rel=0.01)
    k = d0 / math.sqrt(2)
    a = LF.pit_area_mm2([k - 1e-9, k + 1e-9], d0)
    assert a[0] == pytest.approx(a[1], rel=1e-6)
    assert float(LF.pit_area_mm2(d0, d0)) == pytest.approx(math.pi * d0**2 / 4)
    assert float(LF.pit_area_mm2(2 * d0, d0)) == pytest.approx(math.pi * d0**2 / 4)
    p = np.linspace(0, d0, 200)
    assert np.all(np.diff(LF.pit_area_mm2(p, d0)) >= -1e-9)
    # pitting variant uses R * P as pit depth
    s = LF.section_loss(16.0, 1.0, 20.0, pitting_factor=6.0)
    assert s.pit_depth_mm == pytest.approx(6.0 * s.penetration_mm)


def test_cracking() -> None:
    """Check cracking."""
    # x_crit = 7.53 + 9.32 c/phi [Alonso-Andrade-1998, from memory]
    assert float(LF.critical_penetration_um(50.0, 12.0)) == pytest.approx(46.36, abs=0.01)
    t = LF.time_to_cracking_years(50.0, 12.0, [1.0, 0.0])
    assert t[0] == pytest.approx(46.36 / 11.6, abs=1e-3)
    assert np.isinf(t[1])
    with pytest.raises(ConditionError):
        LF.time_to_cracking_years(50.0, 12.0, -1.0)


def test_cr12_rate_class_of_unit_rate() -> None:
    """Check cr12 rate class of unit rate."""
    # i_corr = 1.00 -> "moderate" (1.0 is not > 1, common practice)
    i = CR.icorr_ua_cm2(1000.0, 26.0, 26.0)
    assert RATE_RILEM.classify([i]).tolist() == ["moderate"]

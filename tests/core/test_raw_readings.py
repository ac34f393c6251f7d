"""Raw instrument readings through the whole ingest: Wenner V/I, R_p, ohmic drop, transients.

The synthetic site of :func:`geo_corrosion.testing.make_synthetic_site` (conftest ``site_dir``)
gets an extra survey file and a ``[[surveys]]`` table; :func:`open_site` then reads, derives
and corrects it.  Invented data, for tests only.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from geo_corrosion.condition.transient import randles_response_mv
from geo_corrosion.errors import IngestError, SchemaError, SiteFileError
from geo_corrosion.model.site import Survey
from geo_corrosion.stages.open_site import open_site
from geo_corrosion.stages.read_site import read_site


def _add_survey(site_dir: Path, sid: str, kind: str, unit: str, csv_text: str,
                options: str = "") -> None:
    """Write ``readings/<sid>.csv`` and append its [[surveys]] table to site.toml."""
    (site_dir / "readings" / f"{sid}.csv").write_text(csv_text)
    table = (f'\n[[surveys]]\nid = "{sid}"\nlevel = "D1"\nkind = "{kind}"\n'
             f'path = "readings/{sid}.csv"\nunit = "{unit}"\n')
    if options:
        table += f"[surveys.options]\n{options}\n"
    with (site_dir / "site.toml").open("a") as fh:
        fh.write(table)


def _survey(site_dir: Path, sid: str) -> Survey:
    site = open_site(site_dir)
    return next(s for s in site.surveys if s.config.id == sid)


# --------------------------------------------------------------------------- resistivity


def test_wenner_from_voltage_and_current(site_dir: Path) -> None:
    _add_survey(site_dir, "W", "resistivity", "kohm.cm",
                "point_id,x,y,voltage_v,current_a\nW1,5,5,0.100,100e-6\nW2,9,5,0.050,0\n"
                "W3,13,5,0.2,\n",
                'probe_spacing = "5 cm"')
    f = _survey(site_dir, "W").frame
    # a = 5 cm, V = 0.1 V, I = 100 uA -> 31.42 kOhm.cm [Wenner-1916], derived
    assert f["resistivity_kohm_cm"].iat[0] == pytest.approx(31.42, abs=0.01)
    assert f["apparent_resistivity_kohm_cm"].iat[0] == pytest.approx(31.42, abs=0.01)
    assert f["wenner_spacing_cm"].iat[0] == pytest.approx(5.0)
    assert f["thickness_factor"].iat[0] == 1.0
    assert f["value_source"].tolist() == ["raw"] * 3
    assert f["voltage_v"].iat[0] == pytest.approx(0.1)  # raw values kept
    assert f["derive_message"].iat[0] == ""
    # I = 0 -> refused, per reading, not fatal (common practice)
    assert np.isnan(f["resistivity_kohm_cm"].iat[1])
    msg = f["derive_message"].iat[1]
    assert "current of zero" in msg and "W.csv line 3" in msg and "point W2" in msg
    # an empty current is flagged, not fatal (common practice, no source)
    assert np.isnan(f["resistivity_kohm_cm"].iat[2])
    assert "empty" in f["derive_message"].iat[2]


def test_thickness_correction_and_geometry_warning(site_dir: Path) -> None:
    _add_survey(site_dir, "W", "resistivity", "kohm.cm",
                "point_id,x,y,voltage_v,current_a\nW1,5,5,0.100,100e-6\n",
                'probe_spacing = "50 mm"\nelement_thickness = "100 mm"\nedge_distance = "60 mm"')
    s = _survey(site_dir, "W")
    f = s.frame
    # F(h/a = 2) = 1.0939 (derived); rho_true = rho_apparent / F
    assert f["thickness_factor"].iat[0] == pytest.approx(1.0939, abs=5e-4)
    assert f["resistivity_kohm_cm"].iat[0] == pytest.approx(31.416 / 1.0939, rel=1e-3)
    assert f["apparent_resistivity_kohm_cm"].iat[0] == pytest.approx(31.42, abs=0.01)
    # h < 4a and edge distance < 2a -> geometry warnings [Gowers-Millard-1999, from memory]
    warnings = [r for r in s.corrections if r["correction"] == "Wenner geometry check"]
    assert len(warnings) == 2
    assert all("[Gowers-Millard-1999" in r["source"] for r in warnings)
    assert any(r["correction"].startswith("finite-thickness") for r in s.corrections)


def test_file_values_left_alone_without_options(site_dir: Path) -> None:
    f = _survey(site_dir, "D1-res").frame
    # existing surveys with a value column keep their values (common practice, no source)
    assert (f["value_source"] == "file").all()
    assert (f["derive_message"] == "").all()
    assert np.allclose(f["apparent_resistivity_kohm_cm"], f["raw_value"])


def test_raw_resistivity_needs_probe_spacing(site_dir: Path) -> None:
    _add_survey(site_dir, "W", "resistivity", "kohm.cm",
                "point_id,x,y,voltage_v,current_a\nW1,5,5,0.100,100e-6\n")
    with pytest.raises(SiteFileError, match="probe_spacing"):
        open_site(site_dir)


def test_laboratory_class_set_refused(site_dir: Path) -> None:
    _add_survey(site_dir, "W", "resistivity", "kohm.cm", "point_id,x,y,value\nW1,5,5,30\n",
                'probe_spacing = "50 mm"\nclass_set = "aashto_t358"')
    # AASHTO T 358 is a laboratory class set [AASHTO-T358-15 scope], refused for field readings
    with pytest.raises(SiteFileError, match="laboratory") as err:
        read_site(site_dir)
    assert "class_set" in str(err.value)


def test_field_class_set_accepted(site_dir: Path) -> None:
    _add_survey(site_dir, "W", "resistivity", "kohm.cm", "point_id,x,y,value\nW1,5,5,30\n",
                'class_set = "resistivity_langford_broomfield"')
    cfg = next(s for s in read_site(site_dir).surveys if s.id == "W")
    # alias resolved to the registry name (condition.classes; common practice, no source)
    assert cfg.options == {"class_set": "langford_broomfield"}


def test_unknown_option_refused(site_dir: Path) -> None:
    _add_survey(site_dir, "W", "resistivity", "kohm.cm", "point_id,x,y,value\nW1,5,5,30\n",
                'probe_spaceing = "50 mm"')
    with pytest.raises(SiteFileError, match="probe_spaceing") as err:
        read_site(site_dir)
    assert "probe_spacing" in str(err.value) and "element_thickness" in str(err.value)


def test_kind_without_options_refuses_them(site_dir: Path) -> None:
    _add_survey(site_dir, "C", "cover", "mm", "point_id,x,y,value\nC1,5,5,40\n",
                'probe_spacing = "50 mm"')
    with pytest.raises(SiteFileError, match="take no options"):
        read_site(site_dir)


def test_missing_value_and_too_few_raw_columns(site_dir: Path) -> None:
    _add_survey(site_dir, "W", "resistivity", "kohm.cm",
                "point_id,x,y,voltage_v\nW1,5,5,0.1\n", 'probe_spacing = "50 mm"')
    with pytest.raises(SchemaError, match="current_a"):
        open_site(site_dir)


# --------------------------------------------------------------------------- corrosion rate


_CR_OPTS = 'polarized_area_cm2 = 26.0\nb_mv = "active"'


def test_stern_geary_from_rp(site_dir: Path) -> None:
    _add_survey(site_dir, "R", "corrosion_rate", "uA/cm2",
                "point_id,x,y,rp_ohm\nR1,5,5,1000\nR2,9,5,-50\nR3,13,5,\n", _CR_OPTS)
    s = _survey(site_dir, "R")
    f = s.frame
    # Rp 1000 ohm, A 26 cm2, B 26 mV -> 1.00 uA/cm2 [Stern-Geary-1957], derived
    assert f["icorr_ua_cm2"].iat[0] == pytest.approx(1.00, abs=1e-3)
    assert f["b_mv"].iat[0] == 26.0 and f["polarized_area_cm2"].iat[0] == 26.0
    assert f["rp_ohm"].iat[0] == 1000.0
    # 1 uA/cm2 -> 11.60 um/year (Faraday, derived); 1.0 is 'moderate' (common practice)
    assert f["penetration_um_yr"].iat[0] == pytest.approx(11.60, abs=0.02)
    assert f["rate_level"].iat[0] == "moderate"
    assert f["derive_message"].iat[0] == ""
    # a negative polarization resistance is flagged per reading (issue 4, bad input)
    assert np.isnan(f["icorr_ua_cm2"].iat[1])
    assert "not positive" in f["derive_message"].iat[1] and "point R2" in f["derive_message"].iat[1]
    assert f["rate_level"].iat[1] == ""
    # no R_p at all (common practice, no source)
    assert "no polarization resistance" in f["derive_message"].iat[2]
    assert s.corrections[0]["readings"] == 3 and s.corrections[0]["readings_not_derived"] == 2


def test_ohmic_drop(site_dir: Path) -> None:
    _add_survey(site_dir, "R", "corrosion_rate", "uA/cm2",
                "point_id,x,y,delta_e_mv,delta_i_ua,r_ohm_ohm,rp_ohm\n"
                "R1,5,5,10,8,250,\nR2,9,5,,,250,1250\nR3,13,5,10,8,1500,\nR4,17,5,25,20,0,\n",
                "polarized_area_cm2 = 26.0\nb_mv = 26")
    f = _survey(site_dir, "R").frame
    # dE 10 mV, dI 8 uA, R_ohm 250 ohm -> R_p = 1000 ohm -> 1.00 (derived)
    assert f["rp_ohm"].iat[0] == pytest.approx(1000.0, abs=1e-6)
    assert f["icorr_ua_cm2"].iat[0] == pytest.approx(1.00, abs=1e-3)
    assert f["rp_ohm"].iat[1] == pytest.approx(1000.0, abs=1e-6)
    assert f["rp_measured_ohm"].iat[1] == 1250.0  # the raw value is kept
    assert f["r_ohm_ohm"].iat[0] == 250.0
    # an ohmic resistance above dE/dI leaves no positive R_p: flagged (common practice)
    assert np.isnan(f["icorr_ua_cm2"].iat[2]) and "not positive" in f["derive_message"].iat[2]
    # dE = 25 mV is outside the linear range [Andrade-Alonso-2004, from memory]: warning only
    assert np.isfinite(f["icorr_ua_cm2"].iat[3]) and f["derive_message"].iat[3] == ""
    assert "linearity" in f["derive_warning"].iat[3]


def test_missing_area_and_bad_tafel_flagged(site_dir: Path) -> None:
    _add_survey(site_dir, "R", "corrosion_rate", "uA/cm2",
                "point_id,x,y,rp_ohm,area_cm2,tafel_anodic_mv_dec,tafel_cathodic_mv_dec\n"
                "R1,5,5,1000,26,120,120\nR2,9,5,1000,,120,120\nR3,13,5,1000,26,10,120\n")
    f = _survey(site_dir, "R").frame
    # B(120,120) = 26.05 mV [Roberge-2008 eqs. 5.22-5.23] -> 26.05 / 26 uA/cm2 (derived)
    assert f["b_mv"].iat[0] == pytest.approx(26.05, abs=0.05)
    assert f["icorr_ua_cm2"].iat[0] == pytest.approx(26.05 / 26.0, abs=2e-3)
    # i_corr is never computed without the polarized area (common practice)
    assert np.isnan(f["icorr_ua_cm2"].iat[1])
    assert "no polarized area" in f["derive_message"].iat[1]
    assert "line 3" in f["derive_message"].iat[1]
    # Tafel slope below 30 mV/decade is refused (condition.corrosion_rate; common practice)
    assert np.isnan(f["icorr_ua_cm2"].iat[2]) and "Tafel" in f["derive_message"].iat[2]


def test_bar_geometry_area(site_dir: Path) -> None:
    _add_survey(site_dir, "R", "corrosion_rate", "uA/cm2", "point_id,x,y,rp_ohm\nR1,5,5,1000\n",
                'bar_diameter = "16 mm"\nconfinement_length = "105 mm"\nb_mv = "passive"')
    f = _survey(site_dir, "R").frame
    # pi x 1.6 x 10.5 = 52.78 cm2; B passive = 52 mV [Andrade-Alonso-2004, from memory]
    assert f["polarized_area_cm2"].iat[0] == pytest.approx(52.78, abs=0.01)
    assert f["icorr_ua_cm2"].iat[0] == pytest.approx(52.0 * 1000 / (1000 * 52.78), rel=1e-3)


@pytest.mark.parametrize("options, words", [
    ('b_mv = 26\ntafel_anodic_mv_dec = 120\ntafel_cathodic_mv_dec = 120', "not both"),
    ("tafel_anodic_mv_dec = 120", "both"),
    ("tafel_anodic_mv_dec = 10\ntafel_cathodic_mv_dec = 120", "Tafel slope out of range"),
    ('b_mv = "lively"', "active"),
    ('bar_diameter = "16 mm"', "confinement_length"),
    ("polarized_area_cm2 = -3", "positive"),
    ('strict_linearity = "yes"', "true or false"),
])
def test_bad_rate_options(site_dir: Path, options: str, words: str) -> None:
    _add_survey(site_dir, "R", "corrosion_rate", "uA/cm2", "point_id,x,y,rp_ohm\nR1,5,5,1000\n",
                options)
    # survey-wide impossibilities are site-file errors (common practice, no source)
    with pytest.raises(SiteFileError, match=words):
        read_site(site_dir)


def test_file_rate_values_get_penetration_and_level(site_dir: Path) -> None:
    _add_survey(site_dir, "R", "corrosion_rate", "uA/cm2",
                "point_id,x,y,value\nR1,5,5,0.5\nR2,9,5,2.0\n")
    f = _survey(site_dir, "R").frame
    # 0.5 -> 5.80, 2.0 -> 23.2 um/year (derived); levels [Andrade-Alonso-2004, from memory]
    assert f["penetration_um_yr"].tolist() == pytest.approx([5.80, 23.2], abs=0.02)
    assert f["rate_level"].tolist() == ["moderate", "high"]


def _transient_csv(path: Path, current_ua: float = 20.0) -> None:
    rng = np.random.default_rng(4)
    t = np.concatenate([[-1.0, -0.5], np.linspace(0.2, 60.0, 150)])
    # T1: R_ohm 200 ohm, R_p 1000 ohm, C_dl 10 000 uF (tau 10 s), 20 uA -> 20 mV polarization
    e1 = (-300.0 + randles_response_mv(t, current_ua, 200.0, 1000.0, 10_000.0)
          + rng.normal(0, 0.05, t.size))
    # T2: a tiny response drowned in noise -> too noisy to fit
    e2 = -300.0 + randles_response_mv(t, 1.0, 20.0, 100.0, 10_000.0) + rng.normal(0, 20.0, t.size)
    rows = [pd.DataFrame({"location_id": loc, "t_s": t, "e_mv": e, "i_ua": cur})
            for loc, e, cur in (("T1", e1, current_ua), ("T2", e2, 1.0))]
    pd.concat(rows).to_csv(path, index=False)


def test_transients(site_dir: Path) -> None:
    _transient_csv(site_dir / "readings" / "pulses.csv")
    _add_survey(site_dir, "G", "corrosion_rate", "uA/cm2",
                "point_id,x,y\nT1,5,5\nT2,9,5\nT3,13,5\n",
                'transients = "readings/pulses.csv"\n' + _CR_OPTS)
    s = _survey(site_dir, "G")
    f = s.frame
    # the Randles model recovered on a synthetic transient [Newton-Sykes-1988, from memory]
    assert f["rp_ohm"].iat[0] == pytest.approx(1000.0, rel=0.02)
    assert f["r_ohm_ohm"].iat[0] == pytest.approx(200.0, rel=0.05)
    assert f["cdl_uf"].iat[0] == pytest.approx(10_000.0, rel=0.05)
    assert f["fit_rms_mv"].iat[0] == pytest.approx(0.05, rel=0.3)
    assert f["icorr_ua_cm2"].iat[0] == pytest.approx(1.0, rel=0.02)
    assert f["derive_message"].iat[0] == "" and f["rp_source"].iat[0] == "transient"
    # too noisy: flagged, named, the rest unharmed (issue 4, bad input)
    assert np.isnan(f["icorr_ua_cm2"].iat[1])
    assert "too noisy" in f["derive_message"].iat[1] and "point T2" in f["derive_message"].iat[1]
    # no transient for T3 (common practice, no source)
    assert "pulses.csv" in f["derive_message"].iat[2]
    rec = next(r for r in s.corrections if "transients" in r["correction"])
    assert rec["locations_fitted"] == 1 and rec["locations_failed"] == 1


def test_transient_file_missing(site_dir: Path) -> None:
    _add_survey(site_dir, "G", "corrosion_rate", "uA/cm2", "point_id,x,y\nT1,5,5\n",
                'transients = "readings/nowhere.csv"\n' + _CR_OPTS)
    with pytest.raises(IngestError, match="transient file not found"):
        open_site(site_dir)


@pytest.mark.parametrize("strict, warned", [(False, False), (True, True)])
def test_transient_linearity(site_dir: Path, strict: bool, warned: bool) -> None:
    _transient_csv(site_dir / "readings" / "pulses.csv", current_ua=25.0)
    _add_survey(site_dir, "G", "corrosion_rate", "uA/cm2", "point_id,x,y\nT1,5,5\n",
                f'transients = "readings/pulses.csv"\nstrict_linearity = {str(strict).lower()}\n'
                + _CR_OPTS)
    f = _survey(site_dir, "G").frame
    # I R_p = 25 mV is within 30 mV (common practice), beyond the strict 20 mV: warning only
    assert ("linear range" in f["derive_warning"].iat[0]) is warned
    assert f["derive_message"].iat[0] == "" and np.isfinite(f["icorr_ua_cm2"].iat[0])


def test_potentiostatic_sweeps(site_dir: Path) -> None:
    # a linear sweep of +-15 mV about E_corr = -400 mV through a 1000 ohm polarization
    # resistance: 1 uA gives 1 mV; Stern-Geary then gives 1.00 uA/cm2 (derived)
    i_ua = np.linspace(-15, 15, 31)
    rows = ["location_id,e_mv,i_ua"] + [f"S1,{-400 + i * 1.0:.4f},{i:.4f}" for i in i_ua]
    rows += [f"S2,{-300 - i:.4f},{i:.4f}" for i in i_ua]  # negative slope (leads swapped): flagged
    (site_dir / "readings" / "sweeps.csv").write_text("\n".join(rows) + "\n")
    _add_survey(site_dir, "W", "corrosion_rate", "uA/cm2",
                "point_id,x,y,rp_ohm\nS1,5,5,\nS2,9,5,\n",
                _CR_OPTS + '\nsweeps = "readings/sweeps.csv"')
    f = _survey(site_dir, "W").frame
    assert f["rp_ohm"].iat[0] == pytest.approx(1000.0, rel=1e-6)
    assert f["icorr_ua_cm2"].iat[0] == pytest.approx(1.00, abs=1e-3)
    assert f["rp_source"].iat[0] == "potentiostatic sweep"
    assert np.isnan(f["icorr_ua_cm2"].iat[1]) and "point S2" in f["derive_message"].iat[1]

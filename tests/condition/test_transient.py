"""Tests of geo_corrosion.condition.transient (galvanostatic pulse fits)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from geo_corrosion.condition import transient as T
from geo_corrosion.errors import ConditionError, IngestError


def _synthetic(
    *, r_ohm: float = 300.0, rp: float = 1000.0, cdl_uf: float = 2000.0, i_ua: float = 20.0,
    duration_s: float = 10.0, n: int = 400, noise_mv: float = 0.2, rest_mv: float = -250.0,
    seed: int = 0,
) -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(seed)
    t = np.r_[np.linspace(-1.0, 0.0, 20), np.linspace(duration_s / n, duration_s, n)]
    e = rest_mv + T.randles_response_mv(t, i_ua, r_ohm, rp, cdl_uf)
    e = e + rng.normal(0, noise_mv, t.size)
    return t, e


@pytest.mark.parametrize("seed", [0, 1, 2, 3, 4])
def test_recover_known_parameters(seed: int) -> None:
    """Check recover known parameters."""
    # Randles model [Newton-Sykes-1988, from memory]; synthetic seeded transients with 0.2 mV noise
    # (1 % of the 20 mV polarization); tolerances: R_p 2 %, R_ohm 3 %, C_dl 5 %
    t, e = _synthetic(seed=seed)
    fit = T.fit_transient(t, e, 20.0, area_cm2=26.0, b_mv=26.0)
    assert fit.rp_ohm == pytest.approx(1000.0, rel=0.02)
    assert fit.r_ohm_ohm == pytest.approx(300.0, rel=0.03)
    assert fit.cdl_uf == pytest.approx(2000.0, rel=0.05)
    assert fit.tau_s == pytest.approx(2.0, rel=0.05)
    assert fit.residual_rms_mv == pytest.approx(0.2, rel=0.2)
    assert fit.r2 > 0.99
    assert fit.polarization_mv == pytest.approx(20.0, rel=0.02)
    assert fit.e_inf_mv == pytest.approx(26.0, rel=0.02)
    assert fit.warnings == ()


def test_cr12_icorr_from_fitted_rp() -> None:
    """Check cr12 icorr from fitted rp."""
    # A_pol 26 cm2, B 26 mV, fitted R_p ~ 1000 ohm -> i_corr 1.00, "moderate" (derived)
    t, e = _synthetic(noise_mv=0.01)
    fit = T.fit_transient(t, e, 20.0, area_cm2=26.0, b_mv="active")
    assert fit.icorr_ua_cm2 == pytest.approx(1.0, abs=0.005)
    assert fit.rp_ohm_cm2 == pytest.approx(26_000.0, rel=0.005)


def test_cathodic_pulse_sign() -> None:
    """Check cathodic pulse sign."""
    # D: the model is linear in I, so a negative current gives the same R_p
    t, e = _synthetic(i_ua=-20.0, seed=7)
    fit = T.fit_transient(t, e, -20.0, area_cm2=26.0)
    assert fit.rp_ohm == pytest.approx(1000.0, rel=0.02)


def test_linearity_guard() -> None:
    """Check linearity guard."""
    # I*R_p > 30 mV warns (common practice); 20 mV in strict mode [Andrade-Alonso-2004, from memory]
    t, e = _synthetic(i_ua=25.0)  # 25 mV
    assert T.fit_transient(t, e, 25.0, area_cm2=26.0).warnings == ()
    strict = T.fit_transient(t, e, 25.0, area_cm2=26.0, strict=True)
    assert any("linear range" in w for w in strict.warnings)
    t2, e2 = _synthetic(i_ua=40.0)  # 40 mV
    assert any("linear range" in w for w in T.fit_transient(t2, e2, 40.0, area_cm2=26.0).warnings)


def test_short_pulse_warns_then_refuses() -> None:
    """Check short pulse warns then refuses."""
    # common practice: pulse < 3 tau warns; < 1 tau is refused (R_p would be extrapolated)
    t, e = _synthetic(duration_s=4.0, noise_mv=0.02)
    fit = T.fit_transient(t, e, 20.0, area_cm2=26.0)
    assert any("3 time constants" in w for w in fit.warnings)
    t, e = _synthetic(duration_s=1.0, noise_mv=0.02)
    with pytest.raises(ConditionError, match="too short"):
        T.fit_transient(t, e, 20.0, area_cm2=26.0)


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [({"current": 0.0}, "non-zero current"),
     ({"area": None}, "polarized area"),
     ({"area": 0.0}, "polarized area"),
     ({"n": 5}, "too short"),
     ({"noise": 20.0}, "too noisy"),
     ({"flip": True}, "not positive")],
)
def test_bad_input(kwargs: dict[str, object], match: str) -> None:
    """Check bad input."""
    # issue 4 "Bad input": too short, too noisy, zero current, negative R_p, missing area
    t, e = _synthetic(n=int(kwargs.get("n", 400)), noise_mv=float(kwargs.get("noise", 0.2)))  # type: ignore[arg-type]
    if kwargs.get("flip"):
        rest = e[:20].mean()
        e = rest - (e - rest)  # response opposite to the current: negative R_p
    with pytest.raises(ConditionError, match=match):
        T.fit_transient(t, e, float(kwargs.get("current", 20.0)),  # type: ignore[arg-type]
                        area_cm2=kwargs.get("area", 26.0))  # type: ignore[arg-type]


def _long_frame() -> pd.DataFrame:
    parts = []
    for loc, seed, cur in (("A1", 1, 20.0), ("A2", 2, 20.0), ("BAD", 3, 0.0)):
        t, e = _synthetic(seed=seed)
        parts.append(pd.DataFrame({"location_id": loc, "t_s": t, "e_mv": e, "i_ua": cur}))
    return pd.concat(parts, ignore_index=True)


def test_batch_flags_bad_location() -> None:
    """Check batch flags bad location."""
    # issue 4: one bad location is flagged, the rest unharmed
    frame = _long_frame()
    locs = pd.DataFrame({"location_id": ["A1", "A2", "BAD"], "area_cm2": [26.0, np.nan, 26.0],
                         "b_mv": [26.0, 26.0, 26.0]})
    out = T.fit_transients(frame, locations=locs)
    assert list(out.columns) == list(T.RESULT_COLUMNS)
    assert out["location_id"].tolist() == ["A1", "A2", "BAD"]
    row = out.set_index("location_id")
    assert row.loc["A1", "flag"] == "ok"
    assert row.loc["A1", "rp_ohm"] == pytest.approx(1000.0, rel=0.02)
    # [Andrade-Alonso-2004, from memory]: class follows the fitted i_corr (~1.0 uA/cm2, an edge)
    from geo_corrosion.condition.classes import RATE_RILEM

    assert row.loc["A1", "rate_class"] == RATE_RILEM.classify([row.loc["A1", "icorr_ua_cm2"]])[0]
    assert row.loc["A1", "rate_class"] in ("moderate", "high")
    assert row.loc["A2", "flag"] == "error" and "polarized area" in row.loc["A2", "message"]
    assert row.loc["BAD", "flag"] == "error" and "current" in row.loc["BAD", "message"]


def test_batch_area_in_long_table_and_default_b(tmp_path: Path) -> None:
    """Check batch area in long table and default b."""
    # module docstring CSV format; default B used when none given
    frame = _long_frame()
    frame["area_cm2"] = 26.0
    path = tmp_path / "pulses.csv"
    frame.to_csv(path, index=False)
    back = T.read_transients_csv(path)
    out = T.fit_transients(back)
    assert (out["flag"].iloc[:2] == "error").all()  # no B at all -> flagged
    assert "Stern-Geary" in out["message"].iloc[0]
    out = T.fit_transients(back, default_b_mv="passive")
    assert out["b_mv"].iloc[0] == 52.0
    assert out["flag"].tolist() == ["ok", "ok", "error"]


def test_read_csv_missing_column(tmp_path: Path) -> None:
    """Check read csv missing column."""
    # common practice, no source
    p = tmp_path / "x.csv"
    p.write_text("location_id,t_s,e_mv\nA,0,1\n")
    with pytest.raises(IngestError, match="i_ua"):
        T.read_transients_csv(p)

"""Life indications are ranges with their basis, given only where the readings support them.

Issue 12, item 5: "Section loss and time to cracking are given only where the rate data
support them (a documented threshold of readings and spread), as indicative ranges ... with
their basis ... Never as a single headline figure."  The percentiles are checked against
numpy's, the hull against shapely's, the time to cracking against the formula of
[Alonso-Andrade-1998, from memory] worked by hand.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import shapely

from geo_corrosion.condition.life import (
    LIFE_MIN_READINGS,
    LIFE_MIN_SPREAD,
    indicative_range,
    life_support,
)
from geo_corrosion.measurements import MEASUREMENTS


def _grid(n_side: int, step: float) -> tuple[np.ndarray, np.ndarray]:
    g = np.arange(n_side) * step
    x, y = np.meshgrid(g, g)
    return x.ravel(), y.ravel()


def test_too_few_readings_give_no_range() -> None:
    x, y = _grid(4, 1.0)  # 16 readings < 20 (the project's rule)
    s = life_support(x, y, np.ones(16, bool), deck_area=9.0)
    assert not s.supported and s.readings == 16
    assert str(LIFE_MIN_READINGS) in s.reason


def test_unusable_readings_do_not_count() -> None:
    x, y = _grid(5, 1.0)
    usable = np.ones(25, bool)
    usable[:6] = False  # 19 usable
    assert not life_support(x, y, usable, deck_area=16.0).supported
    usable[5] = True  # 20 usable
    assert life_support(x, y, usable, deck_area=16.0).supported


def test_readings_in_one_bay_give_no_range() -> None:
    x, y = _grid(5, 1.0)  # hull 4 x 4 = 16 (shapely)
    hull = shapely.convex_hull(shapely.multipoints(np.column_stack([x, y]))).area
    assert hull == pytest.approx(16.0)
    deck = 16.0 / (LIFE_MIN_SPREAD * 0.99)  # the readings span just under 25 %
    s = life_support(x, y, np.ones(25, bool), deck_area=deck)
    assert not s.supported and s.spread == pytest.approx(16.0 / deck)
    assert "span" in s.reason
    assert life_support(x, y, np.ones(25, bool), deck_area=16.0 / LIFE_MIN_SPREAD).supported


def test_indicative_range_is_the_10_50_90_percentiles() -> None:
    rng = np.random.default_rng(1)
    v = rng.lognormal(1.0, 0.5, 57)
    got = indicative_range(np.append(v, np.nan))
    want = np.percentile(v, [10, 50, 90])  # numpy's linear percentiles, NaN left out
    assert got is not None
    assert [got["p10"], got["p50"], got["p90"]] == pytest.approx(want.tolist())
    assert indicative_range([np.nan]) is None


def _rate_frame(n_side: int, rate: np.ndarray) -> pd.DataFrame:
    x, y = _grid(n_side, 2.0)
    return pd.DataFrame({"reading_id": [f"r{i}" for i in range(x.size)], "x_local": x,
                         "y_local": y, "icorr_ua_cm2": rate})


def test_rate_kind_summary_gives_ranges_with_basis_not_a_median() -> None:
    kind = MEASUREMENTS.get("corrosion_rate")()
    rate = np.linspace(0.2, 2.0, 25)
    frame = _rate_frame(5, rate)
    cover = np.full(25, 50.0)
    out, summary = kind.life_estimates(frame, cover, bar_diameter_mm=12.0, deck_area=100.0)
    assert "median_time_to_cracking_yr" not in summary
    assert summary["supported"] and summary["readings_used"] == 25
    # x_crit = 7.53 + 9.32 x 50/12 = 46.36 um; t = x_crit / (11.6 i) [Alonso-Andrade-1998]
    t = 46.3633 / (11.6 * rate)
    want = np.percentile(t, [10, 90])
    assert summary["time_to_cracking_yr"]["p10"] == pytest.approx(want[0], rel=1e-4)
    assert summary["time_to_cracking_yr"]["p90"] == pytest.approx(want[1], rel=1e-4)
    assert summary["section_loss_pct"]["p90"] > summary["section_loss_pct"]["p10"] > 0
    assert summary["basis"].startswith("25 readings")
    assert any("Alonso-Andrade-1998" in a for a in summary["assumptions"])
    assert np.allclose(out["time_to_cracking_yr"], t, rtol=1e-4)


def test_rate_kind_summary_without_cover_gives_no_range() -> None:
    kind = MEASUREMENTS.get("corrosion_rate")()
    frame = _rate_frame(5, np.full(25, 1.0))
    _out, summary = kind.life_estimates(frame, None, bar_diameter_mm=12.0, deck_area=100.0)
    assert not summary["supported"]
    assert summary["time_to_cracking_yr"] is None and summary["section_loss_pct"] is None
    assert summary["basis"].startswith("0 readings")

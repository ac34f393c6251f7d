"""Tests of geo_corrosion.condition.stats."""

from __future__ import annotations

import numpy as np
import pytest

from geo_corrosion.condition.classes import POTENTIAL_C876
from geo_corrosion.condition.stats import class_table, summary_statistics
from geo_corrosion.errors import ConditionError


def test_summary() -> None:
    """Check summary."""
    # numpy as reference (percentile type 7)
    v = np.array([-100.0, -200.0, -300.0, -400.0, np.nan])
    s = summary_statistics(v)
    assert s["count"] == 4 and s["missing"] == 1
    assert s["mean"] == -250.0
    assert s["p25"] == pytest.approx(np.percentile(v[:4], 25))
    assert s["std"] == pytest.approx(np.std(v[:4], ddof=1))
    assert summary_statistics([np.nan])["mean"] is None


def test_class_table() -> None:
    """Check class table."""
    # 25 % of readings below -350 mV; both bounds 'uncertain' (common practice)
    t = class_table([-150.0, -250.0, -300.0, -400.0], POTENTIAL_C876,
                    cell_values=np.array([[-400.0, -200.0], [-100.0, np.nan]]), cell_area=2.0)
    assert t["class_key"].tolist() == ["high", "uncertain", "low"]
    assert t["count"].tolist() == [1, 2, 1]
    assert t["share_readings"].tolist() == [0.25, 0.5, 0.25]
    assert t["area"].tolist() == [2.0, 2.0, 2.0]
    assert t["share_area"].sum() == pytest.approx(1.0)
    with pytest.raises(ConditionError, match="cell_area"):
        class_table([-150.0], POTENTIAL_C876, cell_values=[[-1.0]])

"""Tests of the class tables in geo_corrosion.condition.classes."""

from __future__ import annotations

import numpy as np
import pytest

from geo_corrosion.condition import classes as C
from geo_corrosion.errors import ConditionError


def test_c876_classes() -> None:
    """Check c876 classes."""
    # ASTM C876 criteria -200 / -350 mV CSE [ASTM-C876-91 App. X1, from memory]
    out = C.POTENTIAL_C876.classify([-150.0, -250.0, -400.0]).tolist()
    assert out == ["low (>90 % no corrosion)", "uncertain", "high (>90 % corrosion)"]


def test_c876_boundaries() -> None:
    """Check c876 boundaries."""
    # both bounds are "uncertain" (convention chosen, common practice)
    out = C.POTENTIAL_C876.classify([-200.0, -350.0, -199.999, -350.001]).tolist()
    assert out == ["uncertain", "uncertain", "low (>90 % no corrosion)", "high (>90 % corrosion)"]


def test_c876_nan_and_codes() -> None:
    """Check c876 nan and codes."""
    # common practice, no source: NaN has no class
    cs = C.POTENTIAL_C876
    assert cs.classify([np.nan, -100.0]).tolist() == ["", "low (>90 % no corrosion)"]
    assert cs.codes([np.nan, -400.0, -300.0, -100.0]).tolist() == [-1, 0, 1, 2]
    assert cs.classify_keys([-400.0]).tolist() == ["high"]
    assert cs.severity([-400.0, -100.0, np.nan]).tolist() == [2, 0, -1]


def test_classify_keeps_shape() -> None:
    """Check classify keeps shape."""
    # common practice, no source: works on 2-D grids
    grid = np.array([[-400.0, -100.0], [np.nan, -250.0]])
    out = C.POTENTIAL_C876.codes(grid)
    assert out.shape == (2, 2)
    assert out.tolist() == [[0, 2], [-1, 1]]


def test_c876_severe() -> None:
    """Check c876 severe."""
    # -500 mV "severe" class is common practice, not ASTM
    out = C.POTENTIAL_C876_SEVERE.classify_keys([-600.0, -500.0, -350.0, -200.0, -100.0]).tolist()
    assert out == ["severe", "high", "uncertain", "uncertain", "low"]


def test_rilem_resistivity() -> None:
    """Check rilem resistivity."""
    # [RILEM-TC154-2000; Polder-2001, from memory]; lower bound in higher class (common practice)
    out = C.RESISTIVITY_RILEM.classify([5.0, 10.0, 49.9, 50.0, 100.0, 150.0]).tolist()
    assert out == ["high", "moderate", "moderate", "low", "negligible", "negligible"]


def test_rilem_resistivity_from_ohm_m() -> None:
    """Check rilem resistivity from ohm m."""
    # 800 ohm.m -> 80 kohm.cm (exact) -> low [RILEM-TC154-2000; Polder-2001, from memory]
    from geo_corrosion.units import convert

    assert C.RESISTIVITY_RILEM.classify(convert([800.0], "ohm.m", "kohm.cm")).tolist() == ["low"]


def test_langford_broomfield() -> None:
    """Check langford broomfield."""
    # Langford & Broomfield 1987 [Broomfield-2007, from memory]
    out = C.RESISTIVITY_LANGFORD_BROOMFIELD.classify([4.0, 7.0, 15.0, 25.0]).tolist()
    assert out == ["very high", "high", "low to moderate", "low"]


def test_aashto_t358() -> None:
    """Check aashto t358."""
    # 4 x 8 in cylinders [AASHTO-T358-15 Table 1, from memory]
    cs = C.get_class_set("aashto_t358", field=False)
    out = cs.classify([11.9, 12.0, 36.9, 37.0, 254.1]).tolist()
    assert out == ["High", "Moderate", "Low", "Very low", "Negligible"]


def test_aashto_t358_refused_for_field() -> None:
    """Check aashto t358 refused for field."""
    # lab classifier refused for field readings [AASHTO-T358-15 scope]
    with pytest.raises(ConditionError, match="laboratory"):
        C.get_class_set("aashto_t358")
    with pytest.raises(ConditionError, match="laboratory"):
        C.get_class_set(C.RESISTIVITY_AASHTO_T358_150X300, field=True)


def test_rate_rilem() -> None:
    """Check rate rilem."""
    # [Andrade-Alonso-2004, from memory] levels; boundary convention common practice
    out = C.RATE_RILEM.classify([0.05, 0.1, 0.3, 0.5, 1.0, 1.01, 5.0]).tolist()
    assert out == ["negligible", "low", "low", "moderate", "moderate", "high", "high"]


def test_rate_clear() -> None:
    """Check rate clear."""
    # [Clear-1989, from memory]; edge convention our choice
    out = C.RATE_CLEAR.classify_keys([0.1, 0.2, 5.0, 10.0, 20.0]).tolist()
    assert out == ["none_expected", "possible_10_15_yr", "within_2_10_yr", "within_2_yr",
                   "within_2_yr"]


@pytest.mark.parametrize("name", ["c876", "RESISTIVITY_RILEM", "rilem-rate", "Langford Broomfield"])
def test_get_class_set_names(name: str) -> None:
    """Check get class set names."""
    # common practice, no source: names are case-insensitive and accept constant names
    assert C.get_class_set(name).name in C.CLASS_SETS


def test_get_class_set_unknown() -> None:
    """Check get class set unknown."""
    # common practice, no source: the message lists the choices
    with pytest.raises(ConditionError, match="rilem_resistivity"):
        C.get_class_set("nope")


def test_non_numeric_values() -> None:
    """Check non numeric values."""
    # common practice, no source: clear error instead of a numpy traceback
    with pytest.raises(ConditionError, match="numbers"):
        C.POTENTIAL_C876.classify(["a", "b"])


def test_colours_are_distinct_and_hex() -> None:
    """Check colours are distinct and hex."""
    # common practice, no source: one distinct colour per class
    for cs in C.CLASS_SETS.values():
        assert len(set(cs.colors)) == cs.n_classes
        assert all(c.startswith("#") and len(c) == 7 for c in cs.colors)


def test_bad_class_set_definition() -> None:
    """Check bad class set definition."""
    # common practice, no source: definitions are validated
    with pytest.raises(ConditionError, match="ascending"):
        C.class_set_from_dict({"name": "x", "variable": "v", "unit": "u", "edges": [2, 1],
                               "labels": ["a", "b", "c"]})
    with pytest.raises(ConditionError, match="edges"):
        C.class_set_from_dict({"name": "x", "variable": "v", "unit": "u", "edges": [1],
                               "labels": ["a", "b", "c"]})
    with pytest.raises(ConditionError, match="unknown key"):
        C.class_set_from_dict({"name": "x", "variable": "v", "unit": "u", "edges": [1],
                               "labels": ["a", "b"], "colour": ["#000000"]})


def test_user_class_set() -> None:
    """Check user class set."""
    # common practice, no source
    cs = C.class_set_from_dict({"name": "chloride", "variable": "cl_pct", "unit": "%",
                                "edges": [0.2, 0.4], "labels": ["ok", "watch", "bad"],
                                "higher_is_worse": True})
    assert cs.classify([0.1, 0.2, 0.5]).tolist() == ["ok", "watch", "bad"]
    assert cs.describe()["edges"] == [0.2, 0.4]


def test_scalar_input() -> None:
    """Check scalar input."""
    # common practice, no source: a scalar gives a 0-d result
    assert C.RATE_RILEM.classify(1.0).item() == "moderate"  # 1.0 is not > 1 (common practice)
    assert int(C.RATE_RILEM.codes(np.nan)) == -1

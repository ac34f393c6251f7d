"""Tests of geo_corrosion.condition.combined."""

from __future__ import annotations

import copy
import tomllib

import numpy as np
import pytest

from geo_corrosion.condition import combined as CB
from geo_corrosion.errors import ConditionError


def test_default_rules_cells() -> None:
    """Check default rules cells."""
    # common practice: low cover + E < -350 or rho < 10 -> high priority
    r = CB.combine(
        potential_mv=[-400.0, -400.0, -250.0, -100.0, np.nan, np.nan, -250.0],
        resistivity_kohm_cm=[50.0, 5.0, 5.0, 200.0, np.nan, 200.0, 8.0],
        low_cover=[True, False, False, False, np.nan, np.nan, True],
    )
    assert r.keys.tolist() == ["high_priority", "corrosion_likely", "watch", "low_risk",
                               "no_data", "low_risk", "high_priority"]
    assert r.rule_index.tolist() == [1, 4, 6, 10, 0, 12, 2]
    assert r.labels[0] == "High priority"
    keys = [c.key for c in CB.DEFAULT_RULES.classes]
    assert [keys[c] for c in r.codes] == r.keys.tolist()


def test_rate_rules_and_missing_kind() -> None:
    """Check rate rules and missing kind."""
    # common practice: a condition on a kind with no data does not hold
    r = CB.combine(icorr_ua_cm2=[2.0, 0.7, 0.3, 0.05, np.nan])
    assert r.keys.tolist() == ["high_priority", "corrosion_likely", "watch", "low_risk",
                               "no_data"]
    r2 = CB.combine(low_cover=np.array([True, False]))
    assert r2.keys.tolist() == ["watch", "unclassified"]


def test_grid_input_shape_kept() -> None:
    """Check grid input shape kept."""
    # common practice, no source
    g = np.array([[-400.0, -100.0], [-250.0, np.nan]])
    r = CB.combine(potential_mv=g)
    assert r.keys.shape == (2, 2)
    assert r.keys.tolist() == [["corrosion_likely", "low_risk"], ["watch", "no_data"]]


def test_round_trip_through_toml_dict() -> None:
    """Check round trip through toml dict."""
    # common practice: the table printed by to_dict() parses back to the same table
    table = CB.RuleTable.from_dict(CB.DEFAULT_RULES.to_dict())
    assert table == CB.DEFAULT_RULES


def test_user_override_from_toml() -> None:
    """Check user override from toml."""
    # user table as parsed from a site file (TOML)
    text = '''
default = "ok"
classes = [
  { key = "bad", label = "Bad", color = "#D55E00" },
  { key = "ok", label = "OK", color = "#009E73" },
]
[[rules]]
name = "very negative"
potential = "high"
class = "bad"
[[rules]]
name = "low resistivity"
resistivity = ["high", "moderate"]
class = "bad"
'''
    table = CB.RuleTable.from_dict(tomllib.loads(text))
    r = CB.combine(table, potential_mv=[-400.0, -100.0, -100.0, np.nan],
                   resistivity_kohm_cm=[200.0, 20.0, 200.0, np.nan])
    assert r.keys.tolist() == ["bad", "bad", "ok", "no_data"]


def test_user_class_set_override() -> None:
    """Check user class set override."""
    # class_sets lets a kind use another published class set (Langford & Broomfield, from memory)
    spec = copy.deepcopy(CB.DEFAULT_RULES.to_dict())
    spec["class_sets"] = {"resistivity": "langford_broomfield"}
    spec["rules"] = [{"name": "very high rate risk", "resistivity": ["very_high"],
                      "class": "high_priority"}]
    table = CB.RuleTable.from_dict(spec)
    assert CB.combine(table, resistivity_kohm_cm=[4.0, 30.0]).keys.tolist() == [
        "high_priority", "unclassified"]


@pytest.mark.parametrize(
    ("rule", "match"),
    [({"name": "r1", "potential": ["hgh"], "class": "watch"}, r"rule 1 \('r1'\).*'hgh'"),
     ({"name": "r1", "class": "watch"}, r"rule 1 \('r1'\): has no condition"),
     ({"name": "r1", "potential": ["high"], "class": "nope"}, r"rule 1 \('r1'\).*'nope'"),
     ({"name": "r1", "potential": ["high"]}, r"rule 1 \('r1'\): missing 'class'"),
     ({"name": "r1", "cover": True, "class": "watch"}, r"rule 1 \('r1'\): unknown key"),
     ({"name": "r1", "low_cover": "yes", "class": "watch"}, r"rule 1 \('r1'\): low_cover"),
     ({"name": "r1", "rate": [1], "class": "watch"}, r"rule 1 \('r1'\): rate")],
)
def test_validation_names_rule(rule: dict[str, object], match: str) -> None:
    """Check validation names rule."""
    # issue 4 / brief: validation errors name the offending rule
    with pytest.raises(ConditionError, match=match):
        CB.RuleTable.from_dict({"rules": [rule]})


def test_validation_other_errors() -> None:
    """Check validation other errors."""
    # common practice, no source
    with pytest.raises(ConditionError, match="unknown key"):
        CB.RuleTable.from_dict({"rulez": []})
    with pytest.raises(ConditionError, match="default class"):
        CB.RuleTable.from_dict({"default": "zzz"})
    with pytest.raises(ConditionError, match="laboratory"):
        CB.RuleTable.from_dict({"class_sets": {"resistivity": "aashto_t358"}})
    with pytest.raises(ConditionError, match="at least one"):
        CB.combine()
    with pytest.raises(ConditionError, match="shape"):
        CB.combine(potential_mv=[1.0, 2.0], resistivity_kohm_cm=[1.0])

"""Site-file parameter checks of the zoning rules (``ZoningRule.check_parameters``)."""

from __future__ import annotations

import pytest

from geo_corrosion.errors import ZoningError
from geo_corrosion.zoning import ActiveCorrosionRule, LowCoverRule, RepairRule, ZoningRule

W = "site.toml: [[zoning]][2]"


def test_active_corrosion_classes_are_the_potential_class_keys() -> None:
    # ASTM C876 classes as held in condition/classes.py [ASTM-C876-91 App. X1]: c876 keys
    assert ActiveCorrosionRule.class_keys() == ("c876", ("high", "uncertain", "low"))
    ActiveCorrosionRule.check_parameters({"classes": ["high", "uncertain"]}, where=W)
    ActiveCorrosionRule.check_parameters({}, where=W)  # the default ["high"]


@pytest.mark.parametrize(("params", "pattern"), [
    ({"classes": ["hihg"]}, "site.toml: [[zoning]][2].classes: rule 'active_corrosion': unknown "
                            "class key(s) 'hihg' (did you mean 'high'?); the potential class set "
                            "'c876' has the keys: high, uncertain, low"),
    ({"classes": ["severe"], "name": "anodes"}, "rule 'active_corrosion' (zone 'anodes')"),
    ({"classes": "high"}, "not the string 'high'"),
    ({"classes": []}, "the list is empty"),
    ({"classes": [{"high": 1}]}, "expected a list of class keys"),
    ({"name": ""}, "site.toml: [[zoning]][2].name: rule 'active_corrosion': expected a non-empty"),
    ({"treatment": 5}, "site.toml: [[zoning]][2].treatment: "),
])
def test_active_corrosion_refuses_bad_values(params: dict, pattern: str) -> None:
    # common practice, no source: a class the layers never hold would claim nothing, silently
    with pytest.raises(ZoningError) as err:
        ActiveCorrosionRule.check_parameters(params, where=W)
    assert pattern in str(err.value)


def test_repair_include_repairs_must_be_boolean() -> None:
    # common practice, no source: "no" is a true value in Python, so it claimed the repairs
    RepairRule.check_parameters({"include_repairs": False}, where=W)
    with pytest.raises(ZoningError, match=r"\[\[zoning\]\]\[2\]\.include_repairs: rule 'repair': "
                                          "expected true or false, got 'no'"):
        RepairRule.check_parameters({"include_repairs": "no"}, where=W)


def test_base_check_is_inherited_by_rules_without_parameters() -> None:
    # common practice, no source
    LowCoverRule.check_parameters({"name": "sealer", "bid_item": ""}, where=W)
    with pytest.raises(ZoningError, match=r"\.bid_item: rule 'low_cover' \(zone 'sealer'\)"):
        LowCoverRule.check_parameters({"name": "sealer", "bid_item": 3}, where=W)
    assert ZoningRule.check_parameters.__func__ is LowCoverRule.check_parameters.__func__


def test_python_callers_may_still_name_other_classes() -> None:
    # the class layers of ZoningLayers are the caller's (any class set); only the site file,
    # whose layers come from the potential surface, is held to the c876 keys (common practice)
    rule = ActiveCorrosionRule(classes=("moderate",))
    assert rule.classes == ("moderate",)

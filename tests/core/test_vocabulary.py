"""The one vocabulary: every internal name owners may see has a label; formats and units.

Sources beside each check: the class sets of ``condition/classes.py`` (RILEM TC 154
resistivity classes name corrosion *risk*, high risk at low resistivity,
[RILEM-TC154-2000]); unit factors 1 ft = 0.3048 m, 1 in = 25.4 mm exactly
[NIST-SP811-2008 App. B]; the precision of owner documents (whole ft², 0.1 m², 1/4 in,
5 mm) is common practice, no source (issue 14).
"""

from __future__ import annotations

import ast
import logging
from pathlib import Path

import pytest

from geo_corrosion import vocabulary as voc
from geo_corrosion.vocabulary import (
    UnknownTermError,
    class_label,
    fmt_area,
    fmt_cover,
    fmt_depth,
    fmt_length,
    fmt_potential,
    label,
)


def _all_terms() -> list[str]:
    """Every internal name of the built-ins that may reach an owner document."""
    from geo_corrosion.condition.classes import CLASS_SETS
    from geo_corrosion.condition.combined import DEFAULT_RULES
    from geo_corrosion.config import OVERLAY_KINDS, VARIOGRAM_MODELS
    from geo_corrosion.corrections import ELECTRODES
    from geo_corrosion.measurements import BUILTIN_KINDS
    from geo_corrosion.qa.checks import QA_RULES
    from geo_corrosion.quantities import DEFAULT_BID_ITEMS, DEPTH_CLASS_ITEMS
    from geo_corrosion.zoning.builtin import BUILTIN_ZONING_RULES

    terms = [*BUILTIN_KINDS, *CLASS_SETS, *DEPTH_CLASS_ITEMS, *BUILTIN_ZONING_RULES,
             *DEFAULT_BID_ITEMS, *QA_RULES, "QA-DERIVE", "QA-DERIVE-NOTE", "QA-TEMP-RANGE",
             *OVERLAY_KINDS]
    terms += [f"{cs.name}.{k}" for cs in CLASS_SETS.values() for k in cs.keys]
    terms += [c.key for c in DEFAULT_RULES.classes]
    terms += [f"electrode.{e}" for e in ELECTRODES]
    terms += [f"model.{m}" for m in VARIOGRAM_MODELS if m != "auto"]
    return terms


def test_every_builtin_name_has_a_label() -> None:
    # source: the registries and tables of the package (kinds, class sets, depth classes,
    # zoning rules, combined classes, bid items, QA codes, electrodes, variogram models)
    missing = [t for t in _all_terms() if t not in voc.VOCABULARY]
    assert not missing, f"no owner label for {missing}"


def test_labels_are_owner_words() -> None:
    # common practice, no source: a label is not itself an internal name
    for term, text in voc.VOCABULARY.items():
        assert "_" not in text, (term, text)
        assert text[:1].isupper() or text[:1].isdigit(), (term, text)


def test_resistivity_classes_are_named_as_corrosion_risk() -> None:
    # [RILEM-TC154-2000]: rho < 10 kOhm.cm is the *high risk* class, i.e. low resistivity
    from geo_corrosion.condition.classes import RESISTIVITY_RILEM

    assert RESISTIVITY_RILEM.labels[0] == "high" and RESISTIVITY_RILEM.edges[0] == 10.0
    high = class_label("rilem_resistivity", "high")
    assert high.startswith("High corrosion risk") and "low resistivity" in high
    low = class_label("rilem_resistivity", "low")
    assert low.startswith("Low corrosion risk") and "high resistivity" in low
    assert label("rilem_resistivity") == "Resistivity (corrosion risk, RILEM TC 154)"


def test_unknown_term_raises_in_tests_and_falls_back_at_run_time(
        monkeypatch: pytest.MonkeyPatch, caplog: pytest.LogCaptureFixture) -> None:
    # common practice: a missing entry fails a test, never a client's run
    with pytest.raises(UnknownTermError, match="partial_beside_bars"):
        label("partial_beside_bars")
    assert label("partial_beside_bars", "Given") == "Given"
    monkeypatch.delenv("PYTEST_CURRENT_TEST", raising=False)
    monkeypatch.delenv("GEO_CORROSION_STRICT_VOCABULARY", raising=False)
    with caplog.at_level(logging.WARNING, logger="geo_corrosion.vocabulary"):
        assert label("partial_beside_bars") == "Partial beside bars"
    assert "partial_beside_bars" in caplog.text


@pytest.mark.parametrize(("m2", "system", "text"), [
    (169.55, "us", "1,825\u00a0ft²"),  # 169.55 / 0.3048**2 = 1825.04 ft2 [NIST-SP811-2008]
    (170.3657, "metric", "170.4\u00a0m²"),  # 0.1 m2 (common practice)
    (0.04, "us", "0\u00a0ft²"),  # 0.43 ft2 rounds to whole ft2
])
def test_fmt_area(m2: float, system: str, text: str) -> None:
    assert fmt_area(m2, system) == text


@pytest.mark.parametrize(("mm", "system", "text"), [
    (82.55, "us", "3-1/4\u00a0in"),  # 3.25 in exactly [NIST-SP811-2008]
    (81.788, "us", "3-1/4\u00a0in"),  # 3.22 in -> nearest 1/4 (hand computation)
    (19.05, "us", "3/4\u00a0in"),
    (101.6, "us", "4\u00a0in"),
    (88.3, "metric", "90\u00a0mm"),  # nearest 5 mm (hand computation)
    (19.05, "metric", "20\u00a0mm"),
])
def test_fmt_depth(mm: float, system: str, text: str) -> None:
    assert fmt_depth(mm, system) == text


def test_fmt_cover_potential_length() -> None:
    # 38.1 mm = 1.5 in exactly [NIST-SP811-2008 App. B]; potentials as "mV vs CSE" (issue 14)
    assert fmt_cover(38.1, "us") == "1.5\u00a0in"
    assert fmt_cover(49.41, "metric") == "49\u00a0mm"
    assert fmt_potential(-350.4) == "-350\u00a0mV vs CSE"
    assert fmt_length(3.048, "us") == "10.0\u00a0ft"
    assert fmt_length(0.3, "metric") == "0.30\u00a0m"
    assert fmt_area(float("nan"), "us") == "-"


def test_vocabulary_imports_only_errors_and_units() -> None:
    # the house (DEVELOPERS.md): the foundation module may import errors and units only
    tree = ast.parse(Path(voc.__file__).read_text(encoding="utf-8"))
    mods = {n.module for n in ast.walk(tree) if isinstance(n, ast.ImportFrom) and n.module}
    mods |= {a.name for n in ast.walk(tree) if isinstance(n, ast.Import) for a in n.names}
    ours = {m for m in mods if m.startswith("geo_corrosion")}
    assert ours <= {"geo_corrosion.errors", "geo_corrosion.units"}, ours

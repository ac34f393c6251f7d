"""Ids that become file and layer names: every unsafe id is refused by its key (issue 11, item 2).

A level, survey or control-point id names rasters, GeoPackage layers and DXF layers, so it is
held to ``config.ID_PATTERN`` (letters, digits, ``_`` and ``-``, at most ``config.ID_MAX``).
The unsafe strings are the issue's (``../../../escaped``, ``L2/sub``, ``a b``, ``x:y``, empty,
41 characters) and more drawn by hypothesis (fixed seed).  Contract: ``tests/fuzz/contract.py``.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from geo_corrosion.config import ID_MAX, ID_PATTERN
from tests.fuzz.conftest import fresh_site
from tests.fuzz.contract import Case, edit, holds

GROUP = "ids"
FUZZ = settings(derandomize=True, database=None, deadline=None, max_examples=8,
                suppress_health_check=[HealthCheck.function_scoped_fixture])

UNSAFE = ("../../../escaped", "L2/sub", "a b", "x:y", "", "x" * (ID_MAX + 1), "..", ".hidden",
          "a\\b", "D1\n", "-lead", "é", "a*b", "CON?")


def _toml_str(text: str) -> str:
    """Return ``text`` as a TOML basic string (JSON's escapes are TOML's for these)."""
    return json.dumps(text, ensure_ascii=False)


def level_id(bad: str) -> Case:
    """The level's id (and the surveys' reference to it)."""
    def breaks(site: Path) -> None:
        toml = site / "site.toml"
        edit(toml, 'id = "D1"', f"id = {_toml_str(bad)}")
        toml.write_text(toml.read_text().replace('level = "D1"', f"level = {_toml_str(bad)}"))
    return Case(f"level-{bad!r}", breaks, ("site.toml", "[[levels]][0].id"))


def survey_id(bad: str) -> Case:
    """The potential survey's id."""
    return Case(f"survey-{bad!r}", lambda s: edit(s / "site.toml", 'id = "D1-hcp"',
                                                 f"id = {_toml_str(bad)}"),
                ("site.toml", "[[surveys]][0].id"))


def control_point_id(bad: str) -> Case:
    """The id of the first control point."""
    return Case(f"control-point-{bad!r}", lambda s: edit(s / "site.toml", 'id = "CP1"',
                                                        f"id = {_toml_str(bad)}"),
                ("site.toml", "[[levels]][0].grid.control_points[0].id"))


CASES = [make(bad) for make in (level_id, survey_id, control_point_id) for bad in UNSAFE]


@pytest.mark.parametrize("case", [c.param() for c in CASES])
def test_unsafe_id_is_refused(site: Path, case: Case) -> None:
    """Each unsafe id in each id key: refused naming file and key (issue 11)."""
    case.breaks(site)
    holds(site, case, GROUP, run=case.id.startswith("level-"))  # run: same check chain


_unsafe = st.text(alphabet=st.characters(codec="utf-8", exclude_categories=("Cs",)),
                  max_size=ID_MAX + 5).filter(lambda t: ID_PATTERN.fullmatch(t) is None)


@FUZZ
@given(bad=_unsafe, where=st.sampled_from([level_id, survey_id, control_point_id]))
def test_any_unsafe_id_is_refused(fuzz_template: Path, tmp_path_factory: pytest.TempPathFactory,
                                  bad: str, where: object) -> None:
    """Ids drawn from any text that ``ID_PATTERN`` refuses (hypothesis, fixed seed)."""
    site = fresh_site(fuzz_template, tmp_path_factory.mktemp("id"))
    case = where(bad)  # type: ignore[operator]
    case.breaks(site)
    holds(site, case, GROUP, run=False)


def class_key(bad: str) -> Case:
    """A class key of ``[condition.combined]`` (it names a class layer and legend entry)."""
    def breaks(site: Path) -> None:
        toml = site / "site.toml"
        toml.write_text(toml.read_text() + (
            f'\n[condition.combined]\ndefault = "ok"\nclasses = [ {{ key = {_toml_str(bad)} }}, '
            f'{{ key = "ok" }} ]\n[[condition.combined.rules]]\nclass = {_toml_str(bad)}\n'
            'potential = ["high"]\n'))
    return Case(f"class-key-{bad!r}", breaks,
                ("site.toml", "[condition.combined].classes[0].key"))


def zoning_name(bad: str) -> Case:
    """The name of a ``[[zoning]]`` entry (it names zones in the layers and the schedule)."""
    return Case(f"zoning-name-{bad!r}", lambda s: (s / "site.toml").write_text(
        (s / "site.toml").read_text() + f'\n[[zoning]]\nrule = "repair"\nname = '
                                        f'{_toml_str(bad)}\n'),
                ("site.toml", "[[zoning]][0].name"))


# an empty zoning name is refused today (ZoningRule.check_parameters); the others are pending
PENDING_CASES = [class_key(b) for b in ("../../../escaped", "L2/sub", "a b", "x:y")] + [
    zoning_name(b) for b in ("../../../escaped", "L2/sub", "x:y", "x" * (ID_MAX + 1))]


@pytest.mark.parametrize("case", [c.param() for c in PENDING_CASES])
def test_unsafe_class_key_or_zoning_name_is_refused(site: Path, case: Case) -> None:
    """Class keys and zoning names are held to the same safe set (issue 11)."""
    case.breaks(site)
    holds(site, case, GROUP)

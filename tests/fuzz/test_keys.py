"""Messages that keep their key: non-finite and out-of-range numbers, malformed TOML (issue 11).

Every numeric key of the site file is enumerated from the schema (``config.TABLES``: types
``number``, ``integer``, ``length``, ``area``, ``pair``), so a key added to ``config.py`` is
fuzzed without an edit here.  Each gets ``inf``, ``-inf`` and ``nan`` (TOML 1.0 literals; for a
length or area, ``"inf m"`` and so on), and hypothesis draws values from {0, negative, huge}
that the key's declared range refuses (fixed seed).  Contract: ``tests/fuzz/contract.py``;
the message must name the site file and the key's dotted name.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from geo_corrosion.config import TABLES, Key
from tests.fuzz.conftest import fresh_site
from tests.fuzz.contract import Case, edit, holds

GROUP = "keys"
FUZZ = settings(derandomize=True, database=None, deadline=None, max_examples=25,
                suppress_health_check=[HealthCheck.function_scoped_fixture])
NUMERIC = ("number", "integer", "length", "area", "pair")


@dataclass(frozen=True)
class Slot:
    """Where a key of a table goes in the synthetic site, and its dotted name in messages."""

    table: str
    anchor: str  # the line after which the key is put
    dotted: str  # "{}" is the key


SLOTS = {
    "run": Slot("run", "[run]\n", "[run].{}"),
    "run.variogram.<kind>": Slot("run.variogram.<kind>", "", "[run.variogram.potential].{}"),
    "levels": Slot("levels", 'name = "Test deck"\n', "[[levels]][0].{}"),
    "levels.grid": Slot("levels.grid", "[levels.grid]\n", "[[levels]][0].grid.{}"),
    "levels.grid.control_points": Slot("levels.grid.control_points", 'id = "CP1", ',
                                       "[[levels]][0].grid.control_points[0].{}"),
    "surveys": Slot("surveys", 'id = "D1-hcp"\n', "[[surveys]][0].{}"),
}

#: (table, key) of every numeric key of the schema that the synthetic site can hold.
KEYS: list[tuple[Slot, Key]] = [
    (SLOTS[t.name], k) for t in TABLES.values() if t.name in SLOTS
    for k in t.keys if k.type in NUMERIC and k.name]


def _toml_value(k: Key, v: float) -> str:
    """The TOML text of ``v`` for key ``k`` (a length in its held unit; a pair ``[v, 0]``)."""
    num = "nan" if v != v else ("inf" if v == float("inf") else
                                "-inf" if v == float("-inf") else repr(v))
    if k.type in ("length", "area"):
        unit = {"length": k.unit or "m", "area": "m2"}[k.type]
        return f'"{num} {unit}"'
    if k.type == "integer" and num not in ("nan", "inf", "-inf"):
        return str(int(v))
    if k.type == "pair":
        return f"[{num}, 0.0]"
    return num


def set_key(site: Path, slot: Slot, k: Key, text: str) -> None:
    """Set key ``k`` to TOML ``text`` in the synthetic site: replace it, or add it."""
    toml = site / "site.toml"
    src = toml.read_text()
    name = str(k.name)
    if slot.table == "run.variogram.<kind>":
        toml.write_text(src + f"\n[run.variogram.potential]\n{name} = {text}\n")
        return
    if slot.table == "levels.grid.control_points":
        toml.write_text(re.sub(rf'(id = "CP1", [^}}]*?){name} = \[[^]]*\]',
                               rf"\g<1>{name} = {text}", src, count=1))
        return
    if slot.table == "surveys" and name == "temperature_f":  # one of the two temperatures
        src = src.replace("temperature_c = 22.2\n", "", 1)
    # the key given in its table already (cell_size, spacing, temperature_c): replace it
    start = src.index(slot.anchor) + len(slot.anchor)
    end = src.find("\n[", start)
    section = src[start:end]
    new, n = re.subn(rf"(?m)^{name} = .*$", f"{name} = {text}", section, count=1)
    if not n:
        new = f"{name} = {text}\n" + section
    toml.write_text(src[:start] + new + src[end:])




def key_case(slot: Slot, k: Key, v: float) -> Case:
    """A case: key ``k`` set to ``v``, refused naming the site file and its dotted key."""
    text = _toml_value(k, v)
    return Case(f"{slot.dotted.format(k.name)}={text}",
                lambda s: set_key(s, slot, k, text), ("site.toml", slot.dotted.format(k.name)))


CASES = [key_case(slot, k, v) for slot, k in KEYS
         for v in (float("inf"), float("-inf"), float("nan"))]


@pytest.mark.parametrize("case", [c.param() for c in CASES])
def test_non_finite_number_is_refused_by_its_key(site: Path, case: Case) -> None:
    """inf, -inf and nan in every numeric key: refused naming the dotted key (issue 11)."""
    case.breaks(site)
    holds(site, case, GROUP, run=case.id.endswith("nan") or case.id.endswith('nan m"'))


def _refused(k: Key, v: float) -> bool:
    """Whether the key's declared range refuses ``v`` (written in the key's unit)."""
    if k.type == "pair":  # no range; their non-finite values are the cases above
        return False
    # a length is written in the unit it is held in (``_toml_value``), so held == v
    return not k.in_range(int(v) if k.type == "integer" else v, site=True)


_drawn = st.tuples(st.sampled_from(KEYS),
                   st.sampled_from([0.0, -1.0, -0.001, -1e308, 1e308, 1e30, 2.0**63, -360.5,
                                    1e6])).filter(lambda t: _refused(t[0][1], t[1]))


@FUZZ
@given(drawn=_drawn)
def test_out_of_range_number_is_refused_by_its_key(
        fuzz_template: Path, tmp_path_factory: pytest.TempPathFactory,
        drawn: tuple[tuple[Slot, Key], float]) -> None:
    """0, negative or huge values that a key's range refuses (hypothesis, fixed seed)."""
    (slot, k), v = drawn
    site = fresh_site(fuzz_template, tmp_path_factory.mktemp("key"))
    case = key_case(slot, k, v)
    case.breaks(site)
    holds(site, case, GROUP, run=False)


def _append(text: str) -> object:
    return lambda s: (s / "site.toml").write_text((s / "site.toml").read_text() + text)


MALFORMED = [
    Case("unclosed-string", lambda s: edit(s / "site.toml", 'name = "Test deck"',
                                           'name = "Test deck'), ("site.toml", "line 12")),
    Case("duplicate-key", lambda s: edit(s / "site.toml", 'name = "Test deck"',
                                         'name = "Test deck"\nname = "again"'),
         ("site.toml", "line 13")),
    Case("duplicate-table", _append('\n[run]\ncell_size = "2 ft"\n'), ("site.toml", "line")),
    Case("unclosed-table-header", lambda s: edit(s / "site.toml", "[run]", "[run"),
         ("site.toml", "line")),
    Case("binary-garbage", lambda s: (s / "site.toml").write_bytes(bytes(range(256)) * 4),
         ("site.toml",)),
    Case("not-utf8", lambda s: (s / "site.toml").write_bytes((s / "site.toml").read_bytes(
        ).replace(b"Test deck", b"Test d\xff\xfeeck", 1)), ("site.toml",)),
    Case("empty-file", lambda s: (s / "site.toml").write_text(""), ("site.toml", "[site]")),
    Case("unknown-key", _append('\n[webmap]\nbogus_key = 1\n'), ("site.toml", "bogus_key")),
    Case("string-for-number", lambda s: edit(s / "site.toml", "spacing = 2.0",
                                             'spacing = "two"'),
         ("site.toml", "[[levels]][0].grid.spacing")),
    Case("boolean-for-integer", lambda s: edit(s / "site.toml", "[run]\n",
                                               "[run]\nn_neighbors = true\n"),
         ("site.toml", "[run].n_neighbors")),
    Case("table-for-levels", lambda s: (s / "site.toml").write_text(
        (s / "site.toml").read_text().replace("[[levels]]", "[levels]", 1).replace(
            "[levels.grid]", "[levels.grid]", 1)), ("site.toml", "levels")),
    Case("no-levels", lambda s: (s / "site.toml").write_text(
        (s / "site.toml").read_text().split("[[levels]]")[0]), ("site.toml", "levels")),
    Case("survey-of-unknown-level", lambda s: edit(s / "site.toml", 'level = "D1"',
                                                   'level = "D9"'),
         ("site.toml", "[[surveys]][0].level", "D9")),
]


@pytest.mark.parametrize("case", [c.param() for c in MALFORMED])
def test_malformed_site_file_is_refused_with_its_line_or_key(site: Path, case: Case) -> None:
    """Malformed TOML names the file and line; a wrong type the key (issue 11)."""
    case.breaks(site)
    holds(site, case, GROUP)


def _zoning_cases() -> list[Case]:
    """Every parameter of every zoning rule of the registry set to ``nan`` (no rule takes it)."""
    from geo_corrosion.zoning import ZONING_RULES

    out = []
    for rule in ZONING_RULES.names():
        for param in ZONING_RULES.get(rule).parameters():
            out.append(Case(f"[[zoning]][0].{param}=nan ({rule})",
                            _append(f'\n[[zoning]]\nrule = "{rule}"\n{param} = nan\n'),
                            ("site.toml", f"[[zoning]][0].{param}")))
    return out


@pytest.mark.parametrize("case", [c.param() for c in _zoning_cases()])
def test_nan_zoning_parameter_is_refused_by_its_key(site: Path, case: Case) -> None:
    """A NaN in each parameter of each registered zoning rule: named by its key (issue 11)."""
    case.breaks(site)
    holds(site, case, GROUP, run=False)

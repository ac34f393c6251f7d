"""Wrong data in the readings and the grid tie: named by file and row, or warned (issue 11).

Each case breaks the synthetic site's potential readings (``readings/potential.csv``, 600
readings) or its control points.  The QA rules are ``qa/checks.py``'s: QA-REVERSED-LEADS (more
than 90 % of the potentials above +100 mV CSE) and QA-OPEN-LEAD (nearly all within a few mV of
0 with no spread) are errors; a control point's residual above ``crs.RESIDUAL_TOLERANCE_M``
(0.1 m, common practice) is a warning naming the point.  Contract: ``tests/fuzz/contract.py``.
"""

from __future__ import annotations

import re
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from geo_corrosion.testing import SYNTHETIC_TIE
from tests.fuzz.conftest import fresh_site
from tests.fuzz.contract import Case, edit, holds

GROUP = "data"
CSV = "readings/potential.csv"


def _lines(fn: Callable[[list[str]], list[str]]) -> Callable[[Path], None]:
    """Rewrite the potential readings' lines (header first) through ``fn``."""
    def breaks(site: Path) -> None:
        p = site / CSV
        p.write_text("\n".join(fn(p.read_text().splitlines())) + "\n")
    return breaks


def _values(fn: Callable[[int, float], str]) -> Callable[[Path], None]:
    """Replace each reading's value (line i, value v) by ``fn(i, v)``."""
    def rows(lines: list[str]) -> list[str]:
        out = [lines[0]]
        for i, line in enumerate(lines[1:], start=2):
            *head, v = line.split(",")
            out.append(",".join([*head, fn(i, float(v))]))
        return out
    return _lines(rows)


def _comma_decimal(value: str) -> Callable[[Path], None]:
    """A decimal-comma file (``;`` separated) whose line 57 holds ``value``."""
    def breaks(site: Path) -> None:
        edit(site / "site.toml", 'unit = "mV"', 'unit = "mV"\nseparator = ";"\ndecimal = ","')
        _values(lambda i, v: value if i == 57 else f"{v:.1f}".replace(".", ","))(site)
        p = site / CSV
        lines = p.read_text().splitlines()
        p.write_text("\n".join([lines[0].replace(",", ";")] + [
            ";".join(ln.split(",", 3)[:3]).replace(".", ",") + ";" + ln.split(",", 3)[3]
            for ln in lines[1:]]) + "\n")
    return breaks


def _far_control_points(off_m: float) -> Callable[[Path], None]:
    """Three more exact control points 1000 ft out, and CP2's site easting moved ``off_m``."""
    import math

    a, k = math.radians(SYNTHETIC_TIE["rotation_deg"]), 0.3048
    ox, oy = SYNTHETIC_TIE["origin"]

    def site_xy(x: float, y: float) -> tuple[float, float]:
        return (ox + k * (math.cos(a) * x - math.sin(a) * y),
                oy + k * (math.sin(a) * x + math.cos(a) * y))

    def breaks(site: Path) -> None:
        toml = site / "site.toml"
        text = toml.read_text()
        m = re.search(r'id = "CP2", local = \[[^]]*\], site = \[([\d.]+),', text)
        assert m
        text = text.replace(m.group(1), f"{float(m.group(1)) + off_m:.4f}", 1)
        extra = ", ".join(f'{{ id = "CP{i}", local = [{x}, {y}], site = [{sx:.4f}, {sy:.4f}] }}'
                          for i, (x, y) in enumerate([(1000, 0), (1000, 1000), (0, 1000)], 4)
                          for sx, sy in [site_xy(x, y)])
        toml.write_text(text.replace("] }} ]", f"] }}, {extra} ]", 1)
                        if "] }} ]" in text else re.sub(r"\] \}\s*\]\n",
                                                          f"] }}, {extra} ]\n", text, count=1))
    return breaks


_rng = np.random.default_rng(11)

CASES = [
    Case("unit-unknown", lambda s: edit(s / "site.toml", 'unit = "mV"', 'unit = "furlongs"'),
         ("potential.csv", "furlongs", "[[surveys]][0].unit")),
    Case("unit-of-another-kind", lambda s: edit(s / "site.toml", 'unit = "mV"',
                                                'unit = "kohm.cm"'),
         ("potential.csv", "kohm.cm", "[[surveys]][0].unit")),
    Case("unit-empty", lambda s: edit(s / "site.toml", 'unit = "mV"', 'unit = ""'),
         ("site.toml", "[[surveys]][0].unit")),
    Case("duplicated-header-value", _lines(lambda L: [L[0] + ",value"] + [ln + ",1" for ln in
                                                                       L[1:]]),
         ("potential.csv", "line 1", "'value'", "given twice")),
    Case("duplicated-header-x", _lines(lambda L: ["point_id,x,x,value"] + L[1:]),
         ("potential.csv", "line 1", "'x'", "given twice")),
    Case("decimal-comma-with-a-dot", _comma_decimal("-250.5"),
         ("potential.csv", "line 57", "'.'")),
    Case("decimal-comma-with-a-thousands-dot", _comma_decimal("-1.234"),
         ("potential.csv", "line 57", "'.'")),
    Case("wrong-separator", _lines(lambda L: [ln.replace(",", ";") for ln in L]),
         ("potential.csv", "separator")),
    Case("text-in-a-number", _values(lambda i, v: "abc" if i == 58 else f"{v:.1f}"),
         ("potential.csv", "line 58", "'value'")),
    Case("empty-value", _values(lambda i, v: "" if i == 33 else f"{v:.1f}"),
         ("potential.csv line 33", "QA-NAN-VALUE"), expect="warning"),
    # a non-finite reading is dropped with a warning naming its line (QA-NAN-VALUE)
    *(Case(f"reading-{v}", _values(lambda i, x, v=v: v if i == 58 else f"{x:.1f}"),
           ("potential.csv line 58", "QA-NAN-VALUE", "infinite"), expect="warning")
      for v in ("inf", "-inf", "1e999")),
    # a finite but absurd reading is flagged beyond the plausible range and left out of the
    # surface; it is not blamed on the contour interval (found by this suite, fixed)
    Case("reading-1e300", _values(lambda i, v: "1e300" if i == 58 else f"{v:.1f}"),
         ("potential.csv line 58", "QA-RANGE-HIGH"), expect="warning"),
    Case("empty-file", _lines(lambda L: []), ("potential.csv", "empty")),
    Case("header-only", _lines(lambda L: L[:1]), ("potential.csv", "no readings")),
    Case("missing-column", _lines(lambda L: [",".join(ln.split(",")[:3]) for ln in L]),
         ("potential.csv", "'value'")),
    Case("duplicated-control-point", lambda s: edit(s / "site.toml", 'id = "CP2"',
                                                    'id = "CP1"'),
         ("site.toml", "[[levels]][0].grid.control_points[1].id", "CP1")),
    Case("control-point-1m-off", _far_control_points(1.0), ("CP2", "residual"),
         expect="warning"),
    # a single QA error that stops the run is said on one line naming the file and its rule
    Case("reversed-leads", _values(lambda i, v: f"{-v:.1f}"),
         ("potential.csv", "leads reversed", "QA-")),
    Case("open-lead", _values(lambda i, v: f"{_rng.normal(0, 0.5):.1f}"),
         ("potential.csv", "open lead", "QA-")),
    Case("all-readings-off-the-slab", _lines(lambda L: [L[0]] + [
        ",".join([p, str(float(x) + 1000), y, v]) for p, x, y, v in (ln.split(",") for ln in
                                                                      L[1:])]),
         ("potential.csv", "outside the slab", "QA-")),
    Case("no-values", _values(lambda i, v: ""), ("potential.csv", "QA-")),
]


@pytest.mark.parametrize("case", [c.param() for c in CASES])
def test_wrong_data_is_named(site: Path, case: Case) -> None:
    """Each wrong datum: refused naming file and row or key, or warned naming it (issue 11)."""
    case.breaks(site)
    holds(site, case, GROUP)


def _not_a_number(text: str) -> bool:
    """Whether pandas reads ``text`` (stripped) as neither a number nor a blank (the reader's)."""
    import pandas as pd

    s = text.strip()
    if s == "" or s.lower() in ("nan", "na", "none"):
        return False
    return bool(pd.isna(pd.to_numeric(pd.Series([s]), errors="coerce")).iloc[0])


_junk = st.text(alphabet=st.characters(codec="utf-8", exclude_categories=("Cs", "Cc", "Zl", "Zp"),
                                       exclude_characters=',"\r\n'),
                min_size=1, max_size=12).filter(_not_a_number)


@settings(derandomize=True, database=None, deadline=None, max_examples=10,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(line=st.integers(min_value=2, max_value=601), junk=_junk)
def test_text_in_any_value_is_named_by_its_line(fuzz_template: Path, tmp_path_factory:
                                                pytest.TempPathFactory, line: int,
                                                junk: str) -> None:
    """Text drawn by hypothesis (fixed seed) in the value of a drawn line: named by that line."""
    site = fresh_site(fuzz_template, tmp_path_factory.mktemp("junk"))
    case = Case(f"junk-line-{line}", _values(lambda i, v: junk if i == line else f"{v:.1f}"),
                (f"potential.csv line {line}", "'value'"))
    case.breaks(site)
    holds(site, case, GROUP, run=False)

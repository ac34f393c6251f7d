"""Formula injection and slow runs: sites that must run do, and write no formula (issue 11).

Source of the spreadsheet checks: OWASP, "CSV Injection" (a cell starting with ``=``, ``+``,
``-``, ``@``, a tab or a carriage return is read as a formula; the remedy is a leading single
quote), and openpyxl's cell model (data type ``'f'`` is a formula), as in
``tests/repair/test_injection.py``.  Each case is a full run of the synthetic site (about 15 s
on a loaded machine), so all are marked ``slow``.  Contract: ``tests/fuzz/contract.py``
(``runs``).
"""

from __future__ import annotations

import csv
import json
import re
from pathlib import Path
from typing import Any

import openpyxl
import pytest

from tests.fuzz.contract import Case, edit, runs
from tests.fuzz.test_data import _far_control_points
from tests.fuzz.test_dxf import drawing

GROUP = "injection"
TRIGGERS = ("=", "+", "-", "@", "\t", "\r")  # OWASP CSV injection


def _formula_like(text: str) -> bool:
    """Whether a spreadsheet would read ``text`` as a formula (OWASP's list; numbers are not)."""
    try:
        float(text)
    except ValueError:
        return text.startswith(TRIGGERS)
    return False


def _names(site_name: str, level_name: str, owner: str, treatment: str,
           labels: tuple[str, str]) -> Case:
    def breaks(site: Path) -> None:
        toml = site / "site.toml"
        edit(toml, 'name = "Synthetic test deck"',
             f"name = {json.dumps(site_name)}\nowner = {json.dumps(owner)}")
        edit(toml, 'name = "Test deck"', f"name = {json.dumps(level_name)}")
        toml.write_text(toml.read_text() + (
            '\n[[zoning]]\nrule = "repair"\n[[zoning]]\nrule = "active_corrosion"\n'
            f'classes = ["high", "uncertain"]\ntreatment = {json.dumps(treatment)}\n'
            '\n[condition.combined]\ndefault = "low_risk"\n'
            f'classes = [ {{ key = "high_priority", label = {json.dumps(labels[0])} }}, '
            f'{{ key = "low_risk", label = {json.dumps(labels[1])} }} ]\n'
            '[[condition.combined.rules]]\nclass = "high_priority"\npotential = ["high"]\n'))
    return Case(f"site-{site_name[:1]!r}-level-{level_name[:1]!r}", breaks, expect="ok")


INJECTION = [
    _names('=HYPERLINK("http://x","y")', "+1+1", "@SUM(1)", "-2+3", ("\tcmd", "-watch")),
    _names("@cmd|' /C calc'!A0", "=1+1", "+owner", "=treat()", ("=high", "@low")),
]


#: What our own formulas may hold (as tests/repair/test_injection.py): cell references, + and *,
#: SUM of a range, ROUND to cents.
OWN_FORMULA = re.compile(r"=(?:[A-Z]{1,2}\d+|SUM\(|ROUND\(|[+*:]|,2\)|\))+")


@pytest.mark.slow
@pytest.mark.parametrize("case", [c.param() for c in INJECTION])
def test_no_input_text_becomes_a_formula(site: Path, case: Case) -> None:
    """The run succeeds and no cell of quantities.xlsx or any CSV is formula-like (OWASP)."""
    case.breaks(site)
    out = runs(site, case, GROUP)
    wb = openpyxl.load_workbook(out / "quantities.xlsx")
    cells = 0
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for c in row:
                # only the workbook's own totals and amounts are formulas (issue 13): cell
                # references, SUM of a range, ROUND to cents; no quote, so no input text
                assert c.data_type != "f" or OWN_FORMULA.fullmatch(str(c.value)), (
                    f"{ws.title}!{c.coordinate} is a formula: {c.value!r}")
                if isinstance(c.value, str) and c.data_type != "f":
                    cells += 1
                    assert not _formula_like(c.value), f"{ws.title}!{c.coordinate}: {c.value!r}"
    assert cells  # the workbook was read (a test that cannot fail is a defect)
    csvs = sorted(out.rglob("*.csv"))
    assert csvs
    texts = []
    for p in csvs:
        with p.open(newline="", encoding="utf-8") as fh:
            for row in csv.reader(fh):
                for cell in row:
                    texts.append(cell)
                    assert not _formula_like(cell), f"{p.name}: {cell!r}"
    # the names reached the outputs, quoted (else this test would pass on their absence)
    assert any(t.startswith("'") for t in texts)


def _curves(msp: Any) -> None:
    """An ellipse, a bulged polyline and a closed spline beside the outline of the site."""
    d = {"layer": "DELAM"}
    msp.add_ellipse((40, 30), major_axis=(2, 0), ratio=0.5, dxfattribs=d)
    msp.add_lwpolyline([(45, 9, 0, 0, 0), (47, 9, 0, 0, 1), (47, 11, 0, 0, 0),
                        (45, 11, 0, 0, 1)], format="xyseb", close=True, dxfattribs=d)
    msp.add_spline([(30, 30), (33, 31), (34, 34), (31, 33), (30, 30)], dxfattribs=d).closed = True


def _curves_and_control_point(site: Path) -> None:
    drawing(_curves)(site)
    _far_control_points(1.0)(site)


#: One run for both (a run costs 15 to 35 s here): DXF curves are read through a whole run, and
#: a control point 1 m off is warned naming it in the run's output and run.json.
RUNS = [Case("dxf-curves-and-control-point-1m-off", _curves_and_control_point,
             ("CP2", "residual"), expect="warning")]


@pytest.mark.slow
@pytest.mark.parametrize("case", [c.param() for c in RUNS])
def test_site_that_must_run_runs(site: Path, case: Case) -> None:
    """DXF curves are read through a whole run; a 1 m control point is warned in it (issue 11)."""
    case.breaks(site)
    out = runs(site, case, GROUP)
    # recorded in run.json as well (DEVELOPERS.md: warnings are collected into run.json)
    warnings = json.dumps(json.loads((out / "run.json").read_text())["warnings"])
    assert "CP2" in warnings

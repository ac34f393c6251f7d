"""No text from the input becomes a formula in quantities.xlsx or the CSVs (issue 11 item 5).

Source of every check: OWASP, "CSV Injection" (a cell starting with ``=``, ``+``, ``-``,
``@``, a tab or a carriage return is read as a formula; the remedy is a leading single
quote), and openpyxl's cell model (data type ``'f'`` is a formula, ``'s'`` a string).
"""

from __future__ import annotations

import csv
import re
from pathlib import Path

import openpyxl
import pandas as pd
import pytest
from click.testing import CliRunner
from ezdxf.filemanagement import readfile

from geo_corrosion._io import safe_cell, safe_frame
from geo_corrosion.cli.main import cli
from repair.helpers import evaluate_xlsx

TRIGGERS = ("=", "+", "-", "@", "\t", "\r")  # OWASP CSV injection
SITE_NAME = '=HYPERLINK("http://x","y")'
LEVEL_NAME = "+1+1"
OWNER = "@SUM(1)"
TREATMENT = "-2+3"
BID_ITEM = "=1+2"
CLASS_LABELS = ("\tcmd", "-watch")  # labels of [condition.combined] classes: condition CSV


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def _formula_looking(text: str) -> bool:
    """Return whether a spreadsheet would read ``text`` as a formula (OWASP's list)."""
    return text.startswith(TRIGGERS) and not _is_number(text)


@pytest.fixture(scope="module")
def out(tmp_path_factory: pytest.TempPathFactory) -> Path:
    from geo_corrosion.testing import make_synthetic_site

    root = tmp_path_factory.mktemp("inject")
    p = make_synthetic_site(root / "site")
    text = p.read_text()
    text = text.replace('name = "Synthetic test deck"',
                        f"name = '{SITE_NAME}'\nowner = \"{OWNER}\"")
    text = text.replace('name = "Test deck"', f'name = "{LEVEL_NAME}"')
    text += f'''
[[zoning]]
rule = "repair"
[[zoning]]
rule = "active_corrosion"
classes = ["high", "uncertain"]
treatment = "{TREATMENT}"
bid_item = "{BID_ITEM}"

[condition.combined]
default = "ok"
classes = [ {{ key = "bad", label = "\\t{CLASS_LABELS[0][1:]}" }},
            {{ key = "ok", label = "{CLASS_LABELS[1]}" }} ]
[[condition.combined.rules]]
name = "high potential"
potential = "high"
class = "bad"
'''
    text += '\n[quantities]\nprice_list = "prices.csv"\n'
    p.write_text(text)
    # a price list whose texts look like formulas too; its prices make the workbook's own
    # formulas (amounts, subtotals), the only formulas allowed
    (root / "site" / "prices.csv").write_text(
        "item,description,unit,unit_price,currency\n"
        f'"{BID_ITEM}","{SITE_NAME.replace(chr(34), chr(34) * 2)}",ft2,12.5,USD\n'
        'REP-PD-SURF,"=1+1",ft2,80,USD\nREP-PD-BARS,@x,ft2,95,USD\nREP-FD,+x,ft2,150,USD\n'
        "REP-VOL,-x,CY,600,USD\nSAWCUT,x,LF,6,USD\nTREAT-ACTIVE,x,ft2,4,USD\n"
        "PROTECT-LOWCOVER,x,ft2,3,USD\n", encoding="utf-8")
    dest = root / "out"
    res = CliRunner().invoke(cli, ["run", str(root / "site"), "--out", str(dest), "-q"])
    assert res.exit_code == 0, res.output
    return dest


def test_safe_cell_leaves_numbers() -> None:
    # OWASP: prefix a formula-looking text with '; a number (even negative) is no formula
    assert safe_cell(SITE_NAME) == "'" + SITE_NAME
    for t in (LEVEL_NAME, OWNER, TREATMENT, "\tx", "\rx", "-", "+"):
        assert safe_cell(t) == "'" + t
    for v in (-2.0, -3, "-1.50", "+2", "1e-3", "-.5", "D1", "", None):
        assert safe_cell(v) == v
    frame = pd.DataFrame({"n": [-2.0, 1.5], "t": ["-2", TREATMENT], "=h": ["a", "b"]})
    safe = safe_frame(frame)
    assert safe["n"].dtype == float and list(safe["n"]) == [-2.0, 1.5]
    assert list(safe["t"]) == ["-2", "'" + TREATMENT]
    assert list(safe.columns) == ["n", "t", "'=h"]
    assert list(frame["t"]) == ["-2", TREATMENT]  # the frame given is left alone


#: What our own formulas may hold: cell references, + and *, SUM of a range, ROUND to cents;
#: no quote, so no text of the input (exporters/xlsx.py).
OWN_FORMULA = re.compile(r"=(?:[A-Z]{1,2}\d+|SUM\(|ROUND\(|[+*:]|,2\)|\))+")


def test_xlsx_has_only_our_formulas_and_shows_the_text(out: Path) -> None:
    wb = openpyxl.load_workbook(out / "quantities.xlsx")
    texts: list[str] = []
    numbers = formulas = 0
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for c in row:
                if c.data_type == "f":  # only the workbook's own: references and sums
                    assert OWN_FORMULA.fullmatch(c.value), (ws.title, c.coordinate, c.value)
                    formulas += 1
                    continue
                if isinstance(c.value, str):
                    assert not _formula_looking(c.value), (ws.title, c.coordinate, c.value)
                    texts.append(c.value)
                elif isinstance(c.value, int | float):
                    numbers += 1
    sched = wb["Schedule"]
    # shown as written, apart from the leading quote
    assert sched["A1"].value == f"'{SITE_NAME}: schedule of repair quantities"
    rows = [[c.value for c in r] for r in sched.iter_rows(min_row=5)]
    zone_rows = [i for i, r in enumerate(rows, 5) if r[1] == "'" + BID_ITEM]
    assert len(zone_rows) == 2  # the level and the ALL total
    got = evaluate_xlsx(out / "quantities.xlsx")  # the formulas library, not openpyxl
    for i in zone_rows:
        assert sched.cell(row=i, column=3).value == "'" + TREATMENT
        # quantities, unit price and amounts stay numbers
        vals = [got[("SCHEDULE", f"{col}{i}")] for col in "EFGHIJ"]
        assert all(isinstance(v, int | float) and v > 0 for v in vals), vals
        assert vals[3] == 12.5
    assert numbers > 10 and formulas > 10


def test_csvs_have_no_formula_looking_field(out: Path) -> None:
    seen: set[str] = set()
    for name in ("quantities.csv", "condition_areas.csv"):
        with open(out / name, newline="", encoding="utf-8") as f:
            rows = list(csv.reader(f))
        assert len(rows) > 2, name
        for i, row in enumerate(rows):
            for field in row:
                assert not _formula_looking(field), (name, i, field)
                seen.add(field)
    # the text is there as written, apart from the leading quote
    assert {"'" + BID_ITEM, "'" + TREATMENT, "'" + CLASS_LABELS[0]} <= seen
    # numbers stay numbers: every quantity parses
    sched = pd.read_csv(out / "quantities.csv")
    assert pd.api.types.is_numeric_dtype(sched["quantity"])  # whole ft2 read as integers
    assert pd.api.types.is_float_dtype(sched["amount"])
    cond = pd.read_csv(out / "condition_areas.csv")
    assert pd.api.types.is_float_dtype(cond["area_ft2"])


def test_dxf_and_report_keep_the_text_as_written(out: Path) -> None:
    # not spreadsheets: the DXF and the report show the input text unchanged
    doc = readfile(out / "drawings" / "D1_repairs.dxf")
    # the site name stands in the sheet's title block (paper space) since the drawing sheets
    texts = [str(t.dxf.text) for layout in doc.layouts for t in layout.query("TEXT")]
    assert any(t.startswith(SITE_NAME) for t in texts), texts
    html = (out / "report.html").read_text(encoding="utf-8")
    for t in (TREATMENT, LEVEL_NAME, OWNER, BID_ITEM):
        assert f">{t}<" in html or f": {t}<" in html, t
    assert "'" + TREATMENT not in html

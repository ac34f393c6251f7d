"""Bid rounding, the price list and the engineer's estimate (issue 13 item 3).

Sources: the rounding of bid quantities (up, to whole ft2, LF and EA, 0.1 CY, 0.1 m2,
0.1 m, 0.01 m3) is common practice, no source; 27 ft3 = 1 CY is exact
[NIST-SP811-2008 App. B]; the estimate (amount = quantity x unit price, subtotal,
contingency on its own line, total) is hand-worked below; the workbook's formulas are
computed by the ``formulas`` library, an engine independent of openpyxl that wrote them,
and compared with the CSV; the print settings are read back with openpyxl (OOXML
``pageSetup``, ``printOptions``, ``headerFooter``).
"""

from __future__ import annotations

import csv
from pathlib import Path

import openpyxl
import pandas as pd
import pytest
from click.testing import CliRunner

from geo_corrosion.cli.main import cli
from geo_corrosion.errors import SiteFileError
from geo_corrosion.exporters.xlsx import write_schedule_xlsx
from geo_corrosion.pricing import estimate_lines, price_schedule, read_price_list
from geo_corrosion.quantities import (
    DEFAULT_BID_ITEMS,
    bid_round,
    roll_up,
    write_quantities_csv,
)
from geo_corrosion.units import M_PER_FT, report_units
from repair.helpers import evaluate_xlsx

US, SI = report_units("us"), report_units("metric")
FT2 = M_PER_FT**2
HEADER = "item,description,unit,unit_price,currency\n"
PRICES = (HEADER + "REP-PD-BARS,Partial depth,ft2,95.00,USD\n"
          "SAWCUT,Saw cut,LF,6.50,USD\n"
          "REP-VOL,Removal volume,CY,600,USD\n")


# --------------------------------------------------------------------------- rounding


@pytest.mark.parametrize(("q", "unit", "want"), [
    (490.9696307618297, "ft2", 491.0),  # the trial's cell: up to a whole ft2
    (453.9999999999999, "ft2", 454.0),  # float noise is not one more ft2
    (454.0000000001, "ft2", 454.0),
    (307.5, "LF", 308.0),
    (12.3, "m2", 12.3),  # 12.3 / 0.1 = 122.99999999999999 in floats
    (12.301, "m2", 12.4),
    (2.466, "m", 2.5),
    (0.1234, "m3", 0.13),
    (4.9378, "CY", 5.0),
    (0.0, "ft2", 0.0),
    (7.0, "EA", 7.0),
])
def test_bid_round_up_to_the_increment(q: float, unit: str, want: float) -> None:
    # common practice, no source: bid quantities rounded up to the unit's increment
    assert bid_round(q, unit) == want


def test_roll_up_rounds_each_line_and_sums_rounded_levels() -> None:
    # hand-worked: two levels of 10.2 ft2 each -> 11 + 11 = 22 ft2 (a schedule adds up as
    # printed; not ceil(20.4) = 21); contingency 20 %: 2.04 -> 3 ft2 each, 6 in all
    li = pd.DataFrame({"level_id": ["P1", "P2"], "item": ["REP-FD"] * 2,
                       "unit_kind": ["area"] * 2, "q": [10.2 * FT2] * 2})
    s = roll_up(li, units=US, items=DEFAULT_BID_ITEMS, contingency=0.2)
    got = {(r.level_id, r.line): (r.quantity, r.quantity_unrounded) for r in s.itertuples()}
    assert got[("P1", "base")] == (11.0, pytest.approx(10.2))
    assert got[("P1", "contingency")] == (3.0, pytest.approx(2.04))
    assert got[("ALL", "base")] == (22.0, pytest.approx(20.4))
    assert got[("ALL", "contingency")] == (6.0, pytest.approx(4.08))


def test_volume_is_bid_in_cubic_yards_in_us_units() -> None:
    # 133.32 ft3 / 27 = 4.938 CY -> 5.0 CY [NIST-SP811-2008 App. B: 1 yd3 = 27 ft3]
    li = pd.DataFrame({"level_id": ["P1"], "item": ["REP-VOL"], "unit_kind": ["volume"],
                       "q": [133.32 * M_PER_FT**3]})
    s = roll_up(li, units=US, items=DEFAULT_BID_ITEMS, contingency=0.0)
    base = s[(s.level_id == "P1") & (s.line == "base")].iloc[0]
    assert (base.unit, base.quantity) == ("CY", 5.0)
    assert base.quantity_unrounded == pytest.approx(133.32 / 27)
    m = roll_up(li, units=SI, items=DEFAULT_BID_ITEMS, contingency=0.0)
    assert m.iloc[0].unit == "m3" and m.iloc[0].quantity == pytest.approx(3.78)  # 3.7752 up


# --------------------------------------------------------------------------- the estimate


def _schedule(tmp_path: Path) -> pd.DataFrame:
    """The hand-worked schedule: P1 100.4 ft2 and 40.2 LF, P2 50 ft2; 20 % contingency."""
    li = pd.DataFrame({
        "level_id": ["P1", "P1", "P2"], "item": ["REP-PD-BARS", "SAWCUT", "REP-PD-BARS"],
        "unit_kind": ["area", "length", "area"],
        "q": [100.4 * FT2, 40.2 * M_PER_FT, 50.0 * FT2]})
    s = roll_up(li, units=US, items=DEFAULT_BID_ITEMS, contingency=0.2)
    (tmp_path / "prices.csv").write_text(PRICES, encoding="utf-8")
    prices = read_price_list(tmp_path / "prices.csv", items=DEFAULT_BID_ITEMS, units=US)
    return price_schedule(s, prices)


#: Hand-worked (common practice): quantities rounded up, times the unit prices.
#: P1: REP-PD-BARS 100.4 -> 101 ft2 x 95.00 = 9,595.00; contingency 20.08 -> 21 ft2 = 1,995.00
#:     SAWCUT 40.2 -> 41 LF x 6.50 = 266.50; contingency 8.04 -> 9 LF = 58.50
#:     subtotal 9,861.50, contingency 2,053.50, total 11,915.00
#: P2: REP-PD-BARS 50 ft2 x 95.00 = 4,750.00; contingency 10 ft2 = 950.00; total 5,700.00
#: ALL: subtotal 14,611.50, contingency 3,003.50, total 17,615.00
HAND = {("P1", "subtotal"): 9861.50, ("P1", "contingency"): 2053.50, ("P1", "total"): 11915.00,
        ("P2", "subtotal"): 4750.00, ("P2", "contingency"): 950.00, ("P2", "total"): 5700.00,
        ("ALL", "subtotal"): 14611.50, ("ALL", "contingency"): 3003.50,
        ("ALL", "total"): 17615.00}


def test_hand_worked_estimate(tmp_path: Path) -> None:
    s = _schedule(tmp_path)
    row = s[(s.level_id == "P1") & (s["item"] == "REP-PD-BARS") & (s.line == "base")].iloc[0]
    assert (row.quantity, row.unit_price, row.amount, row.currency) == (101.0, 95.0, 9595.0,
                                                                        "USD")
    est = {(r.level_id, r.line): r.amount for r in estimate_lines(s).itertuples()}
    assert est == HAND


def _csv_rows(path: Path) -> list[dict[str, str]]:
    with open(path, newline="", encoding="utf-8") as f:
        return list(csv.DictReader(f))


def test_workbook_formulas_evaluated_match_the_csv(tmp_path: Path) -> None:
    s = _schedule(tmp_path)
    xlsx = write_schedule_xlsx(tmp_path / "q.xlsx", s, {}, units=US, cautions=["c"],
                               title="Garage", price_list="prices.csv")
    rows = _csv_rows(write_quantities_csv(s, tmp_path / "q.csv"))
    # the CSV: rounded quantities as bid, amounts as values (2 decimals)
    first = rows[0]
    assert (first["quantity"], first["unit_price"], first["amount"]) == ("101", "95.00",
                                                                         "9595.00")
    got = evaluate_xlsx(xlsx)  # the formulas library computes every formula
    ws = openpyxl.load_workbook(xlsx)["Schedule"]
    where = {(ws.cell(row=r, column=1).value, ws.cell(row=r, column=2).value): r
             for r in range(5, ws.max_row + 1) if ws.cell(row=r, column=2).value}
    labels = {ws.cell(row=r, column=3).value: r for r in range(5, ws.max_row + 1)}
    assert ws.cell(row=5, column=1).value == "P1"  # data right under the header
    for r in rows:  # each line of the CSV against the workbook's computed cells
        n = where[(r["level_id"], r["item"])]
        q_col, a_col = ("E", "I") if r["line"] == "base" else ("F", "J")
        assert got[("SCHEDULE", f"{q_col}{n}")] == pytest.approx(float(r["quantity"]))
        assert got[("SCHEDULE", f"H{n}")] == pytest.approx(float(r["unit_price"]))
        assert got[("SCHEDULE", f"{a_col}{n}")] == pytest.approx(float(r["amount"]), abs=1e-9)
        assert got[("SCHEDULE", f"G{n}")] == pytest.approx(
            got[("SCHEDULE", f"E{n}")] + got[("SCHEDULE", f"F{n}")])
    for (lid, line), want in HAND.items():
        what = "all levels" if lid == "ALL" else f"level {lid}"
        label = {"subtotal": f"Subtotal, {what}", "total": f"Total, {what}",
                 "contingency": f"Contingency, {what} (contingency quantities x unit prices)"}
        n = labels[label[line]]
        assert got[("SCHEDULE", f"I{n}")] == pytest.approx(want, abs=1e-9), (lid, line)
        # and the CSV's amounts add up to the same (hand-worked above)
        csv_lines = [r for r in rows if r["level_id"] == lid
                     and (line == "total" or r["line"] == {"subtotal": "base"}.get(line, line))]
        assert sum(float(r["amount"]) for r in csv_lines) == pytest.approx(want, abs=1e-6)
    # amounts and totals are formulas, quantities of the levels and prices are values
    n = where[("P1", "REP-PD-BARS")]
    assert ws[f"I{n}"].data_type == "f" and ws[f"I{n}"].value == f"=ROUND(E{n}*H{n},2)"
    assert ws[f"G{n}"].value == f"=E{n}+F{n}"
    assert ws[f"E{n}"].value == 101 and ws[f"H{n}"].value == 95.0
    # number formats show the units (ECMA-376 number format codes)
    assert ws[f"E{n}"].number_format == '#,##0" ft2"'
    assert ws[f"H{n}"].number_format == '#,##0.00" USD/ft2"'
    assert ws[f"I{n}"].number_format == '#,##0.00" USD"'


def test_unpriced_item_is_left_out_and_named(tmp_path: Path) -> None:
    s = _schedule(tmp_path)
    (tmp_path / "p2.csv").write_text(HEADER + "REP-PD-BARS,x,ft2,95,USD\n", encoding="utf-8")
    p = price_schedule(s.drop(columns=["unit_price", "amount", "currency"]),
                       read_price_list(tmp_path / "p2.csv", items=DEFAULT_BID_ITEMS, units=US))
    est = {(r.level_id, r.line): r.amount for r in estimate_lines(p).itertuples()}
    assert est[("P1", "subtotal")] == 9595.0  # SAWCUT's 266.50 left out (hand-worked)
    xlsx = write_schedule_xlsx(tmp_path / "q.xlsx", p, {}, units=US, cautions=["c"],
                               title="Garage", price_list="p2.csv")
    ws = openpyxl.load_workbook(xlsx)["Schedule"]
    texts = [c.value for r in ws.iter_rows() for c in r if isinstance(c.value, str)]
    assert any(t.startswith("Not priced (no row in p2.csv)") and "SAWCUT" in t for t in texts)
    got = evaluate_xlsx(xlsx)
    labels = {ws.cell(row=r, column=3).value: r for r in range(5, ws.max_row + 1)}
    assert got[("SCHEDULE", f"I{labels['Subtotal, level P1']}")] == pytest.approx(9595.0)


def test_print_settings_read_back(tmp_path: Path) -> None:
    # OOXML print settings, read back by openpyxl (it cannot render the page)
    s = _schedule(tmp_path)
    table = pd.DataFrame({"repair_id": ["P1-R001"], "area_ft2": [11.25], "depth_in": [1.75]})
    xlsx = write_schedule_xlsx(tmp_path / "q.xlsx", s, {"P1": table}, units=US,
                               cautions=["c"], title="Garage & Co")
    wb = openpyxl.load_workbook(xlsx)
    for ws, titles in ((wb["Schedule"], "$1:$4"), (wb["P1"], "$1:$2")):
        ps = ws.page_setup
        assert ps.orientation == "landscape"
        assert (ps.fitToWidth, ps.fitToHeight) == (1, 0)
        assert ws.sheet_properties.pageSetUpPr.fitToPage
        assert ps.paperSize == 1  # letter for US units (ECMA-376 paperSize 1; A4 is 9)
        assert ws.print_title_rows == titles
        assert ws.oddHeader.left.text == "Garage && Co"  # & doubled: a code in headers
        assert ws.oddFooter.right.text == "Page &P of &N"
        assert "licensed engineer" in ws.oddFooter.left.text
    # the per-repair sheet: generic over its columns, units in the headers
    wl = wb["P1"]
    assert [c.value for c in wl[2]] == ["Repair", "Area (ft2)", "Depth (in)"]
    assert wl["B3"].number_format == "#,##0.00"
    m = write_schedule_xlsx(tmp_path / "m.xlsx", s.iloc[:0], {}, units=SI, cautions=["c"],
                            title="Deck")
    assert openpyxl.load_workbook(m)["Schedule"].page_setup.paperSize == 9  # A4


# --------------------------------------------------------------------------- bad price lists


@pytest.mark.parametrize(("rows", "line", "words"), [
    ("REP-XX,x,ft2,1,USD\n", 2, "item 'REP-XX' is not a bid item"),
    ("REP-PD-BARS,x,,95,USD\n", 2, "no unit; the schedule gives REP-PD-BARS in ft2"),
    ("REP-PD-BARS,x,m2,95,USD\n", 2, "unit 'm2', but the schedule gives REP-PD-BARS in ft2"),
    ("REP-VOL,x,ft3,95,USD\n", 2, "in CY"),
    ("SAWCUT,x,LF,6,USD\nREP-PD-BARS,x,ft2,-95,USD\n", 3, "unit price '-95' is not usable"),
    ("REP-PD-BARS,x,ft2,$95,USD\n", 2, "unit price '$95' is not a number"),
    ("REP-PD-BARS,x,ft2,,USD\n", 2, "unit price '' is not a number"),
    ("REP-PD-BARS,x,ft2,nan,USD\n", 2, "is not usable"),
    ("REP-PD-BARS,x,ft2,inf,USD\n", 2, "is not usable"),
    ("SAWCUT,x,LF,6,USD\n\nREP-PD-BARS,x,ft2,95,EUR\n", 4,
     "currency EUR, but line 2 is in USD"),
    ("REP-PD-BARS,x,ft2,95,$\n", 2, "give an ISO 4217 code"),
    ("REP-PD-BARS,x,ft2,95,USD\nREP-PD-BARS,x,ft2,96,USD\n", 3, "priced again (first on line 2)"),
    ("REP-PD-BARS,a, b,ft2,95,USD\n", 2, "more fields than the header"),
])
def test_bad_price_list_rows(tmp_path: Path, rows: str, line: int, words: str) -> None:
    # each refused naming the file and its line, with what to write (common practice)
    p = tmp_path / "prices.csv"
    p.write_text(HEADER + rows, encoding="utf-8")
    with pytest.raises(SiteFileError) as err:
        read_price_list(p, items=DEFAULT_BID_ITEMS, units=US)
    assert f"prices.csv line {line}: " in str(err.value), str(err.value)
    assert words in str(err.value), str(err.value)


def test_bad_price_list_files(tmp_path: Path) -> None:
    p = tmp_path / "prices.csv"
    for text, words in (("", "empty"), ("item,unit,unit_price\nREP-FD,ft2,3\n",
                                        "line 1: no column description, currency"),
                        (HEADER, "no prices")):
        p.write_text(text, encoding="utf-8")
        with pytest.raises(SiteFileError, match=words):
            read_price_list(p, items=DEFAULT_BID_ITEMS, units=US)
    p.write_bytes(b"item\xff\n")
    with pytest.raises(SiteFileError, match="not a UTF-8"):
        read_price_list(p, items=DEFAULT_BID_ITEMS, units=US)
    with pytest.raises(SiteFileError, match="price list not found"):
        read_price_list(tmp_path / "none.csv", items=DEFAULT_BID_ITEMS, units=US)
    # header names in any case, "unit price" with a space, blank lines, metric units
    p.write_text("Item,Description,Unit,Unit Price,Currency\n\nREP-VOL,x,m3,410.5,EUR\n",
                 encoding="utf-8")
    pl = read_price_list(p, items=DEFAULT_BID_ITEMS, units=SI)
    assert (pl.currency, pl.prices["REP-VOL"].unit_price, pl.prices["REP-VOL"].line) == (
        "EUR", 410.5, 3)


def test_bad_price_list_stops_check_and_run_before_any_output(tmp_path: Path) -> None:
    from geo_corrosion.testing import make_synthetic_site

    site = make_synthetic_site(tmp_path / "site",
                               extra_site='\n[quantities]\nprice_list = "prices.csv"\n')
    (tmp_path / "site" / "prices.csv").write_text(HEADER + "REP-PD-BARS,x,ft2,-1,USD\n",
                                                  encoding="utf-8")
    out = tmp_path / "out"
    for args in (["check", str(site)], ["run", str(site), "--out", str(out)]):
        res = CliRunner().invoke(cli, args)
        assert res.exit_code == 1, res.output
        assert "Traceback" not in res.output
        assert "prices.csv line 2: item REP-PD-BARS: unit price '-1'" in res.output, res.output
    assert not out.exists() and not list(tmp_path.glob(".out.partial-*"))  # nothing written
    # the path is checked like every path of the site file
    site.write_text(site.read_text().replace('"prices.csv"', '"../prices.csv"'))
    (tmp_path / "prices.csv").write_text(PRICES, encoding="utf-8")
    res = CliRunner().invoke(cli, ["check", str(site)])
    assert res.exit_code == 1 and "[quantities].price_list" in res.output, res.output
    assert "outside the site folder" in res.output


def test_unpriced_item_warns_in_the_stage(tmp_path: Path) -> None:
    # an item of the schedule missing from the price list: a warning naming the file and the
    # item (it is left out of the totals, said in the workbook too)
    from types import SimpleNamespace

    from geo_corrosion.errors import GeoCorrosionWarning
    from geo_corrosion.stages.plan_repairs import schedule_quantities
    from repair.test_quantities import repairs_ft

    (tmp_path / "p.csv").write_text(HEADER + "REP-PD-BARS,x,ft2,95,USD\n", encoding="utf-8")
    prices = read_price_list(tmp_path / "p.csv", items=DEFAULT_BID_ITEMS, units=US)
    level = SimpleNamespace(repairs=repairs_ft([(0, 0, 20, 25)]), zones=None, pay_areas=None)
    with pytest.warns(GeoCorrosionWarning, match=r"p.csv: no unit price for REP-VOL, SAWCUT"):
        s = schedule_quantities([level], units=US, contingency=0.2,  # type: ignore[list-item]
                                anode_spacing_mm=None, prices=prices)
    base = s[(s.level_id == "P1") & (s.line == "base")].set_index("item")
    assert base.loc["REP-PD-BARS", "amount"] == 500 * 95.0  # 20 x 25 ft (hand-worked)
    assert base["amount"].isna().sum() == 2

"""DXF and XLSX written and read back with ezdxf and openpyxl (issue 5 items 4-5)."""

from __future__ import annotations

import ezdxf
import openpyxl
import pandas as pd
import pytest
from shapely.geometry import LineString, Point, box

from geo_corrosion.errors import ExportError
from geo_corrosion.exporters.dxf import layer_name, write_level_dxf
from geo_corrosion.exporters.xlsx import column_header, write_schedule_xlsx
from geo_corrosion.quantities import bid_schedule
from geo_corrosion.repair import LayoutParams, layout_repairs
from geo_corrosion.units import report_units
from geo_corrosion.zoning import ZoningLayers, default_rules, zone
from repair.helpers import evaluate_xlsx, sources

US = report_units("us")
SLAB = box(0, 0, 60, 40)  # feet
CAUTIONS = ["Estimates for bidding only.", "Locate tendons before saw-cutting."]


@pytest.fixture(scope="module")
def level():
    delams = [Point(10, 10).buffer(1.0), box(30, 20, 32, 21)]
    rep = layout_repairs(sources(delams), slab=SLAB, exclusions=[box(20, 0, 21, 1)],
                         joints=[LineString([(45, 0), (45, 40)])], unit="ft",
                         params=LayoutParams(margin_mm=152.4), level_id="P1")
    zones = zone(SLAB, [box(20, 0, 21, 1)], ZoningLayers(delaminated=delams[0],
                 low_cover=box(50, 0, 60, 40)), default_rules(), unit="ft", level_id="P1")
    return delams, rep, zones


def test_dxf_read_back(tmp_path, level) -> None:
    delams, rep, zones = level
    out = write_level_dxf(tmp_path / "P1.dxf", slab=SLAB, exclusions=[box(20, 0, 21, 1)],
                          joints=[LineString([(45, 0), (45, 40)])], repairs=rep, zones=zones,
                          delaminations=delams, unit="ft", title="Deck P1", cautions=CAUTIONS)
    doc = ezdxf.readfile(out)
    assert doc.header["$INSUNITS"] == 2  # DXF code 2 = feet (ezdxf.units.FT)
    names = {ly.dxf.name for ly in doc.layers}
    assert {"GC-SLAB", "GC-EXCLUSION", "GC-JOINT", "GC-DELAM", "GC-LABEL",
            "GC-REPAIR-PARTIAL-BELOW-BARS", "GC-ZONE-LOW-COVER", "GC-ZONE-NO-ACTION"} <= names
    msp = doc.modelspace()
    polys = msp.query('LWPOLYLINE[layer=="GC-REPAIR-PARTIAL-BELOW-BARS"]')
    assert len(polys) == len(rep) == 2
    got = sorted(sorted((round(x, 6), round(y, 6)) for x, y in p.get_points("xy")) for p in polys)
    want = sorted(sorted((round(x, 6), round(y, 6)) for x, y in list(g.exterior.coords)[:-1])
                  for g in rep.geometry)
    assert got == want
    texts = [t.dxf.text for t in msp.query("TEXT")]
    assert "P1-R001 PB" in texts and "P1-R002 PB" in texts  # id and depth class
    # the 9.00 ft2 repair's area in reporting units, in the sheet's repair table
    paper = [t.dxf.text for lay in doc.layouts if not lay.is_modelspace
             for t in lay.query("TEXT")]
    assert "9.0" in paper
    assert any("tendons" in t for t in paper)  # the cautions are the sheet's general notes
    assert [p.name for p in tmp_path.iterdir()] == ["P1.dxf"]


def test_dxf_bad_unit(tmp_path) -> None:
    with pytest.raises(ExportError, match="unit"):
        write_level_dxf(tmp_path / "x.dxf", slab=SLAB, exclusions=[], joints=[], repairs=None,
                        zones=None, delaminations=[], unit="furlong", title="x", cautions=[])
    assert not list(tmp_path.iterdir())


def test_layer_and_header_names() -> None:
    assert layer_name("GC-REPAIR", "full_depth") == "GC-REPAIR-FULL-DEPTH"
    assert layer_name("GC-ZONE", "low cover / sealer") == "GC-ZONE-LOW-COVER-SEALER"
    assert column_header("area_ft2") == "Area (ft2)"
    assert column_header("saw_cut_LF") == "Saw cut (LF)"
    assert column_header("volume_m3") == "Volume (m3)"
    assert column_header("repair_id") == "Repair"


def test_xlsx_read_back(tmp_path, level) -> None:
    _, rep, zones = level
    sched = bid_schedule(rep, zones, units=US, contingency=0.2)
    table = pd.DataFrame({"repair_id": rep.repair_id,
                          "area_ft2": US.area_from_m2(rep.area_m2).round(2),
                          "saw_cut_LF": US.length_from_m(rep.perimeter_m).round(2)})
    out = write_schedule_xlsx(tmp_path / "q.xlsx", sched, {"P1": table, "P:2?": table.iloc[:0]},
                              units=US, cautions=CAUTIONS, title="Garage A")
    wb = openpyxl.load_workbook(out)
    assert wb.sheetnames == ["Schedule", "P1", "P_2_"]
    ws = wb["Schedule"]
    rows = [[c.value for c in r] for r in ws.iter_rows()]
    hdr = rows.index(["Level", "Item", "Description", "Unit", "Base quantity", "Contingency",
                      "Total quantity"])
    assert ws.cell(row=hdr + 1, column=1).font.bold
    body = {(r[0], r[1]): r for r in rows[hdr + 1:] if r[1]}
    rep_ft2 = float(US.area_from_m2(rep.area_m2.sum()))  # 9 + 6 ft2 (hand-worked)
    assert rep_ft2 == pytest.approx(15.0)
    all_row = [i for i, r in enumerate(rows) if r[:2] == ["ALL", "REP-PD-BARS"]][0] + 1
    # the ALL line's quantities are formulas over the level's lines, evaluated by the
    # formulas library: 15 ft2 + 20 % = 3 ft2, total 18 ft2 (hand-worked)
    assert body[("ALL", "REP-PD-BARS")][3] == "ft2"
    got = evaluate_xlsx(out)
    assert [got[("SCHEDULE", f"{c}{all_row}")] for c in "EFG"] == pytest.approx([15, 3, 18])
    assert hdr + 2 == [i for i, r in enumerate(rows) if r[0] == "P1"][0] + 1  # no empty row
    assert ws.cell(row=all_row, column=1).font.bold  # totals in bold
    assert not ws.cell(row=hdr + 2, column=1).font.bold
    assert ("P1", "PROTECT-LOWCOVER") in body
    flat = [v for r in rows for v in r if isinstance(v, str)]
    assert "Cautions" in flat and any("tendons" in v for v in flat)
    wl = wb["P1"]
    assert [c.value for c in wl[2]] == ["Repair", "Area (ft2)", "Saw cut (LF)"]
    assert wl.cell(row=2, column=2).font.bold
    # R001 is the upper repair (the rectangle, 6 ft2), R002 the square (9 ft2)
    assert [wl.cell(row=3 + i, column=2).value for i in range(2)] == pytest.approx([6.0, 9.0])
    assert wl.column_dimensions["A"].width >= len("P1-R001")
    assert [p.name for p in tmp_path.iterdir()] == ["q.xlsx"]

"""Edit and re-price (#13 item 4): a repair enlarged in the GeoPackage, as a GIS would.

The synthetic site (``geo_corrosion.testing.make_synthetic_site``) lays out one repair,
D1-R001, 7 ft x 5 ft at grid x 11.5-18.5 ft, y 7.5-12.5 ft (35 ft2).  The round trip
enlarges it to x 9.5-18.5 ft, y 7.5-14.5 ft: 9 ft x 7 ft = 63 ft2 = 63 x 0.09290304 m2
= 5.85289152 m2 (hand computation; ft2 to m2 exact by the 1959 international foot).
"""

from __future__ import annotations

import hashlib
import json
import shutil
from pathlib import Path

import ezdxf
import geopandas as gpd
import openpyxl
import pandas as pd
import pytest
import shapely
from click.testing import CliRunner

from geo_corrosion.cli.main import cli
from geo_corrosion.errors import RepairError
from geo_corrosion.repair.edits import EditedOutline, check_edits
from geo_corrosion.stages.read_site import read_site
from geo_corrosion.testing import make_synthetic_site

LAYER = "D1_repairs"
OLD_FT2 = 7.0 * 5.0  # hand: the laid-out 7 ft x 5 ft repair
NEW_BOX = (9.5, 7.5, 18.5, 14.5)  # grid ft
NEW_FT2 = 9.0 * 7.0  # hand: 63 ft2
FT2_M2 = 0.09290304  # international foot, exact


@pytest.fixture(scope="module")
def base(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    root = tmp_path_factory.mktemp("reprice")
    site = make_synthetic_site(root / "site")
    out = root / "run"
    res = CliRunner().invoke(cli, ["run", str(site), "--out", str(out), "-q"])
    assert res.exit_code == 0, res.output
    return site, out


def _copy(base: tuple[Path, Path], tmp_path: Path) -> Path:
    out = tmp_path / "run"
    shutil.copytree(base[1], out)
    return out


def _grid(site: Path):  # the level's grid tie, as the site file gives it
    from geo_corrosion.pipeline import check

    s, _ = check(read_site(site))
    return s.levels["D1"]


def _edit(run: Path, site: Path, change) -> None:
    """Rewrite the repairs layer as a GIS would (geopandas through pyogrio)."""
    lv = _grid(site)
    df = gpd.read_file(run / "survey.gpkg", layer=LAYER, engine="pyogrio")
    df = change(df, lv)
    df.to_file(run / "survey.gpkg", layer=LAYER, driver="GPKG", engine="pyogrio")


def _hash(folder: Path) -> str:
    """Hash every file in and beside the run folder (names and bytes)."""
    h = hashlib.sha256()
    for p in sorted(folder.parent.rglob("*")):
        if p.is_file():
            h.update(str(p.relative_to(folder.parent)).encode() + p.read_bytes())
    return h.hexdigest()


def test_round_trip_new_area_everywhere(base: tuple[Path, Path], tmp_path: Path) -> None:
    site, run = base[0], _copy(base, tmp_path)
    laid = json.loads((run / "run.json").read_text())["levels"]["D1"]["repair_list"][0]
    assert laid["area_m2"] == pytest.approx(OLD_FT2 * FT2_M2, rel=1e-6)  # hand: 7 x 5 ft

    def enlarge(df: gpd.GeoDataFrame, lv) -> gpd.GeoDataFrame:
        df.loc[df["repair_id"] == "D1-R001", "geometry"] = lv.grid.geom_to_site(
            shapely.box(*NEW_BOX))
        return df

    _edit(run, site, enlarge)
    # rebuilding the report alone is refused, saying what to run (issue 13 item 4)
    res = CliRunner().invoke(cli, ["report", str(run), "--no-pdf"])
    assert res.exit_code == 1
    assert "D1_repairs" in res.output and "geo-corrosion reprice" in res.output
    res = CliRunner().invoke(cli, ["map", str(run)])
    assert res.exit_code == 1 and "geo-corrosion reprice" in res.output

    res = CliRunner().invoke(cli, ["reprice", str(run), "-q"])
    assert res.exit_code == 0, res.output
    new_m2 = NEW_FT2 * FT2_M2  # hand: 5.85289152 m2
    man = json.loads((run / "run.json").read_text())
    (edit,) = man["edits"]
    assert edit["repair_id"] == "D1-R001"
    assert edit["old_area_m2"] == pytest.approx(OLD_FT2 * FT2_M2, rel=1e-6)
    assert edit["new_area_m2"] == pytest.approx(new_m2, rel=1e-6)
    assert man["levels"]["D1"]["repair_list"][0]["area_m2"] == pytest.approx(new_m2, rel=1e-6)
    assert set(man["built_from"]) == {"quantities", "drawings", "report", "webmap"}
    # the schedule: the base line of the repair's item is the new area, whole ft2 (bid rounding)
    q = pd.read_csv(run / "quantities.csv")
    line = q[(q["level_id"] == "D1") & (q["item"] == "REP-PD-BARS") & (q["line"] == "base")]
    assert float(line["quantity"].iloc[0]) == NEW_FT2
    wb = openpyxl.load_workbook(run / "quantities.xlsx")
    rows = [r for ws in wb.worksheets for r in ws.iter_rows(values_only=True)
            if "D1-R001" in r]
    assert rows and any(isinstance(v, float | int) and v == pytest.approx(NEW_FT2)
                        for r in rows for v in r)
    # the sheet's repair table (paper space) gives the new area
    doc = ezdxf.readfile(run / "drawings" / "D1_repairs.dxf")
    texts = [e.dxf.text for name in doc.layout_names() if name != "Model"
             for e in doc.layouts.get(name).query("TEXT")]
    assert f"{NEW_FT2:.1f}" in texts and f"{OLD_FT2:.1f}" not in texts
    # the report's repair list and the web map's popup data
    html = (run / "report.html").read_text()
    assert '<td class="c-repair_id">D1-R001</td>' in html
    # the report gives areas in whole ft2 (issue 14's owner precision)
    assert f'<td class="c-area num">{NEW_FT2:,.0f}</td>' in html
    assert f'<td class="c-area num">{OLD_FT2:,.0f}</td>' not in html
    web = (run / "webmap.html").read_text()
    # the web map's repair popup gives the area as the report does (vocabulary.fmt_area,
    # whole ft2), JSON-encoded in the level's data block
    import json as _json

    from geo_corrosion.vocabulary import fmt_area

    def shown(ft2: float) -> bool:
        txt = fmt_area(ft2 * 0.09290304, "us")  # 1 ft2 = 0.09290304 m2 [NIST-SP811-2008]
        return _json.dumps(txt) in web or _json.dumps(txt, ensure_ascii=False) in web

    assert shown(NEW_FT2) and not shown(OLD_FT2)
    # and once re-priced, the report can be rebuilt again
    res = CliRunner().invoke(cli, ["report", str(run), "--no-pdf"])
    assert res.exit_code == 0, res.output


def _box_at(x0: float, y0: float, x1: float, y1: float):
    def change(df: gpd.GeoDataFrame, lv) -> gpd.GeoDataFrame:
        df.loc[0, "geometry"] = lv.grid.geom_to_site(shapely.box(x0, y0, x1, y1))
        return df
    return change


def _not_polygon(df: gpd.GeoDataFrame, lv) -> gpd.GeoDataFrame:
    df.loc[0, "geometry"] = lv.grid.geom_to_site(shapely.LineString([(12, 8), (18, 12)]))
    return df


def _lost_id(df: gpd.GeoDataFrame, lv) -> gpd.GeoDataFrame:
    df.loc[0, "repair_id"] = None
    return df


def _deleted(df: gpd.GeoDataFrame, lv) -> gpd.GeoDataFrame:
    out = pd.concat([df, df.iloc[[0]]], ignore_index=True)  # a copy pasted: a second D1-R001
    return gpd.GeoDataFrame(out, geometry="geometry", crs=df.crs)


@pytest.mark.parametrize(("change", "words"), [
    (_not_polygon, "is a LineString, not a polygon"),
    (_box_at(55.0, 7.5, 62.0, 12.5), "outside the slab"),  # slab is 0-60 ft (testing.py)
    (_box_at(36.0, 17.0, 42.0, 22.0), "enters an exclusion"),  # exclusion 39-41 x 19-21 ft
    (_lost_id, "has no repair_id"),
    (_deleted, "is also the id of"),
])
def test_bad_edit_refused_nothing_written(base: tuple[Path, Path], tmp_path: Path,
                                          change, words: str) -> None:
    site, run = base[0], _copy(base, tmp_path)
    _edit(run, site, change)
    before = _hash(run)
    res = CliRunner().invoke(cli, ["reprice", str(run), "-q"])
    assert res.exit_code == 1
    assert words in res.output and "survey.gpkg layer D1_repairs feature fid 1" in res.output
    assert "Traceback" not in res.output and "internal error" not in res.output
    assert _hash(run) == before  # nothing written in or beside the run folder


def test_overlap_refused_naming_both() -> None:
    # hand geometry: two 4 x 4 rectangles sharing 1 x 4 (common practice: an area priced once)
    orig = gpd.GeoDataFrame({"repair_id": ["L1-R001", "L1-R002"], "face": ["top", "top"]},
                            geometry=[shapely.box(0, 0, 4, 4), shapely.box(10, 0, 14, 4)])
    edits = [EditedOutline("f.gpkg layer L1_repairs feature fid 1", "L1-R001",
                           shapely.box(0, 0, 4, 4)),
             EditedOutline("f.gpkg layer L1_repairs feature fid 2", "L1-R002",
                           shapely.box(3, 0, 7, 4))]
    with pytest.raises(RepairError, match=r"fid 2: repair L1-R002 overlaps repair L1-R001 "
                                          r"\(f.gpkg layer L1_repairs feature fid 1\)"):
        check_edits(orig, edits, slab=shapely.box(0, 0, 20, 20))


def test_uncovered_sounding_and_slanted_side_warned() -> None:
    # hand geometry: D1 at 5-6 x 5-6 left outside the repair; a rhombus side is not on the grid
    orig = gpd.GeoDataFrame({"repair_id": ["L1-R001"], "face": ["top"]},
                            geometry=[shapely.box(0, 0, 4, 4)])
    edits = [EditedOutline("f.gpkg layer L1_repairs feature fid 1", "L1-R001",
                           shapely.Polygon([(0, 0), (4, 0), (5, 4), (1, 4)]))]
    _out, notes = check_edits(orig, edits, slab=shapely.box(0, 0, 20, 20),
                              soundings={"D1": shapely.box(5, 5, 6, 6)}, source="f.gpkg")
    assert any("fid 1: repair L1-R001 has a side not along the survey grid" in n for n in notes)
    assert any("sounded area D1 is not fully covered" in n for n in notes)


def _edit_dxf(run: Path, change) -> None:
    """Edit the repair outline of the sheet's model space as CAD would (ezdxf)."""
    path = run / "drawings" / "D1_repairs.dxf"
    doc = ezdxf.readfile(path)
    (pl,) = [e for e in doc.modelspace().query("LWPOLYLINE")
             if e.dxf.layer.startswith("GC-REPAIR-") and e.has_xdata("GEO_CORROSION")]
    change(pl)
    doc.saveas(path)


def test_round_trip_from_dxf_sheet(base: tuple[Path, Path], tmp_path: Path) -> None:
    run = _copy(base, tmp_path)
    x0, y0, x1, y1 = NEW_BOX  # model space is the survey grid by default ([drawings].coords)
    _edit_dxf(run, lambda pl: pl.set_points([(x0, y0), (x1, y0), (x1, y1), (x0, y1)],
                                            format="xy"))
    res = CliRunner().invoke(cli, ["reprice", str(run), "--from", "drawings/D1_repairs.dxf",
                                   "-q"])
    assert res.exit_code == 0, res.output
    man = json.loads((run / "run.json").read_text())
    (edit,) = man["edits"]
    assert edit["new_area_m2"] == pytest.approx(NEW_FT2 * FT2_M2, rel=1e-6)  # hand: 63 ft2
    assert "D1_repairs.dxf" in edit["source"]
    q = pd.read_csv(run / "quantities.csv")
    line = q[(q["level_id"] == "D1") & (q["item"] == "REP-PD-BARS") & (q["line"] == "base")]
    assert float(line["quantity"].iloc[0]) == NEW_FT2
    # the GeoPackage now holds the edited outline too: the report rebuilds without refusal
    res = CliRunner().invoke(cli, ["report", str(run), "--no-pdf"])
    assert res.exit_code == 0, res.output


def test_dxf_outline_without_id_refused(base: tuple[Path, Path], tmp_path: Path) -> None:
    run = _copy(base, tmp_path)
    handle: list[str] = []

    def drop_id(pl) -> None:
        handle.append(pl.dxf.handle)
        pl.discard_xdata("GEO_CORROSION")  # a CAD user redrew the outline as a new polyline

    _edit_dxf(run, drop_id)
    before = _hash(run)
    res = CliRunner().invoke(cli, ["reprice", str(run), "--from", "drawings/D1_repairs.dxf",
                                   "-q"])
    assert res.exit_code == 1
    assert f"entity handle {handle[0]}: has no repair_id" in res.output
    assert _hash(run) == before


def test_deleted_repair_leaves_the_schedule_with_a_warning() -> None:
    # two repairs laid out, the GIS file holds only the first: the second was deleted on
    # purpose (every feature keeps a known id), so it leaves the outlines with a warning
    # naming it; apply_edits drops its row and records its area going to 0 (hand: 2 x 2)
    from geo_corrosion.repair.edits import apply_edits

    a, b = shapely.box(0, 0, 2, 2), shapely.box(5, 5, 7, 7)
    frame = gpd.GeoDataFrame({"repair_id": ["L1-R001", "L1-R002"], "face": ["top", "top"],
                              "area_m2": [4 * FT2_M2, 4 * FT2_M2], "depth_mm": [50.0, 50.0]},
                             geometry=[a, b])
    outlines, notes = check_edits(frame, [EditedOutline("f.gpkg fid 1", "L1-R001", a)],
                                  slab=shapely.box(0, 0, 10, 10), source="f.gpkg L1_repairs")
    assert set(outlines) == {"L1-R001"}
    assert any("L1-R002 was deleted" in n and "f.gpkg L1_repairs" in n for n in notes)
    new, done = apply_edits(frame, outlines, unit="ft", slab=shapely.box(0, 0, 10, 10))
    assert list(new["repair_id"]) == ["L1-R001"] and len(frame) == 2  # input unchanged
    (edit,) = done
    assert (edit.repair_id, edit.new_area_m2) == ("L1-R002", 0.0)
    assert edit.old_area_m2 == pytest.approx(4 * FT2_M2)
    # a feature that lost its id is still refused, not read as a deletion
    with pytest.raises(RepairError, match="has no repair_id"):
        check_edits(frame, [EditedOutline("f.gpkg fid 1", "L1-R001", a),
                            EditedOutline("f.gpkg fid 2", None, b)],
                    slab=shapely.box(0, 0, 10, 10))


def test_deleting_the_only_repair_reprices_to_no_repair(base: tuple[Path, Path],
                                                         tmp_path: Path) -> None:
    site, run = base[0], _copy(base, tmp_path)

    def delete(df: gpd.GeoDataFrame, lv) -> gpd.GeoDataFrame:
        return df[df["repair_id"] != "D1-R001"]

    _edit(run, site, delete)
    res = CliRunner().invoke(cli, ["reprice", str(run)])
    assert res.exit_code == 0, res.output
    assert "D1-R001 was deleted" in res.output and "(deleted)" in res.output
    man = json.loads((run / "run.json").read_text())
    (edit,) = man["edits"]
    assert edit["repair_id"] == "D1-R001" and edit["new_area_m2"] == 0
    assert man["levels"]["D1"]["repair_list"] == []
    q = pd.read_csv(run / "quantities.csv")
    assert not ((q["level_id"] == "D1") & (q["item"] == "REP-PD-BARS")
                & (q["quantity"] > 0)).any()

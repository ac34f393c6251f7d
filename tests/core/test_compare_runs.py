"""The run-folder comparator of .ci/compare_runs.py on a real run of the synthetic site."""

from __future__ import annotations

import shutil
import sqlite3
from pathlib import Path

import numpy as np
import pytest

from tests.compare_runs_script import load_compare_runs as _load_script

cr = _load_script()


@pytest.fixture(scope="module")
def run_dir(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """One pipeline run of the synthetic site for the whole module."""
    from geo_corrosion.pipeline import run
    from geo_corrosion.testing import make_synthetic_site

    root = tmp_path_factory.mktemp("compare_runs")
    site = make_synthetic_site(root / "site")
    out = root / "out"
    run(site, out)
    return out


@pytest.fixture
def after(run_dir: Path, tmp_path: Path) -> Path:
    """Copy the run into a folder that a test may change."""
    dst = tmp_path / "after"
    shutil.copytree(run_dir, dst)
    return dst


def _compare(before: Path, after: Path, capsys: pytest.CaptureFixture[str],
             *extra: str) -> tuple[int, dict[str, str], str]:
    """Run the command; return the exit code, ``{path: status line}`` and the whole output."""
    code = cr.main([str(before), str(after), *extra])
    out = capsys.readouterr().out
    lines = {}
    for line in out.splitlines():
        if not line.startswith((" ", "summary:")):
            rel, _, rest = line.partition(": ")
            lines[rel] = rest
    return code, lines, out


def _only_this_differs(lines: dict[str, str], rel: str, status: str = "differs") -> None:
    assert lines[rel].startswith(status), lines[rel]
    others = {k: v for k, v in lines.items() if k != rel and v != "same"}
    assert not others, others


def test_copy_of_itself_is_the_same(run_dir: Path, after: Path,
                                    capsys: pytest.CaptureFixture[str]) -> None:
    """A run compared with a copy of itself is the same, file by file."""
    code, lines, out = _compare(run_dir, after, capsys)
    assert code == 0, out
    assert set(lines.values()) == {"same"}
    # every kind of output the comparator knows is in the run
    for name in ("survey.gpkg", "run.json", "report.html", "report.pdf", "webmap.html",
                 "quantities.csv", "quantities.xlsx", "condition_areas.csv",
                 "rasters/D1_potential.tif", "drawings/D1_repairs.dxf",
                 "plots/D1_potential_histogram.png"):
        assert name in lines, name
    assert out.splitlines()[-1].endswith(": SAME")


def test_volatile_parts_of_a_new_run_are_ignored(run_dir: Path, after: Path,
                                                 capsys: pytest.CaptureFixture[str]) -> None:
    """What changes between two runs of the same code (ids, times, versions) is masked."""
    import json
    import re
    import uuid

    import ezdxf

    # folium draws new random element ids on every run
    web = after / "webmap.html"
    text = web.read_text()
    ids = set(re.findall(r"(?<![0-9a-f])[0-9a-f]{32}(?![0-9a-f])", text))
    assert ids
    fresh = {old: uuid.uuid4().hex for old in ids}
    web.write_text(re.sub(r"(?<![0-9a-f])[0-9a-f]{32}(?![0-9a-f])",
                          lambda m: fresh.get(m.group(0), m.group(0)), text))
    # the run's time and the libraries' versions
    man = json.loads((after / "run.json").read_text())
    man["created_utc"], man["elapsed_s"] = "2031-01-02T03:04:05+00:00", 123.4
    man["versions"] = {k: "9.9.9" for k in man["versions"]}
    (after / "run.json").write_text(json.dumps(man, indent=2))
    report = after / "report.html"
    text, n = re.subn(r"\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}\+00:00", "2031-01-02T03:04:05+00:00",
                      report.read_text())
    assert n
    report.write_text(text.replace("0.1.0", "0.2.0"))
    # ezdxf writes new dates and GUIDs each time it saves
    for path in (after / "drawings").glob("*.dxf"):
        ezdxf.readfile(path).saveas(path)
    code, lines, out = _compare(run_dir, after, capsys)
    assert code == 0, out
    assert set(lines.values()) == {"same"}


def test_numbers_in_text_within_tolerance() -> None:
    """Two lines that differ only in numbers within tolerance are equal; beyond it, not."""
    opts = cr.Options(atol=1e-6)
    assert cr.text_diff(["area 1.0 m2", "x"], ["area 1.0000001 m2", "x"], opts)[0] == 0
    n, excerpt = cr.text_diff(["area 1.0 m2", "x"], ["area 1.1 m2", "x"], opts)
    assert n == 1 and excerpt[1:] == ["-area 1.0 m2", "+area 1.1 m2"]
    assert cr.text_diff(["area 1.0 m2"], ["area 1.0 ft2"], opts)[0] == 1


def test_raster_pixel(run_dir: Path, after: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """One raster pixel changed by 0.5 is found, with its count and size."""
    import rasterio

    path = after / "rasters/D1_potential.tif"
    with rasterio.open(path, "r+") as dst:
        band = dst.read(1)
        valid = np.argwhere(np.isfinite(band) & (band != dst.nodata))
        r, c = valid[len(valid) // 2]
        band[r, c] += 0.5
        dst.write(band, 1)
    code, lines, out = _compare(run_dir, after, capsys)
    assert code == 1, out
    _only_this_differs(lines, "rasters/D1_potential.tif")
    assert "1 pixel differs" in lines["rasters/D1_potential.tif"]
    assert "max abs diff 0.5" in lines["rasters/D1_potential.tif"]


def test_geopackage_attribute(run_dir: Path, after: Path,
                              capsys: pytest.CaptureFixture[str]) -> None:
    """One attribute of one GeoPackage row is found, by layer, row and column."""
    with sqlite3.connect(after / "survey.gpkg") as con:
        # the GeoPackage's rtree triggers name these SpatiaLite functions; an attribute update
        # never runs them, but SQLite must know them to prepare the statement
        for fn in ("ST_IsEmpty", "ST_MinX", "ST_MaxX", "ST_MinY", "ST_MaxY"):
            con.create_function(fn, 1, lambda _g: 0)
        con.execute("UPDATE D1_repairs SET area_m2 = area_m2 + 0.01 WHERE fid = 1")
    code, lines, out = _compare(run_dir, after, capsys)
    assert code == 1, out
    _only_this_differs(lines, "survey.gpkg")
    assert "layer D1_repairs row 0 column area_m2" in lines["survey.gpkg"]


def test_schedule_number(run_dir: Path, after: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """One number of the schedule is found, and its row shown."""
    path = after / "quantities.csv"
    rows = path.read_text().splitlines()
    head, _, number = rows[1].rpartition(",")
    rows[1] = f"{head},{float(number) + 0.01:.2f}"
    path.write_text("\n".join(rows) + "\n")
    code, lines, out = _compare(run_dir, after, capsys)
    assert code == 1, out
    _only_this_differs(lines, "quantities.csv")
    assert "row 2 column quantity" in lines["quantities.csv"]
    assert f"\n    -{rows[1].rpartition(',')[0]}," in out  # the diff excerpt shows the row


def test_small_numbers_within_tolerance(run_dir: Path, after: Path,
                                        capsys: pytest.CaptureFixture[str]) -> None:
    """A change within --atol is no difference; --only limits the files."""
    path = after / "quantities.csv"
    rows = path.read_text().splitlines()
    head, _, number = rows[1].rpartition(",")
    rows[1] = f"{head},{float(number) + 0.001}"
    path.write_text("\n".join(rows) + "\n")
    assert _compare(run_dir, after, capsys, "--only", "*.csv")[0] == 1
    code, lines, out = _compare(run_dir, after, capsys, "--only", "*.csv", "--atol", "0.01")
    assert code == 0, out
    assert set(lines) == {"quantities.csv", "condition_areas.csv"}


def test_dxf_vertex(run_dir: Path, after: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """One moved vertex of a DXF polyline is found, by layer."""
    import ezdxf

    path = after / "drawings/D1_repairs.dxf"
    doc = ezdxf.readfile(path)
    pline = next(iter(doc.modelspace().query("LWPOLYLINE")))
    points = pline.get_points("xyseb")
    x, y, *rest = points[0]
    points[0] = (x + 0.25, y, *rest)
    pline.set_points(points, format="xyseb")
    doc.saveas(path)  # also new dates, GUIDs and handles' owner records: all ignored
    code, lines, out = _compare(run_dir, after, capsys)
    assert code == 1, out
    _only_this_differs(lines, "drawings/D1_repairs.dxf")
    assert f"layer {pline.dxf.layer}: 1 LWPOLYLINE entity differs" in lines[
        "drawings/D1_repairs.dxf"]


def test_dxf_saved_again_is_the_same(run_dir: Path, after: Path,
                                     capsys: pytest.CaptureFixture[str]) -> None:
    """A drawing saved again (new dates, GUIDs) is the same."""
    import ezdxf

    path = after / "drawings/D1_repairs.dxf"
    ezdxf.readfile(path).saveas(path)
    code, _lines, out = _compare(run_dir, after, capsys, "--only", "drawings/*")
    assert code == 0, out


def test_report_word(run_dir: Path, after: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """One word of the report is found, and the diff excerpt shows it."""
    path = after / "report.html"
    text = path.read_text()
    assert text.count("<h2>Cautions</h2>") == 1
    path.write_text(text.replace("<h2>Cautions</h2>", "<h2>Caveats</h2>"))
    code, lines, out = _compare(run_dir, after, capsys, "--show", "2")
    assert code == 1, out
    _only_this_differs(lines, "report.html")
    assert "visible text: 1 line differs" in lines["report.html"]
    assert "\n    -Cautions\n    +Caveats\n" in out


def test_report_citation_masked(run_dir: Path, after: Path,
                                capsys: pytest.CaptureFixture[str]) -> None:
    """A --mask expression hides an expected change of text."""
    path = after / "report.html"
    path.write_text(path.read_text().replace("<h2>Cautions</h2>", "<h2>Caveats</h2>"))
    code, _lines, out = _compare(run_dir, after, capsys, "--only", "report.html",
                                 "--mask", "Cautions|Caveats")
    assert code == 0, out


def test_deleted_file(run_dir: Path, after: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """A file missing from AFTER is reported as missing."""
    (after / "plots/D1_potential_histogram.png").unlink()
    code, lines, out = _compare(run_dir, after, capsys)
    assert code == 1, out
    _only_this_differs(lines, "plots/D1_potential_histogram.png", "missing")
    assert "1 missing" in out.splitlines()[-1]


def test_unreadable_file_is_reported_not_raised(run_dir: Path, after: Path,
                                                capsys: pytest.CaptureFixture[str]) -> None:
    """A corrupt file is reported as unreadable, without a traceback."""
    (after / "rasters/D1_potential.tif").write_bytes(b"not a tiff")
    code, lines, out = _compare(run_dir, after, capsys, "--only", "rasters/*")
    assert code == 1, out
    assert lines["rasters/D1_potential.tif"].startswith("unreadable: AFTER: ")
    assert "Traceback" not in out


def test_bad_usage(run_dir: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """Bad arguments exit with 2."""
    assert cr.main([str(run_dir)]) == 2
    assert cr.main([str(run_dir), str(tmp_path / "nope")]) == 2
    assert cr.main([str(run_dir), str(run_dir), "--mask", "("]) == 2
    assert cr.main([str(run_dir), str(run_dir), "--atol", "-1"]) == 2
    capsys.readouterr()


def test_masks() -> None:
    """The built-in masks hide timestamps, versions and folium ids, not section numbers."""
    opts = cr.Options()
    text = ("run created 2026-12-03T10:34:10+00:00 by geo_corrosion 0.1.0 (ezdxf v1.4.5); "
            "var map_60cd32d9505969c2995a0f0ec9ea4ebd; ASTM C876 §5.1.1 and §5.1.1.2, 0.9 mV")
    assert cr.mask_text(text, opts) == (
        "run created <timestamp> by geo_corrosion <version> (ezdxf <version>); "
        "var map_<id>; ASTM C876 §5.1.1 and §5.1.1.2, 0.9 mV")
    # a 64-digit checksum is data, not a folium id
    assert cr.mask_text("a" * 64, opts) == "a" * 64

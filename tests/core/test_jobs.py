"""``--jobs``: levels and exporters side by side give the same run folder as one job.

Sources: the one-job run itself (the serial path, whose outputs are checked against
references elsewhere) is the expected value; files are compared byte for byte, and the
few that embed the run's time stamp (run.json ``created_utc``/``elapsed_s``, the report's
"Run created" line, the GeoPackage's and drawings' own dates) with the comparator of
.ci/compare_runs.py at zero tolerance (numbers equal, time stamps masked).
"""

from __future__ import annotations

import os
from collections.abc import Iterator
from pathlib import Path

import pytest
from click.testing import CliRunner

from geo_corrosion import pipeline
from geo_corrosion.errors import ExportError, QAError
from tests.compare_runs_script import load_compare_runs as _compare_runs


@pytest.fixture(scope="module")
def two_level_site(tmp_path_factory: pytest.TempPathFactory) -> Path:
    from geo_corrosion.testing import make_synthetic_site

    return make_synthetic_site(tmp_path_factory.mktemp("jobs") / "site", levels=2)


@pytest.fixture(scope="module")
def runs(two_level_site: Path) -> Iterator[tuple[Path, Path, list[str], list[str]]]:
    """The same two-level site run with one job and with two (fixed document dates)."""
    old = os.environ.get("SOURCE_DATE_EPOCH")
    os.environ["SOURCE_DATE_EPOCH"] = "1700000000"  # the date libraries write, if they honour it
    try:
        root = two_level_site.parent.parent
        lines1: list[str] = []
        lines2: list[str] = []
        pipeline.run(two_level_site, root / "one", jobs=1, progress=lines1.append)
        pipeline.run(two_level_site, root / "two", jobs=2, progress=lines2.append)
        yield root / "one", root / "two", lines1, lines2
    finally:
        if old is None:
            os.environ.pop("SOURCE_DATE_EPOCH", None)
        else:
            os.environ["SOURCE_DATE_EPOCH"] = old


#: Files that carry the run's own time stamp (compared without it, numbers exactly).
STAMPED = {"run.json", "report.html", "report.pdf", "survey.gpkg", "webmap.html",
           "quantities.xlsx", "drawings/D1_repairs.dxf", "drawings/D2_repairs.dxf",
           "drawings/D1_sheet.pdf", "drawings/D2_sheet.pdf"}


def _files(d: Path) -> list[str]:
    return sorted(str(p.relative_to(d)) for p in d.rglob("*") if p.is_file())


def test_two_jobs_write_the_same_files_as_one(
        runs: tuple[Path, Path, list[str], list[str]]) -> None:
    one, two, _, _ = runs
    assert _files(one) == _files(two)
    assert any(f.startswith("rasters/D2_") for f in _files(one))  # both levels are there
    cr = _compare_runs()
    exact = cr.Options(atol=0.0, rtol=0.0)
    differ = []
    for rel in _files(one):
        if (one / rel).read_bytes() == (two / rel).read_bytes():
            continue
        if rel not in STAMPED:
            differ.append(f"{rel}: bytes differ")
            continue
        res = cr.compare_file(one / rel, two / rel, rel, exact)
        if not res.ok:
            differ.append(f"{rel}: {res.reason} {res.details[:3]}")
    assert not differ, differ


def test_progress_lines_come_in_level_order(
        runs: tuple[Path, Path, list[str], list[str]]) -> None:
    _, _, lines1, lines2 = runs

    def levels(lines: list[str]) -> list[str]:
        return [x for x in lines if not x.startswith("writing ")]

    assert levels(lines2) == levels(lines1)  # the serial order, level by level
    assert sorted(lines2) == sorted(lines1)  # and every "writing ..." line once


def test_exporters_wait_for_the_files_they_read() -> None:
    # report/build.py reads plots/*.png and survey.gpkg; webmap/build.py reads survey.gpkg
    # and rasters/*.tif (their module notes); the others read nothing of the run folder
    names = pipeline.default_exporters()
    needs = pipeline.exporter_needs(names)
    assert needs["report"] == {"geopackage", "plots"}
    assert needs["webmap"] == {"geopackage", "geotiff"}
    assert all(not needs[n] for n in ("geopackage", "geotiff", "quantities", "drawings",
                                      "plots"))


def test_a_run_last_plugin_without_needs_waits_for_every_other(
        monkeypatch: pytest.MonkeyPatch) -> None:
    from geo_corrosion.exporters import EXPORTERS, Exporter

    class Late(Exporter):
        name = "late"
        run_last = True

    real = EXPORTERS.get
    monkeypatch.setattr(EXPORTERS, "get", lambda n: Late if n == "late" else real(n))
    needs = pipeline.exporter_needs(["geopackage", "plots", "webmap", "late"])
    assert needs["late"] == {"geopackage", "plots"}  # not the other run_last one


def _cli(site: Path, out: Path, jobs: int) -> tuple[int, str]:
    from geo_corrosion.cli.main import cli

    res = CliRunner().invoke(cli, ["run", str(site), "--out", str(out), "-q", "--jobs",
                                   str(jobs)])
    return res.exit_code, res.output


def test_an_error_in_a_level_worker_reads_as_in_one_job(
        two_level_site: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    real = pipeline.map_level

    def failing(lv, *a, **k):  # type: ignore[no-untyped-def]
        if lv.id == "D2":
            raise QAError("D2/readings/potential.csv row 7: a made-up bad reading; fix it")
        return real(lv, *a, **k)

    monkeypatch.setattr(pipeline, "map_level", failing)  # forked workers inherit it
    code1, out1 = _cli(two_level_site, tmp_path / "one", 1)
    code2, out2 = _cli(two_level_site, tmp_path / "two", 2)
    assert code1 == code2 == 1
    assert out2 == out1  # the same one clean message (common practice: no traceback)
    assert "row 7: a made-up bad reading" in out2 and "Traceback" not in out2
    assert not (tmp_path / "two").exists()


def test_an_error_in_an_exporter_worker_reads_as_in_one_job(
        two_level_site: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    from geo_corrosion.exporters.plots import PlotsExporter

    def failing(self, result, out_dir):  # type: ignore[no-untyped-def]
        raise ExportError("plots: a made-up failure to draw; free some disk space")

    monkeypatch.setattr(PlotsExporter, "export", failing)
    monkeypatch.setattr(pipeline, "default_exporters",
                        lambda: ["quantities", "plots", "report"])
    code1, out1 = _cli(two_level_site, tmp_path / "one", 1)
    code2, out2 = _cli(two_level_site, tmp_path / "two", 2)
    assert code1 == code2 == 1
    assert out2 == out1
    assert "a made-up failure to draw" in out2 and "Traceback" not in out2
    assert not (tmp_path / "two").exists()


def test_level_workers_share_the_threads_and_never_reuse_numbas_after_a_fork(
        monkeypatch: pytest.MonkeyPatch) -> None:
    # common practice: workers x threads <= jobs; and numba's OpenMP layer aborts a forked
    # child that uses it once the parent did (seen on this machine: "Terminating: fork()
    # called from a process already using GNU OpenMP, this is unsafe.")
    monkeypatch.setattr(pipeline, "_numba_started", lambda: False)
    assert pipeline._worker_threads(2, 2) == 1
    assert pipeline._worker_threads(4, 2) == 2
    assert pipeline._worker_threads(3, 2) == 1
    monkeypatch.setattr(pipeline, "_numba_started", lambda: True)
    assert pipeline._worker_threads(4, 2) == 1


def test_numba_started_sees_the_parallel_kernel() -> None:
    import numpy as np

    from geo_corrosion.surfaces import _kernel
    from geo_corrosion.surfaces.kriging import KrigingEngine
    from geo_corrosion.surfaces.variogram import VariogramModel

    rng = np.random.default_rng(0)
    x, y, z = rng.uniform(0, 50, 500), rng.uniform(0, 50, 500), rng.normal(0, 1, 500)
    eng = KrigingEngine(x, y, z, VariogramModel("spherical", nugget=1.0, psill=9.0,
                                                range=9.0))
    import numba

    if eng._kernel is None or numba.config.NUMBA_NUM_THREADS < 2:
        pytest.skip("numba's kernel is off here (GEO_CORROSION_NO_JIT) or has one thread")
    d, i = eng.query(rng.uniform(0, 50, 2000), rng.uniform(0, 50, 2000))
    _kernel.solve_points(eng.px, eng.py, eng.z, i, d, n=eng.n, code=eng._kernel,
                         model=eng.model, eps=1e-10, threads=2)
    assert pipeline._numba_started()

"""`geo-corrosion map RUN_DIR` and `geo-corrosion report RUN_DIR`: rebuilt from a run's files."""

from __future__ import annotations

import html
import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner

from geo_corrosion.cli.main import cli
from tests.webmap.conftest import XSS


@pytest.fixture
def run_copy(xss_run: Path, tmp_path: Path) -> Path:
    """A copy of the synthetic run without its web map and report."""
    out = tmp_path / "run"
    shutil.copytree(xss_run, out)
    for name in ("webmap.html", "report.html", "report.pdf"):
        (out / name).unlink(missing_ok=True)
    return out


def test_map_rebuilds_the_web_map(run_copy: Path) -> None:
    res = CliRunner().invoke(cli, ["map", str(run_copy)])
    assert res.exit_code == 0, res.output
    text = (run_copy / "webmap.html").read_text(encoding="utf-8")
    # the level name holds a script tag: only its escaped form is in the page
    # (OWASP XSS prevention cheat sheet, rule 1: HTML-escape untrusted data); common practice
    assert html.escape(XSS) in text or XSS.replace("<", "\\u003c").replace(">", "\\u003e") in text
    assert "<script>alert(1)</script>" not in text
    assert "not a structural assessment" in text  # cautions panel (project rule)
    assert not list(run_copy.glob("*.tmp")) and not list(run_copy.glob(".*tmp*"))


def test_report_rebuilds_html_only_with_no_pdf(run_copy: Path) -> None:
    res = CliRunner().invoke(cli, ["report", str(run_copy), "--no-pdf"])
    assert res.exit_code == 0, res.output
    assert (run_copy / "report.html").is_file()
    assert not (run_copy / "report.pdf").exists()
    assert "report.html" in res.output


def test_site_folder_means_its_default_output_folder(run_copy: Path, tmp_path: Path) -> None:
    site = tmp_path / "site"
    site.mkdir()
    (site / "site.toml").write_text("# placeholder: only its presence matters here\n")
    shutil.move(str(run_copy), site / "out")
    res = CliRunner().invoke(cli, ["map", str(site)])
    assert res.exit_code == 0, res.output
    assert (site / "out" / "webmap.html").is_file()


@pytest.mark.parametrize("command", ["map", "report"])
def test_folder_without_run_json_is_refused(command: str, tmp_path: Path) -> None:
    res = CliRunner().invoke(cli, [command, str(tmp_path)])
    assert res.exit_code == 1
    assert "holds no run.json" in res.output and str(tmp_path) in res.output
    assert "Traceback" not in res.output
    assert list(tmp_path.iterdir()) == []  # nothing written


def test_broken_geopackage_leaves_the_old_map_alone(xss_run: Path, tmp_path: Path) -> None:
    out = tmp_path / "run"
    shutil.copytree(xss_run, out)
    before = (out / "webmap.html").read_bytes()
    (out / "survey.gpkg").write_bytes(b"not a geopackage")
    res = CliRunner().invoke(cli, ["map", str(out)])
    assert res.exit_code == 1
    assert "survey.gpkg" in res.output and "internal error" not in res.output
    assert "Traceback" not in res.output
    assert (out / "webmap.html").read_bytes() == before  # atomic: the old page is kept


def test_broken_run_json_is_named(xss_run: Path, tmp_path: Path) -> None:
    out = tmp_path / "run"
    shutil.copytree(xss_run, out)
    (out / "run.json").write_text("{ not json", encoding="utf-8")
    for command in ("map", "report"):
        res = CliRunner().invoke(cli, [command, str(out)])
        assert res.exit_code == 1
        assert "run.json" in res.output and "internal error" not in res.output


def test_no_pdf_says_an_older_pdf_is_stale(xss_run: Path, tmp_path: Path) -> None:
    out = tmp_path / "run"
    shutil.copytree(xss_run, out)
    (out / "report.pdf").write_bytes(b"%PDF-1.4 older build")
    res = CliRunner().invoke(cli, ["report", str(out), "--no-pdf"])
    assert res.exit_code == 0, res.output
    assert "earlier build" in res.output  # common practice, no source
    assert (out / "report.pdf").read_bytes() == b"%PDF-1.4 older build"  # not ours to delete


def test_the_page_carries_leaflet_licence(run_copy: Path) -> None:
    # Leaflet is BSD-2-Clause (its LICENSE file, vendored in exporters/webmap/_vendor/leaflet):
    # a redistribution must reproduce the copyright notice and the conditions
    res = CliRunner().invoke(cli, ["map", str(run_copy)])
    assert res.exit_code == 0, res.output
    text = (run_copy / "webmap.html").read_text(encoding="utf-8")
    assert "BSD 2-Clause License" in text and "Agafonkin" in text
    assert "Redistributions in binary form must reproduce" in text

"""`geo-corrosion check` and `run` on the bundled sample site, and on a broken copy of it."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner

from geo_corrosion.cli.main import cli

SAMPLE = Path(__file__).resolve().parents[2] / "sample_sites" / "millbrook_garage"


def test_check_finds_the_planted_flaws() -> None:
    res = CliRunner().invoke(cli, ["check", str(SAMPLE), "-q", "--max-rows", "500"])
    assert res.exit_code == 0, res.output
    # the flaws listed in sample_sites/millbrook_garage/README.md (invented data)
    for rule in ("QA-RANGE-LOW", "QA-RANGE-HIGH", "QA-DUPLICATE", "QA-OUTSIDE-SLAB",
                 "QA-IN-EXCLUSION", "QA-ADJ-SPIKE", "QA-REPEATABILITY"):
        assert rule in res.output, rule
    assert "the site can be run" in res.output


def test_semicolon_decimal_comma_volts_file_reads() -> None:
    # RF-hcp-north is written with ';', decimal commas and volts (sample README)
    from geo_corrosion.site import open_site

    site = open_site(SAMPLE)
    sv = next(s for s in site.surveys if s.config.separator == ";")
    assert sv.config.decimal == "," and sv.config.unit == "V"
    v = sv.frame["potential_mv"]
    assert -700 < v.median() < -100  # volts converted to mV vs CSE


@pytest.mark.slow
def test_run_sample_site(tmp_path: Path) -> None:
    out = tmp_path / "out"
    res = CliRunner().invoke(cli, ["run", str(SAMPLE), "--out", str(out), "-q"])
    assert res.exit_code == 0, res.output
    man = json.loads((out / "run.json").read_text())
    assert set(man["levels"]) == {"L2", "RF"}
    for lid in ("L2", "RF"):
        assert man["levels"][lid]["repairs"] > 0
        assert (out / f"drawings/{lid}_repairs.dxf").is_file()
        assert (out / f"rasters/{lid}_potential.tif").is_file()
    assert not any(p.name.endswith(".tmp") for p in out.rglob("*"))


def test_broken_copy_fails_cleanly(tmp_path: Path) -> None:
    site = tmp_path / "site"
    shutil.copytree(SAMPLE, site)
    (site / "readings" / "L2_resistivity.csv").unlink()
    res = CliRunner().invoke(cli, ["run", str(site), "--out", str(tmp_path / "out")])
    assert res.exit_code == 1
    assert "L2_resistivity.csv" in res.output and "Traceback" not in res.output
    assert not (tmp_path / "out").exists()

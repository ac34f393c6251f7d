"""`geo-corrosion check` and `run` on the bundled sample site, and on a broken copy of it."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import numpy as np
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
    from geo_corrosion.stages.open_site import open_site

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
    # the sheets' title block says what the report's does: the [project] table of the
    # sample's site file (engineer and firm, number, revision and date)
    import ezdxf

    doc = ezdxf.readfile(out / "drawings" / "L2_repairs.dxf")
    paper = [e.dxf.text for name in doc.layout_names() if name != "Model"
             for e in doc.layouts.get(name).query("TEXT")]
    assert any("Sample Engineer, P.E." in t for t in paper), paper
    assert any("MB-2026-014" in t for t in paper)
    assert "2026-11-20" in paper and "(engineer not given)" not in paper


def test_broken_copy_fails_cleanly(tmp_path: Path) -> None:
    site = tmp_path / "site"
    shutil.copytree(SAMPLE, site)
    (site / "readings" / "L2_resistivity.csv").unlink()
    res = CliRunner().invoke(cli, ["run", str(site), "--out", str(tmp_path / "out")])
    assert res.exit_code == 1
    assert "L2_resistivity.csv" in res.output and "Traceback" not in res.output
    assert not (tmp_path / "out").exists()


@pytest.fixture(scope="module")
def sample_result():  # type: ignore[no-untyped-def]
    """The sample site processed in memory (no outputs written)."""
    from geo_corrosion.pipeline import check, process

    # issue 13: treatments are paid on whole bays between joints and the column lines A-G,
    # 1-5 of the sample plans (docs/methods.md §7)
    return process(*check(SAMPLE))


@pytest.mark.slow
def test_low_cover_reaches_the_combined_classes(sample_result) -> None:  # type: ignore[no-untyped-def]
    # common practice: low cover together with a high corrosion likelihood is the
    # highest priority.  Default rule 1: low cover and potential < -350 mV CSE (ASTM C876)
    # -> High priority.  The low-cover mask is recomputed here from the kriged cover and the
    # specified cover minus its tolerance (2 in - 0.5 in = 38.1 mm; 1 in = 25.4 mm exactly).
    from geo_corrosion.condition.combined import DEFAULT_RULES

    hp = [c.key for c in DEFAULT_RULES.classes].index("high_priority")
    checked = overlap = 0
    for lid, lr in sample_result.levels.items():
        pot, cov = lr.surfaces["potential"], lr.surfaces.get("cover")
        if cov is None:
            continue
        low = np.nan_to_num(cov.mean, nan=np.inf) < 1.5 * 25.4
        both = low & (pot.mean < -350.0)
        codes = lr.condition.combined_codes
        overlap += int(both.sum())
        assert (codes[both] == hp).all(), lid
        # and no high-priority cell without a reason for it (rules 1-3 of the default table)
        rate = lr.surfaces.get("corrosion_rate")
        res = lr.surfaces.get("resistivity")
        reason = both | ((low & (res.mean < 10.0)) if res is not None else False)
        if rate is not None:
            reason |= rate.mean > 1.0
        assert not (codes == hp)[~reason].any(), lid
        checked += 1
    assert checked and overlap  # the sample site has low-cover cells with high potentials


@pytest.mark.slow
def test_life_summary_is_given_per_corrosion_rate_survey(sample_result) -> None:  # type: ignore[no-untyped-def]
    # [Alonso-Andrade-1998, from memory]: the time is counted from initiation
    site = sample_result.site
    for lid, lr in sample_result.levels.items():
        surveys = [s.id for s in site.surveys_of(lid, "corrosion_rate")]
        life = lr.stats["condition"].get("life", {})
        assert sorted(life) == sorted(surveys)
        for sid, summary in life.items():
            n = len(next(s for s in site.surveys if s.id == sid).frame)
            assert summary["readings"] == n
            assert "initiation" in summary["time_to_cracking_meaning"]


@pytest.mark.slow
def test_no_area_is_priced_twice(sample_result) -> None:  # type: ignore[no-untyped-def]
    # issue 5: "no area counted twice where repairs or zones overlap": the zones priced by
    # area (treatment, protection) never overlap a repair, which is priced by its own items
    import shapely

    checked = 0
    for lid, lr in sample_result.levels.items():
        if lr.repairs is None or lr.zones is None:
            continue
        reps = shapely.union_all(list(lr.repairs.geometry))
        priced = lr.zones[lr.zones["bid_item"].notna() & (lr.zones["bid_item"] != "")]
        for name, g in zip(priced["zone"], priced.geometry, strict=True):
            assert g.intersection(reps).area < 1e-9 * reps.area, (lid, name)
            checked += 1
        rz = lr.zones[lr.zones["zone"] == "repair"].geometry.iloc[0]
        assert reps.difference(rz).area < 1e-9 * reps.area, lid  # every repair in its zone
    assert checked

"""The committed sample site read through geo_corrosion's own site-file reader.

This is the contract between the generator and the package: every file named in
``site.toml`` reads, in the declared layout and units, and the package's
corrections give back the latent field the generator drew the readings from.
"""

from __future__ import annotations

import importlib.util
import sys
from pathlib import Path
from types import ModuleType

import numpy as np
import pytest
from click.testing import CliRunner

from geo_corrosion.cli.main import cli
from geo_corrosion.model.site import Site
from geo_corrosion.stages.open_site import open_site

REPO = Path(__file__).resolve().parents[2]
SITE = REPO / "sample_sites" / "millbrook_garage"


@pytest.fixture(scope="module")
def mk() -> ModuleType:
    """Load the generator script as a module."""
    spec = importlib.util.spec_from_file_location(
        "make_sample_sites_contract", REPO / "sample_sites" / "make_sample_sites.py")
    assert spec is not None and spec.loader is not None
    mod = importlib.util.module_from_spec(spec)
    sys.modules["make_sample_sites_contract"] = mod
    spec.loader.exec_module(mod)
    return mod


@pytest.fixture(scope="module")
def site() -> Site:
    """Open the committed sample site with geo_corrosion."""
    return open_site(SITE / "site.toml")


def test_every_survey_reads(site: Site) -> None:
    """All ten surveys read; counts, overlays and grid ties as generated."""
    n = {s.id: len(s.frame) for s in site.surveys}
    assert len(n) == 10  # 4 potential files, and per level resistivity, rate, cover
    for lid in ("L2", "RF"):
        assert 4000 <= sum(len(s.frame) for s in site.surveys_of(lid, "potential")) <= 6000
        assert 40 <= sum(len(s.frame) for s in site.surveys_of(lid, "corrosion_rate")) <= 60
        assert 200 <= sum(len(s.frame) for s in site.surveys_of(lid, "cover")) <= 400
        lv = site.levels[lid]
        assert 15 <= len(lv.overlays["delamination"]) <= 30
        assert lv.grid.rms_residual < 0.05  # metres; a few mm of invented survey noise
        assert lv.grid.rotation_deg == pytest.approx(17.0, abs=0.05)


def test_corrected_potentials_recover_the_latent_field(site: Site, mk: ModuleType) -> None:
    """Package corrections undo the generator's shifts [IJCorros-2010 Table 2; ASTM-C876-22a]."""
    models = mk.build_models()
    for s in site.surveys:
        if s.kind.name != "potential":
            continue
        f = s.frame
        v = f["potential_mv"].to_numpy(float)
        ok = (v > -1000) & (v < 200)  # leave out the planted implausible readings
        latent = models[s.config.level].potential_cse_mv(f["x_local"].to_numpy(float)[ok],
                                                         f["y_local"].to_numpy(float)[ok])
        d = v[ok] - latent
        assert abs(np.median(d)) < 1.5, s.id  # 5 mV invented noise, 1 mV rounding
        assert np.percentile(np.abs(d), 99) < 40.0, s.id  # only the planted spike is far off


def test_cover_converted_from_inches(site: Site) -> None:
    """Cover in inches is converted to mm at ingest."""
    for s in site.surveys:
        if s.kind.name == "cover":
            mm = s.frame["cover_mm"].to_numpy(float)
            assert 40.0 < np.median(mm) < 60.0  # ~50 mm invented, read from inches (25.4 mm/in)


def test_check_command_finds_the_site_runnable() -> None:
    """`geo-corrosion check` exits 0 on the sample site (its flaws are warnings)."""
    res = CliRunner().invoke(cli, ["check", str(SITE)])
    assert res.exit_code == 0, res.output

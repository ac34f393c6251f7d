"""Fixtures of the portfolio tests: small synthetic sites in different places, one broken.

The Dask run (a LocalCluster of two worker processes) and the plain single-site run it is
compared with are made once per session (slow); with ``GC_PORTFOLIO_RUN=<a finished
session folder of it, holding sites/, out/ and plain/>`` only the summary and the map are
rebuilt from its run folders (quick edits of the summary; the tests of the command's own
output then skip).  The browser comes from the web map tests'
fixture (Debian's chromium through Playwright, network blocked).
"""

from __future__ import annotations

import csv
import os
import shutil
from dataclasses import dataclass
from pathlib import Path

import pytest
from click.testing import CliRunner, Result

#: (folder, site name, offset east/north of the synthetic tie, m): three places ~0.5 km apart.
SITES = (("s0", "North deck", (0.0, 0.0)), ("s1", "South deck", (0.0, -400.0)),
         ("s2", "East deck", (500.0, -200.0)))
#: The broken site and its bad reading (a text where the potential belongs).
BROKEN = "s2"
BAD_ROW = 6


def make_sites(root: Path) -> Path:
    """Write the three small sites under ``root/sites``; the last one's readings are broken."""
    from geo_corrosion.testing import make_synthetic_site

    for i, (folder, name, off) in enumerate(SITES):
        make_synthetic_site(root / "sites" / folder, width_ft=30, depth_ft=20, name=name,
                            offset_m=off, seed=i + 1)
    p = root / "sites" / BROKEN / "readings" / "potential.csv"
    lines = p.read_text().splitlines()
    lines[BAD_ROW - 1] = lines[BAD_ROW - 1].rsplit(",", 1)[0] + ",abc"
    p.write_text("\n".join(lines) + "\n")
    return root / "sites"


@dataclass
class PortfolioRun:
    """The portfolio's folder, the command's result and a plain run of the first site."""

    sites: Path
    out: Path
    result: Result | None
    plain: Path


def _rebuild(reuse: Path, root: Path) -> PortfolioRun:
    """Copy a finished portfolio session and rebuild its summary from its run folders."""
    from geo_corrosion.exporters.portfolio import SiteStatus, write_summary

    shutil.copytree(reuse, root, dirs_exist_ok=True)
    out = root / "out"
    with (out / "portfolio_sites.csv").open(newline="", encoding="utf-8") as f:
        rows = list(csv.DictReader(f))
    write_summary(out, [SiteStatus(r["site_id"], r["site_name"], Path(r["site_file"]),
                                   out / "sites" / r["site_id"], r["status"], r["message"],
                                   (float(r["longitude_deg"]), float(r["latitude_deg"])))
                        for r in rows])
    return PortfolioRun(root / "sites", out, None, root / "plain")


@pytest.fixture(scope="session")
def portfolio_run(tmp_path_factory: pytest.TempPathFactory) -> PortfolioRun:
    """`geo-corrosion portfolio` on the three sites (2 workers), and `run` of site s0 alone."""
    from geo_corrosion.cli.main import cli

    root = tmp_path_factory.mktemp("portfolio")
    if reuse := os.environ.get("GC_PORTFOLIO_RUN"):
        return _rebuild(Path(reuse), root)
    sites = make_sites(root)
    out = root / "out"
    res = CliRunner().invoke(cli, ["portfolio", str(sites), "--out", str(out),
                                   "--workers", "2"])
    plain = root / "plain"
    ref = CliRunner().invoke(cli, ["run", str(sites / "s0"), "--out", str(plain), "-q"])
    assert ref.exit_code == 0, ref.output
    return PortfolioRun(sites, out, res, plain)

"""A kind's threshold set in the site file: checked against the kind's plausible range.

Issue 12, bad input: "a threshold outside a kind's plausible range ... gets a message naming
the file and key and saying what to do".  The override replaces the published value
(-350 mV CSE, [ASTM-C876-91 App. X1, from memory]) and names the key as its source; an
area below a less negative threshold can only be larger (a fact of the order of numbers).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from geo_corrosion.cli.main import cli
from geo_corrosion.errors import SiteFileError
from geo_corrosion.stages.read_site import read_site
from geo_corrosion.testing import make_synthetic_site


def _site(tmp_path: Path, table: str) -> Path:
    site = make_synthetic_site(tmp_path / "s")
    site.write_text(site.read_text() + "\n" + table + "\n")
    return site


@pytest.mark.parametrize(("table", "words"), [
    ("[run.kinds.potential]\nthreshold = -2000.0",
     ("[run.kinds.potential].threshold", "-2000 mV", "-1000 to 200 mV", "-350")),
    ("[run.kinds.potential]\nthreshold = 500",
     ("[run.kinds.potential].threshold", "outside the plausible range")),
    ("[run.kinds.cover]\nthreshold = 30.0",
     ("[run.kinds.cover].threshold", "no area-beyond-threshold statement", "remove the key")),
    ("[run.kinds.potential]\nthreshold = nan",
     ("[run.kinds.potential].threshold",)),
])
def test_threshold_refused_naming_the_key(tmp_path: Path, table: str,
                                          words: tuple[str, ...]) -> None:
    site = _site(tmp_path, table)
    with pytest.raises(SiteFileError) as e:
        read_site(site)
    msg = str(e.value)
    assert "site.toml" in msg
    for w in words:
        assert w in msg, (w, msg)
    res = CliRunner().invoke(cli, ["check", str(site)])
    assert res.exit_code != 0 and "Traceback" not in res.output


def test_threshold_replaces_the_published_one(tmp_path: Path) -> None:
    base = make_synthetic_site(tmp_path / "a")
    over = _site(tmp_path, "[run.kinds.potential]\nthreshold = -300.0")
    areas = {}
    for name, site in (("published", base), ("site", over)):
        out = tmp_path / f"out-{name}"
        res = CliRunner().invoke(cli, ["run", str(site), "--out", str(out), "-q"])
        assert res.exit_code == 0, res.output
        a = json.loads((out / "run.json").read_text())["levels"]["D1"]["condition"][
            "potential_area_beyond_threshold"]
        areas[name] = a
    assert areas["published"]["threshold"] == -350.0
    assert areas["site"]["threshold"] == -300.0
    assert "[run.kinds.potential].threshold" in areas["site"]["source"]
    assert "-300 mV CSE" in areas["site"]["meaning"]
    # below -300 mV holds everything below -350 mV and more
    assert areas["site"]["expected_m2"] >= areas["published"]["expected_m2"]

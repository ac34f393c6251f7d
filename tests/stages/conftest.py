"""One real run per site and session, its output folder read back by the invariant tests.

Sites: the synthetic site of :func:`geo_corrosion.testing.make_synthetic_site` with an
L-shaped slab and an opening across its delamination added, both off the cell edges (so
that cells outside the slab, inside an exclusion and straddling the deck's outline exist,
and the repair has to stop at the opening; the stock synthetic deck is a rectangle that
fills its grid, and its one column is smaller than the tolerance band of the raster
check), and the bundled sample site (slow).
"""

from __future__ import annotations

import json
import tomllib
from pathlib import Path

import pytest

from geo_corrosion.pipeline import run
from geo_corrosion.testing import make_synthetic_site
from tests.stages.outputs import RunOutputs

SAMPLE = Path(__file__).resolve().parents[2] / "sample_sites" / "millbrook_garage"

#: L-shaped slab, local ft: the stock 60 x 40 ft deck less a notch at one corner, whose
#: edges run through the 1 ft cells (off the cell edges), so that edge cells straddle it.
NOTCHED_SLAB = [[0, 0], [60, 0], [60, 30.4], [47.6, 30.4], [47.6, 40], [0, 40], [0, 0]]
#: A 5 x 5 ft opening over the east end of the stock delamination (12..18 x 8..12 ft),
#: also off the cell edges.
OPENING = [[16.7, 4.6], [21.7, 4.6], [21.7, 9.6], [16.7, 9.6], [16.7, 4.6]]


def _polygon_file(path: Path, rings: list[list[list[float]]], names: list[str]) -> None:
    feats = [{"type": "Feature", "properties": {"name": n},
              "geometry": {"type": "Polygon", "coordinates": [r]}}
             for r, n in zip(rings, names, strict=True)]
    path.write_text(json.dumps({"type": "FeatureCollection", "features": feats}))


def synthetic_site(root: Path) -> Path:
    """Write the synthetic site with a notched slab and one more exclusion; its site file."""
    site = make_synthetic_site(root)
    level = tomllib.loads(site.read_text())["levels"][0]
    _polygon_file(site.parent / level["slab"]["path"], [NOTCHED_SLAB], ["slab"])
    excl = site.parent / level["exclusions"][0]["path"]
    old = json.loads(excl.read_text())["features"]
    rings = [f["geometry"]["coordinates"][0] for f in old] + [OPENING]
    _polygon_file(excl, rings, [f["properties"]["name"] for f in old] + ["O1"])
    return site


@pytest.fixture(scope="session")
def synthetic_run(tmp_path_factory: pytest.TempPathFactory) -> RunOutputs:
    """Run the synthetic site once per session."""
    root = tmp_path_factory.mktemp("stages_synthetic")
    run(synthetic_site(root / "site"), root / "out")
    return RunOutputs(root / "out", "synthetic")


@pytest.fixture(scope="session")
def sample_run(tmp_path_factory: pytest.TempPathFactory) -> RunOutputs:
    """Run the bundled sample site once per session (about 30 s)."""
    root = tmp_path_factory.mktemp("stages_sample")
    run(SAMPLE, root / "out")
    return RunOutputs(root / "out", "sample")


@pytest.fixture(params=["synthetic", pytest.param("sample", marks=pytest.mark.slow)])
def out(request: pytest.FixtureRequest) -> RunOutputs:
    """Give the output folder of each site's run."""
    return request.getfixturevalue(f"{request.param}_run")

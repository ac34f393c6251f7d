"""Runaway work: each case is refused before any of it, naming the key (issue 11, item 3).

The limits are ``[run].n_neighbors`` at most 128 (``config.py``), ``cell_size`` at least 1 cm,
and ``stages.check_site.check_work``: at most ``MAX_GRID_CELLS`` grid cells per level and
``MAX_CONTOUR_LEVELS`` contour levels per kind.  Contract: ``tests/fuzz/contract.py``.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from tests.fuzz.conftest import fresh_site
from tests.fuzz.contract import Case, edit, holds

GROUP = "runaway"
FUZZ = settings(derandomize=True, database=None, deadline=None, max_examples=6,
                suppress_health_check=[HealthCheck.function_scoped_fixture])


def _run_key(line: str) -> Case:
    name = line.split(" =")[0]

    def breaks(site: Path) -> None:
        if name == "cell_size":
            edit(site / "site.toml", 'cell_size = "1 ft"', line)
        else:
            edit(site / "site.toml", "[run]\n", f"[run]\n{line}\n")
    return Case(f"{name}={line.split('= ')[1]}", breaks, ("site.toml", f"[run].{name}"))


def _huge_slab(width_ft: float, depth_ft: float, cell: str) -> Case:
    """A slab so large that the kriging grid would run away at the given cell size."""
    def breaks(site: Path) -> None:
        ring = [[0, 0], [width_ft, 0], [width_ft, depth_ft], [0, depth_ft], [0, 0]]
        (site / "plans" / "slab.geojson").write_text(json.dumps(
            {"type": "FeatureCollection", "features": [{"type": "Feature", "properties": {},
             "geometry": {"type": "Polygon", "coordinates": [ring]}}]}))
        edit(site / "site.toml", 'cell_size = "1 ft"', f'cell_size = "{cell}"')
    return Case(f"slab-{width_ft:g}x{depth_ft:g}ft-cell-{cell.replace(' ', '')}", breaks,
                ("site.toml", "[run].cell_size", "level 'D1'"))


CASES = [
    *(_run_key(f"n_neighbors = {n}") for n in (129, 1000, 10**6, 2**62)),
    *(_run_key(f'cell_size = "{c}"') for c in ("1 mm", "0.001 ft", "1e-9 m", "0.5 cm")),
    *(_run_key(f"contour_interval_mv = {v}") for v in (1e-9, 0.01, 1.0)),
    _huge_slab(1e5, 1e4, "1 ft"),
    _huge_slab(3000, 3000, "5 cm"),
    _huge_slab(1e6, 40, "1 ft"),
]


@pytest.mark.parametrize("case", [c.param() for c in CASES])
def test_runaway_work_is_refused(site: Path, case: Case) -> None:
    """Each runaway setting: non-zero exit naming its key, nothing written (issue 11)."""
    case.breaks(site)
    holds(site, case, GROUP)


@FUZZ
@given(n=st.integers(min_value=129, max_value=2**63 - 1))
def test_any_neighbourhood_above_the_limit_is_refused(fuzz_template: Path, tmp_path_factory:
                                                     pytest.TempPathFactory, n: int) -> None:
    """n_neighbors drawn above 128 (hypothesis, fixed seed): refused by its key (issue 11)."""
    site = fresh_site(fuzz_template, tmp_path_factory.mktemp("nn"))
    case = _run_key(f"n_neighbors = {n}")
    case.breaks(site)
    holds(site, case, GROUP, run=False)

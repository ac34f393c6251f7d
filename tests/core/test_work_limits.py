"""Runaway work is refused before any of it, naming the key and the least value that fits.

A fuzz pass found `n_neighbors` in the millions running for more than ten minutes, and a tiny
`cell_size` or `contour_interval_mv` accepted while the run ground on (issue 11).
"""

from __future__ import annotations

import re
import time
from pathlib import Path

import pytest

from tests.core.conftest import edit
from tests.core.test_site_file import _fails


def _run_table(site_dir: Path, line: str) -> None:
    """Set one ``[run]`` key of the synthetic site (which sets cell_size itself)."""
    toml = site_dir / "site.toml"
    if line.startswith("cell_size"):
        edit(toml, 'cell_size = "1 ft"', line)
    else:
        edit(toml, "[run]\n", f"[run]\n{line}\n")


def test_huge_neighbourhood_refused_by_its_key(site_dir: Path) -> None:
    """n_neighbors above 128 is refused when the site file is read (it used to run for hours)."""
    _run_table(site_dir, "n_neighbors = 1000000")
    t0 = time.perf_counter()
    _fails(site_dir, "[run].n_neighbors", "128")
    assert time.perf_counter() - t0 < 120  # refused, not ground through (a bound, not a timing)


def test_sub_centimetre_cell_refused_by_its_key(site_dir: Path) -> None:
    """A cell below 1 cm is refused when the site file is read."""
    _run_table(site_dir, 'cell_size = "1 mm"')
    _fails(site_dir, "[run].cell_size", "0.01")


def test_grid_too_large_refused_before_kriging(site_dir: Path,
                                               monkeypatch: pytest.MonkeyPatch) -> None:
    """A level whose grid would exceed the cell limit is refused by `check`, with the least cell.

    The synthetic deck is 60 x 40 ft (18.288 x 12.192 m); at a 5 cm cell it needs about
    367 x 245 = 89,915 cells, so a limit of 10,000 cells must refuse it and ask for at least
    sqrt(18.288 x 12.192 / 10,000) = 0.150 m (hand computation).
    """
    import geo_corrosion.stages.check_site as cs

    monkeypatch.setattr(cs, "MAX_GRID_CELLS", 10_000)
    _run_table(site_dir, 'cell_size = "5 cm"')
    msg = _fails(site_dir, "[run].cell_size", "at most 10,000", "level 'D1'")
    assert "at least 0.15 m" in msg


def test_contour_interval_drawing_too_many_levels_refused(site_dir: Path) -> None:
    """An interval that would draw more than 200 contour levels over the readings is refused."""
    _run_table(site_dir, "contour_interval_mv = 0.01")
    _fails(site_dir, "contour_interval_mv", "contour levels", "at most 200")


@pytest.mark.parametrize("line, key", [
    ("spacing = 1e308", "grid.spacing"),
    ("spacing = inf", "grid.spacing"),
    ("rotation_deg = 1e9", "grid.rotation_deg"),
])
def test_absurd_grid_values_refused_by_their_key(site_dir: Path, line: str, key: str) -> None:
    """Values no survey grid has are refused with the dotted key (issue 11: 1e308 was accepted)."""
    toml = site_dir / "site.toml"
    text = toml.read_text()
    name = line.split(" = ")[0]
    if re.search(rf"^{name} = .*$", text, flags=re.M):
        toml.write_text(re.sub(rf"^{name} = .*$", line, text, count=1, flags=re.M))
    else:
        edit(toml, "[levels.grid]\n", f"[levels.grid]\n{line}\n")
    _fails(site_dir, key)

"""Class maps follow the deck's aspect ratio (issue 14; common practice, no source)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from PIL import Image

from geo_corrosion.condition import plots
from geo_corrosion.condition.classes import POTENTIAL_C876


@pytest.mark.parametrize(("nx", "ny", "lo", "hi"), [
    (120, 24, 0.3, 0.6),  # a 5:1 bridge deck: a long figure, not a strip in a 4:3 frame
    (90, 90, 0.9, 1.3),  # a square slab
])
def test_class_map_follows_the_deck_aspect(tmp_path: Path, nx: int, ny: int, lo: float,
                                          hi: float) -> None:
    y, x = np.mgrid[0:ny, 0:nx]
    g = -200 - 150 * np.sin(x / 15) * np.cos(y / 8)
    out = plots.plot_class_map(g, (0, nx, 0, ny), tmp_path / "m.png", class_set=POTENTIAL_C876,
                               contour_interval=50, plan_unit="m")
    w, h = Image.open(out).size
    assert lo < h / w < hi, (w, h)

"""The web map's palette: no two colours that can be shown together are alike.

Fast (no browser): the browser test ``test_no_two_shown_layers_share_a_colour`` checks
the legend the page shows; this one checks every colour the palette can hand out.
"""

from __future__ import annotations

import numpy as np
import pytest

from geo_corrosion.exporters.webmap.palette import (
    NO_ACTION_COLOR,
    OVERLAY,
    POINT_CLASS_COLORS,
    READING_COLORS,
    SEVERITY_RAMP,
    ZONE_COLORS,
    class_colors,
    reading_color,
)
from tests.webmap.colour import DELTA_E_MIN, clashes, lab


def test_lab_matches_published_values() -> None:
    # sRGB white is L* = 100, a* = b* = 0 by definition (CIE 15:2004, D65 white point);
    # sRGB red (255, 0, 0) is L*a*b* = (53.24, 80.09, 67.20), the commonly published value
    got = lab(["#FFFFFF", "#FF0000", "#000000"])
    assert got[0] == pytest.approx([100, 0, 0], abs=0.05)
    assert got[1] == pytest.approx([53.24, 80.09, 67.20], abs=0.1)
    assert got[2] == pytest.approx([0, 0, 0], abs=1e-9)


@pytest.mark.parametrize("n", [0, 1, 2, 3, 4, 5])
def test_overlays_stand_apart_from_every_map_colour(n: int) -> None:
    # issue 14 item 1: "no two layers shown together share a colour"; CIE76 > 10.
    # One map is shown at a time (n = 0: a surface on the ramp; else n classes)
    colours = {f"overlay {k}": [c] for k, c in OVERLAY.items()}
    colours |= {f"readings {k}": [c] for k, c in READING_COLORS.items()}
    colours["readings, a plugin kind"] = [reading_color("chloride", 0)]
    colours |= {f"zone {i}": [c] for i, c in enumerate(ZONE_COLORS)}
    colours["zone no action"] = [NO_ACTION_COLOR]
    colours["points of a sparse kind"] = list(POINT_CLASS_COLORS)
    colours["map"] = list(SEVERITY_RAMP) if n == 0 else class_colors(n)
    assert clashes(colours) == []


@pytest.mark.parametrize("n", [2, 3, 4, 5])
def test_class_colours_differ_and_darken_with_severity(n: int) -> None:
    cc = class_colors(n)
    lb = lab(cc)
    # least to most severe: lightness falls, so the order reads in grey scale (derived)
    assert np.all(np.diff(lb[:, 0]) < 0)
    assert all(np.linalg.norm(lb[i] - lb[j]) > DELTA_E_MIN
               for i in range(n) for j in range(i + 1, n))

"""The web map's colours: one severity ramp for every map, distinct hues for the rest.

Surfaces, probability maps and every class layer (ASTM C876, resistivity, rate,
combined) share :data:`SEVERITY_RAMP` (light = least severe, dark = most severe; its
lightness falls monotonically so it reads in grey scale).  Only one of those fills is
shown at a time.  Everything drawn over them (contours, sounding, joints, zones,
repairs, readings) takes a hue that no ramp colour and no other overlay is near: every
pair differs by more than 10 in CIE76 delta E (CIELAB, D65; checked by
``tests/webmap/test_palette.py``).  Zones and sounding are outlines and hatching, never
a translucent fill, so a class colour is never mixed into another.  Hues after Okabe &
Ito (2008) and Tol (2021, "muted").
"""

from __future__ import annotations

import numpy as np

__all__ = ["CLASS_RANK", "NO_ACTION_COLOR", "OVERLAY", "READING_COLORS", "SEVERITY_RAMP",
           "POINT_CLASS_COLORS", "ZONE_COLORS", "class_colors", "class_ramp", "hex_color",
           "point_class_colors", "ramp_colors", "reading_color"]

#: Our sequential palette, light (least severe) to dark (most severe).
SEVERITY_RAMP: tuple[str, ...] = ("#F7F3E3", "#F0E442", "#E69F00", "#D55E00", "#5B2149")
#: Lines and hatching drawn over the maps.
OVERLAY: dict[str, str] = {
    "slab": "#303030", "exclusion": "#999999", "contour": "#000000",
    "delamination": "#0072B2", "spall": "#CC79A7", "joint_break": "#332288",
    "joint": "#555555", "repair": "#009E73", "flag": "#E7298A",
}
#: Reading dots, one hue per kind (plugin kinds take the spare ones in turn).
READING_COLORS: dict[str, str] = {"potential": "#56B4E9", "resistivity": "#117733",
                                  "corrosion_rate": "#882255", "cover": "#44AA99"}
_READING_SPARE = ("#88CCEE",)
#: Zone outlines, in the order the zones appear; "no action" is a pale outline.
ZONE_COLORS: tuple[str, ...] = ("#AA4499", "#6699CC", "#1D4E3F", "#8C510A")
NO_ACTION_COLOR = "#BBBBBB"
#: Classed readings of a kind too sparse for a surface (shown as points over whatever map is
#: shown): greens, light (least severe) to dark, apart from the ramp and every overlay.
POINT_CLASS_COLORS: tuple[str, ...] = ("#77EE66", "#55BB44", "#448877", "#116644", "#004400")
#: Severity rank of the class colours of ``condition/classes.py`` (Okabe & Ito hues,
#: benign blue to severe purple): the map recolours classes onto the ramp by this rank.
CLASS_RANK: dict[str, int] = {"#0072B2": 0, "#56B4E9": 1, "#009E73": 2, "#F0E442": 3,
                              "#E69F00": 4, "#D55E00": 5, "#CC79A7": 6, "#5B2149": 7}


def ramp_colors(t: np.ndarray) -> np.ndarray:
    """Map values in [0, 1] onto :data:`SEVERITY_RAMP`; return RGB in [0, 1], shape (..., 3)."""
    stops = np.array([[int(h[i:i + 2], 16) / 255 for i in (1, 3, 5)] for h in SEVERITY_RAMP])
    x = np.linspace(0, 1, len(stops))
    t = np.clip(np.asarray(t, float), 0, 1)
    return np.stack([np.interp(t, x, stops[:, k]) for k in range(3)], axis=-1)


def hex_color(rgb: np.ndarray) -> str:
    """Return ``#RRGGBB`` of an RGB triple in [0, 1]."""
    return "#" + "".join(f"{int(round(float(v) * 255)):02X}" for v in rgb)


def class_colors(n: int) -> list[str]:
    """Return ``n`` class colours from the ramp, least severe first (from a quarter up)."""
    if n <= 1:
        return [SEVERITY_RAMP[3]] * n
    return [hex_color(c) for c in ramp_colors(np.linspace(0.25, 1.0, n))]


def reading_color(kind: str, i: int) -> str:
    """Return the dot colour of a kind's readings (``i``: its index among plugin kinds)."""
    return READING_COLORS.get(kind, _READING_SPARE[i % len(_READING_SPARE)])


def point_class_colors(n: int) -> list[str]:
    """Return ``n`` colours for classed points, least severe first (spread over the set)."""
    if n <= 0:
        return []
    idx = np.round(np.linspace(0, len(POINT_CLASS_COLORS) - 1, n)).astype(int)
    if n == 1:
        idx = np.array([2])
    return [POINT_CLASS_COLORS[min(i, len(POINT_CLASS_COLORS) - 1)] for i in idx]


def class_ramp(class_set: str, present: list[str],
               codes: list[int] | None = None) -> dict[str, str]:
    """Map a class layer's colours onto the ramp, least severe to most severe.

    The class set's own colours (``condition/classes.py``) run from blue (benign) to
    vermilion and purple (severe); their rank gives the order.  A class set not in
    ``CLASS_SETS`` (a combined-condition table, a user's set) keeps the order of its class
    ``codes`` where given, else of :data:`CLASS_RANK`.

    Parameters
    ----------
    class_set : str
        Name of the class set (``""`` for none).
    present : list of str
        The colours of the layer's classes (``#RRGGBB``, one per feature).
    codes : list of int, optional
        The class code of each feature (same order as ``present``).

    Returns
    -------
    dict of str to str
        Class-set colour (upper case) -> map colour.
    """
    from geo_corrosion.condition.classes import CLASS_SETS

    cs = CLASS_SETS.get(class_set)
    present = [str(c).upper() for c in present]
    colours = [c.upper() for c in cs.colors] if cs is not None else present
    if codes is not None and cs is None:
        order = dict(zip(present, codes, strict=True))
        colours = sorted(dict.fromkeys(present), key=lambda c: order[c])
    uniq = list(dict.fromkeys(colours))
    ranked = sorted(uniq, key=lambda c: (CLASS_RANK.get(c, 99), uniq.index(c)))
    return dict(zip(ranked, class_colors(len(ranked)), strict=True))

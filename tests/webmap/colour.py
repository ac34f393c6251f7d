"""CIELAB and CIE76 colour difference, computed here (not by the code under test).

sRGB to linear RGB and XYZ (D65) per IEC 61966-2-1:1999; XYZ to L*a*b* per CIE 15:2004
§8.2.1; CIE76 delta E is the Euclidean distance in L*a*b* (CIE 15:2004 §8.3).
"""

from __future__ import annotations

import numpy as np

#: delta E (CIE76) at or below which two colours count as the same on a map (about what a
#: viewer names a different colour at a glance; common practice, no source)
DELTA_E_MIN = 10.0


def lab(hexes: list[str]) -> np.ndarray:
    """Return the CIELAB (D65) coordinates of ``#RRGGBB`` colours, shape (n, 3)."""
    rgb = np.array([[int(h[i:i + 2], 16) / 255 for i in (1, 3, 5)] for h in hexes])
    lin = np.where(rgb <= 0.04045, rgb / 12.92, ((rgb + 0.055) / 1.055) ** 2.4)
    m = np.array([[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722],
                  [0.0193, 0.1192, 0.9505]])
    xyz = lin @ m.T / np.array([0.95047, 1.0, 1.08883])
    f = np.where(xyz > (6 / 29) ** 3, np.cbrt(xyz), xyz / (3 * (6 / 29) ** 2) + 4 / 29)
    return np.column_stack([116 * f[:, 1] - 16, 500 * (f[:, 0] - f[:, 1]),
                            200 * (f[:, 1] - f[:, 2])])


def clashes(colours: dict[str, list[str]]) -> list[tuple[str, str, str, str, float]]:
    """Return the pairs of distinct entries whose CIE76 delta E is at most :data:`DELTA_E_MIN`.

    ``colours`` maps a layer to its legend colours; an entry is a (layer, colour) pair, so
    a colour repeated within one layer counts once and across two layers is a clash.
    """
    entries = [(k, c.upper()) for k, cs in colours.items() for c in dict.fromkeys(cs)]
    lb = lab([c for _k, c in entries])
    out = []
    for i in range(len(entries)):
        for j in range(i + 1, len(entries)):
            d = float(np.linalg.norm(lb[i] - lb[j]))
            if d <= DELTA_E_MIN:
                out.append((*entries[i], *entries[j], round(d, 1)))
    return out

"""What ``geo-corrosion check`` says each kind of a level will be mapped as, and why.

Before any kriging: the count part of the density rule (:mod:`geo_corrosion.surfaces.density`)
decides now; the spacing part needs the fitted range, so for a kind with enough readings the
line says the range it needs (the run fits it and records the outcome in ``run.json``).
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import pandas as pd

from geo_corrosion.config import RunParams
from geo_corrosion.model.site import Level, Survey
from geo_corrosion.stages.map_surfaces import mappable_readings
from geo_corrosion.surfaces.density import count_reason, density_rule, nearest_neighbour_spacing

__all__ = ["planned_representation"]


def planned_representation(level: Level, surveys: Sequence[Survey], flags: pd.DataFrame,
                           params: RunParams) -> list[tuple[str, str, str]]:
    """Return ``(kind, "surface" | "points" | "nothing", why)`` per kind surveyed on a level."""
    out: list[tuple[str, str, str]] = []
    kinds = {s.kind.name: s.kind for s in surveys}
    for name in kinds:
        readings = mappable_readings([s for s in surveys if s.kind.name == name], flags)
        n = len(readings)
        if not n:
            out.append((name, "nothing", "no usable reading"))
            continue
        rule = density_rule(params.kinds, name)
        few = count_reason(n, rule)
        if few is not None:
            out.append((name, "points", few))
            continue
        s = nearest_neighbour_spacing(readings["x_local"], readings["y_local"])
        need = s / rule.max_spacing_to_range
        spacing = (f"median spacing {s:.3g} {level.unit}" if math.isfinite(s)
                   else "one location")
        out.append((name, "surface", f"{n} usable readings (at least {rule.min_readings}), "
                    f"{spacing}: a surface if the fitted practical range is at least "
                    f"{need:.3g} {level.unit}, else points (the run decides and records why)"))
    return out

"""Plots exporter: histogram, cumulative frequency, class map and scatter per level (PNG).

Made with matplotlib through :mod:`geo_corrosion.condition.plots`; units on
every axis and the caution footer on every figure.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any, ClassVar

import numpy as np

from geo_corrosion.exporters.base import Exporter
from geo_corrosion.measurements import Role
from geo_corrosion.model.surface import with_role

if TYPE_CHECKING:
    from geo_corrosion.model.results import LevelResult, RunResult
    from geo_corrosion.model.surface import KindPoints

__all__ = ["PlotsExporter"]


class PlotsExporter(Exporter):
    """Write ``plots/<level>_*.png``."""

    name: ClassVar[str] = "plots"
    description: ClassVar[str] = "statistics plots as PNG for the report"

    def export(self, result: RunResult, out_dir: Path) -> list[Path]:
        """Write every level's plots."""
        from geo_corrosion.condition import plots

        pdir = out_dir / "plots"
        pdir.mkdir(exist_ok=True)
        paths: list[Path] = []
        for lid, lr in result.levels.items():
            lname = lr.level.config.name
            for name, s in lr.surfaces.items():
                vals = lr.readings[name][s.kind.value_column].to_numpy(float)
                cs = s.kind.class_set_object()
                paths.append(plots.plot_histogram(
                    vals, pdir / f"{lid}_{name}_histogram.png", class_set=cs,
                    quantity=s.kind.label.split(" (")[0], unit=s.kind.canonical_unit,
                    log_x=s.kind.krige_transform == "log", title=f"{lname}: {s.kind.label}"))
                if cs is not None:
                    g = s.grid
                    paths.append(plots.plot_class_map(
                        s.mean, (g.x0, g.x0 + g.nx * g.cell,
                                 g.y0, g.y0 + g.ny * g.cell),
                        pdir / f"{lid}_{name}_classes.png", class_set=cs,
                        quantity=s.kind.label.split(" (")[0], plan_unit=lr.level.unit,
                        contour_interval=s.interval if s.kind.class_map_contours else None,
                        polygons=[f.geometry for f in lr.level.overlays.get("delamination", ())],
                        joints=[(j.geometry, bool(getattr(j, "breaks_continuity", False)))
                                for j in lr.level.joints],
                        contour_groups=s.regions,
                        origin="upper",
                        title=f"{lname}: {s.kind.label.split(' (')[0].lower()} classes"))
            for name, p in lr.points.items():  # too sparse for a surface: classed points
                paths += _points_plots(plots, pdir, lid, lname, lr, name, p)
            # the potential plots, named after the role: the kind playing it, whatever its name
            pot = with_role(lr.surfaces, Role.POTENTIAL)
            if pot is not None:
                mix = lr.condition.mixture if lr.condition is not None else None
                pv = lr.readings[pot.kind.name][pot.kind.value_column].to_numpy(float)
                paths.append(plots.plot_cumulative_frequency(
                    pv, pdir / f"{lid}_{Role.POTENTIAL}_cumulative.png", mixture=mix,
                    title=f"{lname}: cumulative frequency of potentials"))
                res = with_role(lr.surfaces, Role.RESISTIVITY)
                if res is not None:
                    s = pot
                    r = lr.readings[res.kind.name]
                    pot_at = s.values_at(r["x_local"].to_numpy(float),
                                         r["y_local"].to_numpy(float))
                    ok = np.isfinite(pot_at)
                    if ok.sum() >= 3:
                        paths.append(plots.plot_potential_vs_resistivity(
                            pot_at[ok], r[res.kind.value_column].to_numpy(float)[ok],
                            pdir / f"{lid}_{Role.POTENTIAL}_vs_{Role.RESISTIVITY}.png",
                            title=f"{lname}: kriged potential at resistivity readings"))
        return paths



def _points_plots(plots: Any, pdir: Path, lid: str, lname: str, lr: LevelResult, name: str,
                  p: KindPoints) -> list[Path]:
    """Histogram and class plan of a kind shown as points (same file names as a surface's)."""
    from geo_corrosion.condition.classes import get_class_set

    k = p.kind
    pts = p.points
    cs = get_class_set(str(pts["class_set"].iloc[0])) if "class_set" in pts else None
    quantity = k.label.split(" (")[0]
    vals = pts["value"].to_numpy(float)
    out = [plots.plot_histogram(
        vals, pdir / f"{lid}_{name}_histogram.png", class_set=cs, quantity=quantity,
        unit=k.canonical_unit, log_x=k.krige_transform == "log" and bool((vals > 0).all()),
        title=f"{lname}: {k.label}, {len(vals)} readings (no surface)")]
    out.append(plots.plot_class_points(
        pts["x_local"].to_numpy(float), pts["y_local"].to_numpy(float), vals,
        pdir / f"{lid}_{name}_classes.png", class_set=cs, reason=p.reason, quantity=quantity,
        unit=k.canonical_unit, plan_unit=lr.level.unit, cells=list(pts["cell"]),
        outline=lr.level.deck, title=f"{lname}: {quantity.lower()} classes"))
    return out

"""Plots exporter: histogram, cumulative frequency, class map and scatter per level (PNG).

Made with matplotlib through :mod:`geo_corrosion.condition.plots`; units on
every axis and the caution footer on every figure.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, ClassVar

import numpy as np

from geo_corrosion.exporters.base import Exporter

if TYPE_CHECKING:
    from geo_corrosion.model.results import RunResult

__all__ = ["PlotsExporter"]


class PlotsExporter(Exporter):
    """Write ``plots/<level>_*.png``."""

    name: ClassVar[str] = "plots"
    description: ClassVar[str] = "statistics plots as PNG for the report"

    def export(self, result: RunResult, out_dir: Path) -> list[Path]:
        """Write every level's plots."""
        from geo_corrosion.condition import plots
        from geo_corrosion.condition.classes import get_class_set

        pdir = out_dir / "plots"
        pdir.mkdir(exist_ok=True)
        paths: list[Path] = []
        for lid, lr in result.levels.items():
            lname = lr.level.config.name
            for name, s in lr.surfaces.items():
                vals = lr.readings[name][s.kind.value_column].to_numpy(float)
                cs = get_class_set(s.kind.class_set) if s.kind.class_set else None
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
                        contour_interval=s.interval if name == "potential" else None,
                        polygons=[f.geometry for f in lr.level.overlays.get("delamination", ())],
                        origin="upper", title=f"{lname}: {s.kind.label.split(' (')[0].lower()} classes"))
            if "potential" in lr.surfaces:
                mix = lr.condition.mixture if lr.condition is not None else None
                pv = lr.readings["potential"]["potential_mv"].to_numpy(float)
                paths.append(plots.plot_cumulative_frequency(
                    pv, pdir / f"{lid}_potential_cumulative.png", mixture=mix,
                    title=f"{lname}: cumulative frequency of potentials"))
                if "resistivity" in lr.readings:
                    s = lr.surfaces["potential"]
                    r = lr.readings["resistivity"]
                    col = np.clip(((r["x_local"] - s.grid.x0) / s.grid.cell).astype(int), 0,
                                  s.grid.nx - 1)
                    row = np.clip(((s.grid.y0 + s.grid.ny * s.grid.cell - r["y_local"])
                                   / s.grid.cell).astype(int), 0, s.grid.ny - 1)
                    pot = s.mean[row.to_numpy(), col.to_numpy()]
                    ok = np.isfinite(pot)
                    if ok.sum() >= 3:
                        paths.append(plots.plot_potential_vs_resistivity(
                            pot[ok], r["resistivity_kohm_cm"].to_numpy(float)[ok],
                            pdir / f"{lid}_potential_vs_resistivity.png",
                            title=f"{lname}: kriged potential at resistivity readings"))
        return paths

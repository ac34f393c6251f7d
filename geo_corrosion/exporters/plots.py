"""Plots exporter: histogram, cumulative frequency, class map and scatter per level (PNG).

Made with matplotlib through :mod:`geo_corrosion.condition.plots`; units on
every axis and the caution footer on every figure.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, ClassVar

import numpy as np

from geo_corrosion.exporters.base import Exporter
from geo_corrosion.measurements import Role
from geo_corrosion.model.surface import with_role
from geo_corrosion.vocabulary import label, unit_label

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
        from geo_corrosion.units import report_units

        system = report_units(result.site.config.units)
        pdir = out_dir / "plots"
        pdir.mkdir(exist_ok=True)
        paths: list[Path] = []
        for lid, lr in result.levels.items():
            lname = lr.level.config.name
            for name, s in lr.surfaces.items():
                vals = lr.readings[name][s.kind.value_column].to_numpy(float)
                cs = s.kind.class_set_object()
                # owner words: the vocabulary's label of the kind, its unit as owners read it
                quantity = label(s.kind.name, s.kind.label.split(" (")[0])
                unit = unit_label(s.kind.canonical_unit)
                if s.kind.canonical_unit == "mm" and cs is None and system.system == "us":
                    # a small length (cover) in inches on a US report, as the tables give it
                    vals, unit = system.small_from_mm(vals), system.small
                paths.append(plots.plot_histogram(
                    vals, pdir / f"{lid}_{name}_histogram.png", class_set=cs,
                    quantity=quantity, unit=unit,
                    log_x=s.kind.krige_transform == "log", title=f"{lname}: {quantity} ({unit})"))
                if cs is not None:
                    g = s.grid
                    paths.append(plots.plot_class_map(
                        s.mean, (g.x0, g.x0 + g.nx * g.cell,
                                 g.y0, g.y0 + g.ny * g.cell),
                        pdir / f"{lid}_{name}_classes.png", class_set=cs,
                        quantity=quantity, plan_unit=lr.level.unit,
                        contour_interval=s.interval if s.kind.class_map_contours else None,
                        polygons=[f.geometry for f in lr.level.overlays.get("delamination", ())],
                        lines=[f.geometry for f in lr.level.joints],
                        origin="upper",
                        title=f"{lname}: {quantity.lower()} classes"))
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


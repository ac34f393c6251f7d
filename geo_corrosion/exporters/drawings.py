"""The drawings exporter: one drawing sheet per level, as DXF and as vector PDF."""

from __future__ import annotations

import datetime as dt
from pathlib import Path
from typing import TYPE_CHECKING, ClassVar

from geo_corrosion.cautions import CAUTIONS
from geo_corrosion.exporters.base import Exporter

if TYPE_CHECKING:
    from shapely.geometry.base import BaseGeometry

    from geo_corrosion.crs import LocalGrid
    from geo_corrosion.model.results import RunResult

__all__ = ["DrawingsExporter"]


class DrawingsExporter(Exporter):
    """Write one drawing sheet per level: ``<level>_repairs.dxf`` and ``<level>_sheet.pdf``."""

    name: ClassVar[str] = "drawings"
    description: ClassVar[str] = "repair drawing sheets as DXF and PDF, one per level"

    def export(self, result: RunResult, out_dir: Path) -> list[Path]:
        """Write the DXF sheets and their PDF renderings."""
        from geo_corrosion.exporters.dxf import write_level_dxf
        from geo_corrosion.exporters.sheet_dxf import SheetInfo
        from geo_corrosion.repair.tender import SOUNDING_PREFIX, sounding_labels
        from geo_corrosion.units import LENGTH_TO_M, report_units

        cfg = result.site.config
        params = cfg.drawings
        ddir = out_dir / "drawings"
        ddir.mkdir(exist_ok=True)
        paths = []
        today = dt.date.today().isoformat()
        # the title block says what the report's does: [project] first ([drawings].engineer
        # kept for sites written before [project] existed)
        proj = cfg.project
        engineer = params.engineer
        if proj.engineer and engineer == "(engineer not given)":
            engineer = proj.engineer + (f", {proj.firm}" if proj.firm else "")
        issued = str(proj.date) if proj.date else today
        rev = proj.revision or "0"
        project = cfg.name + (f" (project {proj.number})" if proj.number else "")
        n = len(result.levels)
        for i, (lid, lr) in enumerate(result.levels.items(), 1):
            lv = lr.level
            grid = lv.grid
            site = params.coords == "site"
            info = SheetInfo(
                project=project, owner=cfg.owner, engineer=engineer,
                title=lv.config.name, number=f"R-{i}", of=n,
                date=issued, sheet="" if params.sheet == "auto" else params.sheet,
                north_deg=90.0 if site else 90.0 - grid.rotation_deg,
                revisions=((rev, issued, "Issued for review: survey findings"),),
                where=f"{cfg.path}: [drawings].sheet")

            def to_site(g: BaseGeometry, grid: LocalGrid = grid) -> BaseGeometry:
                return grid.geom_to_site(g)

            dxf = write_level_dxf(
                ddir / f"{lid}_repairs.dxf", slab=lv.slab, exclusions=lv.exclusion_polygons(),
                joints=[j.geometry for j in lv.joints
                        if not getattr(j, "breaks_continuity", False)],
                breaking_joints=lv.breaking_joints, repairs=lr.repairs, zones=lr.zones,
                delaminations=[f.geometry for f in lv.overlays.get("delamination", ())],
                spalls=[f.geometry for f in lv.overlays.get("spall", ())],
                sounding_numbers=[
                    *sounding_labels([f.geometry for f in lv.overlays.get("delamination", ())],
                                     SOUNDING_PREFIX["delamination"]),
                    *sounding_labels([f.geometry for f in lv.overlays.get("spall", ())],
                                     SOUNDING_PREFIX["spall"])],
                column_grid=tuple(getattr(lv, "column_grid", None) or ()),
                unit=lv.unit, title=info.title, cautions=list(CAUTIONS),
                units=report_units(cfg.units), sheet=info,
                to_model=to_site if site else None,
                model_unit=grid.crs_unit if site else None,
                zone_tolerance=cfg.run.cell_size_m / LENGTH_TO_M[lv.unit],
                pdf_path=ddir / f"{lid}_sheet.pdf")  # rendered from the DXF in memory
            paths += [dxf, ddir / f"{lid}_sheet.pdf"]
        return paths

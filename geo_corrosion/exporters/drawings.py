"""The drawings exporter: one DXF drawing per level with the repair layout."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, ClassVar

from geo_corrosion.cautions import CAUTIONS
from geo_corrosion.exporters.base import Exporter

if TYPE_CHECKING:
    from geo_corrosion.model.results import RunResult

__all__ = ["DrawingsExporter"]


class DrawingsExporter(Exporter):
    """Write one DXF drawing per level with the repair layout."""

    name: ClassVar[str] = "drawings"
    description: ClassVar[str] = "repair layout drawings as DXF, one per level"

    def export(self, result: RunResult, out_dir: Path) -> list[Path]:
        """Write the DXF files."""
        from geo_corrosion.exporters.dxf import write_level_dxf

        ddir = out_dir / "drawings"
        ddir.mkdir(exist_ok=True)
        paths = []
        for lid, lr in result.levels.items():
            lv = lr.level
            paths.append(write_level_dxf(
                ddir / f"{lid}_repairs.dxf", slab=lv.slab, exclusions=lv.exclusion_polygons(),
                joints=[j.geometry for j in lv.joints
                        if not getattr(j, "breaks_continuity", False)],
                breaking_joints=lv.breaking_joints, repairs=lr.repairs, zones=lr.zones,
                delaminations=[f.geometry for k in ("delamination", "spall")
                               for f in lv.overlays.get(k, ())],
                unit=lv.unit, title=f"{result.site.config.name} - {lv.config.name}",
                cautions=list(CAUTIONS)))
        return paths

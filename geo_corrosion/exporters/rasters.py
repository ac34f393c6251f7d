"""GeoTIFF exporter: each kriged surface and its kriging variance, in the site CRS.

The grid is aligned with the level's survey grid, so in the site CRS the raster
carries a rotated affine transform (GDAL reads it as such).
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, ClassVar

import affine

from geo_corrosion.cautions import SHORT_CAUTION
from geo_corrosion.exporters.base import Exporter
from geo_corrosion.exporters.geotiff import write_geotiff

if TYPE_CHECKING:
    from geo_corrosion.model.results import RunResult
    from geo_corrosion.model.site import Level
    from geo_corrosion.model.surface import KindSurface

__all__ = ["GeoTiffExporter", "surface_transform"]


def surface_transform(level: Level, s: KindSurface) -> affine.Affine:
    """Affine transform of a surface's grid in the site CRS."""
    g = s.grid
    # LocalGrid.affine_gdal returns rasterio's (a, b, c, d, e, f) order
    return affine.Affine(*level.grid.affine_gdal(g.x0, g.y0 + g.ny * g.cell, g.cell))


class GeoTiffExporter(Exporter):
    """Write ``rasters/<level>_<kind>.tif`` and ``..._variance.tif``."""

    name: ClassVar[str] = "geotiff"
    description: ClassVar[str] = "kriged surfaces and kriging variance as GeoTIFF"

    def export(self, result: RunResult, out_dir: Path) -> list[Path]:
        """Write every surface."""
        rdir = out_dir / "rasters"
        rdir.mkdir(exist_ok=True)
        paths = []
        for lid, lr in result.levels.items():
            for name, s in lr.surfaces.items():
                tr = surface_transform(lr.level, s)
                tags = {"level": lid, "kind": name, "caution": SHORT_CAUTION,
                        "variogram": s.fit.model.name,
                        "transform": s.kind.krige_transform or "none"}
                col = s.kind.value_column
                paths.append(write_geotiff(rdir / f"{lid}_{name}.tif", {col: s.mean},
                                           transform=tr, crs=result.site.crs,
                                           units={col: s.kind.canonical_unit}, tags=tags))
                # lognormal kinds are back-transformed: mean and variance in value units
                vunit = f"({s.kind.canonical_unit})^2"
                paths.append(write_geotiff(rdir / f"{lid}_{name}_variance.tif",
                                           {"kriging_variance": s.variance}, transform=tr,
                                           crs=result.site.crs,
                                           units={"kriging_variance": vunit}, tags=tags))
                cond = lr.condition
                if cond is not None and name in cond.probability:
                    paths.append(write_geotiff(
                        rdir / f"{lid}_{name}_probability.tif",
                        {"probability": cond.probability[name]}, transform=tr,
                        crs=result.site.crs, units={"probability": "1"},
                        tags={**tags, "meaning": cond.stats[f"{name}_area_beyond_threshold"][
                            "meaning"], "assumption": "Gaussian errors in the kriged variable"}))
        return paths

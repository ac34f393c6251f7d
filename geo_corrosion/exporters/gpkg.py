"""GeoPackage exporter: every vector layer of the run in one file, site CRS."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, ClassVar

import pyogrio

from geo_corrosion.errors import ExportError
from geo_corrosion.exporters.base import Exporter
from geo_corrosion.exporters.layers import site_layers
from geo_corrosion.exporters.qgis_styles import write_layer_styles

if TYPE_CHECKING:
    from geo_corrosion.model.results import RunResult

__all__ = ["GeoPackageExporter", "GPKG_NAME"]

GPKG_NAME = "survey.gpkg"


class GeoPackageExporter(Exporter):
    """Write ``survey.gpkg`` with one layer per level and content (site CRS)."""

    name: ClassVar[str] = "geopackage"
    description: ClassVar[str] = "all vector layers in one GeoPackage (survey.gpkg)"

    def export(self, result: RunResult, out_dir: Path) -> list[Path]:
        """Write the GeoPackage."""
        path = out_dir / GPKG_NAME
        for name, gdf in site_layers(result).items():
            if gdf.empty:
                continue
            gdf = gdf.copy()
            for c in gdf.columns:
                if c != "geometry" and gdf[c].dtype == object:
                    gdf[c] = gdf[c].astype(str)
            try:
                pyogrio.write_dataframe(gdf, path, layer=name, driver="GPKG",
                                        append=path.exists())
            except Exception as err:
                raise ExportError(f"cannot write layer {name!r} to {path}: {err}") from err
        if path.exists():  # the survey grid and a default style of every layer (#15)
            write_layer_styles(path, result)
        return [path]

"""GeoPackage exporter: every vector layer of the run in one file, site CRS."""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import TYPE_CHECKING, ClassVar

import pyogrio

from geo_corrosion._io import atomic_write
from geo_corrosion.errors import ExportError
from geo_corrosion.exporters.base import Exporter
from geo_corrosion.exporters.layers import site_layers
from geo_corrosion.exporters.qgis_styles import write_layer_styles

if TYPE_CHECKING:
    import geopandas as gpd

    from geo_corrosion.model.results import RunResult

__all__ = ["GeoPackageExporter", "GPKG_NAME"]

GPKG_NAME = "survey.gpkg"

#: SQLite settings while the GeoPackage is written into its temporary file: no fsync after
#: each layer's transaction (the file is moved into place only once complete, so a crash
#: leaves no half-written survey.gpkg behind, and sync buys nothing).
_WRITE_OPTIONS = {"OGR_SQLITE_SYNCHRONOUS": "OFF"}


@contextmanager
def _gdal_options(options: dict[str, str]) -> Iterator[None]:
    """Set GDAL configuration options for a block and restore the previous values."""
    before = {k: pyogrio.get_gdal_config_option(k) for k in options}
    pyogrio.set_gdal_config_options(options)
    try:
        yield
    finally:
        pyogrio.set_gdal_config_options(before)


def _write_layers(layers: dict[str, gpd.GeoDataFrame], path: Path, shown: Path) -> None:
    """Write the layers into the new GeoPackage ``path``, one transaction each."""
    path.unlink(missing_ok=True)  # the temporary file's placeholder: GDAL creates the file
    first = True
    for name, gdf in layers.items():
        gdf = gdf.copy()
        for c in gdf.columns:
            if c != "geometry" and gdf[c].dtype == object:
                gdf[c] = gdf[c].astype(str)
        try:
            pyogrio.write_dataframe(gdf, path, layer=name, driver="GPKG", append=not first,
                                    use_arrow=True)
        except Exception as err:
            raise ExportError(f"cannot write layer {name!r} to {shown}: {err}") from err
        first = False


class GeoPackageExporter(Exporter):
    """Write ``survey.gpkg`` with one layer per level and content (site CRS)."""

    name: ClassVar[str] = "geopackage"
    description: ClassVar[str] = "all vector layers in one GeoPackage (survey.gpkg)"

    def export(self, result: RunResult, out_dir: Path) -> list[Path]:
        """Write the GeoPackage (into a temporary file, moved into place when complete)."""
        path = out_dir / GPKG_NAME
        layers = {k: v for k, v in site_layers(result).items() if not v.empty}
        if not layers:
            return [path]

        def write(tmp: Path) -> None:
            _write_layers(layers, tmp, path)
            # the survey grid and a default style of every layer (#15), in the same file
            # before it is moved into place
            write_layer_styles(tmp, result)

        with _gdal_options(_WRITE_OPTIONS):
            atomic_write(path, write, what="GeoPackage")
        return [path]

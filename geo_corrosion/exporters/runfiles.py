"""The files of a run's output folder, read back by the exporters that rebuild from it.

The web map and the report are built from an output folder (``run.json``,
``survey.gpkg``, ``rasters/``, ``plots/``) so that ``geo-corrosion map`` and
``geo-corrosion report`` can rebuild them; this module reads those files with messages
that name the file and say what to do.
"""

from __future__ import annotations

import logging
from pathlib import Path
from typing import TYPE_CHECKING, Any

from geo_corrosion.errors import ExportError

if TYPE_CHECKING:
    import geopandas as gpd


__all__ = ["RunLayers", "GPKG_NAME"]

log = logging.getLogger(__name__)
GPKG_NAME = "survey.gpkg"


class RunLayers:
    """Layers of a run's ``survey.gpkg``, read on demand and cached.

    A missing or empty layer is ``None``; a missing file gives no layers (logged).

    Raises
    ------
    ExportError
        The file or a layer cannot be read (named in the message).
    """

    def __init__(self, run_dir: str | Path) -> None:
        import pyogrio

        self.path = Path(run_dir) / GPKG_NAME
        self.names: set[str] = set()
        self._cache: dict[str, Any] = {}
        if self.path.is_file():
            try:
                self.names = {str(n) for n, _t in pyogrio.list_layers(self.path)}
            except Exception as err:  # noqa: BLE001 - GDAL's errors vary by driver
                raise ExportError(f"{self.path}: cannot be read as a GeoPackage ({err}); "
                                  "re-run `geo-corrosion run` to rewrite the output folder"
                                  ) from err
        else:
            log.warning("%s is missing: no vector layers are drawn", self.path)

    def get(self, name: str) -> gpd.GeoDataFrame | None:
        """Return the layer ``name`` (a copy), or ``None`` when it is missing or empty."""
        import geopandas as gpd

        if name not in self.names:
            return None
        if name not in self._cache:
            try:
                g = gpd.read_file(self.path, layer=name)
            except Exception as err:  # noqa: BLE001 - GDAL's errors vary by driver
                raise ExportError(f"{self.path}: layer {name!r} cannot be read ({err}); "
                                  "re-run `geo-corrosion run`") from err
            self._cache[name] = g if len(g) else None
        g = self._cache[name]
        return None if g is None else g.copy()

"""Read a run's output folder back with reference libraries, for the stage invariants.

Only the files are read (``run.json``, ``survey.gpkg``, ``rasters/*.tif``,
``quantities.csv``), never the package's internals, so the invariants hold across a
restructure of the code.  Geometry in ``survey.gpkg`` is in the site CRS; the area
and length attributes (``area_m2``, ``perimeter_m``, ...) are plan measures in metres.
The two differ by the fitted scale of the grid tie (``run.json`` levels -> georeference
-> scale, "the scale beyond the unit conversion"), which is used here to turn a shapely
measure in the CRS into a plan measure.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from functools import cached_property
from pathlib import Path
from typing import Any

import geopandas as gpd
import pandas as pd
import pyogrio
import shapely
from shapely.geometry.base import BaseGeometry

#: Exact length units: 1 ft = 0.3048 m (international foot, 1959; NIST SP 811 App. B);
#: US survey foot 1200/3937 m (NIST SP 811 App. B).
M_PER_UNIT = {"m": 1.0, "ft": 0.3048, "us-ft": 1200.0 / 3937.0}

#: Reporting units: factor from metres to the reporting length unit (same sources).
REPORT_PER_M = {"metric": 1.0, "us": 1.0 / 0.3048}


@dataclass
class RunOutputs:
    """The output folder of one run."""

    root: Path
    name: str = ""
    _layers: dict[str, gpd.GeoDataFrame] = field(default_factory=dict, repr=False)

    @cached_property
    def manifest(self) -> dict[str, Any]:
        """The parsed ``run.json``."""
        return json.loads((self.root / "run.json").read_text(encoding="utf-8"))

    @property
    def gpkg(self) -> Path:
        """The GeoPackage of the run."""
        return self.root / "survey.gpkg"

    @cached_property
    def layer_names(self) -> set[str]:
        """Names of the layers in the GeoPackage."""
        return {str(n) for n, _ in pyogrio.list_layers(self.gpkg)}

    def layer(self, name: str) -> gpd.GeoDataFrame:
        """Read a GeoPackage layer (an empty frame when the run wrote no such layer)."""
        if name not in self._layers:
            if name in self.layer_names:
                self._layers[name] = pyogrio.read_dataframe(self.gpkg, layer=name)
            else:
                self._layers[name] = gpd.GeoDataFrame(geometry=gpd.GeoSeries([]))
        return self._layers[name]

    @property
    def levels(self) -> list[str]:
        """Level ids of the run."""
        return list(self.manifest["levels"])

    @property
    def report_per_m(self) -> float:
        """Reporting length units per metre."""
        return REPORT_PER_M[self.manifest["site"]["report_units"]]

    def plan_m_per_crs_unit(self, lid: str) -> float:
        """Plan metres per site-CRS unit on level ``lid`` (unit factor over fitted scale)."""
        crs_unit = self.manifest["site"]["crs_unit"]
        return M_PER_UNIT[crs_unit] / float(self.manifest["levels"][lid]["georeference"]["scale"])

    def plan_area_m2(self, lid: str, geom: BaseGeometry | float) -> float:
        """Plan area (m2) of a geometry in the site CRS, or of a CRS area."""
        a = geom if isinstance(geom, float) else float(geom.area)
        return a * self.plan_m_per_crs_unit(lid) ** 2

    def slab(self, lid: str) -> BaseGeometry:
        """Return the slab outline of a level (site CRS)."""
        df = self.layer(f"{lid}_slab")
        assert len(df), f"{self.name}: no slab layer for level {lid}"
        return shapely.union_all(df.geometry.to_numpy())

    def exclusions(self, lid: str) -> list[BaseGeometry]:
        """Exclusion polygons of a level (site CRS); empty when there are none."""
        return [g for g in self.layer(f"{lid}_exclusions").geometry if g is not None]

    def deck(self, lid: str) -> BaseGeometry:
        """Slab minus exclusions (site CRS)."""
        ex = self.exclusions(lid)
        s = self.slab(lid)
        return s.difference(shapely.union_all(ex)) if ex else s

    def joints(self, lid: str) -> list[BaseGeometry]:
        """Joint lines of a level (site CRS)."""
        return [g for g in self.layer(f"{lid}_joints").geometry if g is not None]

    @cached_property
    def quantities(self) -> pd.DataFrame:
        """``quantities.csv``, quantities as floats."""
        return pd.read_csv(self.root / "quantities.csv", dtype={"level_id": str})

"""The site-file schema: frozen dataclasses for what a site file says.

This module declares the types only; the TOML reader that fills them, with its
messages naming the file and the dotted key, is :mod:`geo_corrosion.stages.read_site`.
Lengths carry their unit in the field name (``_m``, ``_mm``).  See ``docs/site-file.md``
for the full reference and ``geo-corrosion init`` for a commented template.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pyproj

from geo_corrosion.errors import SiteFileError

__all__ = [
    "LayerRef",
    "OverlayRef",
    "ControlPoint",
    "GridConfig",
    "LevelConfig",
    "SurveyConfig",
    "RunParams",
    "SiteConfig",
    "COORDS",
    "OVERLAY_KINDS",
]

COORDS = ("local", "site")
OVERLAY_KINDS = ("delamination", "spall", "patch", "crack")



@dataclass(frozen=True)
class LayerRef:
    """A layer of a vector file (GeoJSON, GeoPackage, Shapefile or DXF).

    Attributes
    ----------
    path : Path
        Absolute path of the file.
    layer : str or None
        Layer name (DXF layer, GeoPackage layer); None for single-layer files.
    coords : {"local", "site"}
        Whether coordinates are in the level's local survey grid or the site CRS.
    unit : str or None
        Drawing unit of a DXF whose header does not say ($INSUNITS = 0).
    where : str
        Where in the site file it was declared, for messages.
    """

    path: Path
    layer: str | None
    coords: str
    unit: str | None
    where: str


@dataclass(frozen=True)
class OverlayRef:
    """An overlay layer: delaminations, spalls, patches or cracks."""

    kind: str
    ref: LayerRef


@dataclass(frozen=True)
class ControlPoint:
    """A point known in both the local grid and the site CRS."""

    id: str
    local: tuple[float, float]
    site: tuple[float, float]


@dataclass(frozen=True)
class GridConfig:
    """The local survey grid of a level and how it is tied to the site CRS.

    Attributes
    ----------
    unit : str
        Unit of local grid coordinates (``"m"``, ``"ft"``, ``"us-ft"``).
    spacing : float
        Nominal reading spacing, in grid units.
    origin : tuple of float or None
        Site CRS coordinates of the local (0, 0).
    rotation_deg : float
        Counter-clockwise angle from the site CRS's x axis (east) to the grid's x axis.
    control_points : tuple of ControlPoint
        Two or more points fitted by least squares (used when given).
    """

    unit: str
    spacing: float
    origin: tuple[float, float] | None
    rotation_deg: float
    control_points: tuple[ControlPoint, ...]


@dataclass(frozen=True)
class LevelConfig:
    """One level (deck, slab) of the structure."""

    id: str
    name: str
    slab: LayerRef
    exclusions: tuple[LayerRef, ...]
    joints: LayerRef | None
    overlays: tuple[OverlayRef, ...]
    grid: GridConfig
    specified_cover_mm: float | None
    cover_tolerance_mm: float | None


@dataclass(frozen=True)
class SurveyConfig:
    """One survey file and what it holds."""

    id: str
    level: str
    kind: str
    path: Path
    unit: str
    coords: str
    electrode: str | None
    temperature_c: float | None
    temperature_f: float | None
    temperature_coefficient_mv_per_c: float | None
    date: str | None
    separator: str
    decimal: str
    layer: str | None
    columns: Mapping[str, str]
    where: str
    #: kind-specific options of ``[surveys.options]``, as parsed and validated by the kind's
    #: :meth:`~geo_corrosion.measurements.base.MeasurementKind.parse_options`: keys carry their
    #: unit (``probe_spacing_mm``); empty when the table is absent.
    options: Mapping[str, Any] = field(default_factory=dict)


@dataclass(frozen=True)
class RunParams:
    """Parameters of a run, from ``[run]`` and ``[webmap]``.

    Lengths are in metres, or in mm as named.  :func:`dataclasses.asdict` of it is written to
    ``run.json`` as ``parameters``, where the exporters read it.
    """

    cell_size_m: float = 0.3048
    max_distance_m: float = 1.8288
    contour_interval_mv: float = 50.0
    repair_margin_m: float = 0.150
    merge_gap_m: float = 0.300
    min_repair_size_m: float = 0.300
    contingency: float = 0.20
    n_neighbors: int = 16
    variogram_model: str = "auto"
    resistivity_reference_c: float = 20.0
    activation_energy_kj_mol: float = 25.0
    cse_reference_c: float = 22.2
    correct_only_outside_band: bool = False
    #: scale each fitted variogram so that the leave-one-out MSSE is 1 (mapping stage)
    calibrate_variance: bool = True
    bar_diameter_mm: float = 16.0
    max_aggregate_mm: float = 9.5
    slab_thickness_mm: float | None = None
    sawcut_depth_mm: float = 19.05
    axis_angle_deg: float = 0.0
    anode_spacing_mm: float | None = None
    min_zone_area_m2: float = 0.5
    zone_smoothing_m: float = 0.15
    #: kind -> fixed variogram parameters (``range_m`` in metres), from [run.variogram.<kind>]
    variogram: dict[str, dict[str, Any]] = field(default_factory=dict)
    #: [webmap].basemap_url: street-tile URL template (https, with {z}, {x}, {y}); None = none
    basemap_url: str | None = None
    #: [webmap].basemap_attribution: the tiles' attribution, shown on the map
    basemap_attribution: str | None = None


@dataclass(frozen=True)
class SiteConfig:
    """A parsed, validated site file."""

    path: Path
    root: Path
    name: str
    owner: str
    crs: pyproj.CRS
    crs_unit: str
    units: str
    notes: str
    levels: tuple[LevelConfig, ...]
    surveys: tuple[SurveyConfig, ...]
    run: RunParams = field(default_factory=RunParams)
    #: ordered zoning rules: (registry name, keyword parameters); empty = the built-in order
    zoning: tuple[tuple[str, dict[str, Any]], ...] = ()
    #: the combined-condition rule table as given in [condition.combined] (None = default)
    combined_rules: dict[str, Any] | None = None

    def level(self, level_id: str) -> LevelConfig:
        """Return the level with this id."""
        for lv in self.levels:
            if lv.id == level_id:
                return lv
        raise SiteFileError(f"{self.path}: no level with id {level_id!r}")


# --------------------------------------------------------------------------- validation helpers

"""The data model: sites, levels and surveys, explicit about CRS and units.

Plan geometry of a level is held in its **local survey grid** (orthogonal axes
along the deck, unit ``level.grid.unit``); :class:`~geo_corrosion.crs.LocalGrid`
maps it to the projected site CRS.  Readings are GeoDataFrames in the site CRS
that also carry their local coordinates (``x_local``, ``y_local``).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import geopandas as gpd
import pyproj
import shapely
from shapely.geometry import Polygon
from shapely.geometry.base import BaseGeometry

from geo_corrosion.config import LevelConfig, SiteConfig, SurveyConfig
from geo_corrosion.crs import LocalGrid
from geo_corrosion.io.plans import Feature
from geo_corrosion.measurements import MeasurementKind
from geo_corrosion.pricing import PriceList
from geo_corrosion.surfaces.regions import split_at_lines

__all__ = ["Joint", "Level", "Survey", "Site"]


@dataclass(frozen=True)
class Joint(Feature):
    """A joint line read from a joint layer, with the kind of joint it is.

    ``breaks_continuity``: the reinforcing mats on its two sides are not electrically
    continuous (expansion and isolation joints by default; the site file may say otherwise).
    """

    joint_type: str = "construction"
    breaks_continuity: bool = False


@dataclass(frozen=True)
class Level:
    """A level with its geometry in local grid coordinates.

    Attributes
    ----------
    config : LevelConfig
    grid : LocalGrid
        Tie of the local grid to the site CRS.
    slab : Polygon
        The slab outline: one polygon (a slab of separate parts is refused when read).
        Local grid units.
    exclusions : tuple of Feature
        Columns, cores, ramps and openings.
    joints : tuple of Joint
        Joint lines with their type (a plain Feature counts as a construction joint).
    overlays : dict of str to tuple of Feature
        Delaminations, spalls, patches and cracks by kind.
    """

    config: LevelConfig
    grid: LocalGrid
    slab: Polygon
    exclusions: tuple[Feature, ...] = ()
    joints: tuple[Feature, ...] = ()
    overlays: dict[str, tuple[Feature, ...]] = field(default_factory=dict)
    #: column-grid lines with their labels (``Feature.label``: ``C``, ``3``), if given
    column_grid: tuple[Feature, ...] = ()

    @property
    def id(self) -> str:
        """Level id."""
        return self.config.id

    @property
    def unit(self) -> str:
        """Unit of local grid coordinates."""
        return self.grid.unit

    @property
    def deck(self) -> BaseGeometry:
        """Slab minus exclusions: the surveyed concrete (local grid)."""
        if not self.exclusions:
            return self.slab
        holes = shapely.union_all([e.geometry for e in self.exclusions])
        return shapely.difference(self.slab, holes)

    @property
    def breaking_joints(self) -> list[BaseGeometry]:
        """The joint lines that break the electrical continuity of the mat."""
        return [j.geometry for j in self.joints if getattr(j, "breaks_continuity", False)]

    def continuity_regions(self) -> list[BaseGeometry]:
        """Split the deck at its breaking joints into parts whose mat is continuous (local grid).

        One region, the deck itself, when no breaking joint cuts it through.  An exclusion
        (opening) may end a cut.  Faces below a millionth of the slab's area are slivers.
        """
        deck = self.deck
        return split_at_lines(deck, self.breaking_joints, self.slab.area * 1e-6)

    def exclusion_polygons(self) -> list[BaseGeometry]:
        """Exclusion geometries."""
        return [e.geometry for e in self.exclusions]


@dataclass(frozen=True)
class Survey:
    """One survey file's readings, converted and corrected.

    Attributes
    ----------
    config : SurveyConfig
    kind : MeasurementKind
    frame : GeoDataFrame
        Reading frame (contract in DEVELOPERS.md), site CRS.
    corrections : tuple of dict
        Records of the corrections applied (for run.json).
    """

    config: SurveyConfig
    kind: MeasurementKind
    frame: gpd.GeoDataFrame
    corrections: tuple[dict[str, Any], ...] = ()

    @property
    def id(self) -> str:
        """Survey id."""
        return self.config.id


@dataclass(frozen=True)
class Site:
    """An ingested site: its configuration, levels and surveys."""

    config: SiteConfig
    levels: dict[str, Level]
    surveys: tuple[Survey, ...]
    #: the price list of ``[quantities].price_list``, read and checked (None: no estimate)
    prices: PriceList | None = None

    @property
    def crs(self) -> pyproj.CRS:
        """Site CRS."""
        return self.config.crs

    def surveys_of(self, level_id: str, kind: str | None = None) -> list[Survey]:
        """Surveys of a level, optionally of one kind."""
        return [s for s in self.surveys
                if s.config.level == level_id and (kind is None or s.kind.name == kind)]

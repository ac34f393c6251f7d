"""Results of a run, held in memory and handed to the exporters."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import geopandas as gpd
import pandas as pd

from geo_corrosion.model.site import Level, Site
from geo_corrosion.model.surface import KindPoints, KindSurface, LevelCondition

__all__ = ["LevelResult", "RunResult"]


@dataclass
class LevelResult:
    """Everything computed for one level.

    Attributes
    ----------
    level : Level
    surfaces : dict of str to KindSurface
        By measurement kind name.
    repairs : GeoDataFrame or None
        Repair areas in local grid coordinates (``unit`` of the level grid).
    zones : GeoDataFrame or None
        Zones that partition the slab minus exclusions (local grid coordinates).
    stats : dict
        The level's record for ``run.json``: per kind (counts, statistics, surface, class
        areas), ``condition`` and ``planning``.
    skipped : dict of str to str
        Kinds with readings but no surface, with the reason.
    condition : LevelCondition or None
        Probability maps, combined classes and condition statistics (None without surfaces).
    readings : dict of str to DataFrame
        The readings each surface was kriged from, by kind.
    points : dict of str to KindPoints
        Kinds too sparse for a surface, shown as their readings, by kind.
    """

    level: Level
    surfaces: dict[str, KindSurface] = field(default_factory=dict)
    repairs: gpd.GeoDataFrame | None = None
    zones: gpd.GeoDataFrame | None = None
    stats: dict[str, Any] = field(default_factory=dict)
    skipped: dict[str, str] = field(default_factory=dict)
    condition: LevelCondition | None = None
    readings: dict[str, pd.DataFrame] = field(default_factory=dict)
    points: dict[str, KindPoints] = field(default_factory=dict)
    #: treatment pay areas (whole bays or the level) in local grid coordinates, None when
    #: the treatments are priced as zoned (``[run].pay_area = "zone"``)
    pay_areas: gpd.GeoDataFrame | None = None


@dataclass
class RunResult:
    """A whole run: the ingested site, QA flags, per-level results and the schedule."""

    site: Site
    flags: pd.DataFrame
    levels: dict[str, LevelResult]
    schedule: pd.DataFrame
    #: run.json as written, JSON types (typed: ``model.manifest.Manifest.from_json`` of it)
    manifest: dict[str, Any] = field(default_factory=dict)
    files: list[str] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)
    #: per document, the SHA-256 of each repair layer it was built from (run.json built_from)
    built_from: dict[str, dict[str, str]] = field(default_factory=dict)
    #: repairs edited by hand and re-priced (run.json edits)
    edits: list[dict[str, Any]] = field(default_factory=list)
    #: wall time of each stage and exporter, s (run.json timings; ``_timing.timed``)
    timings: dict[str, dict[str, float]] = field(default_factory=dict)

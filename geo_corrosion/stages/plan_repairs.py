"""The zoning and repair-layout stage of the pipeline.

For each level: the overlay layers (delaminations, spalls), the condition
classes and the low-cover areas read off the kriged surfaces become
:class:`~geo_corrosion.zoning.base.ZoningLayers`; the repair layout
(:func:`geo_corrosion.repair.layout_repairs`) grows the sounded areas into
saw-cut outlines whose depth class comes from the cover measured at them; the
zoning rules then partition the slab.  All geometry is in local grid units.
"""

from __future__ import annotations

import warnings
from collections.abc import Iterable
from dataclasses import dataclass
from typing import Any

import geopandas as gpd
import numpy as np
import pandas as pd
import rasterio.features
import shapely
from numpy.typing import NDArray
from shapely.geometry import shape
from shapely.geometry.base import BaseGeometry

from geo_corrosion.config import LayoutParams, SiteConfig
from geo_corrosion.errors import GeoCorrosionWarning, GeometryWarning
from geo_corrosion.measurements import Role
from geo_corrosion.model.results import LevelResult
from geo_corrosion.model.site import Level
from geo_corrosion.model.surface import KindSurface, with_role
from geo_corrosion.pricing import PriceList, price_schedule, unpriced_items
from geo_corrosion.quantities import DEFAULT_BID_ITEMS, BidItem, bid_schedule
from geo_corrosion.repair import layout_repairs
from geo_corrosion.units import ReportUnits
from geo_corrosion.zoning import CLASSES_ROLE, ZONING_RULES, ZoningLayers, default_rules, zone

__all__ = ["PlanningParams", "low_cover_mask", "low_cover_threshold_mm", "plan_level",
           "planning_params", "raster_region", "schedule_quantities", "site_bid_items"]

#: Default low-cover threshold when the level gives no specified cover, mm
#: (25 mm / 1 in, common practice).
DEFAULT_LOW_COVER_MM = 25.0


@dataclass(frozen=True)
class PlanningParams:
    """Parameters of zoning and layout (lengths in mm or m as named).

    No defaults here: they are the site file's (:mod:`geo_corrosion.config`), taken by
    :func:`planning_params`.
    """

    layout: LayoutParams
    min_zone_area_m2: float
    smoothing_m: float
    rules: tuple[Any, ...] | None = None  # ZoningRule instances; None = the built-in order


def low_cover_threshold_mm(level: Level) -> tuple[float, str]:
    """Low-cover threshold of a level and where it comes from.

    ``specified - tolerance`` when the site file gives the level's specified
    cover (common practice), else 25 mm.
    """
    spec, tol = level.config.specified_cover_mm, level.config.cover_tolerance_mm
    if spec is not None:
        t = tol if tol is not None else 0.0
        return spec - t, f"specified cover {spec:.1f} mm minus tolerance {t:.1f} mm"
    return DEFAULT_LOW_COVER_MM, "default 25 mm (common practice)"


def low_cover_mask(level: Level, cover: KindSurface | None) -> NDArray[np.bool_] | None:
    """Cells of the cover surface below the level's low-cover threshold (None: no cover surface).

    Cells without a kriged cover are ``False``.
    """
    if cover is None:
        return None
    thr, _src = low_cover_threshold_mm(level)
    return np.asarray(np.nan_to_num(cover.mean, nan=np.inf) < thr)


def raster_region(mask: NDArray[np.bool_], s: KindSurface, clip: BaseGeometry) -> BaseGeometry:
    """Polygon (local grid) of the True cells of a mask on a surface's grid, clipped."""
    if not mask.any():
        return shapely.Polygon()
    polys = [shape(g) for g, v in rasterio.features.shapes(
        mask.astype(np.uint8), mask=mask, transform=s.grid.affine()) if v == 1]
    return shapely.intersection(shapely.union_all(polys), clip)


def _cover_at(geoms: list[BaseGeometry], cover: KindSurface | None) -> list[float]:
    """Least kriged cover (mm) under each shape; NaN where no cover surface reaches."""
    if cover is None:
        return [float("nan")] * len(geoms)
    out = []
    for g in geoms:
        m = rasterio.features.geometry_mask([g], out_shape=cover.grid.shape,
                                            transform=cover.grid.affine(), invert=True,
                                            all_touched=True)
        v = cover.mean[m]
        v = v[np.isfinite(v)]
        out.append(float(v.min()) if v.size else float("nan"))
    return out


def plan_level(level: Level, surfaces: dict[str, KindSurface], params: PlanningParams,
               *, low_cover: NDArray[np.bool_] | None = None
               ) -> tuple[gpd.GeoDataFrame | None, gpd.GeoDataFrame, dict[str, Any]]:
    """Repairs, zones and their notes for one level.

    ``low_cover`` is :func:`low_cover_mask` of the level (computed here when not given).

    Returns
    -------
    repairs : GeoDataFrame or None
        Repair outlines (None when nothing was sounded).
    zones : GeoDataFrame
        Zones that partition the slab minus exclusions.
    notes : dict
        Thresholds used and their sources (for run.json).
    """
    deck = level.deck
    cover = with_role(surfaces, Role.COVER)
    for kind in ("delamination", "spall"):
        for f in level.overlays.get(kind, ()):
            if not f.geometry.intersects(level.slab):
                warnings.warn(f"{f.where}: {kind} lies outside the slab of level {level.id}; "
                              "it is not repaired (check the layer's coordinates)",
                              GeometryWarning, stacklevel=2)
    rows = [{"source_id": f.where.split(": ", 1)[-1], "kind": k, "geometry": f.geometry,
             "delam_depth_mm": np.nan if f.depth_mm is None else f.depth_mm}
            for k in ("delamination", "spall") for f in level.overlays.get(k, ())]
    repairs = None
    if rows:
        src = gpd.GeoDataFrame(rows, geometry="geometry")
        src["cover_mm"] = _cover_at(list(src.geometry), cover)
        repairs = layout_repairs(src, slab=level.slab, exclusions=level.exclusion_polygons(),
                                 joints=[j.geometry for j in level.joints], unit=level.unit,
                                 params=params.layout, level_id=level.id)
    thr, thr_src = low_cover_threshold_mm(level)
    if low_cover is None:
        low_cover = low_cover_mask(level, cover)
    low = (raster_region(low_cover, cover, deck)
           if cover is not None and low_cover is not None else shapely.Polygon())
    classes: dict[str, BaseGeometry] = {}
    # the zoning's condition classes are those of the kind playing CLASSES_ROLE (potential)
    cls_surface = with_role(surfaces, CLASSES_ROLE)
    if cls_surface is not None and cls_surface.classes is not None and len(cls_surface.classes):
        cs = cls_surface.kind.class_set_object()
        keys = cs.keys if cs is not None else ()
        for r in cls_surface.classes.to_dict("records"):
            classes[keys[r["class_code"]] if keys else r["class"]] = r["geometry"]

    def _u(kind: str) -> BaseGeometry:
        return shapely.union_all([f.geometry for f in level.overlays.get(kind, ())]) \
            if level.overlays.get(kind) else shapely.Polygon()

    layers = ZoningLayers(
        delaminated=_u("delamination"), spalled=_u("spall"), classes=classes, low_cover=low,
        repairs=(shapely.union_all(list(repairs.geometry)) if repairs is not None and len(repairs)
                 else shapely.Polygon()))
    slab = level.slab  # one polygon: a slab of separate parts is refused when read
    rules = list(params.rules) if params.rules else default_rules()
    zones = zone(slab, level.exclusion_polygons(), layers, rules,
                 min_zone_area_m2=params.min_zone_area_m2, smoothing_m=params.smoothing_m,
                 unit=level.unit, level_id=level.id)
    notes = {"low_cover_threshold_mm": thr, "low_cover_threshold_source": thr_src,
             "depth_class_cover": "least kriged cover under each sounded area"
             if cover is not None else f"no cover survey: LayoutParams.cover_mm = "
             f"{params.layout.cover_mm} mm assumed",
             "zoning_rules": [{"rule": r.name, "treatment": r.treatment, "bid_item": r.bid_item}
                              for r in rules]}
    return repairs, zones, notes


def planning_params(cfg: SiteConfig) -> PlanningParams:
    """Layout and zoning parameters of a site: its layout as read, and its zoning rules."""
    p = cfg.run
    rules = tuple(ZONING_RULES.get(name)(**kw) for name, kw in cfg.zoning) or None
    return PlanningParams(layout=cfg.layout, min_zone_area_m2=p.min_zone_area_m2,
                          smoothing_m=p.zone_smoothing_m, rules=rules)


def site_bid_items(cfg: SiteConfig) -> dict[str, BidItem]:
    """Return every bid item a schedule of this site can hold: built-in and its zoning rules'."""
    items: dict[str, BidItem] = dict(DEFAULT_BID_ITEMS)
    for rule in planning_params(cfg).rules or default_rules():
        code = getattr(rule, "bid_item", None)
        if code:
            items.setdefault(str(code), BidItem(str(code), str(rule.treatment or code), "area"))
    return items


def schedule_quantities(levels: Iterable[LevelResult], *, units: ReportUnits, contingency: float,
                        anode_spacing_mm: float | None,
                        prices: PriceList | None = None) -> pd.DataFrame:
    """Return the bid schedule of every level's repairs and zones (empty when neither).

    With a price list, the schedule carries ``unit_price``, ``amount`` and ``currency``
    (:func:`geo_corrosion.pricing.price_schedule`); an item the list does not price warns
    (:class:`~geo_corrosion.errors.GeoCorrosionWarning`) and is left out of the totals.
    """
    def _cat(frames: list[gpd.GeoDataFrame | None]) -> gpd.GeoDataFrame | None:
        kept = [f for f in frames if f is not None and len(f)]
        return (gpd.GeoDataFrame(pd.concat(kept, ignore_index=True), geometry="geometry")
                if kept else None)

    levels = list(levels)
    repairs = _cat([lr.repairs for lr in levels])
    zones = _cat([lr.zones for lr in levels])
    if repairs is None and zones is None:
        return pd.DataFrame()
    schedule = price_schedule(bid_schedule(repairs, zones, units=units,
                                           contingency=contingency,
                                           anode_spacing_mm=anode_spacing_mm), prices)
    missing = unpriced_items(schedule)
    if prices is not None and missing:
        warnings.warn(f"{prices.path.name}: no unit price for {', '.join(missing)}; their "
                      "amounts are left blank and out of the estimate's totals; add a row for "
                      "each to the price list", GeoCorrosionWarning, stacklevel=2)
    return schedule

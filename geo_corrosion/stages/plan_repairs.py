"""The zoning and repair-layout stage of the pipeline.

For each level: the overlay layers (delaminations, spalls), the condition
classes and the low-cover areas read off the kriged surfaces become
:class:`~geo_corrosion.zoning.base.ZoningLayers`; the repair layout
(:func:`geo_corrosion.repair.layout_repairs`) grows the sounded areas into
saw-cut outlines whose depth class comes from the cover measured at them; the
zoning rules then partition the slab.  All geometry is in local grid units.
"""

from __future__ import annotations

import dataclasses
import warnings
from collections.abc import Callable, Iterable
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
from geo_corrosion.quantities import (
    DEFAULT_BID_ITEMS,
    DEPTH_CLASS_ITEMS,
    SCHEDULE_COLUMNS,
    BidItem,
    bid_schedule,
)
from geo_corrosion.repair import layout_repairs
from geo_corrosion.repair.tender import (
    SOUNDING_PREFIX,
    bays,
    pay_areas,
    sounding_labels,
    tender_columns,
)
from geo_corrosion.units import LENGTH_TO_M, ReportUnits, report_units
from geo_corrosion.zoning import CLASSES_ROLE, ZONING_RULES, ZoningLayers, default_rules, zone

__all__ = ["PAY_AREA_COLUMNS", "PlanningParams", "low_cover_mask", "low_cover_threshold_mm",
           "pay_area_frame", "plan_level", "planning_params", "raster_region",
           "schedule_quantities", "site_bid_items", "sounding_numbers"]

#: The overlay kind of delaminations sounded on the soffit: overhead repairs (``REP-OVH``).
SOFFIT = "soffit_delamination"

#: Default low-cover threshold when the level gives no specified cover, mm
#: (25 mm / 1 in, common practice).
DEFAULT_LOW_COVER_MM = 25.0


@dataclass(frozen=True)
class PlanningParams:
    """Parameters of zoning and layout (lengths in mm or m as named).

    No defaults for the layout and zoning: they are the site file's
    (:mod:`geo_corrosion.config`), taken by :func:`planning_params`; the tender's fields
    default to what a library caller without a site file expects (no anodes, no bar
    allowance, treatments priced as zoned).
    """

    layout: LayoutParams
    min_zone_area_m2: float
    smoothing_m: float
    rules: tuple[Any, ...] | None = None  # ZoningRule instances; None = the built-in order
    # the tender's per-repair data and pay areas (issue 13); the site file's [run] values
    units: str = "metric"
    anode_spacing_mm: float | None = None
    bar_replacement_share: float = 0.0
    bar_spacing_mm: float = 304.8
    pay_area: str = "zone"
    pay_area_share: float = 0.1


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
               *, low_cover: NDArray[np.bool_] | None = None,
               edit: Callable[[gpd.GeoDataFrame], gpd.GeoDataFrame] | None = None
               ) -> tuple[gpd.GeoDataFrame | None, gpd.GeoDataFrame, dict[str, Any]]:
    """Repairs, zones and their notes for one level.

    ``low_cover`` is :func:`low_cover_mask` of the level (computed here when not given).
    ``edit`` (re-pricing, :mod:`geo_corrosion.stages.reprice`) receives the laid-out repairs
    and returns them with outlines edited by hand; the zoning then works on those.

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
    for kind in ("delamination", "spall", SOFFIT):
        for f in level.overlays.get(kind, ()):
            if not f.geometry.intersects(level.slab):
                warnings.warn(f"{f.where}: {kind} lies outside the slab of level {level.id}; "
                              "it is not repaired (check the layer's coordinates)",
                              GeometryWarning, stacklevel=2)
    labels = sounding_numbers(level)
    rows = [{"source_id": f.where.split(": ", 1)[-1], "kind": k, "geometry": f.geometry,
             "delam_depth_mm": np.nan if f.depth_mm is None else f.depth_mm, "label": lab}
            for k in ("delamination", "spall")
            for f, lab in zip(level.overlays.get(k, ()), labels.get(k, []), strict=True)]
    repairs = None
    layout = params.layout
    if level.config.slab_thickness_mm is not None:  # the level's own thickness wins
        layout = dataclasses.replace(layout, slab_thickness_mm=level.config.slab_thickness_mm)
    joints = [j.geometry for j in level.joints]
    if rows:
        src = gpd.GeoDataFrame(rows, geometry="geometry")
        src["cover_mm"] = _cover_at(list(src.geometry), cover)
        repairs = _laid_out(src, level, layout, params, joints)
        repairs["bid_item"] = [DEPTH_CLASS_ITEMS[str(c)] for c in repairs["depth_class"]]
        repairs["face"] = "top"
    top = repairs  # the repairs of the top surface: the zoning's repair zone
    soffit = [{"source_id": f.where.split(": ", 1)[-1], "kind": "delamination",
               "geometry": f.geometry, "label": lab,
               "delam_depth_mm": np.nan if f.depth_mm is None else f.depth_mm}
              for f, lab in zip(level.overlays.get(SOFFIT, ()), labels.get(SOFFIT, []),
                                strict=True)]
    if soffit:  # laid out on their own: the soffit is another face (no merge with the top)
        oh = _laid_out(gpd.GeoDataFrame(soffit, geometry="geometry"), level, layout, params,
                       joints)
        oh["repair_id"] = [r.replace(f"{level.id}-R", f"{level.id}-OH", 1)
                           for r in oh["repair_id"]]
        oh["bid_item"] = "REP-OVH"
        oh["face"] = "soffit"
        repairs = oh if repairs is None or not len(repairs) else gpd.GeoDataFrame(
            pd.concat([repairs, oh], ignore_index=True), geometry="geometry")
    if edit is not None and repairs is not None and len(repairs):
        repairs = edit(repairs)
        top = repairs[repairs["face"] == "top"]
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
        repairs=(shapely.union_all(list(top.geometry)) if top is not None and len(top)
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


def _laid_out(src: gpd.GeoDataFrame, level: Level, layout: LayoutParams,
              params: PlanningParams, joints: list[BaseGeometry]) -> gpd.GeoDataFrame:
    """Lay out the repairs of one face and add the tender's columns."""
    rep = layout_repairs(src, slab=level.slab, exclusions=level.exclusion_polygons(),
                         joints=joints, unit=level.unit, params=layout, level_id=level.id)
    if not len(rep):
        return rep
    return tender_columns(rep, joints=joints, unit=level.unit, units=params.units,
                          anode_spacing_mm=params.anode_spacing_mm,
                          bar_share=params.bar_replacement_share,
                          bar_spacing_mm=params.bar_spacing_mm,
                          column_grid=[(f.geometry, f.label) for f in level.column_grid],
                          stations=None if level.config.station_start is None else (
                              level.config.station_start, level.config.station_centerline_y))


def planning_params(cfg: SiteConfig) -> PlanningParams:
    """Layout and zoning parameters of a site: its layout as read, and its zoning rules."""
    p = cfg.run
    rules = tuple(ZONING_RULES.get(name)(**kw) for name, kw in cfg.zoning) or None
    return PlanningParams(layout=cfg.layout, min_zone_area_m2=p.min_zone_area_m2,
                          smoothing_m=p.zone_smoothing_m, rules=rules, units=cfg.units,
                          anode_spacing_mm=p.anode_spacing_mm,
                          bar_replacement_share=p.bar_replacement_share,
                          bar_spacing_mm=p.bar_spacing_mm, pay_area=p.pay_area,
                          pay_area_share=p.pay_area_share)


def sounding_numbers(level: Level) -> dict[str, list[str]]:
    """Return the numbers of a level's sounded areas by kind (D1, D2, ...; S1, ...).

    In the order of :func:`geo_corrosion.repair.tender.sounding_labels`; one per feature,
    in the order of ``level.overlays[kind]``.
    """
    return {k: sounding_labels([f.geometry for f in feats], SOUNDING_PREFIX[k])
            for k, feats in level.overlays.items() if k in SOUNDING_PREFIX}


#: Columns of a pay-area frame (:func:`pay_area_frame`).
PAY_AREA_COLUMNS = ("level_id", "bay", "bid_item", "treatment", "unit_kind", "share_covered",
                    "area_m2", "geometry")


def pay_area_frame(level: Level, zones: gpd.GeoDataFrame | None, params: PlanningParams
                   ) -> gpd.GeoDataFrame | None:
    """Return the pay areas of a level's priced treatment zones (None: priced as zoned).

    ``pay_area = "bay"``: the bays (the slab split at its joints, as the repair layout's
    panels, and at its column-grid lines) that a zone covers more than ``pay_area_share``
    of, each whole (its deck part); ``"level"``: the whole deck for each item with any
    zone; ``"zone"``: None, the zones themselves are priced.
    """
    if params.pay_area == "zone" or zones is None:
        return None
    f2 = LENGTH_TO_M[level.unit] ** 2
    deck = level.deck
    priced = zones[zones["bid_item"].notna() & (zones["bid_item"].astype(str) != "")]
    x0, y0, x1, y1 = level.slab.bounds
    tol = max(1e-9, 1e-9 * max(x1 - x0, y1 - y0, abs(x0), abs(y0), abs(x1), abs(y1)))
    cuts = [j.geometry for j in (*level.joints, *level.column_grid)]  # joints, column lines
    bay_list = bays(level.slab, cuts, tol) if params.pay_area == "bay" else [level.slab]
    share = params.pay_area_share if params.pay_area == "bay" else 0.0
    rows = []
    for item, g in priced.groupby("bid_item", sort=False):
        zone = shapely.union_all(g.geometry.to_numpy())
        paid = pay_areas(zone, bay_list, share=share, deck=deck)
        if not paid and zone.area > 0:
            u = report_units(params.units)
            warnings.warn(
                f"level {level.id}: the {item} zone ({float(u.area_from_m2(zone.area * f2)):.0f}"
                f" {u.area}) covers no bay by more than the pay-area share of "
                f"{params.pay_area_share:g}, so {item} is not priced on this level; lower "
                "[run].pay_area_share or set pay_area = \"zone\" to price it",
                GeometryWarning, stacklevel=2)
        for i, part, covered in paid:
            rows.append({"level_id": level.id,
                         "bay": f"{level.id}-B{i + 1:02d}" if params.pay_area == "bay"
                         else f"{level.id} (whole level)",
                         "bid_item": str(item), "treatment": str(g["treatment"].iloc[0]),
                         "unit_kind": "area", "share_covered": covered,
                         "area_m2": part.area * f2, "geometry": part})
    return gpd.GeoDataFrame(rows, columns=list(PAY_AREA_COLUMNS), geometry="geometry")


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
    # treatments priced by pay area where the level has them (pay_area_frame), else as zoned
    zones = _cat([lr.zones if lr.pay_areas is None else lr.pay_areas for lr in levels])
    if repairs is None and zones is None:
        # no repair and no treatment: an empty schedule that still has its header
        return pd.DataFrame({c: pd.Series(dtype=object) for c in SCHEDULE_COLUMNS})
    schedule = price_schedule(bid_schedule(repairs, zones, units=units,
                                           contingency=contingency,
                                           anode_spacing_mm=anode_spacing_mm), prices)
    missing = unpriced_items(schedule)
    if prices is not None and missing:
        warnings.warn(f"{prices.path.name}: no unit price for {', '.join(missing)}; their "
                      "amounts are left blank and out of the estimate's totals; add a row for "
                      "each to the price list", GeoCorrosionWarning, stacklevel=2)
    return schedule

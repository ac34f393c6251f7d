"""Applying ordered zoning rules to a level: zones that partition the slab.

:func:`zone` takes the rules in order; each claims what is left of the slab, smoothed
and with small parts dropped unless the rule is ``exact``; a final no-action rule takes
the remainder, so the zones partition the slab minus its exclusions.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely
from shapely.geometry import MultiPolygon, Polygon
from shapely.geometry.base import BaseGeometry

from geo_corrosion.errors import ZoningError
from geo_corrosion.units import LENGTH_TO_M
from geo_corrosion.zoning.base import ZONE_COLUMNS, ZoningLayers, ZoningRule
from geo_corrosion.zoning.builtin import NoActionRule

__all__ = ["zone"]


def _polygonal(g: BaseGeometry | None) -> BaseGeometry:
    if g is None or g.is_empty:
        return Polygon()
    if not g.is_valid:
        g = shapely.make_valid(g)
    parts = [p for p in shapely.get_parts(g) if isinstance(p, (Polygon, MultiPolygon))]
    parts += [q for p in shapely.get_parts(g) if p.geom_type == "GeometryCollection"
              for q in shapely.get_parts(p) if isinstance(q, (Polygon, MultiPolygon))]
    return shapely.union_all(parts) if parts else Polygon()


def _drop_small(g: BaseGeometry, min_area: float) -> BaseGeometry:
    if min_area <= 0 or g.is_empty:
        return g
    keep = [p for p in shapely.get_parts(g) if p.area >= min_area]
    return shapely.union_all(keep) if keep else Polygon()


def _smooth(g: BaseGeometry, s: float) -> BaseGeometry:
    """Close then open with a square of half-side ``s`` (keeps grid-aligned shapes)."""
    x0, y0, x1, y1 = g.bounds if not g.is_empty else (0.0, 0.0, 0.0, 0.0)
    if s <= 1e-9 * max(1.0, x1 - x0, y1 - y0) or g.is_empty:
        return g
    kw: dict[str, Any] = {"join_style": "mitre", "mitre_limit": 5.0}
    g = g.buffer(s, **kw).buffer(-s, **kw)
    return g.buffer(-s, **kw).buffer(s, **kw)


def zone(slab: Polygon, exclusions: Sequence[BaseGeometry], layers: ZoningLayers,
         rules: Sequence[ZoningRule], *, min_zone_area_m2: float = 0.0,
         smoothing_m: float = 0.0, unit: str, level_id: str = "") -> gpd.GeoDataFrame:
    """Split a slab into zones by applying rules in order.

    Parameters
    ----------
    slab : Polygon
        Slab outline, local grid, plan unit.
    exclusions : sequence of Polygon
        Areas left out of every zone (any geometry is accepted: they are united).
    layers : ZoningLayers
    rules : sequence of ZoningRule
        Applied in order; each takes only what earlier rules left.
    min_zone_area_m2 : float
        Parts of a zone smaller than this (m2) are left to later rules (not for
        rules marked :attr:`ZoningRule.exact`, such as the repair rule).
    smoothing_m : float
        Half-width of the square used to close small gaps and open thin
        slivers of each zone, m (not for exact rules).
    unit : {"m", "ft"}
        Plan length unit.
    level_id : str
        Level id for the ``level_id`` column.

    Returns
    -------
    GeoDataFrame
        One row per non-empty zone, columns :data:`ZONE_COLUMNS`.  A final
        ``"no_action"`` zone holds what no rule claimed.

    Raises
    ------
    ZoningError
        For a bad slab, unit or parameter, or a rule that fails or returns no area shape.
    """
    if unit not in LENGTH_TO_M:
        raise ZoningError(f"level {level_id}: unknown plan unit {unit!r}; use 'm' or 'ft'")
    if not isinstance(slab, Polygon) or slab.is_empty or not slab.is_valid:
        raise ZoningError(f"level {level_id}: the slab must be one valid polygon")
    for nm, v in (("min_zone_area_m2", min_zone_area_m2), ("smoothing_m", smoothing_m)):
        if not v >= 0:
            raise ZoningError(f"zoning: {nm} = {v!r}; give a value >= 0")
    f = LENGTH_TO_M[unit]
    min_area, s = min_zone_area_m2 / (f * f), smoothing_m / f
    excl = [e for e in exclusions if e is not None and not e.is_empty]
    remaining: BaseGeometry = slab.difference(shapely.union_all(excl)) if excl else slab
    rows: list[dict[str, Any]] = []
    rules = list(rules)
    if not rules or not rules[-1].catch_all:
        rules.append(NoActionRule())
    for k, rule in enumerate(rules):
        if remaining.is_empty:
            break
        try:
            with np.errstate(all="ignore"):  # GEOS floating-point flags on slivers
                got = rule.apply(layers)
        except ZoningError:
            raise
        except Exception as err:
            raise ZoningError(f"level {level_id}: zoning rule {rule.name!r} failed: {err}"
                              ) from err
        if got is not None and not isinstance(got, BaseGeometry):
            raise ZoningError(f"zoning rule {rule.name!r} returned {type(got).__name__}, "
                              "not a polygon")
        with np.errstate(all="ignore"):
            if rule.catch_all:
                claimed = remaining
            elif rule.exact:
                claimed = _polygonal(_polygonal(got).intersection(remaining))
            else:
                g = _smooth(_polygonal(got).intersection(remaining), s)
                claimed = _drop_small(_polygonal(g.intersection(remaining)), min_area)
            if claimed.is_empty or claimed.area <= 0:
                continue
            remaining = _polygonal(remaining.difference(claimed))
        rows.append({"level_id": level_id, "zone": rule.name, "treatment": rule.treatment,
                     "bid_item": rule.bid_item, "order": k, "area_m2": claimed.area * f * f,
                     "plan_unit": unit, "geometry": claimed})
    if not rows:
        return gpd.GeoDataFrame({c: [] for c in ZONE_COLUMNS if c != "geometry"},
                                geometry=gpd.GeoSeries([], dtype="geometry"))
    out = gpd.GeoDataFrame(rows, columns=list(ZONE_COLUMNS), geometry="geometry")
    out["bid_item"] = pd.Series([r["bid_item"] for r in rows], dtype=object, index=out.index)
    return out

"""The zoning rule interface, the layers a rule combines, and :func:`zone`.

A zoning rule turns the layers of one level (delaminated and spalled areas,
active corrosion from a probability-of-corrosion or class raster polygonised by
the caller, low cover, the laid-out repairs) into an area with a name, a
treatment and a bid item.  :func:`zone` applies rules in order: each rule takes
only what earlier rules left, so zones never overlap, and whatever is left at
the end is a "no action" zone, so together they cover the slab less its
exclusions.  Register third-party rules under the entry-point group
``geo_corrosion.zoning_rules``.
"""

from __future__ import annotations

import inspect
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, ClassVar

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely
from shapely.geometry import MultiPolygon, Polygon
from shapely.geometry.base import BaseGeometry

from geo_corrosion.errors import ZoningError
from geo_corrosion.units import LENGTH_TO_M

__all__ = ["ZONE_COLUMNS", "ZoningLayers", "ZoningRule", "zone"]

#: Columns of the frame returned by :func:`zone`.
ZONE_COLUMNS: tuple[str, ...] = ("level_id", "zone", "treatment", "bid_item", "order",
                                 "area_m2", "plan_unit", "geometry")


def _empty() -> BaseGeometry:
    return Polygon()


@dataclass(frozen=True)
class ZoningLayers:
    """Areas of one level that zoning rules combine (local grid, plan unit).

    Attributes
    ----------
    delaminated, spalled : geometry
        Sounded delaminations and spalls.
    active : geometry
        Actively corroding concrete, polygonised by the caller from a
        probability-of-corrosion or condition-class raster.
    classes : mapping of str to geometry
        Areas of each condition class (e.g. ``{"high": ..., "moderate": ...}``).
    low_cover : geometry
        Areas where cover is below the low-cover threshold.
    repairs : geometry
        The laid-out repairs (union), when the layout came first.
    """

    delaminated: BaseGeometry = field(default_factory=_empty)
    spalled: BaseGeometry = field(default_factory=_empty)
    active: BaseGeometry = field(default_factory=_empty)
    classes: Mapping[str, BaseGeometry] = field(default_factory=dict)
    low_cover: BaseGeometry = field(default_factory=_empty)
    repairs: BaseGeometry = field(default_factory=_empty)


class ZoningRule:
    """Base class of zoning rules.

    Subclasses set the class defaults ``name``, ``treatment`` and ``bid_item``,
    take their own parameters keyword-only in ``__init__`` (no ``*args`` or
    ``**kwargs``), and implement :meth:`apply`.

    Parameters
    ----------
    name : str, optional
        Zone name (default: the rule's name).
    treatment : str, optional
        Treatment of the zone, for the schedule and drawings.
    bid_item : str or None, optional
        Bid item code pricing the zone's area; None: not priced by area; ``""``
        (the default) keeps the rule's own.
    """

    name: str = ""
    treatment: str = ""
    bid_item: str | None = None
    description: ClassVar[str] = ""
    api_version: ClassVar[int] = 1
    #: Whether the rule takes everything it is offered (ends the rule list).
    catch_all: ClassVar[bool] = False
    #: Whether the zone follows its shape exactly: no smoothing and no minimum zone size
    #: (laid-out repair outlines are priced as drawn; a part of one left to a later
    #: rule would be priced twice).
    exact: ClassVar[bool] = False

    def __init__(self, *, name: str | None = None, treatment: str | None = None,
                 bid_item: str | None = "") -> None:
        if name is not None:
            self.name = name
        if treatment is not None:
            self.treatment = treatment
        if bid_item != "":
            self.bid_item = bid_item
        if not self.name:
            raise ZoningError(f"zoning rule {type(self).__name__} has no name")

    @classmethod
    def parameters(cls) -> dict[str, inspect.Parameter]:
        """Return the keyword-only parameters of the rule (for the site file and the CLI).

        Raises
        ------
        ZoningError
            If ``__init__`` takes positional-only, ``*args`` or ``**kwargs`` parameters.
        """
        sig = inspect.signature(cls.__init__)
        out = {}
        for p in list(sig.parameters.values())[1:]:
            if p.kind is not inspect.Parameter.KEYWORD_ONLY:
                raise ZoningError(f"zoning rule {cls.__name__}: parameter {p.name!r} must be "
                                  "keyword-only (no *args or **kwargs)")
            out[p.name] = p
        return out

    @classmethod
    def check_parameters(cls, params: Mapping[str, Any], *, where: str) -> None:
        """Check the values of parameters given in a site file, before the rule is built.

        The base checks the parameters every rule takes: ``name`` (a non-empty string),
        ``treatment`` and ``bid_item`` (strings).  A subclass with parameters of its own
        extends it and calls ``super().check_parameters(params, where=where)``.  Parameter
        names are checked by the caller against :meth:`parameters`.

        Parameters
        ----------
        params : mapping
            The rule's parameters as read from TOML (without ``rule``).
        where : str
            Where the rule is in the site file (``"site.toml: [[zoning]][1]"``); messages
            name ``<where>.<parameter>``.

        Raises
        ------
        ZoningError
            Naming the place, the parameter, the rule and what is expected.
        """
        label = cls._label(params)
        if "name" in params and (not isinstance(params["name"], str)
                                 or not params["name"].strip()):
            raise ZoningError(f"{where}.name: {label}: expected a non-empty string (the zone's "
                              f"name), got {params['name']!r}")
        for key in ("treatment", "bid_item"):
            if key in params and not isinstance(params[key], str):
                raise ZoningError(f"{where}.{key}: {label}: expected a string, got "
                                  f"{params[key]!r}")

    @classmethod
    def _label(cls, params: Mapping[str, Any]) -> str:
        """Return ``rule 'active_corrosion'`` or ``rule 'active_corrosion' (zone 'anodes')``."""
        name = params.get("name")
        zone_name = (f" (zone {name!r})" if isinstance(name, str) and name.strip()
                     and name != cls.name else "")
        return f"rule {cls.name!r}{zone_name}"

    def apply(self, layers: ZoningLayers) -> BaseGeometry:
        """Return the area this rule claims (before earlier rules are taken out)."""
        raise NotImplementedError

    def __repr__(self) -> str:
        return f"{type(self).__name__}(name={self.name!r}, bid_item={self.bid_item!r})"


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


def zone(slab: Polygon, exclusions: Sequence[Polygon], layers: ZoningLayers,
         rules: Sequence[ZoningRule], *, min_zone_area_m2: float = 0.0,
         smoothing_m: float = 0.0, unit: str, level_id: str = "") -> gpd.GeoDataFrame:
    """Split a slab into zones by applying rules in order.

    Parameters
    ----------
    slab : Polygon
        Slab outline, local grid, plan unit.
    exclusions : sequence of Polygon
        Areas left out of every zone.
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
        from geo_corrosion.zoning.builtin import NoActionRule
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

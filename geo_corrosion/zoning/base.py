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
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any, ClassVar

from shapely.geometry import Polygon
from shapely.geometry.base import BaseGeometry

from geo_corrosion.errors import ZoningError
from geo_corrosion.measurements.base import Role

__all__ = ["CLASSES_ROLE", "ZONE_COLUMNS", "ZoningLayers", "ZoningRule"]

#: The role of the measurement kind whose class areas fill :attr:`ZoningLayers.classes`
#: (the half-cell potential: ASTM C876 classes, probability of corrosion).
CLASSES_ROLE: Role = Role.POTENTIAL

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
        Areas of each condition class of the kind playing :data:`CLASSES_ROLE`, by class key
        (e.g. ``{"high": ..., "uncertain": ...}``).
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

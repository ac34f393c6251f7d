"""The built-in zoning rules (issue 5; common practice).

Order them from the most to the least urgent treatment: repair of delaminated and
spalled concrete; treatment of actively corroding but sound concrete (embedded
galvanic anodes or a corrosion inhibitor); protection of low-cover areas
(membrane or sealer); no action for the rest.
"""

from __future__ import annotations

import difflib
from collections.abc import Mapping
from typing import Any, ClassVar

import shapely
from shapely.geometry import Polygon
from shapely.geometry.base import BaseGeometry

from geo_corrosion.errors import ZoningError
from geo_corrosion.zoning.base import CLASSES_ROLE, ZoningLayers, ZoningRule

__all__ = ["ActiveCorrosionRule", "BUILTIN_ZONING_RULES", "LowCoverRule", "NoActionRule",
           "RepairRule", "default_rules"]


def _union(geoms: list[BaseGeometry]) -> BaseGeometry:
    geoms = [g for g in geoms if g is not None and not g.is_empty]
    return shapely.union_all(geoms) if geoms else Polygon()


class RepairRule(ZoningRule):
    """Repair of delaminated and spalled concrete.

    Parameters
    ----------
    include_repairs : bool
        Also claim the laid-out repair outlines (they reach past the sounded
        limits by the margin).
    name, treatment, bid_item
        See :class:`ZoningRule`.  The zone is priced through the repair layout's
        own items, so its default bid item is None.
    """

    name = "repair"
    treatment = "concrete repair: saw-cut, remove, clean and undercut bars, patch"
    bid_item = None
    description = "delaminated and spalled concrete (and the laid-out repairs)"
    #: the repair outlines are priced as laid out: never smoothed, never dropped as small
    exact = True

    def __init__(self, *, include_repairs: bool = True, name: str | None = None,
                 treatment: str | None = None, bid_item: str | None = "") -> None:
        super().__init__(name=name, treatment=treatment, bid_item=bid_item)
        self.include_repairs = include_repairs

    @classmethod
    def check_parameters(cls, params: Mapping[str, Any], *, where: str) -> None:
        """Check the common parameters and that ``include_repairs`` is true or false."""
        super().check_parameters(params, where=where)
        v = params.get("include_repairs", True)
        if not isinstance(v, bool):
            raise ZoningError(f"{where}.include_repairs: {cls._label(params)}: expected true or "
                              f"false, got {v!r}")

    def apply(self, layers: ZoningLayers) -> BaseGeometry:
        """Return the delaminated, spalled and (optionally) repaired areas."""
        extra = [layers.repairs] if self.include_repairs else []
        return _union([layers.delaminated, layers.spalled, *extra])


class ActiveCorrosionRule(ZoningRule):
    """Treatment of actively corroding but sound concrete.

    Parameters
    ----------
    classes : tuple of str
        Condition classes (keys of :attr:`ZoningLayers.classes`) taken as active,
        besides :attr:`ZoningLayers.active`.
    """

    name = "active_corrosion"
    treatment = "embedded galvanic anodes or corrosion inhibitor"
    bid_item = "TREAT-ACTIVE"
    description = "active corrosion (probability of corrosion or condition class) in sound concrete"
    #: The role of the measurement kind whose classes ``classes`` names: the pipeline fills
    #: :attr:`ZoningLayers.classes` with the class areas of the surface of the kind playing
    #: it, keyed by the keys of that kind's class set (``stages.plan_repairs.plan_level``).
    class_role: ClassVar[str] = CLASSES_ROLE

    def __init__(self, *, classes: tuple[str, ...] = ("high",), name: str | None = None,
                 treatment: str | None = None, bid_item: str | None = "") -> None:
        super().__init__(name=name, treatment=treatment, bid_item=bid_item)
        if isinstance(classes, str):  # type: ignore[unreachable]  # a site file's slip, typed away
            raise ZoningError("active_corrosion: 'classes' is a list of class names, "
                              f"not the string {classes!r}")
        self.classes = tuple(classes)

    @classmethod
    def class_keys(cls) -> tuple[str, tuple[str, ...]]:
        """Return the class set of the kind playing :attr:`class_role` and its keys.

        These are what ``classes`` may name (the built-in potential kind's first).

        Examples
        --------
        >>> ActiveCorrosionRule.class_keys()
        ('c876', ('high', 'uncertain', 'low'))
        """
        from geo_corrosion.measurements import registered_kind_with_role

        kind = registered_kind_with_role(cls.class_role)
        cs = kind.class_set_object() if kind is not None else None
        if cs is None:
            return "", ()
        return cs.name, tuple(cs.keys)

    @classmethod
    def check_parameters(cls, params: Mapping[str, Any], *, where: str) -> None:
        """Check the common parameters and that ``classes`` lists keys of the role's classes.

        Raises
        ------
        ZoningError
            ``classes`` is not a list of strings, is empty, or names a key that the class set
            of the kind playing :attr:`class_role` does not have (the message lists them).
        """
        super().check_parameters(params, where=where)
        if "classes" not in params:
            return
        v, w, label = params["classes"], f"{where}.classes", cls._label(params)
        set_name, keys = cls.class_keys()
        valid = f"the {cls.class_role} class set {set_name!r} has the keys: {', '.join(keys)}"
        if isinstance(v, str):
            raise ZoningError(f"{w}: {label}: expected a list of class keys, not the string "
                              f"{v!r}; write classes = [{v!r}] ({valid})")
        if not isinstance(v, list | tuple) or not all(isinstance(c, str) for c in v):
            raise ZoningError(f"{w}: {label}: expected a list of class keys such as "
                              f"[\"high\"], got {v!r} ({valid})")
        if not v:
            raise ZoningError(f"{w}: {label}: the list is empty, so the rule would claim "
                              f"nothing; name at least one class ({valid}) or remove the rule")
        bad = [c for c in v if c not in keys]
        if bad:
            close = difflib.get_close_matches(bad[0], keys, n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            raise ZoningError(f"{w}: {label}: unknown class key(s) "
                              f"{', '.join(map(repr, bad))}{hint}; {valid}")

    def apply(self, layers: ZoningLayers) -> BaseGeometry:
        """Return the active layer and the chosen condition classes."""
        return _union([layers.active, *[layers.classes[c] for c in self.classes
                                        if c in layers.classes]])


class LowCoverRule(ZoningRule):
    """Protection of low-cover areas with a membrane or sealer (common practice)."""

    name = "low_cover"
    treatment = "traffic-bearing membrane or penetrating sealer"
    bid_item = "PROTECT-LOWCOVER"
    description = "cover below the low-cover threshold"

    def apply(self, layers: ZoningLayers) -> BaseGeometry:
        """Return the low-cover layer."""
        return layers.low_cover


class NoActionRule(ZoningRule):
    """No action: everything no earlier rule claimed."""

    name = "no_action"
    treatment = "no action"
    bid_item = None
    description = "the rest of the slab"
    catch_all = True

    def apply(self, layers: ZoningLayers) -> BaseGeometry:
        """Nothing of its own; :func:`~geo_corrosion.zoning.zone` gives it the rest."""
        return Polygon()


#: Built-in rules by name; the plugin loader adds entry points.
BUILTIN_ZONING_RULES: dict[str, type[ZoningRule]] = {
    r.name: r for r in (RepairRule, ActiveCorrosionRule, LowCoverRule, NoActionRule)
}


def default_rules() -> list[ZoningRule]:
    """Return the built-in rules in their usual order, with default parameters."""
    return [RepairRule(), ActiveCorrosionRule(), LowCoverRule(), NoActionRule()]

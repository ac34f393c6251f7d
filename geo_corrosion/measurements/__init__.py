"""Measurement kinds (plugins): half-cell potential, resistivity, corrosion rate, cover."""

from geo_corrosion.measurements.base import MeasurementKind, Role, Threshold
from geo_corrosion.measurements.builtin import (
    CorrosionRate,
    CoverDepth,
    HalfCellPotential,
    Resistivity,
)
from geo_corrosion.plugins import Registry

BUILTIN_KINDS: dict[str, type[MeasurementKind]] = {
    k.name: k for k in (HalfCellPotential, Resistivity, CorrosionRate, CoverDepth)
}

#: The measurement-kind registry: built-ins plus the ``geo_corrosion.measurements`` group.
MEASUREMENTS: Registry[type[MeasurementKind]] = Registry(
    "geo_corrosion.measurements", "measurement kind", lambda: dict(BUILTIN_KINDS)
)

__all__ = [
    "MeasurementKind",
    "Role",
    "Threshold",
    "registered_kind_with_role",
    "HalfCellPotential",
    "Resistivity",
    "CorrosionRate",
    "CoverDepth",
    "BUILTIN_KINDS",
    "MEASUREMENTS",
    "get_kind",
]


def get_kind(name_or_kind: str | type[MeasurementKind] | MeasurementKind, *,
             where: str = "") -> MeasurementKind:
    """Return an instance of a measurement kind by registry name or class."""
    k = (MEASUREMENTS.get(name_or_kind, where=where) if isinstance(name_or_kind, str)
         else name_or_kind)
    return k() if isinstance(k, type) else k


def registered_kind_with_role(role: Role | str) -> MeasurementKind | None:
    """Return the first registered kind that plays ``role`` (built-ins first), or None.

    For questions about a kind before any survey is read (which class keys may a zoning
    rule name); a run asks its own surfaces' kinds (``model.surface.with_role``).
    """
    for k in MEASUREMENTS.load().values():
        if isinstance(k, type) and issubclass(k, MeasurementKind) and role in k.roles:
            return k()
    return None

"""Zoning: ordered rules that split each level's slab into treatment zones."""

from geo_corrosion.plugins import Registry
from geo_corrosion.zoning.apply import zone
from geo_corrosion.zoning.base import CLASSES_ROLE, ZONE_COLUMNS, ZoningLayers, ZoningRule
from geo_corrosion.zoning.builtin import (
    BUILTIN_ZONING_RULES,
    ActiveCorrosionRule,
    LowCoverRule,
    NoActionRule,
    RepairRule,
    default_rules,
)

#: The zoning-rule registry: built-ins plus the ``geo_corrosion.zoning_rules`` group.
ZONING_RULES: Registry[type[ZoningRule]] = Registry(
    "geo_corrosion.zoning_rules", "zoning rule", lambda: dict(BUILTIN_ZONING_RULES)
)

__all__ = [
    "BUILTIN_ZONING_RULES",
    "CLASSES_ROLE",
    "ZONING_RULES",
    "ZONE_COLUMNS",
    "ActiveCorrosionRule",
    "LowCoverRule",
    "NoActionRule",
    "RepairRule",
    "ZoningLayers",
    "ZoningRule",
    "default_rules",
    "zone",
]

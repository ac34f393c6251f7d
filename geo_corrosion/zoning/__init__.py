"""Zoning: ordered rules that split each level's slab into treatment zones."""

from geo_corrosion.zoning.base import ZONE_COLUMNS, ZoningLayers, ZoningRule, zone
from geo_corrosion.zoning.builtin import (
    BUILTIN_ZONING_RULES,
    ActiveCorrosionRule,
    LowCoverRule,
    NoActionRule,
    RepairRule,
    default_rules,
)

__all__ = [
    "BUILTIN_ZONING_RULES",
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

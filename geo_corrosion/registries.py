"""Every plugin registry by group name, for the command line and for tests.

This module sits above the plugin families (it imports all three); the mechanism
itself, :class:`~geo_corrosion.plugins.Registry`, knows none of them.
"""

from __future__ import annotations

from typing import Any

from geo_corrosion.exporters import EXPORTERS
from geo_corrosion.measurements import MEASUREMENTS
from geo_corrosion.plugins import Registry
from geo_corrosion.zoning import ZONING_RULES

__all__ = ["REGISTRIES", "refresh_plugins", "EXPORTERS", "MEASUREMENTS", "ZONING_RULES"]

#: The registries by the short name ``geo-corrosion plugins`` prints.
REGISTRIES: dict[str, Registry[Any]] = {
    "measurements": MEASUREMENTS,
    "zoning_rules": ZONING_RULES,
    "exporters": EXPORTERS,
}


def refresh_plugins() -> None:
    """Forget every cached discovery, so newly installed plugins are found."""
    for reg in REGISTRIES.values():
        reg.refresh()

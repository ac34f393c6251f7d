"""The plugin object QGIS starts: registers the Processing provider."""

from __future__ import annotations

from typing import Any

from qgis.core import QgsApplication

from geo_corrosion_qgis.provider import CorrosionSurveyProvider

__all__ = ["CorrosionSurveyPlugin"]


class CorrosionSurveyPlugin:
    """Register the provider in QGIS and in ``qgis_process`` (where ``iface`` is None)."""

    def __init__(self, iface: Any) -> None:
        self.iface = iface
        self.provider: CorrosionSurveyProvider | None = None

    def initProcessing(self) -> None:
        """Add the provider to the Processing registry."""
        if self.provider is None:
            self.provider = CorrosionSurveyProvider()
            QgsApplication.processingRegistry().addProvider(self.provider)

    def initGui(self) -> None:
        """Start with the desktop: only the provider (its algorithms are in the toolbox)."""
        self.initProcessing()

    def unload(self) -> None:
        """Remove the provider."""
        if self.provider is not None:
            QgsApplication.processingRegistry().removeProvider(self.provider)
            self.provider = None

"""The Processing provider of the plugin: id ``geocorrosion``."""

from __future__ import annotations

from pathlib import Path

from qgis.core import QgsProcessingProvider
from qgis.PyQt.QtGui import QIcon

from geo_corrosion_qgis.algorithms import algorithms

__all__ = ["PROVIDER_ID", "CorrosionSurveyProvider"]

PROVIDER_ID = "geocorrosion"


class CorrosionSurveyProvider(QgsProcessingProvider):
    """Algorithms that call geo_corrosion in its own environment."""

    def id(self) -> str:  # noqa: D102
        return PROVIDER_ID

    def name(self) -> str:  # noqa: D102
        return "Deck corrosion survey"

    def longName(self) -> str:  # noqa: D102
        return "Deck corrosion survey (geo_corrosion)"

    def icon(self) -> QIcon:  # noqa: D102
        return QIcon(str(Path(__file__).with_name("icon.svg")))

    def loadAlgorithms(self) -> None:  # noqa: D102
        for alg in algorithms():
            self.addAlgorithm(alg)

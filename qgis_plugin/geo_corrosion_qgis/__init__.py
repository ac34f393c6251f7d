"""QGIS plugin of geo_corrosion: a Processing provider calling the package by subprocess.

It imports only QGIS and the standard library: geo_corrosion and its numerical stack run in
their own Python environment.
"""

from __future__ import annotations

from typing import Any


def classFactory(iface: Any) -> Any:  # noqa: N802 - the name QGIS calls
    """Return the plugin object (``iface`` is None under ``qgis_process``)."""
    from geo_corrosion_qgis.plugin import CorrosionSurveyPlugin

    return CorrosionSurveyPlugin(iface)

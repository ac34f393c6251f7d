"""The owner's web map: one self-contained HTML page built from a run folder.

:mod:`~geo_corrosion.exporters.webmap.build` assembles the page (folium with an inlined,
vendored Leaflet); :class:`WebMapExporter` is the registered exporter.
"""

from geo_corrosion.exporters.webmap.build import (
    MAP_NAME,
    WebMapExporter,
    build_webmap,
    write_webmap,
)

__all__ = ["MAP_NAME", "WebMapExporter", "build_webmap", "write_webmap"]

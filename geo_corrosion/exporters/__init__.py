"""Exporters (plugins): GeoPackage, GeoTIFF, quantities, drawings, plots and the web map."""

from geo_corrosion.exporters.base import Exporter
from geo_corrosion.exporters.documents import DrawingsExporter, QuantitiesExporter
from geo_corrosion.exporters.gpkg import GeoPackageExporter
from geo_corrosion.exporters.plots import PlotsExporter
from geo_corrosion.exporters.rasters import GeoTiffExporter
from geo_corrosion.exporters.webmap import WebMapExporter

BUILTIN_EXPORTERS: dict[str, type[Exporter]] = {
    e.name: e
    for e in (GeoPackageExporter, GeoTiffExporter, QuantitiesExporter, DrawingsExporter,
              PlotsExporter, WebMapExporter)
}

__all__ = ["Exporter", "BUILTIN_EXPORTERS"]

"""Exporters (plugins): GeoPackage, GeoTIFF, quantities, drawings, plots, the web map and the report."""

from geo_corrosion.exporters.base import Exporter
from geo_corrosion.exporters.documents import DrawingsExporter, QuantitiesExporter
from geo_corrosion.exporters.gpkg import GeoPackageExporter
from geo_corrosion.exporters.plots import PlotsExporter
from geo_corrosion.exporters.rasters import GeoTiffExporter
from geo_corrosion.exporters.report import ReportExporter
from geo_corrosion.exporters.webmap import WebMapExporter

BUILTIN_EXPORTERS: dict[str, type[Exporter]] = {
    e.name: e
    for e in (GeoPackageExporter, GeoTiffExporter, QuantitiesExporter, DrawingsExporter,
              PlotsExporter, WebMapExporter, ReportExporter)
}

__all__ = ["Exporter", "BUILTIN_EXPORTERS"]

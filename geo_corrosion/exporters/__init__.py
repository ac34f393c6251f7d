"""Exporters (plugins): GeoPackage, GeoTIFF, quantities, drawings, plots, web map, report, QGIS."""

from geo_corrosion.exporters.base import Exporter
from geo_corrosion.exporters.drawings import DrawingsExporter
from geo_corrosion.exporters.gpkg import GeoPackageExporter
from geo_corrosion.exporters.plots import PlotsExporter
from geo_corrosion.exporters.postgis import PostgisExporter
from geo_corrosion.exporters.qgis_project import QgisProjectExporter
from geo_corrosion.exporters.quantities import QuantitiesExporter
from geo_corrosion.exporters.rasters import GeoTiffExporter
from geo_corrosion.exporters.report import ReportExporter
from geo_corrosion.exporters.webmap import WebMapExporter
from geo_corrosion.plugins import Registry

BUILTIN_EXPORTERS: dict[str, type[Exporter]] = {
    e.name: e
    for e in (GeoPackageExporter, GeoTiffExporter, QuantitiesExporter, DrawingsExporter,
              PlotsExporter, WebMapExporter, ReportExporter, QgisProjectExporter,
              PostgisExporter)
}

#: The exporter registry: built-ins plus the ``geo_corrosion.exporters`` group.
EXPORTERS: Registry[type[Exporter]] = Registry(
    "geo_corrosion.exporters", "exporter", lambda: dict(BUILTIN_EXPORTERS)
)

__all__ = ["Exporter", "BUILTIN_EXPORTERS", "EXPORTERS"]

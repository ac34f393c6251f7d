"""The report for the project file: ``report.html`` and ``report.pdf`` built from a run folder.

:mod:`~geo_corrosion.exporters.report.build` assembles the document,
:mod:`~geo_corrosion.exporters.report.text` holds its wording; :class:`ReportExporter` is the
registered exporter.
"""

from geo_corrosion.exporters.report.build import (
    PdfUnavailableError,
    ReportExporter,
    build_report_html,
    write_report,
)

__all__ = ["PdfUnavailableError", "ReportExporter", "build_report_html", "write_report"]

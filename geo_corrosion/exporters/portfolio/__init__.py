"""The portfolio summary and web map, written from the sites' run folders.

:func:`write_summary` reads each completed site's run folder back
(:mod:`~geo_corrosion.exporters.portfolio.summary`) and writes ``portfolio.gpkg``, the
``portfolio_*.csv`` tables, ``portfolio.xlsx`` and the offline map ``portfolio.html``
(:mod:`~geo_corrosion.exporters.portfolio.webmap`).  Not a registered exporter: it works on
many runs, not on one.
"""

from geo_corrosion.exporters.portfolio.summary import (
    SUMMARY_CSV,
    SUMMARY_GPKG,
    SUMMARY_XLSX,
    PortfolioTables,
    SiteStatus,
    summary_tables,
    write_summary,
)
from geo_corrosion.exporters.portfolio.webmap import PORTFOLIO_MAP

__all__ = ["SiteStatus", "PortfolioTables", "summary_tables", "write_summary", "SUMMARY_CSV",
           "SUMMARY_GPKG", "SUMMARY_XLSX", "PORTFOLIO_MAP"]

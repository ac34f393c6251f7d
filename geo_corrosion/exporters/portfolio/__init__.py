"""The portfolio summary and web map, written from the sites' run folders.

:func:`write_summary` reads each completed site's run folder back
(:func:`~geo_corrosion.exporters.portfolio.summary.summary_tables`) and writes
``portfolio.gpkg``, the ``portfolio_*.csv`` tables, ``portfolio.xlsx`` and the offline map
``portfolio.html`` (:mod:`~geo_corrosion.exporters.portfolio.webmap`).  Not a registered
exporter: it works on many runs, not on one.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

from geo_corrosion.exporters.portfolio.summary import (
    SUMMARY_CSV,
    SUMMARY_GPKG,
    SUMMARY_XLSX,
    PortfolioTables,
    SiteStatus,
    run_folders,
    summary_tables,
    write_tables,
)
from geo_corrosion.exporters.portfolio.webmap import PORTFOLIO_MAP, write_portfolio_map

__all__ = ["SiteStatus", "PortfolioTables", "summary_tables", "write_summary", "run_folders",
           "SUMMARY_CSV", "SUMMARY_GPKG", "SUMMARY_XLSX", "PORTFOLIO_MAP"]


def write_summary(out_dir: Path, sites: Sequence[SiteStatus]) -> list[str]:
    """Write the summary tables, the GeoPackage, the workbook and the web map into ``out_dir``.

    Returns
    -------
    list of str
        The files written, relative to ``out_dir``.
    """
    t = summary_tables(out_dir, sites)
    files = write_tables(out_dir, t)
    write_portfolio_map(out_dir, t)
    return [*files, PORTFOLIO_MAP]

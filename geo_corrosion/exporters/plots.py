"""Plots exporter: histogram, cumulative frequency, class map and scatter per level (PNG)."""

from __future__ import annotations

import logging
from pathlib import Path
from typing import TYPE_CHECKING, ClassVar

from geo_corrosion.exporters.base import Exporter

if TYPE_CHECKING:
    from geo_corrosion.results import RunResult

__all__ = ["PlotsExporter"]

log = logging.getLogger(__name__)


class PlotsExporter(Exporter):
    """Write ``plots/<level>_<kind>_*.png``."""

    name: ClassVar[str] = "plots"
    description: ClassVar[str] = "statistics plots as PNG for the report"

    def export(self, result: RunResult, out_dir: Path) -> list[Path]:
        """Write the plots (filled in by the condition stage)."""
        return []

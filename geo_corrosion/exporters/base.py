"""The exporter plugin interface.

An exporter writes part of a :class:`~geo_corrosion.model.results.RunResult` into the
run's output folder (a temporary folder that becomes the output only when the
whole run succeeds).  Register third-party exporters under the entry-point
group ``geo_corrosion.exporters``.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, ClassVar

if TYPE_CHECKING:
    from geo_corrosion.model.results import RunResult

__all__ = ["Exporter"]


class Exporter:
    """Base class of exporters.

    Class attributes
    ----------------
    name : str
        Registry name.
    description : str
    default : bool
        Whether ``geo-corrosion run`` uses it without being asked.
    run_last : bool
        Whether it reads the run folder the other exporters wrote (the web map and the
        report): such exporters run after the others.
    needs : tuple of str, optional
        Names of the exporters whose files it reads: with ``--jobs`` above 1 it starts once
        they are done, and the others run beside it.  None (the default) with ``run_last``:
        it waits for every exporter that is not ``run_last``.
    """

    name: ClassVar[str] = ""
    description: ClassVar[str] = ""
    default: ClassVar[bool] = True
    run_last: ClassVar[bool] = False
    needs: ClassVar[tuple[str, ...] | None] = None

    def export(self, result: RunResult, out_dir: Path) -> list[Path]:
        """Write files into ``out_dir``; return the paths written."""
        raise NotImplementedError

"""geo_corrosion: corrosion condition surveys of reinforced-concrete decks to repair documents.

The public API, imported lazily so that ``import geo_corrosion`` stays light:

>>> import geo_corrosion
>>> sorted(geo_corrosion.__all__)[:4]
['GeoCorrosionError', 'GeoCorrosionWarning', 'RunResult', 'Site']

- :func:`read_site` reads and validates a site file (``SiteConfig``);
- :func:`open_site` reads every plan and survey file of a site, with corrections (``Site``);
- :func:`check` opens a site and runs the QA rules (``(Site, flags)``);
- :func:`run` runs the whole job and writes the output folder (``RunResult``).
"""

from __future__ import annotations

import importlib
from importlib.metadata import PackageNotFoundError, version
from typing import TYPE_CHECKING, Any

try:
    __version__ = version("geo_corrosion")
except PackageNotFoundError:  # pragma: no cover - running from a source tree without install
    __version__ = "0.0.0+unknown"

if TYPE_CHECKING:  # pragma: no cover
    from geo_corrosion.errors import GeoCorrosionError, GeoCorrosionWarning
    from geo_corrosion.model.results import RunResult
    from geo_corrosion.model.site import Site
    from geo_corrosion.pipeline import check, run
    from geo_corrosion.stages.open_site import open_site
    from geo_corrosion.stages.read_site import read_site

#: public name -> the module that defines it
_LAZY = {
    "read_site": "geo_corrosion.stages.read_site",
    "open_site": "geo_corrosion.stages.open_site",
    "check": "geo_corrosion.pipeline",
    "run": "geo_corrosion.pipeline",
    "Site": "geo_corrosion.model.site",
    "RunResult": "geo_corrosion.model.results",
    "GeoCorrosionError": "geo_corrosion.errors",
    "GeoCorrosionWarning": "geo_corrosion.errors",
}

__all__ = ["__version__", "read_site", "open_site", "check", "run", "Site", "RunResult",
           "GeoCorrosionError", "GeoCorrosionWarning"]


def __getattr__(name: str) -> Any:
    """Import a public name on first use (PEP 562)."""
    if name in _LAZY:
        return getattr(importlib.import_module(_LAZY[name]), name)
    raise AttributeError(f"module 'geo_corrosion' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(__all__)

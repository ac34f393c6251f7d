"""Every exception and warning raised by geo_corrosion.

One root class, :class:`GeoCorrosionError`; builtins are mixed in where callers
expect them (``ValueError`` for bad values, ``OSError`` for files).  Messages
name the file, the row or feature, and say what to do.
"""

from __future__ import annotations

__all__ = [
    "GeoCorrosionError",
    "SiteFileError",
    "IngestError",
    "SchemaError",
    "UnitError",
    "CRSError",
    "CRSMismatchError",
    "GeoreferenceError",
    "QAError",
    "KrigingError",
    "ConditionError",
    "ZoningError",
    "RepairError",
    "PluginError",
    "ExportError",
    "GeoCorrosionWarning",
    "QAWarning",
    "KrigingWarning",
    "GeometryWarning",
    "GeoreferenceWarning",
    "PluginConflictWarning",
    "GeoCorrosionDeprecationWarning",
]


class GeoCorrosionError(Exception):
    """Root of every error raised on purpose by geo_corrosion."""


class SiteFileError(GeoCorrosionError, ValueError):
    """The site file is missing a key, has an unknown key or a wrong value."""


class IngestError(GeoCorrosionError, ValueError):
    """An input file cannot be read or holds values that cannot be used."""


class SchemaError(IngestError):
    """A column or layer is missing, or holds the wrong type of value."""


class UnitError(GeoCorrosionError, ValueError):
    """A unit string is unknown, or units are mixed where they must agree."""


class CRSError(GeoCorrosionError, ValueError):
    """A CRS is unknown, geographic, or not in metres or feet."""


class CRSMismatchError(CRSError):
    """Two spatial objects that must share a CRS and length unit do not."""


class GeoreferenceError(GeoCorrosionError, ValueError):
    """A local survey grid cannot be tied to the site CRS."""


class QAError(GeoCorrosionError, ValueError):
    """The readings fail a check that makes the site impossible to run."""


class KrigingError(GeoCorrosionError, ValueError):
    """A surface cannot be estimated from the readings given."""


class ConditionError(GeoCorrosionError, ValueError):
    """A condition class or rate cannot be computed from the values given."""


class ZoningError(GeoCorrosionError, ValueError):
    """A zoning rule is misdeclared or cannot be applied."""


class RepairError(GeoCorrosionError, ValueError):
    """A repair layout parameter or input shape cannot be used."""


class PluginError(GeoCorrosionError):
    """A plugin is unknown, broken, or declares an unusable interface."""


class ExportError(GeoCorrosionError, OSError):
    """An output cannot be written."""


class GeoCorrosionWarning(UserWarning):
    """Root of every warning issued by geo_corrosion."""


class QAWarning(GeoCorrosionWarning):
    """A reading or survey is suspicious; it is flagged, not dropped."""


class KrigingWarning(GeoCorrosionWarning):
    """A surface was estimated with a fallback or a caveat."""


class GeometryWarning(GeoCorrosionWarning):
    """An input shape was repaired or dropped."""


class GeoreferenceWarning(GeoCorrosionWarning):
    """A control point of a level's grid fits the tie worse than the tolerance."""


class PluginConflictWarning(GeoCorrosionWarning):
    """Two plugins claim the same name; the built-in wins."""


class GeoCorrosionDeprecationWarning(FutureWarning):
    """A feature will be removed in a future release."""

"""Reading TOML tables strictly: unknown keys refused with a suggestion, typed getters.

Every getter names the dotted key in its message (``<site file>: [run].cell_size: ...``).
Used by the site-file reader (:mod:`geo_corrosion.stages.read_site`) and by measurement
kinds for their ``[surveys.options]`` tables (:class:`OptionsTable`).
"""

from __future__ import annotations

import difflib
import math
import os
import stat
from pathlib import Path
from typing import Any

from geo_corrosion.config import ID_ALLOWED, ID_PATTERN, MAX_INPUT_BYTES
from geo_corrosion.errors import SiteFileError
from geo_corrosion.units import parse_length

__all__ = ["Table", "OptionsTable", "check_id", "site_path"]


def check_id(value: str, where: str, *, example: str = '"L2", "L2-east"') -> str:
    """Return an id (level, survey, control point) if it is of the safe set, else refuse it.

    Ids become file names, GeoPackage layer names and DXF layer names, so no path separator,
    dot, space or quote may reach them (:data:`~geo_corrosion.config.ID_PATTERN`).  Condition
    class keys and zone names are checked the same way; ``example`` shows good ones.

    Raises
    ------
    SiteFileError
        Naming ``where`` (the file and dotted key), the id and the allowed set.
    """
    if not ID_PATTERN.fullmatch(value):
        raise SiteFileError(f"{where}: the id {value!r} is not allowed; an id is used in file and "
                            f"layer names, so give {ID_ALLOWED} (e.g. {example})")
    return value


def site_path(raw: str, root: Path, where: str, *, allow_outside: bool = False) -> Path:
    """Resolve a path of the site file and check it, before anything opens it.

    The path is taken relative to the site folder ``root`` and resolved, symbolic links
    followed.  It must lie inside ``root`` unless ``allow_outside``; if it exists it must be a
    regular file (not a directory, device or pipe) of at most
    :data:`~geo_corrosion.config.MAX_INPUT_BYTES`.  A path that does not exist is returned
    resolved: the stage that reads it says it is missing.

    Parameters
    ----------
    raw : str
        The path as written in the site file.
    root : Path
        The site folder (resolved).
    where : str
        The site file and dotted key, for messages.
    allow_outside : bool
        The entry's ``allow_outside = true``: a path outside the site folder is accepted.

    Returns
    -------
    Path
        The resolved path.

    Raises
    ------
    SiteFileError
        A path outside the site folder, a directory, a device or pipe, an unreadable path or
        a file too large; the message names ``where``, the path and what to do.
    """
    given = root / raw
    try:
        resolved = given.resolve()
    except (OSError, RuntimeError) as err:  # a loop of symbolic links
        raise SiteFileError(f"{where}: {raw!r} cannot be resolved ({err}); give the path of a "
                            "regular file in the site folder") from err
    link = (f" (through a symbolic link, to {resolved})"
            if Path(os.path.normpath(given)) != resolved else "")
    if not allow_outside and not resolved.is_relative_to(root):
        raise SiteFileError(
            f"{where}: {raw!r} is outside the site folder {root}{link}; copy the file into the "
            "site folder and give its path relative to the site file, or, for a shared base plan "
            "on a server, add allow_outside = true to this entry")
    try:
        st = os.stat(resolved)
    except FileNotFoundError:
        return resolved  # missing: said by the stage that reads it, with its own words
    except OSError as err:
        raise SiteFileError(f"{where}: {raw!r} cannot be read ({err.strerror}); check the path "
                            "and its permissions") from err
    if not stat.S_ISREG(st.st_mode):
        what = ("a folder" if stat.S_ISDIR(st.st_mode)
                else "a named pipe (FIFO)" if stat.S_ISFIFO(st.st_mode)
                else "a device" if stat.S_ISCHR(st.st_mode) or stat.S_ISBLK(st.st_mode)
                else "a socket" if stat.S_ISSOCK(st.st_mode) else "not a regular file")
        raise SiteFileError(f"{where}: {raw!r} is {what}{link}, not a regular file; give the path "
                            "of the file itself")
    if st.st_size > MAX_INPUT_BYTES:
        raise SiteFileError(
            f"{where}: {raw!r} is {st.st_size / 1024**3:.1f} GiB, more than the "
            f"{MAX_INPUT_BYTES // 1024**3} GiB an input file may be; give a smaller file (split "
            "the survey into several [[surveys]] entries)")
    if resolved.suffix.lower() == ".shp":
        _check_companions(resolved, root, where, allow_outside=allow_outside)
    return resolved


#: Files GDAL reads beside a shapefile ``x.shp``: index, attributes, CRS, code page and the
#: spatial indexes (common practice: the ESRI shapefile's companion files).
SHAPEFILE_COMPANIONS = (".shx", ".dbf", ".prj", ".cpg", ".qix", ".sbn", ".sbx")


def _check_companions(shp: Path, root: Path, where: str, *, allow_outside: bool) -> None:
    """Check each companion file of a shapefile that exists as :func:`site_path` checks a path.

    GDAL opens ``x.shx``, ``x.dbf``, ... beside the ``x.shp`` it is given (in either case of
    the suffix), so a companion that is a symbolic link out of the site folder, a folder, a
    device or a huge file is refused as the ``.shp`` itself would be (the contract of
    issue 11); the message names the key and the companion.
    """
    for suffix in SHAPEFILE_COMPANIONS:
        for s in dict.fromkeys((suffix, suffix.upper())):
            companion = shp.with_suffix(s)
            if not os.path.lexists(companion):
                continue
            raw = (str(companion.relative_to(root)) if companion.is_relative_to(root)
                   else str(companion))
            site_path(raw, root, f"{where} (the companion {companion.name} of {shp.name})",
                      allow_outside=allow_outside)


class Table:
    """A TOML table being read, that remembers which keys were used."""

    def __init__(self, data: object, where: str, allowed: tuple[str, ...]) -> None:
        if not isinstance(data, dict):
            raise SiteFileError(f"{where}: expected a table, got {type(data).__name__}")
        self.data: dict[str, Any] = data
        self.where = where
        for key in data:
            if key not in allowed:
                close = difflib.get_close_matches(key, allowed, n=1)
                hint = f"; did you mean {close[0]!r}?" if close else ""
                raise SiteFileError(
                    f"{where}: unknown key {key!r}{hint} Allowed keys: {', '.join(allowed)}"
                )

    def key(self, name: str) -> str:
        return f"{self.where}.{name}"

    def has(self, name: str) -> bool:
        return name in self.data

    def string(self, name: str, default: str | None = None, *,
               choices: tuple[str, ...] = ()) -> str:
        if name not in self.data:
            if default is None:
                raise SiteFileError(f"{self.key(name)}: missing; expected a string")
            return default
        v = self.data[name]
        if not isinstance(v, str) or not v.strip():
            raise SiteFileError(f"{self.key(name)}: expected a non-empty string, got {v!r}")
        if choices and v not in choices:
            raise SiteFileError(
                f"{self.key(name)}: {v!r} is not allowed; expected one of: {', '.join(choices)}"
            )
        return v

    def text(self, name: str, default: str = "") -> str:
        """Return free text: any string, the empty one included (``notes = ""``)."""
        v = self.data.get(name, default)
        if not isinstance(v, str):
            raise SiteFileError(f"{self.key(name)}: expected a string, got {v!r}")
        return v

    def opt_str(self, name: str) -> str | None:
        return self.string(name) if name in self.data else None

    def num(self, name: str, default: float | None = None, *, positive: bool = False,
            finite: bool = False) -> float:
        if name not in self.data:
            if default is None:
                raise SiteFileError(f"{self.key(name)}: missing; expected a number")
            return default
        v = self.data[name]
        if isinstance(v, bool) or not isinstance(v, int | float) or math.isnan(v):
            raise SiteFileError(f"{self.key(name)}: expected a number, got {v!r}")
        if finite and not math.isfinite(v):
            raise SiteFileError(f"{self.key(name)}: expected a finite number, got {v!r}")
        if positive and not v > 0:
            raise SiteFileError(f"{self.key(name)}: expected a positive number, got {v!r}")
        return float(v)

    def opt_num(self, name: str) -> float | None:
        return self.num(name) if name in self.data else None

    def length(self, name: str, default: float) -> float:
        if name not in self.data:
            return default
        v = parse_length(self.data[name], where=self.key(name))
        if not v > 0:
            raise SiteFileError(f"{self.key(name)}: expected a positive length, got {v!r}")
        return v

    def pair(self, name: str, value: object | None = None) -> tuple[float, float]:
        v = self.data.get(name) if value is None else value
        if (
            not isinstance(v, list)
            or len(v) != 2
            or not all(isinstance(c, int | float) and not isinstance(c, bool) for c in v)
        ):
            raise SiteFileError(f"{self.key(name)}: expected two numbers [x, y], got {v!r}")
        if not all(math.isfinite(c) for c in v):  # nan and inf are TOML numbers, no coordinate
            raise SiteFileError(f"{self.key(name)}: expected two finite numbers [x, y], got "
                                f"{v!r}; give the coordinates (nan and inf are none)")
        return (float(v[0]), float(v[1]))

    def array(self, name: str) -> list[Any]:
        v = self.data.get(name, [])
        if not isinstance(v, list):
            raise SiteFileError(f"{self.key(name)}: expected a list, got {type(v).__name__}")
        return v


class OptionsTable(Table):
    """A kind's ``[surveys.options]`` table: unknown keys refused, typed getters.

    Used by :meth:`MeasurementKind.parse_options`; every getter names the key in
    its message (``<site file>: [[surveys]][2].options.probe_spacing: ...``).
    """

    def length_mm(self, name: str) -> float | None:
        """Return a positive length with its unit (``"50 mm"``) in mm; None when absent."""
        if name not in self.data:
            return None
        v = parse_length(self.data[name], where=self.key(name)) * 1000.0
        if not v > 0:
            raise SiteFileError(f"{self.key(name)}: expected a positive length, got {v!r} mm")
        return v

    def opt_positive(self, name: str) -> float | None:
        """Return a positive finite number, or None when absent."""
        return self.num(name, positive=True, finite=True) if name in self.data else None

    def flag(self, name: str, default: bool = False) -> bool:
        """Return a boolean (``true`` / ``false``)."""
        v = self.data.get(name, default)
        if not isinstance(v, bool):
            raise SiteFileError(f"{self.key(name)}: expected true or false, got {v!r}")
        return v

"""Reading TOML tables strictly: unknown keys refused with a suggestion, typed getters.

Every getter names the dotted key in its message (``<site file>: [run].cell_size: ...``).
Used by the site-file reader (:mod:`geo_corrosion.stages.read_site`) and by measurement
kinds for their ``[surveys.options]`` tables (:class:`OptionsTable`).
"""

from __future__ import annotations

import difflib
import math
from typing import Any

from geo_corrosion.errors import SiteFileError
from geo_corrosion.units import parse_length

__all__ = ["Table", "OptionsTable"]


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
        """Return a positive number, or None when absent."""
        return self.num(name, positive=True) if name in self.data else None

    def flag(self, name: str, default: bool = False) -> bool:
        """Return a boolean (``true`` / ``false``)."""
        v = self.data.get(name, default)
        if not isinstance(v, bool):
            raise SiteFileError(f"{self.key(name)}: expected true or false, got {v!r}")
        return v

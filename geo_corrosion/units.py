"""Units: parsing unit strings and converting to the canonical ones.

Canonical units inside geo_corrosion (common practice, no source): potential
in mV vs CSE, resistivity in
kOhm.cm, corrosion current density in uA/cm2, cover and other small lengths in
mm.  Plan geometry is held in the site CRS's linear unit (metre or foot);
areas and lengths are converted to the reporting system here and nowhere else.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from geo_corrosion.errors import SiteFileError, UnitError

__all__ = [
    "parse_length",
    "parse_area",
    "AREA_TO_M2",
    "MM_PER_INCH",
    "M_PER_FT",
    "M_PER_US_SURVEY_FT",
    "LENGTH_TO_M",
    "UnitSystem",
    "ReportUnits",
    "report_units",
    "normalize_unit",
    "unit_key",
    "convert",
    "conversion_factors",
    "convert_with",
    "length_to_m",
    "m_to_length",
]

MM_PER_INCH = 25.4  # exact, by definition (1959 international inch)
M_PER_FT = 0.3048  # exact, international foot
M_PER_US_SURVEY_FT = 1200.0 / 3937.0  # US survey foot, as used by some State Plane CRSs

#: Metres per unit of each length unit accepted for plan coordinates.
LENGTH_TO_M: dict[str, float] = {
    "m": 1.0,
    "mm": 0.001,
    "cm": 0.01,
    "ft": M_PER_FT,
    "us-ft": M_PER_US_SURVEY_FT,
    "in": MM_PER_INCH / 1000.0,
}

_ALIASES: dict[str, str] = {
    # potentials
    "mv": "mV", "millivolt": "mV", "millivolts": "mV",
    "v": "V", "volt": "V", "volts": "V",
    # resistivity
    "kohm.cm": "kohm.cm", "kohm*cm": "kohm.cm", "kohm-cm": "kohm.cm", "kohmcm": "kohm.cm",
    "kω.cm": "kohm.cm", "kω·cm": "kohm.cm", "kohm·cm": "kohm.cm",
    "ohm.m": "ohm.m", "ohm*m": "ohm.m", "ohm-m": "ohm.m", "ω.m": "ohm.m", "ω·m": "ohm.m",
    "ohm·m": "ohm.m",
    "ohm.cm": "ohm.cm", "ohm*cm": "ohm.cm", "ohm-cm": "ohm.cm", "ω.cm": "ohm.cm",
    "ω·cm": "ohm.cm", "ohm·cm": "ohm.cm",
    # current density
    "ua/cm2": "uA/cm2", "µa/cm2": "uA/cm2", "ua/cm^2": "uA/cm2", "µa/cm²": "uA/cm2",
    "ua/cm²": "uA/cm2",
    "ma/m2": "mA/m2", "ma/m^2": "mA/m2", "ma/m²": "mA/m2",
    "a/m2": "A/m2", "a/m^2": "A/m2", "a/m²": "A/m2",
    "na/cm2": "nA/cm2", "na/cm^2": "nA/cm2",
    # lengths
    "mm": "mm", "cm": "cm", "m": "m", "in": "in", "inch": "in", "inches": "in",
    "ft": "ft", "foot": "ft", "feet": "ft", "us-ft": "us-ft", "us_ft": "us-ft",
    "ftus": "us-ft",
    # temperature
    "c": "degC", "degc": "degC", "°c": "degC", "f": "degF", "degf": "degF", "°f": "degF",
}

# factor to multiply a value in the key unit by to get the canonical unit of its dimension
_TO_CANONICAL: dict[str, tuple[str, float]] = {
    "mV": ("mV", 1.0),
    "V": ("mV", 1000.0),
    "kohm.cm": ("kohm.cm", 1.0),
    "ohm.m": ("kohm.cm", 0.1),  # 1 ohm.m = 100 ohm.cm = 0.1 kohm.cm (exact)
    "ohm.cm": ("kohm.cm", 0.001),
    "uA/cm2": ("uA/cm2", 1.0),
    "mA/m2": ("uA/cm2", 0.1),  # 1 mA/m2 = 1000 uA / 10000 cm2
    "A/m2": ("uA/cm2", 100.0),
    "nA/cm2": ("uA/cm2", 0.001),
    "mm": ("mm", 1.0),
    "cm": ("mm", 10.0),
    "m": ("mm", 1000.0),
    "in": ("mm", MM_PER_INCH),
    "ft": ("mm", 304.8),
    "us-ft": ("mm", M_PER_US_SURVEY_FT * 1000.0),
}


def unit_key(unit: object) -> str:
    """Return the key under which a unit spelling is looked up: no white space, lower case.

    Examples
    --------
    >>> unit_key(" kOhm.cm ")
    'kohm.cm'
    """
    return re.sub(r"\s+", "", str(unit)).lower()


def normalize_unit(unit: str, *, accepted: tuple[str, ...] | None = None, where: str = "") -> str:
    """Return the canonical spelling of a unit string.

    Parameters
    ----------
    unit : str
        A unit as written by a user or an instrument, e.g. ``"kOhm.cm"``, ``"µA/cm²"``.
    accepted : tuple of str, optional
        Spellings allowed here; anything else raises.  A spelling of ``accepted`` is matched
        as it is (without white space, in any case) before the aliases of this module, so a
        unit this module does not know (a plugin kind's ``"%"``) is accepted when listed.
    where : str
        Where the unit came from, for the error message (file and key).

    Raises
    ------
    UnitError
        If the unit is unknown or not accepted here.
    """
    key = unit_key(unit)
    if accepted is not None:
        # a spelling the caller accepts is taken as it is, even when this module does not know
        # it (a plugin kind's own unit, say "%"): the message below never lists a unit that
        # this lookup would refuse
        for a in accepted:
            if unit_key(a) == key:
                return a
    canon = _ALIASES.get(key)
    if canon is None:
        known = ", ".join(accepted) if accepted else ", ".join(sorted(set(_ALIASES.values())))
        raise UnitError(f"{where}unknown unit {unit!r}; expected one of: {known}")
    if accepted is not None and canon not in accepted:
        raise UnitError(
            f"{where}unit {unit!r} is not accepted here; expected one of: {', '.join(accepted)}"
        )
    return canon


def convert(values: ArrayLike, unit: str, to: str) -> NDArray[np.float64]:
    """Convert values from ``unit`` to ``to`` (both of the same dimension).

    Examples
    --------
    >>> float(convert(800.0, "ohm.m", "kohm.cm"))
    80.0
    >>> round(float(convert(6.0, "in", "mm")), 9)  # 6 in = 152.4 mm exactly, up to float rounding
    152.4
    """
    src = normalize_unit(unit)
    dst = normalize_unit(to)
    a = np.asarray(values, dtype=float)
    if src == dst:
        return a.copy()
    try:
        dim_s, f_s = _TO_CANONICAL[src]
        dim_d, f_d = _TO_CANONICAL[dst]
    except KeyError as err:
        raise UnitError(f"cannot convert {unit!r} to {to!r}") from err
    if dim_s != dim_d:
        raise UnitError(f"cannot convert {unit!r} to {to!r}: different dimensions")
    return a * (f_s / f_d)


def conversion_factors(to: str, units: Iterable[str]) -> dict[str, float]:
    """Return, for each unit of this module's table, the factor that converts it to ``to``.

    The factor is the one :func:`convert` multiplies by, so ``values * factor`` equals
    ``convert(values, unit, to)`` exactly.

    Raises
    ------
    UnitError
        A unit unknown to this module, or of another dimension than ``to``.

    Examples
    --------
    >>> conversion_factors("kohm.cm", ("kohm.cm", "ohm.m"))
    {'kohm.cm': 1.0, 'ohm.m': 0.1}
    """
    return {u: float(convert(1.0, u, to)) for u in units}


def convert_with(values: ArrayLike, unit: str, factors: Mapping[str, float], *,
                 where: str = "") -> NDArray[np.float64]:
    """Convert values with a table of factors to one unit (a measurement kind's own table).

    Parameters
    ----------
    values : array_like
    unit : str
        The unit of ``values``: one of the spellings of ``factors`` (white space and case
        ignored), or an alias this module knows for one of them (``"ohm-m"`` for ``"ohm.m"``).
    factors : mapping of str to float
        Accepted unit -> factor that converts a value in it to the target unit.
    where : str
        Where the unit came from, for the message.

    Raises
    ------
    UnitError
        The unit is not in ``factors``; the message lists the spellings of ``factors``.

    Examples
    --------
    >>> convert_with([0.25, 2000.0], "ppm", {"%": 1.0, "ppm": 1e-4}).tolist()
    [2.5e-05, 0.2]
    """
    u = normalize_unit(unit, accepted=tuple(factors), where=where)
    return np.asarray(values, dtype=float) * float(factors[u])


def length_to_m(value: ArrayLike, unit: str) -> NDArray[np.float64]:
    """Convert a plan length to metres."""
    return np.asarray(value, dtype=float) * LENGTH_TO_M[normalize_unit(unit)]


def m_to_length(value: ArrayLike, unit: str) -> NDArray[np.float64]:
    """Convert metres to a plan length unit."""
    return np.asarray(value, dtype=float) / LENGTH_TO_M[normalize_unit(unit)]


UnitSystem = Literal["metric", "us"]


@dataclass(frozen=True)
class ReportUnits:
    """Units of the reporting system, with factors from metres.

    Attributes
    ----------
    system : {"metric", "us"}
    area, length, volume, small : str
        Unit labels for areas, lengths, volumes and small lengths (depths).
    """

    system: UnitSystem
    area: str
    length: str
    volume: str
    small: str
    per_m: float  # reporting length units per metre
    small_per_mm: float

    def area_from_m2(self, a_m2: ArrayLike) -> NDArray[np.float64]:
        """Convert areas in m2 to the reporting area unit."""
        return np.asarray(a_m2, dtype=float) * self.per_m**2

    def length_from_m(self, l_m: ArrayLike) -> NDArray[np.float64]:
        """Convert lengths in m to the reporting length unit."""
        return np.asarray(l_m, dtype=float) * self.per_m

    def volume_from_m3(self, v_m3: ArrayLike) -> NDArray[np.float64]:
        """Convert volumes in m3 to the reporting volume unit."""
        return np.asarray(v_m3, dtype=float) * self.per_m**3

    def small_from_mm(self, d_mm: ArrayLike) -> NDArray[np.float64]:
        """Convert small lengths in mm to the reporting small unit (mm or in)."""
        return np.asarray(d_mm, dtype=float) * self.small_per_mm


_REPORT = {
    "metric": ReportUnits("metric", "m2", "m", "m3", "mm", 1.0, 1.0),
    "us": ReportUnits("us", "ft2", "LF", "ft3", "in", 1.0 / M_PER_FT, 1.0 / MM_PER_INCH),
}


def report_units(system: str) -> ReportUnits:
    """Return the :class:`ReportUnits` of ``"metric"`` or ``"us"``.

    Examples
    --------
    >>> round(float(report_units("us").area_from_m2(0.5574)), 2)  # [NIST-SP811-2008 App. B]
    6.0
    """
    try:
        return _REPORT[system]
    except KeyError as err:
        raise UnitError(f"unknown unit system {system!r}; expected 'metric' or 'us'") from err


def parse_length(value: object, *, where: str) -> float:
    """Parse a length with its unit (``"150 mm"``, ``"6 in"``) into metres.

    Examples
    --------
    >>> parse_length("6 in", where="")
    0.1524
    >>> parse_length("1 ft", where="")
    0.3048
    """
    if isinstance(value, bool) or not isinstance(value, str):
        raise SiteFileError(
            f"{where}: expected a length with its unit as a string, such as \"150 mm\" or "
            f"\"6 in\"; got {value!r}"
        )
    m = re.fullmatch(r"\s*([-+]?\d+(?:\.\d*)?(?:[eE][-+]?\d+)?)\s*([A-Za-z\-_]+)\s*", value)
    if not m:
        raise SiteFileError(f"{where}: cannot read {value!r} as a length such as \"150 mm\"")
    try:
        unit = normalize_unit(m.group(2), accepted=tuple(LENGTH_TO_M))
    except UnitError as err:
        raise SiteFileError(f"{where}: {err}") from err
    number = float(m.group(1))
    if not math.isfinite(number):
        raise SiteFileError(f"{where}: {value!r} is not a finite length; give a length such as "
                            "\"150 mm\"")
    return round(number * LENGTH_TO_M[unit], 12)


#: Area units accepted in the site file (``<length unit>2``), in m2 per unit.
AREA_TO_M2: dict[str, float] = {f"{u}2": f * f for u, f in LENGTH_TO_M.items()}

_AREA_EXAMPLE = "such as \"5 ft2\" or \"0.5 m2\""


def parse_area(value: object, *, where: str) -> float:
    """Parse an area with its unit (``"5 ft2"``, ``"0.5 m2"``) into m2.

    The unit is a length unit of :data:`~geo_corrosion.units.LENGTH_TO_M` followed by ``2``
    (``m2``, ``cm2``, ``mm2``, ``ft2``, ``us-ft2``, ``in2``), case-insensitive; ``"²"`` and
    ``"^2"`` may stand for the ``2``.  A bare number is refused, as for lengths, and so are
    ``"sq ft"`` and ``"sqft"`` (:mod:`geo_corrosion.units` has no such unit).

    Parameters
    ----------
    value : object
        The value as read from TOML.
    where : str
        The file and key, for messages.

    Returns
    -------
    float
        The area in m2 (0 or more).

    Raises
    ------
    SiteFileError
        Naming ``where``, for anything else, a negative or a non-finite area.

    Examples
    --------
    >>> round(parse_area("5 ft2", where=""), 6)
    0.464515
    >>> parse_area("0.5 m²", where="")
    0.5
    """
    if isinstance(value, bool) or not isinstance(value, str):
        hint = (f" (a bare number is refused: write \"{value} m2\" or \"{value} ft2\")"
                if isinstance(value, int | float) and not isinstance(value, bool) else "")
        raise SiteFileError(f"{where}: expected an area with its unit as a string, "
                            f"{_AREA_EXAMPLE}; got {value!r}{hint}")
    m = re.fullmatch(r"\s*([-+]?\d+(?:\.\d*)?(?:[eE][-+]?\d+)?)\s*([A-Za-z\-_]+)(?:2|²|\^2)\s*",
                     value)
    units = ", ".join(AREA_TO_M2)
    if not m:
        raise SiteFileError(f"{where}: cannot read {value!r} as an area {_AREA_EXAMPLE}; "
                            f"write a number and one of the units {units}")
    try:
        base = normalize_unit(m.group(2), accepted=tuple(LENGTH_TO_M))
    except UnitError as err:
        raise SiteFileError(f"{where}: unknown area unit in {value!r}; expected one of: "
                            f"{units}") from err
    number = float(m.group(1))
    if not math.isfinite(number) or number < 0:
        raise SiteFileError(f"{where}: expected an area of 0 or more, {_AREA_EXAMPLE}; "
                            f"got {value!r}")
    return round(number * AREA_TO_M2[f"{base}2"], 12)

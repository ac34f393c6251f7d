"""The site file: a TOML file that says what each file of a survey folder is.

Read with the standard library's :mod:`tomllib` and validated strictly: an
unknown or misspelt key, a missing key or a value of the wrong type raises
:class:`~geo_corrosion.errors.SiteFileError` naming the file, the key and what
is expected.  Lengths in the ``[run]`` table carry their unit as a string
(``"150 mm"``, ``"6 in"``, ``"1 ft"``) and are held in metres.  See
``docs/site-file.md`` for the full reference and ``geo-corrosion init`` for a
commented template.
"""

from __future__ import annotations

import dataclasses
import difflib
import math
import re
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pyproj

from geo_corrosion.errors import CRSError, SiteFileError, UnitError
from geo_corrosion.units import LENGTH_TO_M, normalize_unit

__all__ = [
    "LayerRef",
    "OverlayRef",
    "ControlPoint",
    "GridConfig",
    "LevelConfig",
    "SurveyConfig",
    "RunParams",
    "SiteConfig",
    "read_site",
    "parse_length",
    "parse_area",
    "site_crs",
    "OptionsTable",
]

COORDS = ("local", "site")
OVERLAY_KINDS = ("delamination", "spall", "patch", "crack")


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


def site_crs(text: object, *, where: str) -> tuple[pyproj.CRS, str]:
    """Parse and check the site CRS: known, projected, in metres or feet.

    Returns
    -------
    crs : pyproj.CRS
    unit : str
        ``"m"``, ``"ft"`` or ``"us-ft"``: the CRS's linear unit.
    """
    if not isinstance(text, str | int) or isinstance(text, bool):
        raise CRSError(f"{where}: expected a CRS such as \"EPSG:26918\"; got {text!r}")
    try:
        crs = pyproj.CRS.from_user_input(text)
    except pyproj.exceptions.CRSError as err:
        raise CRSError(
            f"{where}: unknown CRS {text!r}; give an EPSG code of a projected CRS, "
            "such as \"EPSG:26918\""
        ) from err
    if not crs.is_projected:
        raise CRSError(
            f"{where}: CRS {text!r} ({crs.name}) is geographic (degrees); areas and kriging need "
            "a projected CRS in metres or feet, e.g. the UTM zone or State Plane zone of the site"
        )
    factor = crs.axis_info[0].unit_conversion_factor
    for unit, f in (("m", 1.0), ("ft", LENGTH_TO_M["ft"]), ("us-ft", LENGTH_TO_M["us-ft"])):
        if abs(factor - f) < 1e-9:
            return crs, unit
    raise CRSError(
        f"{where}: CRS {text!r} uses unit {crs.axis_info[0].unit_name!r}; use a CRS in metres or feet"
    )


@dataclass(frozen=True)
class LayerRef:
    """A layer of a vector file (GeoJSON, GeoPackage, Shapefile or DXF).

    Attributes
    ----------
    path : Path
        Absolute path of the file.
    layer : str or None
        Layer name (DXF layer, GeoPackage layer); None for single-layer files.
    coords : {"local", "site"}
        Whether coordinates are in the level's local survey grid or the site CRS.
    unit : str or None
        Drawing unit of a DXF whose header does not say ($INSUNITS = 0).
    where : str
        Where in the site file it was declared, for messages.
    """

    path: Path
    layer: str | None
    coords: str
    unit: str | None
    where: str


@dataclass(frozen=True)
class OverlayRef:
    """An overlay layer: delaminations, spalls, patches or cracks."""

    kind: str
    ref: LayerRef


@dataclass(frozen=True)
class ControlPoint:
    """A point known in both the local grid and the site CRS."""

    id: str
    local: tuple[float, float]
    site: tuple[float, float]


@dataclass(frozen=True)
class GridConfig:
    """The local survey grid of a level and how it is tied to the site CRS.

    Attributes
    ----------
    unit : str
        Unit of local grid coordinates (``"m"``, ``"ft"``, ``"us-ft"``).
    spacing : float
        Nominal reading spacing, in grid units.
    origin : tuple of float or None
        Site CRS coordinates of the local (0, 0).
    rotation_deg : float
        Counter-clockwise angle from the site CRS's x axis (east) to the grid's x axis.
    control_points : tuple of ControlPoint
        Two or more points fitted by least squares (used when given).
    """

    unit: str
    spacing: float
    origin: tuple[float, float] | None
    rotation_deg: float
    control_points: tuple[ControlPoint, ...]


@dataclass(frozen=True)
class LevelConfig:
    """One level (deck, slab) of the structure."""

    id: str
    name: str
    slab: LayerRef
    exclusions: tuple[LayerRef, ...]
    joints: LayerRef | None
    overlays: tuple[OverlayRef, ...]
    grid: GridConfig
    specified_cover_mm: float | None
    cover_tolerance_mm: float | None


@dataclass(frozen=True)
class SurveyConfig:
    """One survey file and what it holds."""

    id: str
    level: str
    kind: str
    path: Path
    unit: str
    coords: str
    electrode: str | None
    temperature_c: float | None
    temperature_f: float | None
    temperature_coefficient_mv_per_c: float | None
    date: str | None
    separator: str
    decimal: str
    layer: str | None
    columns: Mapping[str, str]
    where: str
    #: kind-specific options of ``[surveys.options]``, as parsed and validated by the kind's
    #: :meth:`~geo_corrosion.measurements.base.MeasurementKind.parse_options`: keys carry their
    #: unit (``probe_spacing_mm``); empty when the table is absent.
    options: Mapping[str, Any] = field(default_factory=dict)


@dataclass(frozen=True)
class RunParams:
    """Parameters of a run, from ``[run]`` and ``[webmap]``.

    Lengths are in metres, or in mm as named.  :func:`dataclasses.asdict` of it is written to
    ``run.json`` as ``parameters``, where the exporters read it.
    """

    cell_size_m: float = 0.3048
    max_distance_m: float = 1.8288
    contour_interval_mv: float = 50.0
    repair_margin_m: float = 0.150
    merge_gap_m: float = 0.300
    min_repair_size_m: float = 0.300
    contingency: float = 0.20
    n_neighbors: int = 16
    variogram_model: str = "auto"
    resistivity_reference_c: float = 20.0
    activation_energy_kj_mol: float = 25.0
    cse_reference_c: float = 22.2
    correct_only_outside_band: bool = False
    #: scale each fitted variogram so that the leave-one-out MSSE is 1 (mapping stage)
    calibrate_variance: bool = True
    bar_diameter_mm: float = 16.0
    max_aggregate_mm: float = 9.5
    slab_thickness_mm: float | None = None
    sawcut_depth_mm: float = 19.05
    axis_angle_deg: float = 0.0
    anode_spacing_mm: float | None = None
    min_zone_area_m2: float = 0.5
    zone_smoothing_m: float = 0.15
    #: kind -> fixed variogram parameters (``range_m`` in metres), from [run.variogram.<kind>]
    variogram: dict[str, dict[str, Any]] = field(default_factory=dict)
    #: [webmap].basemap_url: street-tile URL template (https, with {z}, {x}, {y}); None = none
    basemap_url: str | None = None
    #: [webmap].basemap_attribution: the tiles' attribution, shown on the map
    basemap_attribution: str | None = None


@dataclass(frozen=True)
class SiteConfig:
    """A parsed, validated site file."""

    path: Path
    root: Path
    name: str
    owner: str
    crs: pyproj.CRS
    crs_unit: str
    units: str
    notes: str
    levels: tuple[LevelConfig, ...]
    surveys: tuple[SurveyConfig, ...]
    run: RunParams = field(default_factory=RunParams)
    #: ordered zoning rules: (registry name, keyword parameters); empty = the built-in order
    zoning: tuple[tuple[str, dict[str, Any]], ...] = ()
    #: the combined-condition rule table as given in [condition.combined] (None = default)
    combined_rules: dict[str, Any] | None = None

    def level(self, level_id: str) -> LevelConfig:
        """Return the level with this id."""
        for lv in self.levels:
            if lv.id == level_id:
                return lv
        raise SiteFileError(f"{self.path}: no level with id {level_id!r}")


# --------------------------------------------------------------------------- validation helpers


class _Table:
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

    def str(self, name: str, default: str | None = None, *, choices: tuple[str, ...] = ()) -> str:
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
        return self.str(name) if name in self.data else None

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

    def list(self, name: str) -> list[Any]:
        v = self.data.get(name, [])
        if not isinstance(v, list):
            raise SiteFileError(f"{self.key(name)}: expected a list, got {type(v).__name__}")
        return v


class OptionsTable(_Table):
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


_SITE_KEYS = ("name", "owner", "crs", "units", "notes")
_RUN_KEYS = (
    "cell_size", "max_distance", "contour_interval_mv", "repair_margin", "merge_gap",
    "min_repair_size", "contingency", "n_neighbors", "variogram_model",
    "resistivity_reference_c", "activation_energy_kj_mol", "cse_reference_c",
    "correct_only_outside_band", "variogram", "bar_diameter", "max_aggregate", "slab_thickness",
    "sawcut_depth", "axis_angle_deg", "anode_spacing", "min_zone_area", "zone_smoothing",
    "calibrate_variance",
)
_VARIOGRAM_KEYS = ("model", "nugget", "psill", "range", "shape", "anisotropy_ratio",
                   "anisotropy_angle_deg")
_LEVEL_KEYS = (
    "id", "name", "slab", "exclusions", "joints", "overlays", "grid", "specified_cover",
    "cover_tolerance",
)
_LAYER_KEYS = ("path", "layer", "coords", "unit")
_OVERLAY_KEYS = ("kind", *_LAYER_KEYS)
_GRID_KEYS = ("unit", "spacing", "origin", "rotation_deg", "control_points")
_CP_KEYS = ("id", "local", "site")
_SURVEY_KEYS = (
    "id", "level", "kind", "path", "unit", "coords", "electrode", "temperature_c",
    "temperature_f", "temperature_coefficient_mv_per_c", "date", "separator", "decimal",
    "layer", "columns", "options",
)
VARIOGRAM_MODELS = ("auto", "spherical", "exponential", "gaussian", "matern")


def _layer(data: object, where: str, root: Path, default_coords: str = "local") -> LayerRef:
    if isinstance(data, str):
        data = {"path": data}
    t = _Table(data, where, _LAYER_KEYS)
    unit = t.opt_str("unit")
    if unit is not None:
        try:
            unit = normalize_unit(unit, accepted=tuple(LENGTH_TO_M), where=f"{t.key('unit')}: ")
        except UnitError as err:
            raise SiteFileError(str(err)) from err
    return LayerRef(
        path=(root / t.str("path")).resolve(),
        layer=t.opt_str("layer"),
        coords=t.str("coords", default_coords, choices=COORDS),
        unit=unit,
        where=where,
    )


def _grid(data: object, where: str) -> GridConfig:
    t = _Table(data, where, _GRID_KEYS)
    try:
        unit = normalize_unit(t.str("unit"), accepted=("m", "ft", "us-ft"), where=f"{t.key('unit')}: ")
    except UnitError as err:
        raise SiteFileError(str(err)) from err
    cps = []
    for i, cp in enumerate(t.list("control_points")):
        ct = _Table(cp, f"{t.key('control_points')}[{i}]", _CP_KEYS)
        cps.append(ControlPoint(ct.str("id", f"CP{i + 1}"), ct.pair("local"), ct.pair("site")))
    origin = t.pair("origin") if t.has("origin") else None
    if origin is None and not cps:
        raise SiteFileError(
            f"{where}: say how the grid is tied to the site CRS: either origin = [E, N] with "
            "rotation_deg, or control_points = [{ id, local = [x, y], site = [E, N] }, ...] "
            "(two or more)"
        )
    if cps and len(cps) < 2:
        raise SiteFileError(
            f"{t.key('control_points')}: {len(cps)} control point given; at least 2 are needed to "
            "fit the grid's rotation and position (3 or more give residuals)"
        )
    return GridConfig(
        unit=unit,
        spacing=t.num("spacing", positive=True),
        origin=origin,
        rotation_deg=t.num("rotation_deg", 0.0),
        control_points=tuple(cps),
    )


def _mm(t: _Table, name: str) -> float | None:
    return parse_length(t.data[name], where=t.key(name)) * 1000.0 if t.has(name) else None


def _level(data: object, where: str, root: Path) -> LevelConfig:
    t = _Table(data, where, _LEVEL_KEYS)
    lid = t.str("id")
    if "slab" not in t.data:
        raise SiteFileError(f"{t.key('slab')}: missing; give the slab outline as {{ path, layer }}")
    overlays = []
    for i, o in enumerate(t.list("overlays")):
        ow = f"{t.key('overlays')}[{i}]"
        ot = _Table(o, ow, _OVERLAY_KEYS)
        kind = ot.str("kind", choices=OVERLAY_KINDS)
        rest = {k: v for k, v in ot.data.items() if k != "kind"}
        overlays.append(OverlayRef(kind, _layer(rest, ow, root)))
    if "grid" not in t.data:
        raise SiteFileError(f"{t.key('grid')}: missing; every level needs a [levels.grid] table")
    return LevelConfig(
        id=lid,
        name=t.str("name", lid),
        slab=_layer(t.data["slab"], t.key("slab"), root),
        exclusions=tuple(
            _layer(e, f"{t.key('exclusions')}[{i}]", root) for i, e in enumerate(t.list("exclusions"))
        ),
        joints=_layer(t.data["joints"], t.key("joints"), root) if t.has("joints") else None,
        overlays=tuple(overlays),
        grid=_grid(t.data["grid"], t.key("grid")),
        specified_cover_mm=_mm(t, "specified_cover"),
        cover_tolerance_mm=_mm(t, "cover_tolerance"),
    )


def _survey(data: object, where: str, root: Path, level_ids: set[str]) -> SurveyConfig:
    t = _Table(data, where, _SURVEY_KEYS)
    sid = t.str("id")
    level = t.str("level")
    if level not in level_ids:
        raise SiteFileError(
            f"{t.key('level')}: no level {level!r} is declared; declared levels: "
            f"{', '.join(sorted(level_ids))}"
        )
    temp = t.opt_num("temperature_c")
    temp_f = t.opt_num("temperature_f")
    if temp_f is not None:
        if temp is not None:
            raise SiteFileError(f"{where}: give temperature_c or temperature_f, not both")
        temp = (temp_f - 32.0) / 1.8
    columns = t.data.get("columns", {})
    if not isinstance(columns, dict) or not all(isinstance(v, str) for v in columns.values()):
        raise SiteFileError(
            f"{t.key('columns')}: expected a table of our column name = the file's column name"
        )
    kind = t.str("kind")
    options = _survey_options(t, kind, root)
    sep = t.str("separator", ",")
    dec = t.str("decimal", ".", choices=(".", ","))
    if sep == dec:
        raise SiteFileError(f"{where}: separator and decimal cannot both be {sep!r}")
    return SurveyConfig(
        id=sid,
        level=level,
        kind=kind,
        path=(root / t.str("path")).resolve(),
        unit=t.str("unit"),
        coords=t.str("coords", "local", choices=COORDS),
        electrode=t.opt_str("electrode"),
        temperature_c=temp,
        temperature_f=temp_f,
        temperature_coefficient_mv_per_c=t.opt_num("temperature_coefficient_mv_per_c"),
        date=t.opt_str("date") if not hasattr(t.data.get("date"), "isoformat")
        else t.data["date"].isoformat(),
        separator=sep,
        decimal=dec,
        layer=t.opt_str("layer"),
        columns=dict(columns),
        where=where,
        options=options,
    )


def _survey_options(t: _Table, kind: str, root: Path) -> dict[str, Any]:
    """Validate ``[surveys.options]`` through the survey's kind; {} when absent."""
    if not t.has("options"):
        return {}
    raw = t.data["options"]
    where = t.key("options")
    if not isinstance(raw, dict):
        raise SiteFileError(
            f"{where}: expected a table [surveys.options] of kind-specific options, got "
            f"{type(raw).__name__}"
        )
    from geo_corrosion.measurements import get_kind  # lazy: kinds import this module's types

    kind_obj = get_kind(kind, where=f"{t.key('kind')}: ")
    return dict(kind_obj.parse_options(raw, where=where, root=root))


#: [run] key -> the :class:`~geo_corrosion.repair.LayoutParams` field that checks its range
_LAYOUT_FIELDS = {
    "repair_margin": "margin_mm", "merge_gap": "merge_gap_mm", "min_repair_size": "min_size_mm",
    "bar_diameter": "bar_diameter_mm", "max_aggregate": "max_aggregate_mm",
    "slab_thickness": "slab_thickness_mm", "sawcut_depth": "sawcut_depth_mm",
    "axis_angle_deg": "axis_angle_deg",
}


def _check_layout(t: _Table, values: dict[str, float | None]) -> None:
    """Check each layout key of [run] against the repair layout's own limits.

    Each value is tried alone in a :class:`~geo_corrosion.repair.LayoutParams` (the others at
    their defaults), so the message names the site-file key that is out of range.
    """
    from geo_corrosion.errors import RepairError
    from geo_corrosion.repair import LayoutParams

    for key, fld in _LAYOUT_FIELDS.items():
        if not t.has(key):
            continue
        try:
            LayoutParams(**{fld: values[fld]})
        except RepairError as err:
            raise SiteFileError(f"{t.key(key)}: {t.data[key]!r} is out of range ({err})") from err


def _variogram(t: _Table) -> dict[str, dict[str, Any]]:
    """Read the [run.variogram.<kind>] tables; the kinds are those of the kind registry."""
    from geo_corrosion.errors import PluginError
    from geo_corrosion.measurements import MEASUREMENTS

    vt = t.data.get("variogram", {})
    if not isinstance(vt, dict):
        raise SiteFileError(f"{t.key('variogram')}: expected tables such as "
                            "[run.variogram.potential]")
    file = t.where.removesuffix(": [run]")
    fixed: dict[str, dict[str, Any]] = {}
    for kind, spec in vt.items():
        w = f"{file}: [run.variogram.{kind}]"
        if kind not in MEASUREMENTS.load():
            known = MEASUREMENTS.names()
            close = difflib.get_close_matches(kind, known, n=1)
            hint = f"; did you mean {close[0]!r}?" if close else ""
            raise SiteFileError(
                f"{w}: unknown measurement kind {kind!r}{hint} Known kinds: {', '.join(known)}. "
                "Name the table [run.variogram.<kind>] after one of them")
        try:
            MEASUREMENTS.get(kind)  # a plugin kind that failed to load raises here
        except PluginError as err:
            raise SiteFileError(f"{w}: {err}") from err
        kt = _Table(spec, w, _VARIOGRAM_KEYS)
        fx: dict[str, Any] = {}
        if kt.has("model"):
            fx["model"] = kt.str("model", choices=VARIOGRAM_MODELS[1:])
        for k in ("nugget", "psill", "shape", "anisotropy_ratio", "anisotropy_angle_deg"):
            if kt.has(k):
                fx[k] = kt.num(k, finite=True)
        for k in ("nugget", "psill"):
            if fx.get(k, 0.0) < 0:
                raise SiteFileError(f"{kt.key(k)}: expected a number of 0 or more (value unit "
                                    f"squared of the kriged variable), got {fx[k]!r}")
        if fx.get("nugget") == 0 and fx.get("psill") == 0:
            raise SiteFileError(f"{w}: nugget and psill are both 0, so the variogram has no sill; "
                                "give a positive value to one of them, or leave one to be fitted")
        if "anisotropy_ratio" in fx and not 0 < fx["anisotropy_ratio"] <= 1:
            raise SiteFileError(f"{kt.key('anisotropy_ratio')}: expected the minor/major range "
                                f"ratio, more than 0 and at most 1, got {fx['anisotropy_ratio']!r}")
        if "shape" in fx:
            from geo_corrosion.surfaces.variogram import _SHAPE_BOUNDS

            lo, hi = _SHAPE_BOUNDS["matern"]
            if fx.get("model", "matern") != "matern":
                raise SiteFileError(f"{kt.key('shape')}: shape is the Matern smoothness and "
                                    f"applies only to model = \"matern\", not {fx['model']!r}")
            if not lo <= fx["shape"] <= hi:
                raise SiteFileError(f"{kt.key('shape')}: expected a Matern shape from {lo:g} to "
                                    f"{hi:g}, got {fx['shape']!r}")
        if kt.has("range"):
            fx["range_m"] = kt.length("range", 0.0)
        fixed[str(kind)] = fx
    return fixed


def _run(data: object, where: str) -> RunParams:
    t = _Table(data, where, _RUN_KEYS)
    d = RunParams()
    contingency = t.num("contingency", d.contingency)
    if not 0 <= contingency <= 1:
        raise SiteFileError(f"{t.key('contingency')}: expected a fraction 0..1 (0.2 = 20 %)")
    n_nb = t.num("n_neighbors", d.n_neighbors, positive=True, finite=True)
    if n_nb != int(n_nb) or n_nb < 3:
        raise SiteFileError(f"{t.key('n_neighbors')}: expected a whole number of at least 3")
    flag = t.data.get("correct_only_outside_band", d.correct_only_outside_band)
    if not isinstance(flag, bool):
        raise SiteFileError(f"{t.key('correct_only_outside_band')}: expected true or false")
    calibrate = t.data.get("calibrate_variance", d.calibrate_variance)
    if not isinstance(calibrate, bool):
        raise SiteFileError(f"{t.key('calibrate_variance')}: expected true or false")
    fixed = _variogram(t)

    def _mm(name: str, default: float | None) -> float | None:
        return t.length(name, 0.0) * 1000.0 if t.has(name) else default

    layout: dict[str, Any] = {
        "margin_mm": t.length("repair_margin", d.repair_margin_m) * 1000.0,
        "merge_gap_mm": t.length("merge_gap", d.merge_gap_m) * 1000.0,
        "min_size_mm": t.length("min_repair_size", d.min_repair_size_m) * 1000.0,
        "bar_diameter_mm": _mm("bar_diameter", d.bar_diameter_mm),
        "max_aggregate_mm": _mm("max_aggregate", d.max_aggregate_mm),
        "slab_thickness_mm": _mm("slab_thickness", None),
        "sawcut_depth_mm": _mm("sawcut_depth", d.sawcut_depth_mm),
        "axis_angle_deg": t.num("axis_angle_deg", d.axis_angle_deg, finite=True),
    }
    _check_layout(t, layout)
    min_zone_m2 = (parse_area(t.data["min_zone_area"], where=t.key("min_zone_area"))
                   if t.has("min_zone_area") else d.min_zone_area_m2)
    return RunParams(
        bar_diameter_mm=layout["bar_diameter_mm"],
        max_aggregate_mm=layout["max_aggregate_mm"],
        slab_thickness_mm=layout["slab_thickness_mm"],
        sawcut_depth_mm=layout["sawcut_depth_mm"],
        axis_angle_deg=layout["axis_angle_deg"],
        anode_spacing_mm=_mm("anode_spacing", None),
        min_zone_area_m2=min_zone_m2,
        zone_smoothing_m=t.length("zone_smoothing", d.zone_smoothing_m),
        variogram=fixed,
        cell_size_m=t.length("cell_size", d.cell_size_m),
        max_distance_m=t.length("max_distance", d.max_distance_m),
        contour_interval_mv=t.num("contour_interval_mv", d.contour_interval_mv, positive=True,
                                  finite=True),
        repair_margin_m=t.length("repair_margin", d.repair_margin_m),
        merge_gap_m=t.length("merge_gap", d.merge_gap_m),
        min_repair_size_m=t.length("min_repair_size", d.min_repair_size_m),
        contingency=contingency,
        n_neighbors=int(n_nb),
        variogram_model=t.str("variogram_model", d.variogram_model, choices=VARIOGRAM_MODELS),
        resistivity_reference_c=t.num("resistivity_reference_c", d.resistivity_reference_c,
                                      finite=True),
        activation_energy_kj_mol=t.num(
            "activation_energy_kj_mol", d.activation_energy_kj_mol, positive=True, finite=True
        ),
        cse_reference_c=t.num("cse_reference_c", d.cse_reference_c, finite=True),
        correct_only_outside_band=flag, calibrate_variance=calibrate,
    )


_WEBMAP_KEYS = ("basemap_url", "basemap_attribution")


def _webmap(data: object, where: str) -> dict[str, str | None]:
    """Read the [webmap] table: an optional street basemap for ``webmap.html``.

    Returns
    -------
    dict
        ``basemap_url`` and ``basemap_attribution`` (None when not given), for :class:`RunParams`.
    """
    t = _Table(data, where, _WEBMAP_KEYS)
    url = t.opt_str("basemap_url")
    attribution = t.opt_str("basemap_attribution")
    if url is not None:
        missing = [p for p in ("{z}", "{x}", "{y}") if p not in url]
        if not url.startswith("https://") or missing:
            why = (f"it lacks {', '.join(missing)}" if url.startswith("https://")
                   else "it does not start with https://")
            raise SiteFileError(
                f"{t.key('basemap_url')}: {url!r} is not a tile URL template ({why}); give an "
                "https:// URL with {z}, {x} and {y}, such as "
                "\"https://tile.example.org/{z}/{x}/{y}.png\", or remove the key")
        if re.search(r"[\s\"'<>`\\]", url):
            raise SiteFileError(f"{t.key('basemap_url')}: {url!r} holds a space, quote, angle "
                                "bracket or backslash; a tile URL template has none")
        if attribution is None:
            raise SiteFileError(
                f"{t.key('basemap_attribution')}: missing; a basemap_url needs the tiles' "
                "attribution as their provider asks for it, e.g. basemap_attribution = "
                "\"(c) OpenStreetMap contributors\"")
    elif attribution is not None:
        raise SiteFileError(f"{t.key('basemap_attribution')}: given without basemap_url; give "
                            "both, or remove it")
    return {"basemap_url": url, "basemap_attribution": attribution}


def _zoning(rules: list[Any], where: str) -> tuple[tuple[str, dict[str, Any]], ...]:
    """Ordered zoning rules, each ``{ rule = "name", <its keyword parameters> }``.

    The rule names and their parameters are checked against the zoning-rule
    registry (built-ins and plugins).
    """
    from geo_corrosion.errors import PluginError, ZoningError
    from geo_corrosion.zoning import ZONING_RULES

    out = []
    for i, r in enumerate(rules):
        w = f"{where}[{i}]"
        if not isinstance(r, dict) or "rule" not in r:
            raise SiteFileError(f"{w}: expected a table with rule = \"<name>\"")
        kw = {k: v for k, v in r.items() if k != "rule"}
        try:
            cls = ZONING_RULES.get(str(r["rule"]), where=f"{w}.rule: ")
            allowed = set(cls.parameters())
        except PluginError as err:
            raise SiteFileError(str(err)) from err
        except Exception as err:  # a rule class that declares a bad interface
            raise SiteFileError(f"{w}: {err}") from err
        unknown = sorted(set(kw) - allowed)
        if unknown:
            raise SiteFileError(f"{w}: rule {r['rule']!r} takes no parameter(s) {unknown}; "
                                f"it takes: {', '.join(sorted(allowed)) or 'none'}")
        check = getattr(cls, "check_parameters", None)
        try:
            if check is not None:
                check(kw, where=w)
            cls(**kw)  # what the pipeline will build; fail here, with the place named
        except ZoningError as err:
            msg = str(err)
            raise SiteFileError(msg if msg.startswith(w) else f"{w}: rule {r['rule']!r}: {msg}"
                                ) from err
        except Exception as err:  # a plugin rule that refuses its parameters otherwise
            raise SiteFileError(f"{w}: rule {r['rule']!r} cannot be built from these "
                                f"parameters: {err}") from err
        out.append((str(r["rule"]), kw))
    return tuple(out)


_COMBINED_KEYS = ("default", "classes", "rules", "class_sets")
_COMBINED_CLASS_KEYS = ("key", "label", "color")
_COMBINED_RULE_KEYS = ("name", "class", "potential", "resistivity", "rate", "low_cover")
_HEX_COLOR = re.compile(r"#[0-9A-Fa-f]{6}")


def _combined_rule_problem(r: Mapping[str, Any], name: str, classes: list[str],
                           sets: Mapping[str, Any]) -> tuple[str, str] | None:
    """Return what is wrong with a combined rule, as (key or "", message); None if nothing."""
    from geo_corrosion.condition.combined import KINDS

    label = f"rule {name!r}"
    if "class" not in r:
        return "class", f"missing; {label} must give a class, one of: {', '.join(classes)}"
    result = r["class"]
    if not isinstance(result, str) or result not in classes:
        return "class", (f"{label} gives class {result!r}, which is not one of the classes: "
                         f"{', '.join(classes)}")
    for kind in KINDS:
        if kind not in r:
            continue
        v, cs = r[kind], sets[kind]
        keys = f"class set {cs.name!r} has the keys: {', '.join(cs.keys)}"
        given = [v] if isinstance(v, str) else v
        if not isinstance(given, list | tuple) or not all(isinstance(x, str) for x in given):
            return kind, f"{label}: expected a class key or a list of class keys, got {v!r}; {keys}"
        if not given:
            return kind, f"{label}: the list is empty; name at least one class; {keys}"
        bad = [x for x in given if x not in cs.keys]
        if bad:
            close = difflib.get_close_matches(bad[0], cs.keys, n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            return kind, (f"{label}: unknown {kind} class key(s) {', '.join(map(repr, bad))}"
                          f"{hint}; {keys}")
    if "low_cover" in r and not isinstance(r["low_cover"], bool):
        return "low_cover", f"{label}: expected true or false, got {r['low_cover']!r}"
    if not any(k in r for k in (*KINDS, "low_cover")):
        return "", f"{label} has no condition; give potential, resistivity, rate or low_cover"
    return None


def _condition(data: object, where: str) -> dict[str, Any] | None:
    """Read the [condition] table: only [condition.combined], the combined rule table.

    Checked here key by key, with messages that name ``[condition.combined].<key>``; the rule
    table is then built by :meth:`~geo_corrosion.condition.combined.RuleTable.from_dict`.
    """
    if data is None:
        return None
    t = _Table(data, where, ("combined",))
    if "combined" not in t.data:
        return None
    from geo_corrosion.condition.classes import get_class_set
    from geo_corrosion.condition.combined import DEFAULT_RULES, KINDS, RuleTable
    from geo_corrosion.errors import ConditionError

    file = where.removesuffix(": [condition]")
    w = f"{file}: [condition.combined]"
    ct = _Table(t.data["combined"], w, _COMBINED_KEYS)
    sets = {k: get_class_set(v) for k, v in KINDS.items()}
    if ct.has("class_sets"):
        st = _Table(ct.data["class_sets"], ct.key("class_sets"), tuple(KINDS))
        for kind in st.data:
            try:
                cs = get_class_set(st.str(kind), field=True)
            except ConditionError as err:
                raise SiteFileError(f"{st.key(kind)}: {err}") from err
            if cs.variable != sets[kind].variable:
                raise SiteFileError(f"{st.key(kind)}: class set {cs.name!r} classifies "
                                    f"{cs.variable}, not the {kind} ({sets[kind].variable})")
            sets[kind] = cs
    if ct.has("classes"):
        classes: list[str] = []
        for j, c in enumerate(ct.list("classes")):
            kt = _Table(c, f"{ct.key('classes')}[{j}]", _COMBINED_CLASS_KEYS)
            key = kt.str("key")
            if key in classes:
                raise SiteFileError(f"{kt.key('key')}: class key {key!r} is given twice; keys "
                                    "must be unique")
            kt.opt_str("label")
            color = kt.opt_str("color")
            if color is not None and not _HEX_COLOR.fullmatch(color):
                raise SiteFileError(f"{kt.key('color')}: expected a colour as \"#RRGGBB\", such "
                                    f"as \"#D55E00\", got {color!r}")
            classes.append(key)
        classes += [k for k in ("unclassified", "no_data") if k not in classes]
    else:
        classes = [c.key for c in DEFAULT_RULES.classes]
    default = ct.str("default", "unclassified")
    if default not in classes:
        raise SiteFileError(f"{ct.key('default')}: {default!r} is not one of the classes: "
                            f"{', '.join(classes)}")
    if ct.has("rules"):
        for i, r in enumerate(ct.list("rules")):
            rt = _Table(r, f"{ct.key('rules')}[{i}]", _COMBINED_RULE_KEYS)
            problem = _combined_rule_problem(rt.data, rt.str("name", f"rule {i + 1}"), classes,
                                             sets)
            if problem:
                key, msg = problem
                raise SiteFileError(f"{rt.key(key) if key else rt.where}: {msg}")
    else:
        for rule in DEFAULT_RULES.rules:
            problem = _combined_rule_problem(rule.to_dict(), rule.name, classes, sets)
            if problem:
                given = [k for k in ("classes", "class_sets") if ct.has(k)]
                raise SiteFileError(
                    f"{w}: the default rules do not fit the {' and '.join(given)} given: default "
                    f"{problem[1]}; give your own [[condition.combined.rules]] as well")
    spec = t.data["combined"]
    try:
        RuleTable.from_dict(spec, where=f"{w}: ")
    except ConditionError as err:
        raise SiteFileError(str(err)) from err
    return dict(spec)


_TOP_KEYS = ("site", "run", "levels", "surveys", "zoning", "condition", "webmap")


def _array(top: _Table, name: str) -> list[Any]:
    """Return a top-level array of tables (``[[levels]]``, ``[[surveys]]``, ``[[zoning]]``)."""
    v = top.data.get(name, [])
    if not isinstance(v, list):
        got = f"a table [{name}]" if isinstance(v, dict) else f"{v!r}"
        raise SiteFileError(f"{top.where}: [[{name}]]: expected an array of tables, one "
                            f"[[{name}]] table per entry; got {got} (write [[{name}]] with double "
                            "brackets)")
    return v


def read_site(path: str | Path) -> SiteConfig:
    """Read and validate a site file.

    Parameters
    ----------
    path : str or Path
        The site file (TOML), or a site folder holding ``site.toml``.

    Returns
    -------
    SiteConfig

    Raises
    ------
    SiteFileError
        If the file is missing, not TOML, or holds an unknown key or a bad value.
    CRSError
        If the CRS is unknown, geographic, or not in metres or feet.
    """
    p = Path(path)
    if p.is_dir():
        p = p / "site.toml"
    if not p.is_file():
        raise SiteFileError(f"{p}: site file not found; `geo-corrosion init DIR` writes a template")
    try:
        data = tomllib.loads(p.read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as err:
        raise SiteFileError(f"{p}: not valid TOML: {err}") from err
    except UnicodeDecodeError as err:
        raise SiteFileError(f"{p}: not a UTF-8 text file") from err
    root = p.parent.resolve()
    top = _Table(data, str(p), _TOP_KEYS)
    if "site" not in data:
        raise SiteFileError(f"{p}: missing the [site] table (name, crs, units)")
    st = _Table(data["site"], f"{p}: [site]", _SITE_KEYS)
    crs, crs_unit = site_crs(st.data.get("crs"), where=st.key("crs"))
    levels_raw = _array(top, "levels")
    if not levels_raw:
        raise SiteFileError(f"{p}: no [[levels]] declared; a site needs at least one level")
    levels = tuple(_level(lv, f"{p}: [[levels]][{i}]", root) for i, lv in enumerate(levels_raw))
    ids = [lv.id for lv in levels]
    if len(set(ids)) != len(ids):
        raise SiteFileError(f"{p}: level ids must be unique; got {ids}")
    names = [lv.name for lv in levels]
    if len(set(names)) != len(names):
        dup = sorted({n for n in names if names.count(n) > 1})
        raise SiteFileError(f"{p}: [[levels]] names must differ (maps, drawings and the report "
                            f"name each level); repeated: {', '.join(map(repr, dup))}")
    surveys = tuple(
        _survey(s, f"{p}: [[surveys]][{i}]", root, set(ids))
        for i, s in enumerate(_array(top, "surveys"))
    )
    sids = [s.id for s in surveys]
    if len(set(sids)) != len(sids):
        dup = sorted({s for s in sids if sids.count(s) > 1})
        raise SiteFileError(f"{p}: survey ids must be unique; repeated: {', '.join(dup)}")
    return SiteConfig(
        path=p.resolve(),
        root=root,
        name=st.str("name"),
        owner=st.str("owner", "(owner not given)"),
        crs=crs,
        crs_unit=crs_unit,
        units=st.str("units", "metric", choices=("metric", "us")),
        notes=st.text("notes"),
        levels=levels,
        surveys=surveys,
        run=dataclasses.replace(_run(data.get("run", {}), f"{p}: [run]"),
                                **_webmap(data.get("webmap", {}), f"{p}: [webmap]")),
        zoning=_zoning(_array(top, "zoning"), f"{p}: [[zoning]]"),
        combined_rules=_condition(data.get("condition"), f"{p}: [condition]"),
    )

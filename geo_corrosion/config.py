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

import difflib
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
    return round(float(m.group(1)) * LENGTH_TO_M[unit], 12)


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
    """Parameters of a run; lengths in metres."""

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

    def opt_str(self, name: str) -> str | None:
        return self.str(name) if name in self.data else None

    def num(self, name: str, default: float | None = None, *, positive: bool = False) -> float:
        if name not in self.data:
            if default is None:
                raise SiteFileError(f"{self.key(name)}: missing; expected a number")
            return default
        v = self.data[name]
        if isinstance(v, bool) or not isinstance(v, int | float):
            raise SiteFileError(f"{self.key(name)}: expected a number, got {v!r}")
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


def _run(data: object, where: str) -> RunParams:
    t = _Table(data, where, _RUN_KEYS)
    d = RunParams()
    contingency = t.num("contingency", d.contingency)
    if not 0 <= contingency <= 1:
        raise SiteFileError(f"{t.key('contingency')}: expected a fraction 0..1 (0.2 = 20 %)")
    n_nb = t.num("n_neighbors", d.n_neighbors, positive=True)
    if n_nb != int(n_nb) or n_nb < 3:
        raise SiteFileError(f"{t.key('n_neighbors')}: expected a whole number of at least 3")
    flag = t.data.get("correct_only_outside_band", d.correct_only_outside_band)
    if not isinstance(flag, bool):
        raise SiteFileError(f"{t.key('correct_only_outside_band')}: expected true or false")
    fixed: dict[str, dict[str, Any]] = {}
    vt = t.data.get("variogram", {})
    if not isinstance(vt, dict):
        raise SiteFileError(f"{t.key('variogram')}: expected tables such as [run.variogram.potential]")
    for kind, spec in vt.items():
        kt = _Table(spec, f"{t.key('variogram')}.{kind}", _VARIOGRAM_KEYS)
        fx: dict[str, Any] = {}
        if kt.has("model"):
            fx["model"] = kt.str("model", choices=VARIOGRAM_MODELS[1:])
        for k in ("nugget", "psill", "shape", "anisotropy_ratio", "anisotropy_angle_deg"):
            if kt.has(k):
                fx[k] = kt.num(k)
        if kt.has("range"):
            fx["range_m"] = kt.length("range", 0.0)
        fixed[str(kind)] = fx
    def _mm(name: str, default: float | None) -> float | None:
        return t.length(name, 0.0) * 1000.0 if t.has(name) else default

    min_zone = t.data.get("min_zone_area")
    if min_zone is not None:
        m = re.fullmatch(r"\s*(\d+(?:\.\d*)?)\s*(m2|ft2)\s*", str(min_zone))
        if not m:
            raise SiteFileError(f"{t.key('min_zone_area')}: expected an area such as \"5 ft2\" "
                                f"or \"0.5 m2\"; got {min_zone!r}")
        min_zone_m2 = float(m.group(1)) * (1.0 if m.group(2) == "m2" else 0.3048**2)
    else:
        min_zone_m2 = d.min_zone_area_m2
    return RunParams(
        bar_diameter_mm=_mm("bar_diameter", d.bar_diameter_mm) or d.bar_diameter_mm,
        max_aggregate_mm=_mm("max_aggregate", d.max_aggregate_mm) or d.max_aggregate_mm,
        slab_thickness_mm=_mm("slab_thickness", None),
        sawcut_depth_mm=_mm("sawcut_depth", d.sawcut_depth_mm) or d.sawcut_depth_mm,
        axis_angle_deg=t.num("axis_angle_deg", d.axis_angle_deg),
        anode_spacing_mm=_mm("anode_spacing", None),
        min_zone_area_m2=min_zone_m2,
        zone_smoothing_m=t.length("zone_smoothing", d.zone_smoothing_m),
        variogram=fixed,
        cell_size_m=t.length("cell_size", d.cell_size_m),
        max_distance_m=t.length("max_distance", d.max_distance_m),
        contour_interval_mv=t.num("contour_interval_mv", d.contour_interval_mv, positive=True),
        repair_margin_m=t.length("repair_margin", d.repair_margin_m),
        merge_gap_m=t.length("merge_gap", d.merge_gap_m),
        min_repair_size_m=t.length("min_repair_size", d.min_repair_size_m),
        contingency=contingency,
        n_neighbors=int(n_nb),
        variogram_model=t.str("variogram_model", d.variogram_model, choices=VARIOGRAM_MODELS),
        resistivity_reference_c=t.num("resistivity_reference_c", d.resistivity_reference_c),
        activation_energy_kj_mol=t.num(
            "activation_energy_kj_mol", d.activation_energy_kj_mol, positive=True
        ),
        cse_reference_c=t.num("cse_reference_c", d.cse_reference_c),
        correct_only_outside_band=flag,
    )


def _zoning(rules: list[Any], where: str) -> tuple[tuple[str, dict[str, Any]], ...]:
    """Ordered zoning rules, each ``{ rule = "name", <its keyword parameters> }``.

    The rule names and their parameters are checked against the zoning-rule
    registry (built-ins and plugins).
    """
    from geo_corrosion.errors import PluginError
    from geo_corrosion.plugins import ZONING_RULES

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
        out.append((str(r["rule"]), kw))
    return tuple(out)


def _condition(data: object, where: str) -> dict[str, Any] | None:
    if data is None:
        return None
    t = _Table(data, where, ("combined",))
    if "combined" not in t.data:
        return None
    from geo_corrosion.condition.combined import RuleTable
    from geo_corrosion.errors import ConditionError

    spec = t.data["combined"]
    try:
        RuleTable.from_dict(spec, where=f"{where}.combined: ")
    except ConditionError as err:
        raise SiteFileError(str(err)) from err
    return dict(spec)


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
    top = _Table(data, str(p), ("site", "run", "levels", "surveys", "zoning", "condition"))
    if "site" not in data:
        raise SiteFileError(f"{p}: missing the [site] table (name, crs, units)")
    st = _Table(data["site"], f"{p}: [site]", _SITE_KEYS)
    crs, crs_unit = site_crs(st.data.get("crs"), where=st.key("crs"))
    levels_raw = top.list("levels")
    if not levels_raw:
        raise SiteFileError(f"{p}: no [[levels]] declared; a site needs at least one level")
    levels = tuple(_level(lv, f"{p}: [[levels]][{i}]", root) for i, lv in enumerate(levels_raw))
    ids = [lv.id for lv in levels]
    if len(set(ids)) != len(ids):
        raise SiteFileError(f"{p}: level ids must be unique; got {ids}")
    surveys = tuple(
        _survey(s, f"{p}: [[surveys]][{i}]", root, set(ids))
        for i, s in enumerate(top.list("surveys"))
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
        notes=st.str("notes", "") if st.has("notes") else "",
        levels=levels,
        surveys=surveys,
        run=_run(data.get("run", {}), f"{p}: [run]"),
        zoning=_zoning(top.list("zoning"), f"{p}: [[zoning]]"),
        combined_rules=_condition(data.get("condition"), f"{p}: [condition]"),
    )

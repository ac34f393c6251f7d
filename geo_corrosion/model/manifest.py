"""The run manifest, ``run.json``: written at the end of a run and read back by the rebuilds.

It holds the inputs with checksums, every parameter, package versions, per-level
statistics, class areas, variograms, cross-validation, zones and the schedule.
:class:`Manifest` is its typed form, one frozen dataclass per part:
:meth:`Manifest.from_json` reads and checks the JSON (a missing key, a key of the wrong
type or an unknown key is an :class:`~geo_corrosion.errors.ExportError` naming the file
and the JSON path), :meth:`Manifest.to_json` gives back exactly the JSON a run writes
(keys, order and values).  :func:`manifest` builds it from a
:class:`~geo_corrosion.model.results.RunResult`; :func:`read_run` reads it from an output
folder.  The web map, the report and ``geo-corrosion quantities`` read its attributes.
"""

from __future__ import annotations

import copy
import dataclasses
import hashlib
import json
import platform
import re
import time
import types
import typing
from collections.abc import Collection, Mapping
from dataclasses import asdict, dataclass, field
from datetime import UTC, datetime
from importlib.metadata import PackageNotFoundError, version
from pathlib import Path
from typing import Any, Self

import numpy as np

from geo_corrosion import qa
from geo_corrosion._timing import rounded
from geo_corrosion.cautions import CAUTIONS
from geo_corrosion.config import SiteConfig
from geo_corrosion.errors import ExportError
from geo_corrosion.model.results import RunResult
from geo_corrosion.units import LENGTH_TO_M, report_units

__all__ = ["MANIFEST_NAME", "FORMAT_VERSION", "manifest", "read_run", "read_run_json",
           "result_manifest",
           "file_sha256", "RunParameters", "input_files", "package_versions", "json_default",
           "Manifest", "SiteRecord", "InputFile", "SurveyRecord", "QaCount", "QaSummary",
           "LevelRecord", "Georeference", "ControlPointResidual", "KindRecord",
           "SurfaceRecord", "VariogramRecord", "VariogramModelRecord", "CandidateRecord",
           "CrossValidationRecord", "ExperimentalVariogramRecord", "DirectionalVariogram",
           "DirectionalVariograms", "ClassArea", "ConditionRecord", "AreaBeyondThreshold",
           "SiteThreshold", "SiteThresholdUnavailable", "CombinedClassArea",
           "CombinedClassRecord", "CombinedRuleRecord", "CombinedRules", "LifeRange", "LifeSummary",
           "SpacingRecord", "DensityRuleRecord", "NeighbourhoodRecord", "PointsClassCount",
           "PointsRecord",
           "PlanningNotes", "ZoningRuleRecord", "ZoneRecord", "ScheduleRow", "RepairRecord",
           "PayAreaRecord"]

MANIFEST_NAME = "run.json"
#: ``geo_corrosion_run`` of the manifests this version writes and reads.
FORMAT_VERSION = 1

def file_sha256(path: Path) -> str:
    """SHA-256 of a file, hex."""
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for chunk in iter(lambda: f.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def input_files(cfg: SiteConfig) -> list[dict[str, Any]]:
    """Every input file of a site with its path (relative to the site folder), SHA-256 and size."""
    paths = {cfg.path}
    for lv in cfg.levels:
        refs = [lv.slab, *lv.exclusions, *[j.ref for j in lv.joints],
                *([lv.column_grid] if lv.column_grid else []),
                *[o.ref for o in lv.overlays]]
        paths.update(r.path for r in refs)
    paths.update(s.path for s in cfg.surveys)
    if cfg.quantities.price_list is not None:
        paths.add(cfg.quantities.price_list)
    out = []
    for p in sorted(paths):
        try:
            rel = str(p.relative_to(cfg.root))
        except ValueError:
            rel = str(p)
        out.append({"path": rel, "sha256": file_sha256(p), "bytes": p.stat().st_size})
    return out


def package_versions() -> dict[str, str]:
    """Return the versions of Python, geo_corrosion, its libraries and GDAL."""
    out = {"python": platform.python_version()}
    for pkg in ("geo_corrosion", "numpy", "scipy", "pandas", "geopandas", "shapely", "pyproj",
                "pyogrio", "rasterio", "numba", "folium", "ezdxf", "openpyxl", "matplotlib"):
        try:
            out[pkg] = version(pkg)
        except PackageNotFoundError:
            out[pkg] = "not installed"
    try:
        import rasterio

        out["gdal"] = rasterio.__gdal_version__
    except ImportError:  # pragma: no cover
        pass
    return out


def json_default(o: Any) -> Any:
    """Turn numpy scalars and arrays and paths into JSON types (``json.dumps(default=...)``)."""
    if isinstance(o, np.integer):
        return int(o)
    if isinstance(o, np.floating):
        return None if not np.isfinite(o) else float(o)
    if isinstance(o, np.ndarray):
        return o.tolist()
    if isinstance(o, Path):
        return str(o)
    return str(o)




# --------------------------------------------------------------------------- JSON <-> records

_SIMPLE_KEY = re.compile(r"[A-Za-z_][A-Za-z0-9_\-]*\Z")


def _at(path: str, key: str | int) -> str:
    """JSON path of a child: ``levels.L2.kinds``, ``schedule[3]``, ``x["a b"]``."""
    if isinstance(key, int):
        return f"{path}[{key}]"
    if _SIMPLE_KEY.match(key):
        return f"{path}.{key}" if path else key
    return f"{path}[{json.dumps(key)}]"


def _found(v: Any) -> str:
    """Describe a JSON value for a message."""
    if v is None:
        return "null"
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int | float):
        return f"the number {v!r}"
    if isinstance(v, str):
        return f"the text {v[:40]!r}"
    return "a list" if isinstance(v, list) else "an object"


_HINTS: dict[type, dict[str, Any]] = {}


def _hints(tp: type) -> dict[str, Any]:
    """Return the resolved field types of a dataclass (cached)."""
    if tp not in _HINTS:
        _HINTS[tp] = typing.get_type_hints(tp)
    return _HINTS[tp]


def _key(f: dataclasses.Field[Any]) -> str:
    return str(f.metadata.get("key", f.name))


def _meta(*, key: str | None = None, optional: bool = False,
          derived: bool = False) -> dict[str, Any]:
    """Return field metadata: the JSON ``key`` (default the field name), ``optional``.

    ``optional``: the key is absent when the value is None; ``derived``: the value is set
    by the part's ``_read`` from other keys.
    """
    out: dict[str, Any] = {"optional": optional, "derived": derived}
    if key is not None:
        out["key"] = key
    return out


@dataclass(frozen=True)
class RunParameters:
    """The run's parameters as ``run.json`` keeps them (``SiteConfig.parameters()``).

    The ``[run]`` and ``[webmap]`` values, lengths in the unit their name carries; the
    layout's margin, merge gap and minimum size in metres.
    """

    cell_size_m: float
    max_distance_m: float | None
    contour_interval_mv: float
    repair_margin_m: float
    merge_gap_m: float
    min_repair_size_m: float
    repair_increment_m: float | None
    contingency: float
    n_neighbors: int
    variogram_model: str
    resistivity_reference_c: float
    activation_energy_kj_mol: float
    cse_reference_c: float
    correct_only_outside_band: bool
    calibrate_variance: bool
    #: absent from runs made before the key existed (separable approximation then)
    interval_method: str | None = field(metadata=_meta(optional=True))
    realisations: int | None = field(metadata=_meta(optional=True))
    bar_diameter_mm: float
    max_aggregate_mm: float
    slab_thickness_mm: float | None
    sawcut_depth_mm: float
    axis_angle_deg: float
    anode_spacing_mm: float | None
    bar_replacement_share: float
    bar_spacing_mm: float
    pay_area: str
    pay_area_share: float
    min_zone_area_m2: float
    zone_smoothing_m: float
    variogram: Mapping[str, Mapping[str, Any]]
    kinds: Mapping[str, Mapping[str, Any]]
    basemap_url: str | None
    basemap_attribution: str | None


class _Reader:
    """Check JSON values against the types of the manifest's parts.

    Every message names the file (``where``) and the JSON path, and says to re-run.
    """

    def __init__(self, where: str) -> None:
        self.where = where

    def error(self, path: str, problem: str) -> ExportError:
        """Return the error for a problem at a JSON path."""
        return ExportError(f"{self.where}: {path or 'the top level'}: {problem}; it is not "
                           "a manifest this version of geo_corrosion reads: re-run "
                           "`geo-corrosion run`")

    def value(self, tp: Any, v: Any, path: str) -> Any:
        """Check a JSON value against a type and build it (lists become tuples)."""
        if tp is Any:
            return copy.deepcopy(v)
        origin = typing.get_origin(tp)
        if origin in (typing.Union, types.UnionType):
            args = typing.get_args(tp)
            if v is None and type(None) in args:
                return None
            rest = [a for a in args if a is not type(None)]
            if len(rest) != 1:  # pragma: no cover - a part's _read handles such a field
                raise TypeError(f"no generic reader for {tp}")
            return self.value(rest[0], v, path)
        if tp in (bool, int, float, str):
            if tp is bool or tp is str:
                ok = isinstance(v, tp)
            else:  # JSON numbers; a float field keeps a whole number as written
                ok = isinstance(v, int if tp is int else int | float) and not isinstance(v, bool)
            if not ok:
                raise self.error(path, f"expected {_expected(tp)}, found {_found(v)}")
            return v
        if origin is tuple:
            args = typing.get_args(tp)
            if not isinstance(v, list):
                raise self.error(path, f"expected {_expected(tp)}, found {_found(v)}")
            if len(args) == 2 and args[1] is Ellipsis:
                return tuple(self.value(args[0], x, _at(path, i)) for i, x in enumerate(v))
            if len(v) != len(args):
                raise self.error(path, f"expected a list of {len(args)}, found {len(v)} items")
            return tuple(self.value(a, x, _at(path, i))
                         for i, (a, x) in enumerate(zip(args, v, strict=True)))
        if origin in (dict, Mapping):
            vt = typing.get_args(tp)[1]
            if not isinstance(v, dict):
                raise self.error(path, f"expected an object, found {_found(v)}")
            return {str(k): self.value(vt, x, _at(path, str(k))) for k, x in v.items()}
        if isinstance(tp, type) and dataclasses.is_dataclass(tp):
            if not isinstance(v, dict):
                raise self.error(path, f"expected an object, found {_found(v)}")
            if issubclass(tp, _Record):
                return tp._read(self, v, path)
            return self.record(tp, v, path)
        raise TypeError(f"no reader for {tp}")  # pragma: no cover - a type of this module

    def record(self, tp: type[Any], d: dict[str, Any], path: str, *,
               given: Mapping[str, Any] | None = None, consumed: Collection[str] = ()) -> Any:
        """Build a dataclass from a JSON object, key by key, refusing unknown keys.

        ``given`` holds the values of derived fields; ``consumed`` the keys they came from.
        """
        hints = _hints(tp)
        kw: dict[str, Any] = dict(given or {})
        known = set(consumed)
        for f in dataclasses.fields(tp):
            if f.metadata.get("derived") or not f.init:
                continue
            key = _key(f)
            known.add(key)
            if key not in d:
                if f.metadata.get("optional"):
                    kw[f.name] = None
                    continue
                raise self.error(_at(path, key), "the key is missing")
            kw[f.name] = self.value(hints[f.name], d[key], _at(path, key))
        unknown = [k for k in d if k not in known]
        if unknown:
            raise self.error(_at(path, unknown[0]), "unknown key")
        return tp(**kw)


def _expected(tp: Any) -> str:
    if tp is bool:
        return "true or false"
    if tp is int:
        return "a whole number"
    if tp is float:
        return "a number"
    if tp is str:
        return "a text"
    if typing.get_origin(tp) is tuple:
        return "a list"
    return "an object"


def _dump(v: Any) -> Any:
    """JSON value of a field: parts as objects, tuples as lists, fresh containers."""
    if isinstance(v, _Record):
        return v.to_json()
    if dataclasses.is_dataclass(v) and not isinstance(v, type):
        return asdict(v)  # a plain record (RunParameters): its fields in order
    if isinstance(v, tuple | list):
        return [_dump(x) for x in v]
    if isinstance(v, Mapping):
        return {k: _dump(x) for k, x in v.items()}
    return v


def _insert(d: dict[str, Any], key: str, value: Any, *, after: str | None = None,
            before: str | None = None) -> dict[str, Any]:
    """Return ``d`` with ``key`` placed after ``after`` or before ``before`` (else last)."""
    out: dict[str, Any] = {}
    for k, v in d.items():
        if k == before:
            out[key] = value
        out[k] = v
        if k == after:
            out[key] = value
    out.setdefault(key, value)
    return out


#: Reporting area units other than m2 (the ``<unit>`` of ``mapped_area_<unit>``).
_REPORT_AREAS = {report_units(system).area for system in ("metric", "us")} - {"m2"}


def _report_area(r: _Reader, d: dict[str, Any], prefix: str, path: str
                 ) -> tuple[str, float, list[str]]:
    """Return unit, value and key of ``<prefix><unit>`` beside ``<prefix>m2`` (reporting unit).

    In metric reporting units the run writes ``<prefix>m2`` once: the unit is then m2 and
    the value that of ``<prefix>m2``.
    """
    m2 = prefix + "m2"
    keys = [k for k in d if k.startswith(prefix) and k[len(prefix):] in _REPORT_AREAS]
    if len(keys) > 1:
        raise r.error(_at(path, keys[1]), f"more than one area in a reporting unit "
                                          f"({', '.join(keys)})")
    if keys:
        return keys[0][len(prefix):], r.value(float, d[keys[0]], _at(path, keys[0])), keys
    if m2 not in d:
        raise r.error(_at(path, m2), "the key is missing")
    return "m2", r.value(float, d[m2], _at(path, m2)), []


class _Record:
    """Base of the manifest's parts: read from and written to JSON field by field.

    A field's JSON key is its name unless its metadata gives ``key``; an ``optional`` field
    is absent from the JSON when None; a ``derived`` field is set by the part's
    :meth:`_read` from keys whose name carries a value (``mapped_area_ft2``).
    """

    @classmethod
    def _read(cls, r: _Reader, d: dict[str, Any], path: str) -> Self:
        return typing.cast(Self, r.record(cls, d, path))

    def to_json(self) -> dict[str, Any]:
        """Return this part as ``run.json`` holds it."""
        out: dict[str, Any] = {}
        for f in dataclasses.fields(typing.cast(Any, self)):
            if f.metadata.get("derived"):
                continue
            v = getattr(self, f.name)
            if v is None and f.metadata.get("optional"):
                continue
            out[_key(f)] = _dump(v)
        return out


# --------------------------------------------------------------------------- the parts


@dataclass(frozen=True)
class ProjectRecord(_Record):
    """``site.project``: the site file's ``[project]`` table (the report's title block)."""

    number: str | None = field(default=None, metadata=_meta(optional=True))
    revision: str | None = field(default=None, metadata=_meta(optional=True))
    date: str | None = field(default=None, metadata=_meta(optional=True))
    engineer: str | None = field(default=None, metadata=_meta(optional=True))
    firm: str | None = field(default=None, metadata=_meta(optional=True))
    seal_note: str | None = field(default=None, metadata=_meta(optional=True))


@dataclass(frozen=True)
class SiteRecord(_Record):
    """``site``: name, owner, site CRS and its unit, reporting units, site file name.

    ``project`` (the ``[project]`` table) is absent when the site file has none.
    """

    name: str
    owner: str
    crs: str
    crs_unit: str
    report_units: str
    site_file: str
    project: ProjectRecord | None = field(default=None, metadata=_meta(optional=True))
    folder: str | None = field(default=None, metadata=_meta(optional=True))


@dataclass(frozen=True)
class InputFile(_Record):
    """``inputs[]``: an input file, relative to the site folder, with its SHA-256 and size."""

    path: str
    sha256: str
    bytes: int


@dataclass(frozen=True)
class SurveyRecord(_Record):
    """``surveys[]``: a survey with its reading count, units and correction records.

    Attributes
    ----------
    unit_in, unit : str
        Unit of the file as read, and the kind's canonical unit the survey was converted to.
    corrections : tuple of mapping
        The correction records of the survey's measurement kind, each with ``correction``
        (what was done), its parameters and usually ``source``.  Their keys belong to the
        kind (a plugin kind writes its own), so they are kept as given.
    """

    id: str
    level: str
    kind: str
    file: str
    readings: int
    unit_in: str
    unit: str
    corrections: tuple[Mapping[str, Any], ...]
    #: the survey's details from the site file, each absent when not given
    date: str | None = field(default=None, metadata=_meta(optional=True))
    crew: str | None = field(default=None, metadata=_meta(optional=True))
    instrument: str | None = field(default=None, metadata=_meta(optional=True))
    electrode: str | None = field(default=None, metadata=_meta(optional=True))
    temperature_c: float | None = field(default=None, metadata=_meta(optional=True))
    weather: str | None = field(default=None, metadata=_meta(optional=True))
    surface_condition: str | None = field(default=None, metadata=_meta(optional=True))
    prewetting: str | None = field(default=None, metadata=_meta(optional=True))


@dataclass(frozen=True)
class QaCount(_Record):
    """``qa.summary[]``: number of findings of one rule and severity in one survey."""

    level_id: str
    survey_id: str
    rule: str
    severity: str
    count: int


@dataclass(frozen=True)
class QaSummary(_Record):
    """``qa``: number of findings, counts by rule, and whether the site could be run."""

    findings: int
    summary: tuple[QaCount, ...]
    runnable: bool


@dataclass(frozen=True)
class ControlPointResidual(_Record):
    """``georeference.control_point_residuals[]``: residual of a control point, CRS units."""

    id: str
    dx: float
    dy: float
    unit: str


@dataclass(frozen=True)
class Georeference(_Record):
    """``levels.<id>.georeference``: local grid to site CRS (rotation, scale, origin)."""

    local_unit: str
    crs_unit: str
    rotation_deg: float
    scale: float
    origin_site: tuple[float, float]
    control_point_residuals: tuple[ControlPointResidual, ...]
    rms_residual: float


@dataclass(frozen=True)
class VariogramModelRecord(_Record):
    """A variogram model with its units (``variogram.model``, ``candidates.<m>.params``).

    Semivariances are in the square of the kriged value's unit (log space for lognormal
    kinds), ranges in the level's plan unit.
    """

    model: str
    nugget: float
    nugget_unit: str
    psill: float
    psill_unit: str
    sill: float
    range: float
    range_unit: str
    range_definition: str
    shape: float | None
    shape_meaning: str | None
    anisotropy_ratio: float
    anisotropy_angle_deg: float


@dataclass(frozen=True)
class CrossValidationRecord(_Record):
    """Cross-validation of a variogram model (``surface.cross_validation``, candidates' ``cv``).

    ``msse_before_calibration`` is there only when the kriging variance was calibrated.
    """

    method: str
    mean_error: float
    rmse: float
    msse: float
    value_unit: str
    n_tested: int
    msse_before_calibration: float | None = field(default=None, metadata=_meta(optional=True))


@dataclass(frozen=True)
class CandidateRecord(_Record):
    """``variogram.candidates.<model>``: a fitted candidate, its WLS residual and CV."""

    params: VariogramModelRecord
    wls_residual: float
    cv: CrossValidationRecord | None


@dataclass(frozen=True)
class ExperimentalVariogramRecord(_Record):
    """``variogram.experimental``: the binned semivariances the models were fitted to."""

    lags: tuple[float, ...]
    lag_unit: str
    gamma: tuple[float, ...]
    gamma_unit: str
    counts: tuple[int, ...]
    direction_deg: float | None
    tolerance_deg: float
    n_readings: int
    n_readings_used: int
    n_pairs: int
    subsampled: bool


@dataclass(frozen=True)
class VariogramRecord(_Record):
    """``surface.variogram``: the chosen model, how it was chosen, and every candidate."""

    model: VariogramModelRecord
    criterion: str
    fallback: bool
    variance_factor: float | None
    notes: tuple[str, ...]
    candidates: Mapping[str, CandidateRecord]
    experimental: ExperimentalVariogramRecord | None


@dataclass(frozen=True)
class DirectionalVariogram(_Record):
    """An experimental variogram along one grid axis (``directional_variograms.along_x``)."""

    direction_deg: float
    lags: tuple[float, ...]
    gamma: tuple[float, ...]
    pairs: tuple[int, ...]


@dataclass(frozen=True)
class DirectionalVariograms(_Record):
    """``surface.directional_variograms``: along x and y, with the anisotropy indication."""

    along_x: DirectionalVariogram
    along_y: DirectionalVariogram
    anisotropy_indication: float | None


@dataclass(frozen=True)
class SurfaceRecord(_Record):
    """``kinds.<kind>.surface``: the kriged surface of a kind on a level.

    Attributes
    ----------
    cell_size, cell_unit
        Grid cell size in the level's plan unit.
    shape : (rows, cols)
    mapped_area_m2 : float
        Area with a kriged value, m2.
    mapped_area_report, area_unit
        The same area in the reporting area unit (``ft2`` or ``m2``): the key
        ``mapped_area_<area_unit>`` (only ``mapped_area_m2`` in metric units).
    contour_interval : float
        In the kind's unit.
    kriged_in : str
        ``linear`` or ``log``.
    """

    cell_size: float
    cell_unit: str
    shape: tuple[int, int]
    mapped_area_m2: float
    mapped_area_report: float = field(metadata=_meta(derived=True))
    area_unit: str = field(metadata=_meta(derived=True))
    variogram: VariogramRecord
    cross_validation: CrossValidationRecord
    directional_variograms: DirectionalVariograms
    contour_interval: float
    kriged_in: str

    @classmethod
    def _read(cls, r: _Reader, d: dict[str, Any], path: str) -> Self:
        unit, value, keys = _report_area(r, d, "mapped_area_", path)
        return typing.cast(Self, r.record(
            cls, d, path, given={"mapped_area_report": value, "area_unit": unit},
            consumed=keys))

    def to_json(self) -> dict[str, Any]:
        """Return the surface record as ``run.json`` holds it."""
        out = super().to_json()
        if self.area_unit == "m2":
            return out
        return _insert(out, f"mapped_area_{self.area_unit}", self.mapped_area_report,
                       after="mapped_area_m2")


@dataclass(frozen=True)
class ClassArea(_Record):
    """``kinds.<kind>.class_areas[]``: area of one class of the kind's class set.

    ``area_report`` is the area in ``area_unit``, the reporting area unit (key
    ``area_<area_unit>``; only ``area_m2`` in metric units).
    """

    class_name: str = field(metadata=_meta(key="class"))
    area_m2: float
    area_report: float = field(metadata=_meta(derived=True))
    area_unit: str = field(metadata=_meta(derived=True))
    share_of_mapped_area: float
    share_of_deck: float

    @classmethod
    def _read(cls, r: _Reader, d: dict[str, Any], path: str) -> Self:
        unit, value, keys = _report_area(r, d, "area_", path)
        return typing.cast(Self, r.record(
            cls, d, path, given={"area_report": value, "area_unit": unit}, consumed=keys))

    def to_json(self) -> dict[str, Any]:
        """Return the class area as ``run.json`` holds it."""
        out = super().to_json()
        if self.area_unit == "m2":
            return out
        return _insert(out, f"area_{self.area_unit}", self.area_report, after="area_m2")


@dataclass(frozen=True)
class SpacingRecord(_Record):
    """``kinds.<kind>.spacing``: median nearest-neighbour spacing of the usable readings.

    None with fewer than two reading locations; ``unit`` is the level's plan unit.
    """

    median_nearest_neighbour: float | None
    unit: str


@dataclass(frozen=True)
class DensityRuleRecord(_Record):
    """``kinds.<kind>.density_rule``: the rule that decides surface or points."""

    min_readings_for_surface: int
    max_spacing_to_range: float


@dataclass(frozen=True)
class NeighbourhoodRecord(_Record):
    """``kinds.<kind>.neighbourhood``: search radius and mask distance of a kind's surface.

    In ``unit`` (the level's plan unit); ``basis`` says where the mask distance came from
    (``derived``, ``[run.kinds.<kind>] max_distance`` or ``[run] max_distance``), ``rule``
    states the derivation.
    """

    search_radius: float
    mask_distance: float
    unit: str
    basis: str
    rule: str


@dataclass(frozen=True)
class PointsClassCount(_Record):
    """``kinds.<kind>.points.class_counts[]``: readings of one class, and their Thiessen area."""

    class_name: str = field(metadata=_meta(key="class"))
    readings: int
    share_of_readings: float
    thiessen_area_m2: float


@dataclass(frozen=True)
class PointsRecord(_Record):
    """``kinds.<kind>.points``: a kind shown as its readings (too sparse for a surface)."""

    points: int
    class_counts: tuple[PointsClassCount, ...] | None = field(default=None,
                                                               metadata=_meta(optional=True))


@dataclass(frozen=True)
class KindRecord(_Record):
    """``levels.<id>.kinds.<kind>``: a measurement kind on a level.

    Attributes
    ----------
    readings, readings_mapped : int
        Readings of the kind's surveys on the level, and those fit for mapping.
    unit : str
        The kind's canonical unit.
    statistics : mapping of str to float
        ``n``, ``mean``, ``std``, ``min``, ``p5``, ``p10``, ``median``, ``p90``, ``p95``,
        ``max`` of the mapped readings (only ``n`` = 0 when there are none).
    class_share_of_readings : mapping of str to float or None
        Share of the mapped readings per class (kinds with a class set).
    surface : SurfaceRecord or None
        None when the kind got no surface; ``skipped`` then says why (JSON
        ``surface_skipped``).
    class_areas : tuple of ClassArea or None
        Kinds with a class set and a surface.
    representation : str or None
        ``"surface"`` or ``"points"`` (None without usable readings);
        ``representation_reason`` says why, in one sentence.
    spacing, density_rule
        The readings' spacing and the rule that chose the representation.
    neighbourhood : NeighbourhoodRecord or None
        Search radius and mask distance of the surface.
    points : PointsRecord or None
        A kind shown as points: the number of points and the class counts of readings.
    surface_key : bool
        Whether the JSON holds a ``surface`` key: a kind with too few readings has
        ``"surface": null``, one whose kriging failed has only ``surface_skipped``.
    """

    readings: int
    readings_mapped: int
    unit: str
    statistics: Mapping[str, float]
    class_share_of_readings: Mapping[str, float] | None = field(
        default=None, metadata=_meta(optional=True))
    representation: str | None = field(default=None, metadata=_meta(optional=True))
    representation_reason: str | None = field(default=None, metadata=_meta(optional=True))
    spacing: SpacingRecord | None = field(default=None, metadata=_meta(optional=True))
    density_rule: DensityRuleRecord | None = field(default=None, metadata=_meta(optional=True))
    surface: SurfaceRecord | None = field(default=None, metadata=_meta(optional=True))
    skipped: str | None = field(default=None,
                                metadata=_meta(key="surface_skipped", optional=True))
    neighbourhood: NeighbourhoodRecord | None = field(default=None,
                                                      metadata=_meta(optional=True))
    class_areas: tuple[ClassArea, ...] | None = field(default=None,
                                                      metadata=_meta(optional=True))
    points: PointsRecord | None = field(default=None, metadata=_meta(optional=True))
    surface_key: bool = field(default=True, metadata=_meta(derived=True))

    @classmethod
    def _read(cls, r: _Reader, d: dict[str, Any], path: str) -> Self:
        return typing.cast(Self, r.record(cls, d, path, given={"surface_key": "surface" in d}))

    def to_json(self) -> dict[str, Any]:
        """Return the kind's record as ``run.json`` holds it."""
        out = super().to_json()
        if self.surface is None and self.surface_key:
            out = _insert(out, "surface", None, before="surface_skipped"
                          if "surface_skipped" in out else "neighbourhood"
                          if "neighbourhood" in out else "class_areas")
        return out


@dataclass(frozen=True)
class AreaBeyondThreshold(_Record):
    """``condition.<kind>_area_beyond_threshold``: expected area beyond a class threshold.

    The expected area and its interval (``interval_level``, e.g. 0.9) in m2, by
    ``interval_method`` with ``realisations`` draws: conditional simulation of the field, or
    the separable approximation with correlated errors (``correlation_length``, the
    variogram's range, in the plan unit).
    """

    meaning: str
    threshold: float
    unit: str
    source: str
    expected_m2: float
    interval_level: float
    lower_m2: float
    upper_m2: float
    mapped_area_m2: float
    correlation_length: float
    correlation_length_unit: str
    assumption: str
    #: ``simulation`` or ``separable-approximation``; absent from runs before the key existed
    interval_method: str | None = field(default=None, metadata=_meta(optional=True))
    #: realisations (simulation) or error fields drawn (approximation)
    realisations: int | None = field(default=None, metadata=_meta(optional=True))
    #: one line on how the interval was found, for the report's methods text
    method: str | None = field(default=None, metadata=_meta(optional=True))


@dataclass(frozen=True)
class SiteThreshold(_Record):
    """``condition.site_threshold``: the two-component mixture threshold of the potentials.

    Potentials in mV vs CSE; areas in m2 (None without cells).
    """

    threshold_mv: float
    active_mean_mv: float
    active_std_mv: float
    active_weight: float
    passive_mean_mv: float
    passive_std_mv: float
    passive_weight: float
    ashman_d: float
    log_likelihood: float
    n_readings: int
    n_iterations: int
    fraction_readings_below: float
    fraction_readings_above: float
    area_below: float | None
    area_above: float | None
    fraction_area_below: float | None
    fraction_area_above: float | None
    method: str


@dataclass(frozen=True)
class SiteThresholdUnavailable(_Record):
    """``condition.site_threshold`` when the mixture could not be fitted: the reason."""

    not_available: str


@dataclass(frozen=True)
class CombinedClassArea(_Record):
    """``condition.combined_classes[]``: area of a combined condition class, m2."""

    class_name: str = field(metadata=_meta(key="class"))
    area_m2: float


@dataclass(frozen=True)
class CombinedClassRecord(_Record):
    """``combined_rules.classes[]``: an output class of the rule table."""

    key: str
    label: str
    color: str


@dataclass(frozen=True, kw_only=True)
class CombinedRuleRecord(_Record):
    """``combined_rules.rules[]``: accepted class keys per kind (None: no condition)."""

    name: str
    potential: tuple[str, ...] | None = field(default=None, metadata=_meta(optional=True))
    resistivity: tuple[str, ...] | None = field(default=None, metadata=_meta(optional=True))
    rate: tuple[str, ...] | None = field(default=None, metadata=_meta(optional=True))
    low_cover: bool | None = field(default=None, metadata=_meta(optional=True))
    result: str = field(metadata=_meta(key="class"))


@dataclass(frozen=True)
class CombinedRules(_Record):
    """``condition.combined_rules``: the rule table used, in the site file's form."""

    default: str
    class_sets: Mapping[str, str]
    classes: tuple[CombinedClassRecord, ...]
    rules: tuple[CombinedRuleRecord, ...]


@dataclass(frozen=True)
class LifeRange(_Record):
    """An indicative range: the 10th, 50th and 90th percentiles over the readings."""

    p10: float
    p50: float
    p90: float


@dataclass(frozen=True)
class LifeSummary(_Record):
    """``condition.life.<survey id>``: section loss and time to cracking of a rate survey.

    The ranges are None where the readings do not support them (``supported`` false,
    ``basis`` says why); never a single headline figure.
    """

    bar_diameter_mm: float
    horizon_years: float
    readings_needing_bar_review: int
    readings: int
    readings_used: int
    supported: bool
    basis: str
    time_to_cracking_yr: LifeRange | None
    section_loss_pct: LifeRange | None
    time_to_cracking_meaning: str
    model: str
    sources: tuple[str, ...]
    assumptions: tuple[str, ...]


_BEYOND = "_area_beyond_threshold"


@dataclass(frozen=True)
class ConditionRecord(_Record):
    """``levels.<id>.condition``: the condition statements of a level.

    Attributes
    ----------
    beyond : mapping of str to AreaBeyondThreshold
        By kind (JSON keys ``<kind>_area_beyond_threshold``), in the run's order.
    site_threshold : SiteThreshold, SiteThresholdUnavailable or None
        None without a potential surface of at least 20 readings.
    combined_classes, combined_rules
        None when the level has no potential, resistivity or corrosion-rate surface.
    combined_kinds : mapping of str to str or None
        Per rule-table column (role) with a kind on the level: whether its surface was used
        by the combined classes, or why not (shown as points).
    life : mapping of str to LifeSummary or None
        By corrosion-rate survey id; None without one.
    """

    beyond: Mapping[str, AreaBeyondThreshold] = field(default_factory=dict,
                                                      metadata=_meta(derived=True))
    site_threshold: SiteThreshold | SiteThresholdUnavailable | None = field(
        default=None, metadata=_meta(derived=True))
    combined_classes: tuple[CombinedClassArea, ...] | None = field(
        default=None, metadata=_meta(optional=True))
    combined_rules: CombinedRules | None = field(default=None, metadata=_meta(optional=True))
    combined_kinds: Mapping[str, str] | None = field(default=None, metadata=_meta(optional=True))
    life: Mapping[str, LifeSummary] | None = field(default=None, metadata=_meta(optional=True))

    @classmethod
    def _read(cls, r: _Reader, d: dict[str, Any], path: str) -> Self:
        beyond = {k[: -len(_BEYOND)]: r.value(AreaBeyondThreshold, v, _at(path, k))
                  for k, v in d.items() if k.endswith(_BEYOND)}
        site: SiteThreshold | SiteThresholdUnavailable | None = None
        if "site_threshold" in d:
            st, p = d["site_threshold"], _at(path, "site_threshold")
            site = r.value(SiteThresholdUnavailable if isinstance(st, dict)
                           and "not_available" in st else SiteThreshold, st, p)
        return typing.cast(Self, r.record(
            cls, d, path, given={"beyond": beyond, "site_threshold": site},
            consumed=[*(k + _BEYOND for k in beyond), "site_threshold"]))

    def to_json(self) -> dict[str, Any]:
        """Return the condition record as ``run.json`` holds it."""
        out: dict[str, Any] = {k + _BEYOND: v.to_json() for k, v in self.beyond.items()}
        if self.site_threshold is not None:
            out["site_threshold"] = self.site_threshold.to_json()
        out.update(super().to_json())
        return out


@dataclass(frozen=True)
class ZoningRuleRecord(_Record):
    """``planning.zoning_rules[]``: a zoning rule in the order applied."""

    rule: str
    treatment: str
    bid_item: str | None


@dataclass(frozen=True)
class PlanningNotes(_Record):
    """``levels.<id>.planning``: thresholds of the repair layout and zoning, with sources."""

    low_cover_threshold_mm: float
    low_cover_threshold_source: str
    depth_class_cover: str
    zoning_rules: tuple[ZoningRuleRecord, ...]


@dataclass(frozen=True)
class ZoneRecord(_Record):
    """``levels.<id>.zones[]``: a zone of the slab (the ``<L>_zones`` layer without geometry)."""

    level_id: str
    zone: str
    treatment: str
    bid_item: str | None
    order: int
    area_m2: float
    plan_unit: str


@dataclass(frozen=True)
class RepairRecord(_Record):
    """``levels.<id>.repair_list[]``: one repair as the per-repair schedule gives it.

    Quantities unrounded, in m, m2, m3 and mm; ``dimensions`` as a contractor writes
    them in the reporting units; ``sounded`` the numbers of the sounded areas it holds.
    """

    repair_id: str
    sounded: str
    location: str
    dimensions: str
    size_x_m: float
    size_y_m: float
    area_m2: float
    area_before_rounding_m2: float
    perimeter_m: float
    depth_class: str
    depth_mm: float
    volume_m3: float
    bid_item: str
    joint_edge_m: float
    bar_replacement_m: float
    anodes: int | None
    rounding_note: str


@dataclass(frozen=True)
class PayAreaRecord(_Record):
    """``levels.<id>.pay_areas[]``: a bay (or the level) a treatment is paid on."""

    bay: str
    bid_item: str
    treatment: str
    share_covered: float
    area_m2: float


#: The columns of a repair frame that ``run.json`` records per repair.
REPAIR_RECORD_KEYS = tuple(f.name for f in dataclasses.fields(RepairRecord))


def _repair_list(repairs: Any) -> list[dict[str, Any]]:
    if repairs is None or not len(repairs):
        return []
    out = []
    for r in repairs.to_dict("records"):
        rec = {k: r.get(k) for k in REPAIR_RECORD_KEYS}
        a = rec["anodes"]
        rec["anodes"] = None if a is None or a != a else int(a)
        out.append(rec)
    return out


@dataclass(frozen=True)
class LevelRecord(_Record):
    """``levels.<id>``: everything recorded for a level.

    ``condition`` is None when the level has no surface; ``repairs`` is the number of
    repair outlines, ``repair_list`` the repairs themselves (without outlines) and
    ``pay_areas`` the bays the treatments are paid on (empty when priced as zoned).
    """

    name: str
    georeference: Georeference
    deck_area_m2: float
    kinds: Mapping[str, KindRecord]
    condition: ConditionRecord | None
    planning: PlanningNotes | None
    zones: tuple[ZoneRecord, ...]
    repairs: int
    repair_list: tuple[RepairRecord, ...]
    pay_areas: tuple[PayAreaRecord, ...]


@dataclass(frozen=True)
class ScheduleRow(_Record):
    """``schedule[]``: a row of ``quantities.csv``, with its quantity before rounding.

    ``quantity`` is the bid quantity (rounded up to its unit's increment, as in
    ``quantities.csv``), ``quantity_unrounded`` the value computed; ``unit_price``,
    ``amount`` and ``currency`` are present when the site gives a price list and prices
    the item.
    """

    level_id: str
    item: str
    description: str
    unit_kind: str
    unit: str
    line: str
    quantity: float
    quantity_unrounded: float | None = field(default=None, metadata=_meta(optional=True))
    unit_price: float | None = field(default=None, metadata=_meta(optional=True))
    amount: float | None = field(default=None, metadata=_meta(optional=True))
    currency: str | None = field(default=None, metadata=_meta(optional=True))


@dataclass(frozen=True)
class RepairEditRecord(_Record):
    """``edits[]``: a repair whose outline was edited by hand and re-priced (#13).

    ``old_area_m2`` is the area laid out by the run, ``new_area_m2`` the edited one;
    ``source`` the file and layer the edit was read from.
    """

    level_id: str
    repair_id: str
    old_area_m2: float
    new_area_m2: float
    source: str


@dataclass(frozen=True)
class Manifest(_Record):
    """The run manifest, ``run.json``, typed.

    Attributes
    ----------
    geo_corrosion_run : int
        Format version (:data:`FORMAT_VERSION`).
    created_utc, elapsed_s
        Time stamp of the run (ISO 8601) and its run time, s.
    parameters : RunParameters
        The ``[run]`` values (lengths in metres).
    versions : mapping of str to str
        Python, geo_corrosion, the libraries and GDAL.
    levels : mapping of str to LevelRecord
        By level id, in the site file's order.
    warnings, files, cautions : tuple of str
        Notes of the run, every file written, the cautions printed on every product.
    built_from : mapping of str to mapping of str to str, optional
        Per document (``quantities``, ``drawings``, ``report``, ``webmap``), the SHA-256 of
        each ``<level>_repairs`` layer of ``survey.gpkg`` it was built from
        (:mod:`geo_corrosion.exporters.built_from`).
    edits : tuple of RepairEditRecord, optional
        Repairs edited by hand and re-priced (``geo-corrosion reprice``).
    timings : mapping of str to mapping of str to float, optional
        Wall time of each stage (``stages``) and exporter (``exporters``) of the run, s
        (:mod:`geo_corrosion._timing`); it varies from run to run like ``elapsed_s``.
    """

    geo_corrosion_run: int
    site: SiteRecord
    created_utc: str
    elapsed_s: float
    inputs: tuple[InputFile, ...]
    parameters: RunParameters
    versions: Mapping[str, str]
    surveys: tuple[SurveyRecord, ...]
    qa: QaSummary
    levels: Mapping[str, LevelRecord]
    schedule: tuple[ScheduleRow, ...]
    warnings: tuple[str, ...]
    files: tuple[str, ...]
    cautions: tuple[str, ...]
    built_from: Mapping[str, Mapping[str, str]] | None = field(
        default=None, metadata=_meta(optional=True))
    edits: tuple[RepairEditRecord, ...] | None = field(default=None,
                                                       metadata=_meta(optional=True))
    timings: Mapping[str, Mapping[str, float]] | None = field(
        default=None, metadata=_meta(optional=True))

    @classmethod
    def from_json(cls, data: Any, *, where: str | Path = MANIFEST_NAME) -> Manifest:
        """Read and check the manifest of a run from its JSON.

        Parameters
        ----------
        data : object
            ``json.loads`` of ``run.json``.
        where : str or Path
            The file, for messages.

        Raises
        ------
        ExportError
            Naming ``where`` and the JSON path of a missing key, a key of the wrong type,
            an unknown key, or another format version; it says to re-run
            ``geo-corrosion run``.
        """
        r = _Reader(str(where))
        if not isinstance(data, dict):
            raise r.error("", f"expected an object, found {_found(data)}")
        fmt = data.get("geo_corrosion_run")
        if "geo_corrosion_run" in data and fmt != FORMAT_VERSION:
            raise r.error("geo_corrosion_run", f"format version {fmt!r}; this version of "
                          f"geo_corrosion reads version {FORMAT_VERSION}")
        return typing.cast(Manifest, r.value(cls, data, ""))



# --------------------------------------------------------------------------- build and read


#: The site file's details of a survey that run.json records (when given) for the report.
_SURVEY_DETAILS = ("date", "crew", "instrument", "electrode", "temperature_c", "weather",
                   "surface_condition", "prewetting")


def _given(d: Mapping[str, Any]) -> dict[str, Any]:
    """Return the entries of ``d`` that are not None."""
    return {k: v for k, v in d.items() if v is not None}


def _manifest_dict(result: RunResult, started: float) -> dict[str, Any]:
    """Build the manifest as the JSON object ``run.json`` holds (numpy scalars unconverted)."""
    cfg = result.site.config
    flags = result.flags
    summary = (qa.summarize(flags).to_dict("records") if len(flags) else [])
    sched = [{k: v for k, v in r.items() if not (isinstance(v, float) and v != v)}  # NaN: none
             for r in (result.schedule.to_dict("records") if len(result.schedule) else [])]
    return {
        "geo_corrosion_run": FORMAT_VERSION,
        "site": {"name": cfg.name, "owner": cfg.owner, "crs": cfg.crs.to_string(),
                 "crs_unit": cfg.crs_unit, "report_units": cfg.units, "site_file": cfg.path.name,
                 "folder": str(cfg.root),
                 **({"project": _given(dataclasses.asdict(cfg.project))}
                    if any(v is not None for v in dataclasses.asdict(cfg.project).values())
                    else {})},
        "created_utc": datetime.now(UTC).isoformat(timespec="seconds"),
        "elapsed_s": round(time.perf_counter() - started, 2),
        "inputs": input_files(cfg),
        "parameters": cfg.parameters(),
        "versions": package_versions(),
        "surveys": [{"id": s.id, "level": s.config.level, "kind": s.kind.name,
                     "file": s.config.path.name, "readings": len(s.frame),
                     "unit_in": s.config.unit, "unit": s.kind.canonical_unit,
                     "corrections": list(s.corrections),
                     **_given({k: getattr(s.config, k) for k in _SURVEY_DETAILS})}
                    for s in result.site.surveys],
        "qa": {"findings": len(flags), "summary": summary,
               "runnable": bool(qa.runnable(flags)) if len(flags) else True},
        "levels": {lid: {"name": lr.level.config.name,
                         "georeference": lr.level.grid.to_dict(),
                         "deck_area_m2": lr.level.deck.area * LENGTH_TO_M[lr.level.unit] ** 2,
                         "kinds": {k: v for k, v in lr.stats.items()
                                   if k not in ("condition", "planning")},
                         "condition": lr.stats.get("condition"),
                         "planning": lr.stats.get("planning"),
                         "zones": [] if lr.zones is None else [
                             {k: v for k, v in z.items() if k != "geometry"}
                             for z in lr.zones.to_dict("records")],
                         "repairs": 0 if lr.repairs is None else len(lr.repairs),
                         "repair_list": _repair_list(lr.repairs),
                         "pay_areas": [] if lr.pay_areas is None else [
                             {k: v for k, v in z.items()
                              if k not in ("geometry", "level_id", "unit_kind")}
                             for z in lr.pay_areas.to_dict("records")]}
                   for lid, lr in result.levels.items()},
        "schedule": sched,
        "warnings": list(result.warnings),
        "files": sorted(result.files),
        "cautions": list(CAUTIONS),
        **({"built_from": result.built_from} if result.built_from else {}),
        **({"edits": result.edits} if result.edits else {}),
        **({"timings": rounded(result.timings)} if result.timings else {}),
    }


def manifest(result: RunResult, started: float) -> Manifest:
    """Build the manifest of a run, as ``run.json`` will hold it (checked like a file read).

    Parameters
    ----------
    result : RunResult
    started : float
        :func:`time.perf_counter` at the start of the run (for ``elapsed_s``).
    """
    data = json.loads(json.dumps(_manifest_dict(result, started), default=json_default))
    return Manifest.from_json(data, where=f"{MANIFEST_NAME} of this run")


def read_run_json(run_dir: str | Path) -> dict[str, Any]:
    """Read ``run.json`` of an output folder as JSON: a dict with ``levels``, not yet checked.

    Raises
    ------
    ExportError
        If the folder holds no readable ``run.json``, or it is not the manifest of a run.
    """
    man = Path(run_dir) / MANIFEST_NAME
    if not man.is_file():
        raise ExportError(f"{run_dir} holds no run.json; is it the output folder of "
                          "`geo-corrosion run`?")
    try:
        data = json.loads(man.read_text(encoding="utf-8"))
    except (OSError, ValueError) as err:
        raise ExportError(f"{man}: cannot be read ({err}); re-run `geo-corrosion run`") from err
    if not isinstance(data, dict) or "levels" not in data:
        raise ExportError(f"{man}: not the manifest of a run (no 'levels'); re-run "
                          "`geo-corrosion run`")
    return data


def read_run(run_dir: str | Path) -> Manifest:
    """Read and check ``run.json`` of an output folder.

    Raises
    ------
    ExportError
        If the folder holds no readable ``run.json``, or it is not the manifest of a run
        of this version (the message names the file and the JSON path).
    """
    return Manifest.from_json(read_run_json(run_dir), where=Path(run_dir) / MANIFEST_NAME)


def result_manifest(result: RunResult) -> Manifest:
    """Return the manifest of an in-memory run as ``run.json`` will hold it."""
    return manifest(result, time.perf_counter())

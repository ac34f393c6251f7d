"""The site-file schema: every key declared once, and the frozen dataclasses it fills.

Each key of the site file is declared once, on the dataclass field it fills (or, for the
tables held as plain dicts, in a tuple of :class:`Key`): its table, name, type, default as a
site file would write it, the unit it is held in, its allowed values or range and one line
of help.  From that declaration come the dataclass defaults, the reader's allowed keys,
defaults and range checks (:mod:`geo_corrosion.stages.read_site`, which adds the checks that
need the registries), the key tables of ``docs/site-file.md`` (:func:`schema_markdown`) and
the ``geo-corrosion init`` template (:func:`site_template`).  ``python -m geo_corrosion.config``
rewrites both; ``--check`` only says whether they are stale.

Lengths carry their unit in the field name (``_m``, ``_mm``).
"""

from __future__ import annotations

import builtins
import copy
import dataclasses
import difflib
import json
import math
import re
import sys
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from functools import partial
from pathlib import Path
from typing import Any, Literal, get_args

import pyproj

from geo_corrosion.errors import RepairError, SiteFileError
from geo_corrosion.units import LENGTH_TO_M, UnitSystem, parse_area, parse_length

__all__ = [
    "LayerRef",
    "OverlayRef",
    "JointRef",
    "GroundConnection",
    "ControlPoint",
    "GridConfig",
    "LevelConfig",
    "SurveyConfig",
    "QuantitiesConfig",
    "RunParams",
    "LayoutParams",
    "SiteConfig",
    "ProjectConfig",
    "COORDS",
    "ID_ALLOWED",
    "ID_MAX",
    "ID_PATTERN",
    "MAX_INPUT_BYTES",
    "OVERLAY_KINDS",
    "JOINT_TYPES",
    "BREAKING_JOINT_TYPES",
    "VARIOGRAM_MODELS",
    "REQUIRED",
    "DERIVED",
    "Key",
    "TableSpec",
    "TABLES",
    "TOP",
    "keys_of",
    "schema_markdown",
    "render_docs",
    "site_template",
    "main",
]

COORDS = ("local", "site")
OVERLAY_KINDS = ("delamination", "spall", "patch", "crack", "soffit_delamination")
VARIOGRAM_MODELS = ("auto", "spherical", "exponential", "gaussian", "matern")
#: Kinds of joint line.  Expansion and isolation joints separate two members and their
#: reinforcing mats (no bar crosses them); construction and control (contraction) joints
#: normally carry continuous or tied bars [ACI-224.3R-95, from memory].
JOINT_TYPES = ("expansion", "isolation", "construction", "control")
#: The joint types that break the electrical continuity of the reinforcement by default: a
#: half-cell survey needs a connection to the mat on each side (common practice)
#: [ACI-222R-19, from memory; ASTM-C876-22a].
BREAKING_JOINT_TYPES = ("expansion", "isolation")

#: Longest id (level, survey, control point): ids become file names, GeoPackage layer names
#: and DXF layer names, and 40 characters keep a name such as ``<id>_potential_classes`` well
#: inside the 255 characters of a file name and the 255 of a DXF layer name (common practice).
ID_MAX = 40
#: An id: letters, digits, ``_`` and ``-``, starting with a letter or digit (no path separator,
#: dot, space or quote can reach a file name or a layer name).
ID_PATTERN = re.compile(rf"[A-Za-z0-9][A-Za-z0-9_-]{{0,{ID_MAX - 1}}}")
#: The allowed set in words, for messages and the docs.
ID_ALLOWED = (f"letters, digits, _ and -, starting with a letter or digit, at most {ID_MAX} "
              "characters")
#: Largest input file the site file may name (2 GiB): a larger one is refused when the site
#: file is read, before any work (common practice: far above any survey or plan file).
MAX_INPUT_BYTES = 2 * 1024**3
#: What the docs say of every path of the site file.
_PATH_DOC = ("It must be a regular file inside the site folder (symbolic links are followed), "
             f"of at most {MAX_INPUT_BYTES // 1024**3} GiB, unless `allow_outside = true`. "
             "The companions of a `.shp` (`.shx`, `.dbf`, `.prj`, `.cpg`, spatial indexes) are "
             "checked the same way.")
#: The declaration of ``allow_outside``, a key of the layer and survey tables.
_ALLOW_OUTSIDE = dict(
    help="Allow a path outside the site folder; for a shared base plan on a server",
    doc="The path is still checked to be a regular file (no directory, device or pipe) of at "
        f"most {MAX_INPUT_BYTES // 1024**3} GiB. Without it, a path that resolves (symbolic "
        "links followed) outside the site folder is refused.")


# --------------------------------------------------------------------------- the declaration


class _Marker:
    """A default that is not a value: :data:`REQUIRED` or :data:`DERIVED`."""

    def __init__(self, name: str) -> None:
        self.name = name

    def __repr__(self) -> str:
        return self.name


#: The key must be given.
REQUIRED: Any = _Marker("REQUIRED")
#: The reader derives the value when the key is absent (from another key); see ``default_doc``.
DERIVED: Any = _Marker("DERIVED")

#: Held length units, per metre.
_PER_M = {"m": 1.0, "mm": 1000.0}
_TYPE_DOC = {
    "string": "string", "text": "string (may be empty)", "number": "number",
    "integer": "whole number", "boolean": "boolean", "length": "length string",
    "area": "area string", "unit": "unit string", "pair": "`[x, y]`",
    "date": "string or TOML date", "table": "table", "tables": "tables",
    "layer": "layer reference", "layers": "list of layer references", "id": "string (id)",
}
_NOUN = {"number": "number", "integer": "whole number", "length": "length", "area": "area"}


@dataclass(frozen=True)
class Key:
    """One key of the site file, or one parameter that is not in it (``name`` None).

    Attributes
    ----------
    name : str or None
        The key as written in the site file; None for a parameter of the library only
        (such as ``LayoutParams.cover_mm``), which is declared for its default and range.
    type : str
        ``string``, ``text`` (may be empty), ``number``, ``integer``, ``boolean``,
        ``length`` or ``area`` (a string with its unit), ``unit``, ``pair`` (``[x, y]``),
        ``date``; or a structured type read by its own code (``table``, ``tables``,
        ``layer``, ``layers``, ...).
    default : object
        The default as a site file would write it (``"150 mm"``, ``50``, ``True``); None for
        none; :data:`REQUIRED`; :data:`DERIVED` (see ``default_doc``).
    unit : str
        Unit of the value held (``"mm"``, ``"m"``, ``"m2"``, ``"mV"``, ``"°C"``...); a length
        given in the site file in any unit is held in this one.
    ge, gt, le, lt : float or None
        Range of the value held, in ``unit`` (>=, >, <=, <).
    choices : tuple of str
        Allowed values of a string.
    positive : bool
        The site file refuses a value of 0 or less (lengths, unless said otherwise), beyond
        the range above, which is also the library's.
    help : str
        One line: the template's comment and the first sentence in the docs.
    doc : str
        More, for ``docs/site-file.md`` only.
    expect : str
        What a message says is expected, when the words made from the range do not suffice.
    example : str or None
        TOML text shown in the template (and set there when ``active``) instead of the default.
    active : bool
        The template sets the key (an uncommented line) although it is optional.
    alternative : bool
        The template shows it as an alternative of the key before it: ``(or key = value)``.
    default_doc, type_doc, allowed_doc : str
        Docs text for a derived default, a structured type, or allowed values said in words.
    table : str
        The table it is in (``"run"``, ``"levels.grid"``); set by the declaration.
    field : str
        The dataclass field (or dict key) it fills; set by the declaration.
    owner : type or None
        The dataclass of that field.
    record : str
        Its name in ``run.json``'s ``parameters`` when not the field's (``repair_margin_m``).
    metric : str or None
        The default of a site with ``units = "metric"``, as it would write it (``"20 mm"``),
        where ``default`` is a converted US value (``"0.75 in"``); None: one default.
    """

    name: str | None
    type: str
    default: Any = REQUIRED
    unit: str = ""
    ge: float | None = None
    gt: float | None = None
    le: float | None = None
    lt: float | None = None
    choices: tuple[str, ...] = ()
    positive: bool | None = None
    help: str = ""
    doc: str = ""
    expect: str = ""
    example: str | None = None
    active: bool = False
    alternative: bool = False
    default_doc: str = ""
    type_doc: str = ""
    allowed_doc: str = ""
    table: str = ""
    field: str = ""
    owner: builtins.type | None = None
    record: str = ""
    metric: str | None = None

    @property
    def required(self) -> bool:
        """Whether the key must be given."""
        return self.default is REQUIRED

    @property
    def dotted(self) -> str:
        """``table.name``, for messages about the declaration itself."""
        return f"{self.table}.{self.name}" if self.table else str(self.name or self.field)

    @property
    def value(self) -> Any:
        """Return the default as held (``"150 mm"`` -> 150.0 for a key held in mm)."""
        d = self.default
        if d is None or isinstance(d, _Marker):
            return None
        return self.hold(d, where=f"default of {self.dotted}")

    def value_for(self, system: str) -> Any:
        """Return the default as held for a reporting system (``metric`` has its own)."""
        if system == "metric" and self.metric is not None:
            return self.hold(self.metric, where=f"metric default of {self.dotted}")
        return self.value

    def hold(self, written: Any, *, where: str) -> Any:
        """Convert a value as written (already of the right TOML type) to the value held."""
        if self.type == "length":
            return parse_length(written, where=where) * _PER_M[self.unit]
        if self.type == "area":
            return parse_area(written, where=where)
        if self.type == "number":
            return float(written)
        if self.type == "integer":
            return int(written)
        if isinstance(written, list):
            return tuple(written)
        return written

    # ------------------------------------------------------------------------- range

    def bounds(self, *, site: bool = False) -> tuple[float | None, bool, float | None, bool]:
        """Return (lower, lower is exclusive, upper, upper is exclusive); None: no bound.

        ``site`` adds the site file's own rule that a length (``positive``) is more than 0.
        """
        lo, lo_open = (self.gt, True) if self.gt is not None else (self.ge, False)
        hi, hi_open = (self.lt, True) if self.lt is not None else (self.le, False)
        positive = self.positive if self.positive is not None else self.type == "length"
        if site and positive and (lo is None or lo < 0 or (lo == 0 and not lo_open)):
            lo, lo_open = 0.0, True
        return lo, lo_open, hi, hi_open

    def range_text(self, *, site: bool = False) -> str:
        """Return the range in words, in the unit held (``"more than 0 and at most 60 mm"``)."""
        lo, lo_open, hi, hi_open = self.bounds(site=site)
        unit = f" {self.unit}" if self.unit in ("mm", "m", "m2", "degrees") else ""
        if not any(v for v in (lo, hi)):
            unit = ""
        if lo is not None and hi is not None:
            if not lo_open and not hi_open:
                return f"from {lo:g} to {hi:g}{unit}"
            low = f"more than {lo:g}" if lo_open else f"{lo:g} or more"
            return f"{low} and {'less than' if hi_open else 'at most'} {hi:g}{unit}"
        if lo is not None:
            return f"more than {lo:g}{unit}" if lo_open else f"{lo:g}{unit} or more"
        if hi is not None:
            return f"{'less than' if hi_open else 'at most'} {hi:g}{unit}"
        return ""

    def expected(self, *, site: bool = True) -> str:
        """Return what a message says is expected (``"a length of more than 0 and at most 60"``)."""
        if self.expect:
            return self.expect
        if self.choices:
            return f"one of: {', '.join(self.choices)}"
        noun = _NOUN.get(self.type, self.type)
        text = self.range_text(site=site)
        if not text:
            return f"a {noun}"
        return f"a {noun} {text}" if text.startswith("from") else f"a {noun} of {text}"

    def in_range(self, v: Any, *, site: bool = False) -> bool:
        """Whether a held value is within the range (None is, where the default is None)."""
        if v is None:
            return self.default is None or self.default is DERIVED
        if self.choices:
            return v in self.choices
        if self.type not in ("number", "integer", "length", "area"):
            return True
        if isinstance(v, bool) or not isinstance(v, int | float) or not math.isfinite(v):
            return False
        lo, lo_open, hi, hi_open = self.bounds(site=site)
        if lo is not None and (v <= lo if lo_open else v < lo):
            return False
        return not (hi is not None and (v >= hi if hi_open else v > hi))


def key(name: str | None, type: str, default: Any = REQUIRED, **kw: Any) -> Any:
    """Declare a dataclass field as a site-file key (or, ``name`` None, a library parameter).

    The default is written once, here, as a site file would write it; the field's default is
    the value held.  The declared default is checked against the declared range on import.
    """
    spec = Key(name, type, default, **kw)
    held = spec.value
    if held is not None and not spec.in_range(held):
        raise ValueError(f"{spec.dotted}: the declared default {default!r} is not "
                         f"{spec.expected(site=False)}")
    md = {"key": spec}
    if default is REQUIRED or default is DERIVED:
        return field(metadata=md)
    if isinstance(held, dict | list):
        return field(default_factory=partial(copy.deepcopy, held), metadata=md)
    return field(default=held, metadata=md)


def param(default: Any, type: str = "number", **kw: Any) -> Any:
    """Declare a parameter that is not a site-file key: its default, unit and range."""
    return key(None, type, default, **kw)


def keys_of(cls: type, table: str, *, home: str | None = None) -> tuple[Key, ...]:
    """Return the keys of ``table`` declared on the fields of a dataclass, in field order.

    A key declared without a table is in the class's ``home`` table (default: ``table``).
    """
    out = []
    for f in dataclasses.fields(cls):
        k = f.metadata.get("key")
        if k is None or k.name is None or (k.table or home or table) != table:
            continue
        out.append(dataclasses.replace(k, table=table, field=k.field or f.name, owner=cls))
    return tuple(out)


def _check_declared(obj: object, what: str, error: type[Exception]) -> None:
    """Check every declared field of a dataclass instance against its type and range."""
    for f in dataclasses.fields(obj):  # type: ignore[arg-type]
        k = f.metadata.get("key")
        v = getattr(obj, f.name)
        if k is None or k.in_range(v):
            continue
        if k.choices:
            raise error(f"{what}: {f.name} = {v!r}; give one of: {', '.join(k.choices)}")
        unit = f" {k.unit}" if k.unit else ""
        rng = k.range_text()
        raise error(f"{what}: {f.name} = {v!r}{unit} is not usable; give a finite number "
                    f"{rng if rng.startswith('from') else 'of ' + rng}")


# --------------------------------------------------------------------------- dataclasses


@dataclass(frozen=True, kw_only=True)
class LayerRef:
    """A layer of a vector file (GeoJSON, GeoPackage, Shapefile or DXF).

    ``where`` is where in the site file it was declared, for messages; the other fields are
    the keys of a layer reference (:data:`TABLES` ``["layer"]``).
    """

    path: Path = key(
        "path", "path", help="The file, relative to the site file",
        example='"plans/L1.dxf"', type_doc="string",
        doc="`.dxf`, `.geojson`, `.gpkg` or `.shp`. " + _PATH_DOC)
    layer: str | None = key(
        "layer", "string", None, help="The DXF layer or the GeoPackage layer",
        doc="A DXF layer is matched case-insensitively. **Required for DXF.**")
    coords: str = key(
        "coords", "string", "local", choices=COORDS,
        help="Whether coordinates are in the level's survey grid or the site CRS",
        doc="`local`: in the level's survey grid, in `[levels.grid].unit`. `site`: in the site "
            "CRS.")
    unit: str | None = key(
        "unit", "unit", None, choices=tuple(LENGTH_TO_M),
        help="The drawing unit of a DXF whose header does not say it ($INSUNITS = 0)",
        doc="Ignored when the DXF header says the unit.")
    allow_outside: bool = key("allow_outside", "boolean", False, **_ALLOW_OUTSIDE)
    where: str


@dataclass(frozen=True, kw_only=True)
class OverlayRef:
    """An overlay layer: delaminations, spalls, patches, cracks or soffit delaminations."""

    kind: str = key("kind", "string", choices=OVERLAY_KINDS, table="levels.overlays",
                    help="What the layer shows")
    ref: LayerRef


@dataclass(frozen=True, kw_only=True)
class JointRef:
    """A layer of joint lines and the kind of joint they are.

    ``breaks_continuity`` is None when the site file does not say it; then it follows from
    ``joint_type`` (:attr:`breaks`).
    """

    joint_type: str = key(
        "type", "string", "construction", choices=JOINT_TYPES, table="levels.joints",
        help="The kind of joint every line of the layer is",
        doc="Expansion and isolation joints separate two reinforcing mats that are not "
            "electrically continuous; construction and control joints normally carry "
            "continuous or tied bars [ACI-224.3R-95, from memory]. A layer without `type` is "
            "taken as construction joints (common practice: most joints drawn on a deck are "
            "construction or control joints); give expansion joints their own layer with "
            "`type = \"expansion\"`.")
    breaks_continuity: bool | None = key(
        "breaks_continuity", "boolean", None, table="levels.joints",
        default_doc="`true` for expansion and isolation, `false` for construction and control",
        help="Whether the bars are electrically discontinuous across these joints",
        doc="A breaking joint splits the deck into continuity regions: potential surfaces are "
            "kriged in each region from its own readings only, and a potential survey spanning "
            "two regions names a ground connection in each [ACI-222R-19, from memory]. Set "
            "`true` for a construction joint found discontinuous by a continuity test, `false` "
            "for an expansion joint whose mats are bonded across it.")
    ref: LayerRef

    @property
    def breaks(self) -> bool:
        """Whether these joints break the electrical continuity of the mat."""
        if self.breaks_continuity is not None:
            return bool(self.breaks_continuity)
        return self.joint_type in BREAKING_JOINT_TYPES


@dataclass(frozen=True, kw_only=True)
class GroundConnection:
    """A connection of the half-cell voltmeter to the reinforcing mat, in survey-grid coords."""

    x: float = key("x", "number", table="surveys.ground_connections", unit="grid units",
                   help="Its x in the level's survey grid")
    y: float = key("y", "number", table="surveys.ground_connections", unit="grid units",
                   help="Its y in the level's survey grid")
    label: str = key("label", "string", DERIVED, table="surveys.ground_connections",
                     default_doc="`G1`, `G2`, …", help="Its name, for messages and maps")


@dataclass(frozen=True)
class ControlPoint:
    """A point known in both the local grid and the site CRS."""

    id: str = key("id", "id", DERIVED, default_doc="`CP1`, `CP2`, …", allowed_doc=ID_ALLOWED,
                  help="The point's name, for the residuals")
    local: tuple[float, float] = key("local", "pair", help="Its local grid coordinates")
    site: tuple[float, float] = key("site", "pair", help="Its site CRS coordinates")


@dataclass(frozen=True)
class GridConfig:
    """The local survey grid of a level and how it is tied to the site CRS.

    ``rotation_deg`` is the counter-clockwise angle from the site CRS's x axis (east) to the
    grid's x axis; ``control_points`` (two or more, fitted by least squares) are used when
    given, else ``origin`` and ``rotation_deg``.
    """

    unit: str = key(
        "unit", "unit", choices=("m", "ft", "us-ft"), example='"ft"',
        help="Unit of local coordinates: ft, us-ft or m")
    spacing: float = key(
        "spacing", "number", gt=0, le=100, unit="grid units", example="2.0",
        help="Nominal reading spacing, grid units",
        doc="QA uses it for the adjacent-reading, duplicate (0.1 × spacing) and moved-point "
            "(0.5 × spacing) checks.")
    origin: tuple[float, float] | None = key(
        "origin", "pair", None, example="[583100.00, 4507200.00]", type_doc="`[E, N]`",
        help="Site coordinates of local (0, 0)", doc="Used when no control points are given.")
    rotation_deg: float = key(
        "rotation_deg", "number", 0.0, unit="degrees", ge=-360, le=360, example="17.0",
        help="Counter-clockwise from east to the grid's x axis", doc="Used with `origin`.")
    control_points: tuple[ControlPoint, ...] = key(
        "control_points", "points", [], active=True,
        type_doc="list of `{ id, local = [x, y], site = [E, N] }`",
        example='[\n  { id = "CP1", local = [0.0, 0.0], site = [583100.00, 4507200.00] },\n'
                '  { id = "CP2", local = [100.0, 0.0], site = [583129.15, 4507208.91] },\n]',
        help="Two or more points known in both, fitted by least squares",
        doc="Rotation, scale and shift. With 3 or more, residuals are reported by `check` and "
            "in `run.json`. `id` defaults to `CP1`, `CP2`, …. Used, when given, instead of "
            "`origin`.")


@dataclass(frozen=True, kw_only=True)
class LevelConfig:
    """One level (deck, slab) of the structure."""

    id: str = key("id", "id", example='"L1"', help="Unique among levels", allowed_doc=ID_ALLOWED,
                  doc="Used in layer names, repair ids (`L2-R001`) and file names.")
    name: str = key("name", "string", DERIVED, default_doc="= `id`", example='"Level 1"',
                    active=True, help="Shown on maps, drawings and the report",
                    doc="The names of the levels must differ.")
    slab: LayerRef = key("slab", "layer", example='{ path = "plans/L1.dxf", layer = "SLAB" }',
                         help="The closed slab outline")
    exclusions: tuple[LayerRef, ...] = key(
        "exclusions", "layers", [], active=True,
        example='[ { path = "plans/L1.dxf", layer = "COLUMNS" } ]',
        help="Columns, cores, ramps and openings",
        doc="They are holes in the deck, and repairs stop at them.")
    joints: tuple[JointRef, ...] = key(
        "joints", "joints", [], active=True,
        type_doc="joint layer reference, or a list of them",
        example='[\n  { path = "plans/L1.dxf", layer = "JOINTS", type = "construction" },\n'
                '  { path = "plans/L1.dxf", layer = "EXP-JOINTS", type = "expansion" },\n]',
        help="Joint lines; a repair never crosses one",
        doc="No saw cut is counted along a joint. Each layer reference may say the joint "
            "`type` and whether it `breaks_continuity` (see *Joints*); one reference "
            "`{ path, layer }` is a list of one.")
    column_grid: LayerRef | None = key(
        "column_grid", "layer", None,
        example='{ path = "plans/L1.dxf", layer = "GRID" }',
        help="Column-grid lines, each labelled (C, 3)",
        doc="A GIS layer labels a line by its `label`, `name` or `id` attribute; a DXF layer by "
            "a text at one of its ends on the same layer. Repairs are located from the nearest "
            "grid intersection, and the pay-area bays are split at these lines as at joints.")
    station_start: float | None = key(
        "station_start", "number", None, unit="grid units", example="1250.0",
        help="A deck's station at grid x = 0, in grid units (12+50 = 1250.0 ft)",
        doc="Stations run along grid x. Without a column grid, repairs are located by station "
            "and offset (`Sta. 12+61.25, 3.50 ft Lt`; left of the centreline looking up-station "
            "is +y).")
    station_centerline_y: float = key(
        "station_centerline_y", "number", 0.0, unit="grid units", example="20.0",
        help="Grid y of the deck's centreline, from which offsets are measured",
        doc="Used with `station_start`.")
    overlays: tuple[OverlayRef, ...] = key(
        "overlays", "overlays", [], active=True, type_doc="list of overlay references",
        example='[\n  { kind = "delamination", path = "sounding/L1.dxf", layer = "DELAM" },\n'
                '  { kind = "spall", path = "sounding/L1.dxf", layer = "SPALL" },\n]',
        help="Sounding results [ASTM-D4580-23] and other mapped defects")
    grid: GridConfig = key("grid", "table", type_doc="table `[levels.grid]`",
                           help="The local survey grid")
    specified_cover_mm: float | None = key(
        "specified_cover", "length", None, unit="mm", le=300, example='"2 in"',
        help="Design cover of the top bars",
        doc="With `cover_tolerance` it sets the low-cover threshold (specified − tolerance; "
            "25 mm when not given).")
    cover_tolerance_mm: float | None = key(
        "cover_tolerance", "length", None, unit="mm", ge=0, le=100, positive=False,
        example='"0.5 in"',
        help="Placement tolerance, subtracted from specified_cover")
    slab_thickness_mm: float | None = key(
        "slab_thickness", "length", None, unit="mm", gt=0, le=3000, example='"7 in"',
        default_doc="`[run].slab_thickness`",
        help="This level's slab thickness, for full-depth repairs",
        doc="Overrides `[run].slab_thickness` on this level.")


@dataclass(frozen=True, kw_only=True)
class SurveyConfig:
    """One survey file and what it holds."""

    id: str = key("id", "id", example='"L1-potential"', help="Unique among surveys",
                  allowed_doc=ID_ALLOWED, doc="Used in file and layer names.")
    level: str = key("level", "string", example='"L1"', help="The id of a declared level")
    kind: str = key(
        "kind", "string", example='"potential"',
        help="The kind: potential, resistivity, corrosion_rate or cover",
        doc="Or a kind added by a plugin (`geo-corrosion plugins` lists them).")
    path: Path = key(
        "path", "path", example='"readings/L1_potential.csv"', type_doc="string",
        help="CSV (point_id,x,y,value), GeoJSON or GeoPackage points",
        doc="A `.csv` or `.txt` file in our layout, or a `.geojson`, `.json`, `.gpkg` or `.shp` "
            "file of points, relative to the site file. See [file-formats.md](file-formats.md). "
            + _PATH_DOC)
    unit: str = key(
        "unit", "string", example='"mV"', help="Unit of the values; accepted by the kind",
        doc="It must be accepted for the kind (see *Units accepted*); it is checked when the site "
            "file is read.")
    coords: str = key("coords", "string", "local", choices=COORDS,
                      help="Grid or site coordinates, as for layers",
                      doc="A GIS point file with `site` needs a CRS of its own.")
    electrode: str | None = key(
        "electrode", "string", None, example='"cse"', active=True,
        help="Potential only: cse, ag_agcl_sat_kcl, ag_agcl_3m_kcl, sce, she",
        doc="**Required for `potential`.** See below.")
    temperature_c: float | None = key(
        "temperature_c", "number", None, unit="°C", ge=-30, le=70, example="22.0", active=True,
        help="Electrode (potential) or concrete (resistivity) temperature",
        doc="A per-reading `temperature_c` column in the file takes precedence.")
    temperature_f: float | None = key(
        "temperature_f", "number", None, unit="°F", ge=-22, le=158, example="71.6",
        alternative=True,
        help="The same in degF", doc="Give only one of `temperature_c` and `temperature_f`.")
    temperature_coefficient_mv_per_c: float | None = key(
        "temperature_coefficient_mv_per_c", "number", None, unit="mV/°C", ge=-10, le=10,
        example="0.9",
        default_doc="0.9 for `cse`, 0 otherwise", help="Temperature coefficient of the electrode")
    date: str | None = key("date", "date", None, example='"2026-09-14"', active=True,
                           help="Survey date, recorded in run.json")
    crew: str | None = key("crew", "string", None, example='"J. Smith, A. Lee"',
                           help="Who read the survey, shown in the report")
    instrument: str | None = key(
        "instrument", "string", None, example='"half-cell voltmeter, 10 MOhm input"',
        help="Instrument (type and serial number), shown in the report")
    weather: str | None = key("weather", "string", None, example='"overcast, 12 degC, dry"',
                              help="Weather during the survey, shown in the report")
    surface_condition: str | None = key(
        "surface_condition", "string", None, example='"clean, dry; sealer on the ramps"',
        help="Surface condition of the concrete, shown in the report")
    prewetting: str | None = key(
        "prewetting", "string", None, example='"pre-wetted 15 min with potable water"',
        help="Pre-wetting of the surface before reading, shown in the report")
    separator: str = key("separator", "string", ",", help='CSV field separator, e.g. ";"')
    decimal: str = key("decimal", "string", ".", choices=(".", ","),
                       help="CSV decimal mark; not the separator")
    layer: str | None = key("layer", "string", None, example='"points"',
                            help="The layer of a GeoPackage point file")
    allow_outside: bool = key(
        "allow_outside", "boolean", False, **{
            **_ALLOW_OUTSIDE,
            "doc": _ALLOW_OUTSIDE["doc"] + " It applies to `path` and to the instrument files "
                   "of `[surveys.options]` (`transients`, `sweeps`)."})
    ground_connections: tuple[GroundConnection, ...] = key(
        "ground_connections", "connections", [],
        type_doc="list of `{ x, y, label }`",
        example='[ { x = 10.0, y = 4.0, label = "G1" }, { x = 150.0, y = 4.0, label = "G2" } ]',
        help="Where the voltmeter was connected to the bars, survey-grid coordinates",
        doc="Potentials only. A half-cell reading needs a connection to the mat it is on: a "
            "potential survey whose readings lie in two or more continuity regions (split by "
            "breaking joints) names a connection in each, or QA flags it "
            "(`QA-GROUND-CONNECTION`) [ACI-222R-19, from memory; ASTM-C876-22a]. A connection "
            "outside the slab is refused.")
    columns: Mapping[str, str] = key(
        "columns", "table", {}, type_doc="table `[surveys.columns]`",
        help="Our column name = the file's column name",
        doc="Our names: `point_id`, `x`, `y`, `value`, `temperature_c`, `note`.")
    where: str
    #: kind-specific options of ``[surveys.options]``, as parsed and validated by the kind's
    #: :meth:`~geo_corrosion.measurements.base.MeasurementKind.parse_options`: keys carry their
    #: unit (``probe_spacing_mm``); empty when the table is absent.
    options: Mapping[str, Any] = key(
        "options", "table", {}, type_doc="table `[surveys.options]`",
        help="Options of the survey's kind, checked by the kind",
        doc="Wenner probe spacing, element thickness and class set for resistivity; Stern-Geary "
            "B, polarized area and pulse transients for corrosion rate. See "
            "[raw-readings.md](raw-readings.md#kind-options-surveysoptions). Potential and cover "
            "surveys take none.")


@dataclass(frozen=True)
class RunParams:
    """Parameters of a run, from ``[run]`` and ``[webmap]``, but for the repair layout's.

    Lengths are in metres, or in mm as named.  The layout's keys of ``[run]`` are held in
    :class:`LayoutParams` (``SiteConfig.layout``); :meth:`SiteConfig.parameters` writes both
    to ``run.json`` as ``parameters``, where the exporters read them.
    """

    cell_size_m: float = key(
        "cell_size", "length", "1 ft", metric="0.3 m", unit="m", ge=0.01, le=100.0,
        help="Kriging grid cell",
        doc="A level's grid may hold at most 20 million cells: `check` refuses a smaller cell "
            "before any work, saying the least cell size that fits.")
    max_distance_m: float | None = key(
        "max_distance", "length", None, unit="m", gt=0, le=1000.0, example='"6 ft"',
        default_doc="derived per kind",
        help="No surface farther than this from any reading, for every kind",
        doc="A cell farther than this from its nearest reading is left empty. Without it, each "
            "kind's distance is derived from its reading spacing and fitted range (see "
            "`[run.kinds.<kind>]`); `[run.kinds.<kind>] max_distance` overrides it for a kind.")
    contour_interval_mv: float = key(
        "contour_interval_mv", "number", 50, unit="mV", gt=0,
        help="Potential contour interval; more than 100 mV is refused",
        doc="The 100 mV limit is checked by `check` and `run` before any work "
            "[ASTM-C876-91 §6.2, from memory]. An interval that would draw more than 200 "
            "contour levels over a kind's readings is refused too.")
    contingency: float = key(
        "contingency", "number", 0.2, unit="fraction", ge=0, le=1,
        expect="a fraction from 0 to 1 (0.2 = 20 %)",
        help="Bid quantity allowance, shown as its own line",
        doc="Write 0.2 for 20 %, not 20.")
    n_neighbors: int = key(
        "n_neighbors", "integer", 16, unit="readings", ge=3, le=128,
        help="Kriging neighbourhood: the nearest readings used",
        doc="Each cell solves a system of this size (work grows with its cube); 8 to 64 is "
            "common practice, more gains nothing on a survey grid.")
    variogram_model: str = key(
        "variogram_model", "string", "auto", choices=VARIOGRAM_MODELS,
        help="The variogram model fitted",
        doc="`auto` fits all four and keeps the one with the smallest cross-validation RMSE.")
    resistivity_reference_c: float = key(
        "resistivity_reference_c", "number", 20.0, unit="°C",
        help="Target temperature of the Arrhenius correction")
    activation_energy_kj_mol: float = key(
        "activation_energy_kj_mol", "number", 25.0, unit="kJ/mol", gt=0,
        help="Activation energy of the Arrhenius correction")
    cse_reference_c: float = key(
        "cse_reference_c", "number", 22.2, unit="°C",
        help="Target temperature of the CSE correction (72 F [ASTM-C876-22a §4.7])")
    correct_only_outside_band: bool = key(
        "correct_only_outside_band", "boolean", False,
        help="If true, no CSE correction within 5.5 C of the CSE reference temperature",
        doc="[ASTM-C876-22a §4.7] allows this.")
    #: scale each fitted variogram so that the leave-one-out MSSE is 1 (mapping stage)
    calibrate_variance: bool = key(
        "calibrate_variance", "boolean", True,
        help="Scale each variogram so the leave-one-out MSSE is 1",
        doc="The kriging variance is then honest (MSSE = 1); estimates in the kriged space are "
            "unchanged ([methods.md](methods.md) §3.2). Not applied when "
            "`[run.variogram.<kind>]` fixes `nugget` or `psill`.")
    interval_method: str = key(
        "interval_method", "string", "simulation",
        choices=("simulation", "separable-approximation"),
        help="How the interval of each area beyond a threshold is found",
        doc="`simulation` (default): conditional simulation of the field, each cell from its "
            "own continuity region's readings within the kind's search radius, nugget as "
            "measurement error, areas at sub-cell resolution (surfaces/simulation.py); "
            "`separable-approximation`: the earlier fast approximation (kriging sd, separable "
            "correlation over the variogram range, whole cells), whose intervals were about "
            "five times too wide. Coverage, width and time of both: benchmarks/README.md.")
    realisations: int = key(
        "realisations", "integer", 200, unit="realisations", ge=20, le=5000,
        help="Conditional simulations for the areas, their intervals and probability maps",
        doc="With `interval_method = \"simulation\"`; seed fixed, so runs repeat; time grows "
            "in proportion. At 200 the 90 % bounds moved by at most 4 % of the interval's "
            "width between seeds on the benchmark's decks (`benchmarks/interval_calibration.py "
            "--seeds`, benchmarks/README.md); 400 gained little for twice the time.")
    anode_spacing_mm: float | None = key(
        "anode_spacing", "length", None, unit="mm", example='"24 in"',
        help="Galvanic anode spacing along repair perimeters",
        doc="When given, the schedule carries an `ANODE` item (EA), ceil(perimeter / spacing) "
            "per repair. Without it, no anode item.")
    bar_replacement_share: float = key(
        "bar_replacement_share", "number", 0.1, unit="fraction", ge=0, le=1,
        expect="a fraction from 0 to 1 (0.1 = 10 %)",
        help="Share of the area of repairs that expose the bars whose bars are replaced",
        doc="Common practice, no source; to confirm. The `BAR-REPL` item (LF or m) is this "
            "share of the area of the repairs below the bars and full depth times the bar of a "
            "two-way top mat at `bar_spacing` (2 / spacing per unit area).")
    bar_spacing_mm: float = key(
        "bar_spacing", "length", "12 in", unit="mm", gt=0, le=1000,
        help="Top-mat bar spacing, each way, for the bar replacement allowance")
    pay_area: str = key(
        "pay_area", "string", "bay", choices=("bay", "level", "zone"),
        help="How area treatments are priced: whole bays, whole levels or the zones as mapped",
        doc="`bay`: the slab split at its joints (the repair layout's panels); a bay is paid "
            "whole when a treatment zone covers more than `pay_area_share` of it. `level`: the "
            "whole deck of a level with any of the zone. `zone`: the zone's own area.")
    pay_area_share: float = key(
        "pay_area_share", "number", 0.1, unit="fraction", ge=0, lt=1,
        expect="a fraction from 0 to below 1 (0.1 = 10 %)",
        help="A bay is paid when a treatment zone covers more than this share of it",
        doc="Common practice, no source; to confirm.")
    min_zone_area_m2: float = key(
        "min_zone_area", "area", "0.5 m2", unit="m2", ge=0,
        help="Zone parts smaller than this are left to later rules",
        doc="Not for the repair zone: the laid-out repairs are zoned exactly as drawn, so no "
            "part of a repair is priced again by a treatment zone. `\"0 m2\"` keeps every part. "
            "Any area unit (see *Units accepted*): `\"5 ft2\"`, `\"5 ft²\"`, `\"720 in2\"`; a bare "
            "number (`0.5`), `\"5 sqft\"` and `\"5 sq ft\"` are refused.")
    zone_smoothing_m: float = key(
        "zone_smoothing", "length", "0.15 m", unit="m",
        help="Gaps and slivers narrower than twice this are smoothed",
        doc="Each zone is closed, then opened, with a square of this half-side. The repair zone "
            "is not smoothed (see `min_zone_area`).")
    #: kind -> fixed variogram parameters (``range_m`` in metres), from [run.variogram.<kind>]
    variogram: dict[str, dict[str, Any]] = key(
        "variogram", "tables", {}, type_doc="tables `[run.variogram.<kind>]`",
        default_doc="none: every parameter is fitted",
        help="Fixed variogram parameters of a measurement kind",
        doc="One table per kind; see below.")
    #: kind -> its surface rule and neighbourhood (``max_distance_m`` in metres), from
    #: [run.kinds.<kind>]
    kinds: dict[str, dict[str, Any]] = key(
        "kinds", "tables", {}, type_doc="tables `[run.kinds.<kind>]`",
        default_doc="none: the defaults below",
        help="When a kind gets a surface, and how far it reaches",
        doc="One table per kind; see below.")
    #: [webmap].basemap_url: street-tile URL template (https, with {z}, {x}, {y}); None = none
    basemap_url: str | None = key(
        "basemap_url", "string", None, table="webmap",
        example='"https://tile.example.org/{z}/{x}/{y}.png"',
        default_doc="none (no basemap layer)",
        help="A tile URL template: https, with {z}, {x} and {y}",
        allowed_doc="an `https://` URL with `{z}`, `{x}` and `{y}`, e.g. "
                    "`\"https://tile.example.org/{z}/{x}/{y}.png\"`; spaces, quotes, angle "
                    "brackets and backslashes are refused")
    #: [webmap].basemap_attribution: the tiles' attribution, shown on the map
    basemap_attribution: str | None = key(
        "basemap_attribution", "string", None, table="webmap",
        example='"(c) Example tile provider"', help="The tiles' attribution; needs a basemap URL",
        doc="**Required with `basemap_url`**, refused without it. Plain text shown on the map, "
            "as the tile provider asks, e.g. `\"© OpenStreetMap contributors\"`.")


@dataclass(frozen=True)
class LayoutParams:
    """Parameters of the repair layout (lengths in mm, as named).

    The site file's layout keys of ``[run]`` fill it (``SiteConfig.layout``); the fields
    without a key are the library's own.  Each field's default, unit, range and meaning are
    declared with it (``docs/site-file.md`` lists the keys); a value out of range raises
    :class:`~geo_corrosion.errors.RepairError` naming the field.  The layout follows
    [ICRI-310.1R-2008, from memory] and common practice (see :mod:`geo_corrosion.repair.layout`).
    """

    margin_mm: float = key(
        "repair_margin", "length", "150 mm", unit="mm", ge=0, le=3000,
        table="run", record="repair_margin_m",
        help="Repair grown beyond the sounded limits",
        doc="`\"6 in\"` (152.4 mm) follows [ICRI-310.1R-2008, from memory].")
    merge_gap_mm: float = key(
        "merge_gap", "length", "300 mm", unit="mm", ge=0, le=10000,
        table="run", record="merge_gap_m", help="Repairs closer than this are merged")
    merge_max_extra: float = param(
        0.25, unit="fraction of the group's area", ge=0, le=10,
        help="Largest area increase, as a fraction of the group's own area, accepted to replace "
             "a merged group by its bounding rectangle (common practice)")
    min_size_mm: float = key(
        "min_repair_size", "length", "300 mm", unit="mm", ge=0, le=10000,
        table="run", record="min_repair_size_m", help="Smallest repair side",
        doc="Applied again to the pieces that joints and exclusions leave.")
    round_increment_mm: float | None = key(
        "repair_increment", "length", None, unit="mm", ge=0, le=1000, table="run",
        record="repair_increment_m", example='"3 in"',
        default_doc='`"3 in"` (`units = "us"`), `"50 mm"` (`"metric"`)',
        help="Repair sides are rounded up to multiples of this",
        doc="Common practice, no source. Each repair still holds what it covered; where "
            "rounding up would cross a joint, enter an exclusion or leave the slab, the extra "
            "goes to the other side, or the side is clipped there with a note on the repair. "
            "`\"0 mm\"` turns rounding off. The library's own default (`LayoutParams`) is no "
            "rounding.")
    min_reentrant_mm: float = param(
        300.0, unit="mm", ge=0, le=10000,
        help="Smallest notch, step or strip kept in an L/T-shaped repair (common practice)")
    axis_angle_deg: float = key(
        "axis_angle_deg", "number", 0.0, unit="degrees", ge=-360, le=360, table="run",
        help="Saw-cut axes, degrees counter-clockwise from grid x",
        doc="Repairs are rectangles on these axes.")
    sawcut_depth_mm: float = key(  # 3/4 in exactly [ICRI-310.1R-2008], to confirm
        "sawcut_depth", "length", "0.75 in", metric="20 mm", unit="mm", gt=0, le=300, table="run",
        help="Perimeter saw cut and least removal depth",
        doc="3/4 in, after [ICRI-310.1R-2008], to confirm.")
    extend_to_edge: bool = param(
        True, "boolean", help="Extend a repair to a free slab edge that lies within the margin")
    cover_mm: float = param(
        38.0, unit="mm", ge=0, le=300,
        help="Cover to the top bars where the sources carry no cover_mm column (about 1-1/2 in, "
             "common practice)")
    bar_diameter_mm: float = key(
        "bar_diameter", "length", "16 mm", unit="mm", gt=0, le=60, table="run",
        help="Top-mat bar diameter (about a No. 5 bar)",
        doc="Sets the removal depth of a repair (cover + bar + undercut clearance), the section "
            "loss and the time to cover cracking ([methods.md](methods.md) §5.1, §6).")
    max_aggregate_mm: float = key(
        "max_aggregate", "length", "9.5 mm", metric="10 mm", unit="mm", ge=0, le=100, table="run",
        help="Largest aggregate of the repair material",
        doc="Sets the undercut clearance under exposed bars.")
    slab_thickness_mm: float | None = key(
        "slab_thickness", "length", None, unit="mm", gt=0, le=3000, table="run",
        example='"6 in"', help="Slab thickness; without it no repair is full depth",
        doc="A repair whose removal is deeper than `full_depth_fraction` (half) of it becomes "
            "full depth.")
    undercut_rule: Literal["icri", "ufgs"] = param(
        "icri", "string", choices=("icri", "ufgs"),
        help="Rule for the clearance under exposed bars [ICRI-310.1R-2008; UFGS-03931 §3.3.1.4]")
    full_depth_fraction: float = param(
        0.5, gt=0, le=1,
        help="A removal deeper than this fraction of the slab thickness is full depth "
             "(common practice)")

    def __post_init__(self) -> None:
        _check_declared(self, "repair layout", RepairError)


#: Sheets of ``[drawings].sheet`` (common practice: ANSI/ASME Y14.1 and ISO 216 sizes).
SHEETS = ("auto", "ANSI-C", "ANSI-D", "ANSI-E", "ISO-A2", "ISO-A1", "ISO-A0")


@dataclass(frozen=True)
class DrawingParams:
    """The drawing sheets' settings, from ``[drawings]``."""

    coords: str = key(
        "coords", "string", "grid", choices=("grid", "site"),
        help="Model space in the survey grid, or in the site CRS",
        doc="`\"grid\"` draws each level square to the sheet in its local survey grid; "
            "`\"site\"` draws it in the site CRS, for pasting into a surveyed base plan (north "
            "is then up on the sheet).")
    sheet: str = key(
        "sheet", "string", "auto", choices=SHEETS,
        help="Sheet size; auto: ANSI-D (34 x 22 in) for us units, ISO-A1 for metric",
        doc="The plan is drawn at the largest standard scale that fits (1\" = 10', 20', 30', "
            "40', 50', 60', 80', 100'; or 1:50, 1:100, 1:200, 1:250, 1:500, 1:1000); a plan "
            "that fits at none of them is refused, naming this key.")
    engineer: str = key(
        "engineer", "string", "(engineer not given)", example='"Engineer of record"',
        help="The engineer named in the title block")


@dataclass(frozen=True, kw_only=True)
class QuantitiesConfig:
    """The ``[quantities]`` table: the price list of the engineer's estimate."""

    price_list: Path | None = key(
        "price_list", "path", None, example='"prices.csv"', type_doc="string",
        help="A price list (CSV) for the engineer's estimate",
        doc="Columns `item`, `description`, `unit`, `unit_price`, `currency`, one row per bid "
            "item ([file-formats.md](file-formats.md#price-list)). With it the schedule carries "
            "unit prices and amounts, a subtotal, contingency and total per level, and the "
            "workbook computes them as formulas. " + _PATH_DOC)
    allow_outside: bool = key("allow_outside", "boolean", False, **{
        **_ALLOW_OUTSIDE, "help": "Allow a price list outside the site folder; a firm's "
                                  "shared list"})


@dataclass(frozen=True)
class ProjectConfig:
    """The ``[project]`` table: what the report's title block says about the engagement."""

    number: str | None = key("number", "string", None, example='"2026-041"',
                             help="Project number, in the report's title block")
    revision: str | None = key("revision", "string", None, example='"0"',
                               help="Revision of the report")
    date: str | None = key("date", "date", None, example='"2026-10-02"',
                           help="Date of the report (of this revision)")
    engineer: str | None = key("engineer", "string", None, example='"A. Engineer, P.E."',
                               help="The engineer responsible, who signs and seals")
    firm: str | None = key("firm", "string", None, example='"Engineering firm"',
                           help="The firm issuing the report")
    seal_note: str | None = key(
        "seal_note", "string", None, example='"Preliminary, not for construction"',
        help="Printed in the seal area (e.g. a preliminary or not-for-construction note)",
        doc="Without it the seal area is left blank for the seal and signature.")


@dataclass(frozen=True, kw_only=True)
class SiteConfig:
    """A parsed, validated site file."""

    path: Path
    root: Path
    name: str = key("name", "string", table="site", example='"My Parking Structure"',
                    help="Shown on every map, drawing and schedule")
    owner: str = key("owner", "string", "(owner not given)", table="site",
                     example='"Owner\'s name"', active=True, help="The owner of the structure")
    crs: pyproj.CRS = key(
        "crs", "crs", table="site", example='"EPSG:26918"',
        type_doc="string (or integer EPSG code)",
        help="A projected CRS in metres or feet (UTM or State Plane zone)",
        allowed_doc="a **projected** CRS in metres, feet or US survey feet, e.g. "
                    "`\"EPSG:26918\"`; geographic and unknown CRSs are refused")
    crs_unit: str
    units: str = key(
        "units", "string", "metric", table="site", choices=get_args(UnitSystem),
        example='"us"', active=True,
        help="Reporting units: us (ft2, LF, ft3) or metric (m2, m, m3)",
        doc="Depths in mm for `\"metric\"`, in inches for `\"us\"`.")
    notes: str = key("notes", "text", "", table="site", help="Free text")
    levels: tuple[LevelConfig, ...]
    surveys: tuple[SurveyConfig, ...]
    #: the [project] table (title block of the report); all None when absent
    project: ProjectConfig = field(default_factory=ProjectConfig)
    run: RunParams = field(default_factory=RunParams)
    #: the repair layout's parameters, from the layout keys of [run]
    layout: LayoutParams = field(default_factory=LayoutParams)
    #: ordered zoning rules: (registry name, keyword parameters); empty = the built-in order
    zoning: tuple[tuple[str, dict[str, Any]], ...] = ()
    #: the combined-condition rule table as given in [condition.combined] (None = default)
    combined_rules: dict[str, Any] | None = None
    #: the drawing sheets' settings, from [drawings]
    drawings: DrawingParams = field(default_factory=DrawingParams)
    #: the [quantities] table: the price list of the estimate
    quantities: QuantitiesConfig = field(default_factory=QuantitiesConfig)

    def level(self, level_id: str) -> LevelConfig:
        """Return the level with this id."""
        for lv in self.levels:
            if lv.id == level_id:
                return lv
        raise SiteFileError(f"{self.path}: no level with id {level_id!r}")

    def parameters(self) -> dict[str, Any]:
        """Return the ``[run]`` and ``[webmap]`` values, as ``run.json`` gives them.

        In the order of :data:`TABLES` ``["run"]`` then ``["webmap"]``, each under its field's
        name (lengths in the field's unit), or under its ``record`` name: the layout's margin,
        merge gap and minimum size in metres (``repair_margin_m``), to the 12 decimals that
        :func:`~geo_corrosion.units.parse_length` keeps.
        """
        out: dict[str, Any] = {}
        for k in (*TABLES["run"].keys, *TABLES["webmap"].keys):
            v = getattr(self.layout if k.owner is LayoutParams else self.run, k.field)
            if k.record:
                unit = k.record.rsplit("_", 1)[1]
                v = v if v is None else round(v * _PER_M[unit] / _PER_M[k.unit], 12)
            out[k.record or k.field] = copy.deepcopy(v)
        return out


# --------------------------------------------------------------------------- the tables


@dataclass(frozen=True)
class TableSpec:
    """A table of the site file and its keys, in order."""

    name: str
    keys: tuple[Key, ...]

    @property
    def names(self) -> tuple[str, ...]:
        """The allowed keys, in order."""
        return tuple(str(k.name) for k in self.keys)

    def __getitem__(self, name: str) -> Key:
        for k in self.keys:
            if k.name == name:
                return k
        raise KeyError(f"[{self.name}] declares no key {name!r}")


def _in(table: str, *keys: Key) -> tuple[Key, ...]:
    """Keys of a table held as a dict: each fills the dict entry of its name, or ``field``."""
    return tuple(dataclasses.replace(k, table=table, field=k.field or str(k.name)) for k in keys)


def _ordered(keys: Sequence[Key], order: Sequence[str]) -> tuple[Key, ...]:
    """Keys in a given order; the order must name each of them once."""
    by_name = {str(k.name): k for k in keys}
    if sorted(order) != sorted(by_name):
        raise ValueError(f"the [run] order names {sorted(order)}, the declarations "
                         f"{sorted(by_name)}")
    return tuple(by_name[n] for n in order)


#: The order of [run], over RunParams and LayoutParams: the order of the docs, the template,
#: the allowed keys and run.json's ``parameters`` (docs/file-formats.md §3.5).
_RUN_ORDER = (
    "cell_size", "max_distance", "contour_interval_mv", "repair_margin", "merge_gap",
    "min_repair_size", "repair_increment", "contingency", "n_neighbors", "variogram_model",
    "resistivity_reference_c", "activation_energy_kj_mol", "cse_reference_c",
    "correct_only_outside_band", "calibrate_variance", "interval_method", "realisations",
    "bar_diameter", "max_aggregate", "slab_thickness", "sawcut_depth", "axis_angle_deg",
    "anode_spacing", "bar_replacement_share", "bar_spacing", "pay_area", "pay_area_share",
    "min_zone_area", "zone_smoothing", "variogram", "kinds",
)

_CLASS_KEYS_DOC = "class key or list of class keys"

#: Every table of the site file, by its dotted name.
TABLES: dict[str, TableSpec] = {t.name: t for t in (
    TableSpec("site", keys_of(SiteConfig, "site")),
    TableSpec("project", keys_of(ProjectConfig, "project")),
    TableSpec("run", _ordered(keys_of(RunParams, "run") + keys_of(LayoutParams, "run"),
                              _RUN_ORDER)),
    TableSpec("run.variogram.<kind>", _in(
        "run.variogram.<kind>",
        Key("model", "string", None, choices=VARIOGRAM_MODELS[1:], example='"matern"',
            default_doc="fitted", help="Fit this model only"),
        Key("nugget", "number", None, ge=0, example="100.0", default_doc="fitted",
            expect="a number of 0 or more (value unit squared of the kriged variable)",
            help="Value unit squared of the kriged variable (mV2 here)",
            doc="mV² for potentials, mm² for cover; (ln kΩ·cm)² and (ln µA/cm²)² for the "
                "log-kriged kinds. `nugget` and `psill` are not both 0."),
        Key("psill", "number", None, ge=0, example="2500.0", default_doc="fitted",
            expect="a number of 0 or more (value unit squared of the kriged variable)",
            help="Partial sill, same unit", doc="As `nugget`."),
        Key("range", "length", None, unit="m", field="range_m", example='"30 ft"',
            default_doc="fitted", help="Practical range (true range for spherical)",
            doc="Where the model reaches 95 % of the partial sill."),
        Key("shape", "number", None, example="1.5", default_doc="fitted",
            help='Smoothness of the Matern model; only with model = "matern"',
            allowed_doc="from 0.2 to 5 (the Matérn ν of the fit)",
            doc="Refused with another fixed `model`, where it would have no effect."),
        Key("anisotropy_ratio", "number", None, gt=0, le=1, example="1.0",
            expect="the minor/major range ratio, more than 0 and at most 1",
            default_doc="fitted", help="Minor/major range ratio"),
        Key("anisotropy_angle_deg", "number", None, unit="degrees", example="0.0",
            default_doc="fitted", help="Major axis, degrees counter-clockwise from grid x"),
    )),
    TableSpec("run.kinds.<kind>", _in(
        "run.kinds.<kind>",
        Key("min_readings_for_surface", "integer", 30, unit="readings", ge=3,
            help="Fewest usable readings for a kriged surface",
            doc="With fewer, the kind is shown as its readings, coloured by class, with their "
                "Thiessen cells ([methods.md](methods.md) §3.4)."),
        Key("max_spacing_to_range", "number", 0.5, unit="fraction", gt=0, le=10,
            help="Largest median reading spacing, as a fraction of the fitted practical range",
            doc="Readings farther apart are shown as points too."),
        Key("max_distance", "length", None, unit="m", field="max_distance_m", gt=0,
            le=1000.0, example='"20 ft"', default_doc="derived: see below",
            help="No surface of this kind farther than this from its readings",
            doc="Overrides `[run] max_distance` for this kind. Derived: max(2.5 x median "
                "nearest-neighbour spacing, min(fitted practical range, 5 x spacing)). The "
                "search radius is the larger of this and the fitted practical range."),
        Key("threshold", "number", None, unit="the kind's unit", example="2.0",
            default_doc="the kind's published threshold",
            help="Threshold of the kind's area-beyond-threshold statement and probability map",
            doc="In the kind's unit (mV vs CSE, kOhm.cm, uA/cm2), for a kind that has such a "
                "statement (potential -350 mV [ASTM-C876-91 App. X1, from memory], resistivity "
                "10 kOhm.cm, corrosion rate 1 uA/cm2 [RILEM-TC154-2000]). The value must lie "
                "inside the kind's plausible range; the report and `run.json` then name this "
                "key as the threshold's source."),
    )),
    TableSpec("webmap", keys_of(RunParams, "webmap", home="run")),
    TableSpec("drawings", keys_of(DrawingParams, "drawings")),
    TableSpec("quantities", keys_of(QuantitiesConfig, "quantities")),
    TableSpec("levels", keys_of(LevelConfig, "levels")),
    TableSpec("layer", keys_of(LayerRef, "layer")),
    TableSpec("levels.overlays", keys_of(OverlayRef, "levels.overlays")
              + keys_of(LayerRef, "layer")),
    TableSpec("levels.joints", keys_of(JointRef, "levels.joints")
              + keys_of(LayerRef, "layer")),
    TableSpec("levels.grid", keys_of(GridConfig, "levels.grid")),
    TableSpec("levels.grid.control_points", keys_of(ControlPoint, "levels.grid.control_points")),
    TableSpec("surveys", keys_of(SurveyConfig, "surveys")),
    TableSpec("surveys.ground_connections", keys_of(GroundConnection,
                                                    "surveys.ground_connections")),
    TableSpec("condition", _in(
        "condition", Key("combined", "table", None, help="The combined condition rule table"))),
    TableSpec("condition.combined", _in(
        "condition.combined",
        Key("default", "string", "unclassified",
            help="The class of a cell no rule matches",
            doc="A cell with no value of any kind is `no_data`.", allowed_doc="a class key"),
        Key("classes", "classes", DERIVED, default_doc="the default classes",
            type_doc="list of `{ key, label, color }`",
            example='[ { key = "high_priority", label = "High priority", color = "#D55E00" }, '
                    '{ key = "watch", label = "Watch", color = "#F0E442" }, '
                    '{ key = "low_risk", label = "Low risk", color = "#009E73" } ]',
            help="The output classes, in order",
            doc="`label` defaults to `key`, `color` (`\"#RRGGBB\"`) to a grey. `unclassified` "
                "and `no_data` are added when missing. Keys must be unique."),
        Key("rules", "tables", DERIVED, default_doc="the default rules",
            type_doc="array of tables `[[condition.combined.rules]]`",
            help="The rules, first match wins",
            doc="When given, they **replace** the default rules."),
        Key("class_sets", "table", DERIVED,
            default_doc='`potential = "c876"`, `resistivity = "rilem_resistivity"`, '
                        '`rate = "rilem_rate"`',
            type_doc="table of kind = class set",
            example='{ potential = "c876", resistivity = "rilem_resistivity", rate = '
                    '"rilem_rate" }',
            help="The class set whose keys the rules use for each kind",
            doc="Kinds: `potential`, `resistivity`, `rate`. The class set must classify that kind "
                "(a rate class set for `potential` is refused), and laboratory class sets are "
                "refused. For example `potential = \"c876_severe\"` adds the key `severe`."),
    )),
    TableSpec("condition.combined.classes", _in(
        "condition.combined.classes",
        Key("key", "string", help="The class key"),
        Key("label", "string", DERIVED, default_doc="= `key`", help="Its label"),
        Key("color", "string", DERIVED, default_doc="a grey", help='Its colour, "#RRGGBB"'),
    )),
    TableSpec("condition.combined.rules", _in(
        "condition.combined.rules",
        Key("name", "string", DERIVED, default_doc="`rule <n>`",
            help="Shown in messages and in run.json"),
        Key("class", "string", help="The class the rule gives",
            allowed_doc="one of `classes`"),
        Key("potential", "classkeys", None, type_doc=_CLASS_KEYS_DOC, example='["high"]',
            help="The cell's potential class must be one of these",
            allowed_doc="keys of the kind's class set"),
        Key("resistivity", "classkeys", None, type_doc=_CLASS_KEYS_DOC, example='["high"]',
            help="The cell's resistivity class must be one of these",
            allowed_doc="keys of the kind's class set"),
        Key("rate", "classkeys", None, type_doc=_CLASS_KEYS_DOC, example='["high"]',
            help="The cell's corrosion-rate class must be one of these",
            allowed_doc="keys of the kind's class set"),
        Key("low_cover", "boolean", None, example="true",
            help="The cell must (or must not) be low cover"),
    )),
)}

#: The top level of the site file: its tables.
TOP = TableSpec("", _in(
    "",
    Key("site", "table", help="The site"),
    Key("project", "table", None, help="The project: number, revision, engineer, firm"),
    Key("run", "table", None, help="Parameters of the run"),
    Key("levels", "tables", help="One table per level"),
    Key("surveys", "tables", None, help="One table per readings file"),
    Key("zoning", "tables", None, help="The zoning rules, in order"),
    Key("condition", "table", None, help="The combined condition rules"),
    Key("webmap", "table", None, help="A street basemap of the web map"),
    Key("drawings", "table", None, help="The drawing sheets"),
    Key("quantities", "table", None, help="The price list of the estimate"),
))


# --------------------------------------------------------------------------- docs and template


def _toml(v: Any) -> str:
    """Return a value as TOML text (strings, numbers, booleans, empty lists and tables)."""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)
    if isinstance(v, list | tuple):
        return "[" + ", ".join(map(_toml, v)) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{k} = {_toml(x)}" for k, x in v.items()) + "}"
    return repr(v)


def _held_note(k: Key) -> str:
    """`` (0.3048 m)`` when a length default is written in another unit than it is held."""
    if k.type != "length" or not isinstance(k.default, str):
        return ""
    if k.default.strip().endswith(f" {k.unit}"):
        return ""
    return f" ({k.value:g} {k.unit})"


def _cell(text: str) -> str:
    return text.replace("|", "\\|")


def _doc_row(k: Key) -> str:
    if k.required:
        default = "**required**"
    elif k.default_doc:
        default = k.default_doc
    elif k.default is None:
        default = "none"
    else:
        default = f"`{_toml(k.default)}`{_held_note(k)}"
        if k.metric is not None:
            default = f"{default} (`us`); `{_toml(k.metric)}` (`metric`)"
    typ = k.type_doc or _TYPE_DOC.get(k.type, k.type)
    if k.unit and k.type in ("number", "integer") and k.unit != "grid units":
        typ += f" ({k.unit})"
    allowed = []
    if k.choices:
        allowed.append(", ".join(f"`{_toml(c)}`" for c in k.choices))
    elif k.type == "boolean":
        allowed.append("`true` or `false`")
    rng = k.range_text(site=True)
    if rng and not k.choices:
        allowed.append(rng)
    if k.allowed_doc:
        allowed.append(k.allowed_doc)
    meaning = f"{k.help}." + (f" {k.doc}" if k.doc else "")
    return (f"| `{k.name}` | {_cell(typ)} | {_cell(default)} | {_cell('; '.join(allowed))} | "
            f"{_cell(meaning)} |")


def schema_markdown(table: str) -> str:
    """Return the key table of a site-file table, as Markdown (for ``docs/site-file.md``).

    Parameters
    ----------
    table : str
        A name of :data:`TABLES` (``"run"``, ``"levels.grid"``).
    """
    rows = [_doc_row(k) for k in TABLES[table].keys]
    return "\n".join(["| Key | Type | Default | Allowed | Meaning |", "|---|---|---|---|---|",
                      *rows])


_BLOCK = re.compile(r"(<!-- begin generated: (?P<table>\S+) -->\n).*?(<!-- end generated -->)",
                    re.S)


def render_docs(text: str) -> str:
    """Return ``docs/site-file.md`` with each generated block rewritten from the declaration.

    A block is the text between ``<!-- begin generated: <table> -->`` and
    ``<!-- end generated -->``; the prose around the blocks is kept as it is.
    """
    return _BLOCK.sub(lambda m: f"{m.group(1)}{schema_markdown(m.group('table'))}\n{m.group(3)}",
                      text)


_COMMENT_AT = 39  # the column of the template's comments


def _template_lines(table: str, commented: bool) -> list[str]:
    """Return the template's lines for the keys of a table (structured tables are left out)."""
    out: list[str] = []
    for k in TABLES[table].keys:
        if k.type in ("table", "tables") and k.example is None:
            continue  # a sub-table: written out by the skeleton
        if k.example is not None:
            value = k.example
        elif k.default is None or isinstance(k.default, _Marker):
            raise ValueError(f"{k.dotted}: the template needs an example of it")
        else:
            value = _toml(k.default)
        word = k.help.split()[0]
        comment = k.help if any(c.isupper() for c in word[1:]) else k.help[0].lower() + k.help[1:]
        if k.alternative:
            out.append(" " * _COMMENT_AT + f"# (or {k.name} = {value}: {comment}; not both)")
            continue
        first, *rest = value.split("\n")
        active = not commented and (k.required or k.active)
        if rest and not active:
            raise ValueError(f"{k.dotted}: a commented example must be one line")
        line = f"{'' if active else '# '}{k.name} = {first}"
        if max(len(line), _COMMENT_AT - 1) + 3 + len(comment) > 100:
            out += [f"# {comment}:", line]
        else:
            out.append(f"{line.ljust(_COMMENT_AT - 1)} # {comment}")
        out.extend(rest)
    return out


def site_template() -> str:
    """Return the ``geo-corrosion init`` template: its skeleton with the declared keys.

    The skeleton, ``geo_corrosion/templates/site.toml.in``, holds the prose and the examples
    of the tables that are not declared here (kind options, zoning rules, condition rules);
    each of its lines ``@keys <table> [commented]`` becomes the keys of that table, and its
    lines starting ``#@`` (notes for whoever edits it) are dropped.
    """
    skeleton = (Path(__file__).parent / "templates" / "site.toml.in").read_text(encoding="utf-8")
    out: list[str] = []
    for line in skeleton.splitlines():
        if line.startswith("#@"):
            continue
        m = re.fullmatch(r"@keys (\S+)( commented)?", line)
        out.extend(_template_lines(m.group(1), bool(m.group(2))) if m else [line])
    return "\n".join(out) + "\n"


def main(argv: Sequence[str] | None = None) -> int:
    """Rewrite docs/site-file.md's key tables and the init template from the declaration.

    ``python -m geo_corrosion.config [--check]``; with ``--check``, only say which is stale
    (exit status 1).  Run from a source checkout (``docs/`` beside the package).
    """
    args = list(sys.argv[1:] if argv is None else argv)
    check = "--check" in args
    if set(args) - {"--check"}:
        print("usage: python -m geo_corrosion.config [--check]", file=sys.stderr)
        return 2
    package = Path(__file__).resolve().parent
    docs = package.parent / "docs" / "site-file.md"
    if not docs.is_file():
        print(f"{docs}: not found; run this in a source checkout", file=sys.stderr)
        return 2
    stale = []
    for path, new in ((docs, render_docs(docs.read_text(encoding="utf-8"))),
                      (package / "templates" / "site.toml", site_template())):
        old = path.read_text(encoding="utf-8") if path.is_file() else ""
        if old == new:
            continue
        stale.append(path)
        if check:
            print(f"{path}: stale; run python -m geo_corrosion.config")
            diff = difflib.unified_diff(old.splitlines(), new.splitlines(), lineterm="", n=1)
            print("\n".join(list(diff)[:40]))
        else:
            path.write_text(new, encoding="utf-8")
            print(f"{path}: rewritten")
    return 1 if check and stale else 0


if __name__ == "__main__":
    raise SystemExit(main())

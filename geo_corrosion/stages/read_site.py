"""Reading the site file: a TOML file that says what each file of a survey folder is.

Read with the standard library's :mod:`tomllib` and validated strictly: an
unknown or misspelt key, a missing key or a value of the wrong type raises
:class:`~geo_corrosion.errors.SiteFileError` naming the file, the key and what
is expected.  Each table's keys, their types, defaults, units and ranges are those
declared in :mod:`geo_corrosion.config`; the checks that need a registry (measurement
kinds and their options, zoning rules, class sets, the combined rule table) are here.
Lengths carry their unit as a string (``"150 mm"``, ``"6 in"``, ``"1 ft"``) and are held
in the unit of their field (``cell_size_m``, ``margin_mm``).  See ``docs/site-file.md`` for
the full reference and ``geo-corrosion init`` for a commented template.
"""

from __future__ import annotations

import difflib
import re
import tomllib
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from geo_corrosion._toml import Table, check_id, site_path
from geo_corrosion.config import (
    DERIVED,
    TABLES,
    TOP,
    ControlPoint,
    DrawingParams,
    GridConfig,
    GroundConnection,
    JointRef,
    Key,
    LayerRef,
    LayoutParams,
    LevelConfig,
    OverlayRef,
    ProjectConfig,
    QuantitiesConfig,
    RunParams,
    SiteConfig,
    SurveyConfig,
)
from geo_corrosion.crs import site_crs
from geo_corrosion.errors import RepairError, SiteFileError, UnitError
from geo_corrosion.repair.rounding import default_increment_mm
from geo_corrosion.units import normalize_unit, parse_area

__all__ = ["read_site"]


def _table(data: object, where: str, table: str) -> Table:
    """Open a table of the site file; its allowed keys are those declared for it."""
    return Table(data, where, TABLES[table].names)


def _read(t: Table, k: Key, derived: Any = None) -> Any:
    """Read one declared key of a table: its type, default, unit and range are declared.

    An absent key gives its default (as held), or ``derived`` when the reader derives it
    (:data:`~geo_corrosion.config.DERIVED`); a required key that is absent is refused.
    """
    name, where = str(k.name), t.key(str(k.name))
    if not t.has(name):
        if k.required:
            raise SiteFileError(f"{where}: missing; expected {k.expected()}")
        return derived if k.default is DERIVED else k.value
    raw = t.data[name]
    v: Any
    if k.type in ("string", "path"):
        v = t.string(name, choices=k.choices)
    elif k.type == "id":
        v = check_id(t.string(name), where)
    elif k.type == "text":
        v = t.text(name)
    elif k.type in ("number", "integer"):
        v = t.num(name, finite=True)
        if k.type == "integer":
            if v != int(v):
                raise SiteFileError(f"{where}: expected {k.expected()}, got {raw!r}")
            v = int(v)
    elif k.type == "boolean":
        if not isinstance(raw, bool):
            raise SiteFileError(f"{where}: expected true or false, got {raw!r}")
        v = raw
    elif k.type == "length":
        v = k.hold(raw, where=where)
    elif k.type == "area":
        v = parse_area(raw, where=where)
    elif k.type == "unit":
        try:
            v = normalize_unit(t.string(name), accepted=k.choices, where=f"{where}: ")
        except UnitError as err:
            raise SiteFileError(str(err)) from err
    elif k.type == "pair":
        v = t.pair(name)
    elif k.type == "date":
        v = raw.isoformat() if hasattr(raw, "isoformat") else t.string(name)
    else:
        raise TypeError(f"{k.dotted}: a {k.type!r} key has a reader of its own")
    if not k.in_range(v, site=True):
        raise SiteFileError(f"{where}: expected {k.expected()}, got {raw!r}")
    return v


def _layer(data: object, where: str, root: Path) -> LayerRef:
    if isinstance(data, str):
        data = {"path": data}
    t = _table(data, where, "layer")
    keys = TABLES["layer"]
    allow = _read(t, keys["allow_outside"])
    return LayerRef(
        path=site_path(_read(t, keys["path"]), root, t.key("path"), allow_outside=allow),
        allow_outside=allow,
        layer=_read(t, keys["layer"]),
        coords=_read(t, keys["coords"]),
        unit=_read(t, keys["unit"]),
        where=where,
    )


def _joints(t: Table, root: Path) -> tuple[JointRef, ...]:
    """Read ``joints``: one joint layer reference (a table or a path) or a list of them."""
    if not t.has("joints"):
        return ()
    raw = t.data["joints"]
    many = isinstance(raw, list)
    items = raw if many else [raw]
    out = []
    for i, item in enumerate(items):
        jw = f"{t.key('joints')}[{i}]" if many else t.key("joints")
        if isinstance(item, str):
            item = {"path": item}
        jt = _table(item, jw, "levels.joints")
        keys = TABLES["levels.joints"]
        rest = {k: v for k, v in jt.data.items() if k not in ("type", "breaks_continuity")}
        out.append(JointRef(joint_type=_read(jt, keys["type"]),
                            breaks_continuity=_read(jt, keys["breaks_continuity"]),
                            ref=_layer(rest, jw, root)))
    return tuple(out)


def _ground_connections(t: Table) -> tuple[GroundConnection, ...]:
    """Read a survey's ``ground_connections``: a list of ``{ x, y, label }``."""
    out = []
    seen: dict[str, int] = {}
    for i, g in enumerate(t.array("ground_connections")):
        gw = f"{t.key('ground_connections')}[{i}]"
        gt = _table(g, gw, "surveys.ground_connections")
        keys = TABLES["surveys.ground_connections"]
        label = _read(gt, keys["label"], f"G{i + 1}")
        if label in seen:
            raise SiteFileError(
                f"{gt.key('label')}: ground connection {label!r} is already named by "
                f"ground_connections[{seen[label]}] of this survey; give each its own label")
        seen[label] = i
        out.append(GroundConnection(x=_read(gt, keys["x"]), y=_read(gt, keys["y"]), label=label))
    return tuple(out)


def _grid(data: object, where: str) -> GridConfig:
    t = _table(data, where, "levels.grid")
    keys = TABLES["levels.grid"]
    unit = _read(t, keys["unit"])
    cps = []
    seen: dict[str, int] = {}
    for i, cp in enumerate(t.array("control_points")):
        ct = _table(cp, f"{t.key('control_points')}[{i}]", "levels.grid.control_points")
        ck = TABLES["levels.grid.control_points"]
        cp_id = _read(ct, ck["id"], f"CP{i + 1}")
        if cp_id in seen:
            raise SiteFileError(
                f"{ct.key('id')}: control point id {cp_id!r} is already used by "
                f"control_points[{seen[cp_id]}] of this grid; give each control point of the "
                "level its own id (a point listed twice would weigh double in the grid fit)"
            )
        seen[cp_id] = i
        cps.append(ControlPoint(cp_id, _read(ct, ck["local"]), _read(ct, ck["site"])))
    origin = _read(t, keys["origin"])
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
        spacing=_read(t, keys["spacing"]),
        origin=origin,
        rotation_deg=_read(t, keys["rotation_deg"]),
        control_points=tuple(cps),
    )


def _level(data: object, where: str, root: Path) -> LevelConfig:
    t = _table(data, where, "levels")
    keys = TABLES["levels"]
    lid = _read(t, keys["id"])
    if "slab" not in t.data:
        raise SiteFileError(f"{t.key('slab')}: missing; give the slab outline as {{ path, layer }}")
    overlays = []
    for i, o in enumerate(t.array("overlays")):
        ow = f"{t.key('overlays')}[{i}]"
        ot = _table(o, ow, "levels.overlays")
        kind = _read(ot, TABLES["levels.overlays"]["kind"])
        rest = {k: v for k, v in ot.data.items() if k != "kind"}
        overlays.append(OverlayRef(kind=kind, ref=_layer(rest, ow, root)))
    if "grid" not in t.data:
        raise SiteFileError(f"{t.key('grid')}: missing; every level needs a [levels.grid] table")
    return LevelConfig(
        id=lid,
        name=_read(t, keys["name"], lid),
        slab=_layer(t.data["slab"], t.key("slab"), root),
        exclusions=tuple(
            _layer(e, f"{t.key('exclusions')}[{i}]", root)
            for i, e in enumerate(t.array("exclusions"))
        ),
        joints=_joints(t, root),
        column_grid=(_layer(t.data["column_grid"], t.key("column_grid"), root)
                     if t.has("column_grid") else None),
        overlays=tuple(overlays),
        grid=_grid(t.data["grid"], t.key("grid")),
        specified_cover_mm=_read(t, keys["specified_cover"]),
        cover_tolerance_mm=_read(t, keys["cover_tolerance"]),
        slab_thickness_mm=_read(t, keys["slab_thickness"]),
        station_start=_read(t, keys["station_start"]),
        station_centerline_y=_read(t, keys["station_centerline_y"]),
    )


def _survey(data: object, where: str, root: Path, level_ids: set[str]) -> SurveyConfig:
    t = _table(data, where, "surveys")
    keys = TABLES["surveys"]
    sid = _read(t, keys["id"])
    level = _read(t, keys["level"])
    if level not in level_ids:
        raise SiteFileError(
            f"{t.key('level')}: no level {level!r} is declared; declared levels: "
            f"{', '.join(sorted(level_ids))}"
        )
    temp = _read(t, keys["temperature_c"])
    temp_f = _read(t, keys["temperature_f"])
    if temp_f is not None:
        if temp is not None:
            raise SiteFileError(f"{where}: give temperature_c or temperature_f, not both")
        temp = (temp_f - 32.0) / 1.8
    columns = t.data.get("columns", {})
    if not isinstance(columns, dict) or not all(isinstance(v, str) for v in columns.values()):
        raise SiteFileError(
            f"{t.key('columns')}: expected a table of our column name = the file's column name"
        )
    kind = _read(t, keys["kind"])
    allow = _read(t, keys["allow_outside"])
    path = site_path(_read(t, keys["path"]), root, t.key("path"), allow_outside=allow)
    options = _survey_options(t, kind, root, allow)
    unit = _survey_unit(t, kind, path, root, columns)
    sep = _read(t, keys["separator"])
    dec = _read(t, keys["decimal"])
    if sep == dec:
        raise SiteFileError(
            f"{t.key('separator')}: separator and decimal cannot both be {sep!r}; a file with "
            "decimal commas is separated by another character: set separator = ';' (or the one "
            "the file uses), or decimal = \".\"")
    return SurveyConfig(
        id=sid,
        level=level,
        kind=kind,
        path=path,
        unit=unit,
        coords=_read(t, keys["coords"]),
        electrode=_read(t, keys["electrode"]),
        temperature_c=temp,
        temperature_f=temp_f,
        temperature_coefficient_mv_per_c=_read(t, keys["temperature_coefficient_mv_per_c"]),
        date=_read(t, keys["date"]),
        **{k: _read(t, keys[k]) for k in ("crew", "instrument", "weather",
                                          "surface_condition", "prewetting")},
        separator=sep,
        decimal=dec,
        layer=_read(t, keys["layer"]),
        columns=dict(columns),
        where=where,
        options=options,
        allow_outside=allow,
        ground_connections=_ground_connections(t),
    )


def _survey_unit(t: Table, kind: str, path: Path, root: Path, columns: Mapping[str, Any]
                 ) -> str:
    """Read a survey's ``unit`` and check it against its kind's accepted units, at read time.

    An unknown unit, or one of another quantity (``"ohm"`` for potentials), is refused naming
    the dotted key, the file and the column it applies to, and the accepted units (the
    contract of issue 11); ingest converts with the same table.
    """
    unit: str = _read(t, TABLES["surveys"]["unit"])
    from geo_corrosion.errors import PluginError
    from geo_corrosion.measurements import get_kind  # lazy: kinds import this module's types

    try:
        kind_obj = get_kind(kind, where=f"{t.key('kind')}: ")
    except PluginError:
        return unit  # an unknown or broken kind: said where the survey is opened
    try:
        normalize_unit(unit, accepted=tuple(kind_obj.unit_factors()))
    except UnitError as err:
        name = path.relative_to(root) if path.is_relative_to(root) else path
        column = columns.get("value", "value")
        raise SiteFileError(
            f"{t.key('unit')}: {err} (the unit of column {column!r} of {name}, {kind} "
            "readings); give the unit the values of that column are in") from err
    return unit


def _survey_options(t: Table, kind: str, root: Path, allow_outside: bool) -> dict[str, Any]:
    """Validate ``[surveys.options]`` through the survey's kind; {} when absent.

    Every path the kind returns (an instrument file: ``transients_path``, ``sweeps_path``, or a
    plugin kind's) is checked as the survey's ``path`` is, with the survey's ``allow_outside``,
    and named by its option key (``options.transients``).
    """
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
    out = dict(kind_obj.parse_options(raw, where=where, root=root))
    for name, value in out.items():
        if isinstance(value, Path):
            option = name.removesuffix("_path") if name.removesuffix("_path") in raw else name
            given = raw.get(option)
            out[name] = site_path(given if isinstance(given, str) else str(value), root,
                                  f"{where}.{option}", allow_outside=allow_outside)
    return out


def _variogram(t: Table) -> dict[str, dict[str, Any]]:
    """Read the [run.variogram.<kind>] tables; the kinds are those of the kind registry."""
    vt = t.data.get("variogram", {})
    if not isinstance(vt, dict):
        raise SiteFileError(f"{t.key('variogram')}: expected tables such as "
                            "[run.variogram.potential]")
    file = t.where.removesuffix(": [run]")
    fixed: dict[str, dict[str, Any]] = {}
    for kind, spec in vt.items():
        w = f"{file}: [run.variogram.{kind}]"
        _check_kind_table(kind, w, "variogram")
        kt = _table(spec, w, "run.variogram.<kind>")
        fx: dict[str, Any] = {k.field: _read(kt, k) for k in TABLES["run.variogram.<kind>"].keys
                              if kt.has(str(k.name))}
        if fx.get("nugget") == 0 and fx.get("psill") == 0:
            raise SiteFileError(f"{w}: nugget and psill are both 0, so the variogram has no sill; "
                                "give a positive value to one of them, or leave one to be fitted")
        if "shape" in fx:
            from geo_corrosion.surfaces.variogram import _SHAPE_BOUNDS

            lo, hi = _SHAPE_BOUNDS["matern"]
            if fx.get("model", "matern") != "matern":
                raise SiteFileError(f"{kt.key('shape')}: shape is the Matern smoothness and "
                                    f"applies only to model = \"matern\", not {fx['model']!r}")
            if not lo <= fx["shape"] <= hi:
                raise SiteFileError(f"{kt.key('shape')}: expected a Matern shape from {lo:g} to "
                                    f"{hi:g}, got {fx['shape']!r}")
        fixed[str(kind)] = fx
    return fixed


def _check_kind_table(kind: str, where: str, table: str) -> None:
    """Refuse a ``[run.<table>.<kind>]`` table whose kind is unknown or failed to load."""
    from geo_corrosion.errors import PluginError
    from geo_corrosion.measurements import MEASUREMENTS

    if kind not in MEASUREMENTS.load():
        known = MEASUREMENTS.names()
        close = difflib.get_close_matches(kind, known, n=1)
        hint = f"; did you mean {close[0]!r}?" if close else ""
        raise SiteFileError(
            f"{where}: unknown measurement kind {kind!r}{hint} Known kinds: {', '.join(known)}. "
            f"Name the table [run.{table}.<kind>] after one of them")
    try:
        MEASUREMENTS.get(kind)  # a plugin kind that failed to load raises here
    except PluginError as err:
        raise SiteFileError(f"{where}: {err}") from err


def _kinds(t: Table) -> dict[str, dict[str, Any]]:
    """Read the [run.kinds.<kind>] tables (surface rule and neighbourhood of a kind)."""
    from geo_corrosion.measurements import MEASUREMENTS

    kt_all = t.data.get("kinds", {})
    if not isinstance(kt_all, dict):
        raise SiteFileError(f"{t.key('kinds')}: expected tables such as [run.kinds.cover]")
    file = t.where.removesuffix(": [run]")
    out: dict[str, dict[str, Any]] = {}
    for kind, spec in kt_all.items():
        w = f"{file}: [run.kinds.{kind}]"
        _check_kind_table(kind, w, "kinds")
        kt = _table(spec, w, "run.kinds.<kind>")
        out[str(kind)] = {k.field: _read(kt, k) for k in TABLES["run.kinds.<kind>"].keys
                          if kt.has(str(k.name))}
        if "threshold" in out[str(kind)]:
            _check_threshold(MEASUREMENTS.get(kind), out[str(kind)]["threshold"],
                             kt.key("threshold"))
    return out


def _check_threshold(kind: Any, value: float, where: str) -> None:
    """Refuse a threshold for a kind without one, or outside the kind's plausible range."""
    if kind.threshold is None:
        raise SiteFileError(f"{where}: the {kind.name} kind makes no area-beyond-threshold "
                            "statement, so it takes no threshold; remove the key")
    lo, hi = kind.plausible_range
    if not lo < value < hi:
        raise SiteFileError(
            f"{where}: {value:g} {kind.canonical_unit} lies outside the plausible range of "
            f"{kind.name} readings ({lo:g} to {hi:g} {kind.canonical_unit}), so no reading "
            f"could be beyond it in a meaningful way; give a value inside that range (the "
            f"published threshold is {kind.threshold.value:g} {kind.canonical_unit})")


def _project(data: object, where: str) -> ProjectConfig:
    """Read the optional [project] table (the report's title block)."""
    if data is None:
        return ProjectConfig()
    t = _table(data, where, "project")
    return ProjectConfig(**{k.field: _read(t, k) for k in TABLES["project"].keys})


def _run(data: object, where: str, system: str = "us"
         ) -> tuple[dict[str, Any], LayoutParams]:
    """Read [run]: the keyword arguments of :class:`RunParams`, and the repair layout's.

    A key that is absent takes the default of the reporting ``system``: a metric site gets
    the metric defaults (a 20 mm saw cut), not converted US ones (``Key.metric``).

    The layout's keys are checked against the ranges declared on
    :class:`~geo_corrosion.config.LayoutParams` here, each message naming its [run] key, and
    the layout parameters are built once.  ``repair_increment`` not given takes the default
    of the reporting ``units`` (3 in or 50 mm).
    """
    t = _table(data, where, "run")
    run: dict[str, Any] = {}
    layout: dict[str, Any] = {}
    for k in TABLES["run"].keys:
        if k.field == "variogram":
            run["variogram"] = _variogram(t)
        elif k.field == "kinds":
            run["kinds"] = _kinds(t)
        else:
            v = _read(t, k) if t.has(str(k.name)) else k.value_for(system)
            (layout if k.owner is LayoutParams else run)[k.field] = v
    if layout.get("round_increment_mm") is None:  # the default follows the reporting units
        layout["round_increment_mm"] = default_increment_mm(system)
    try:
        params = LayoutParams(**layout)
    except RepairError as err:  # a check across keys: the table is named
        raise SiteFileError(f"{where}: {err}") from err
    return run, params


def _drawings(data: object, where: str) -> DrawingParams:
    """Read the [drawings] table: the drawing sheets' coordinates, size and engineer."""
    t = _table(data, where, "drawings")
    return DrawingParams(**{k.field: _read(t, k) for k in TABLES["drawings"].keys})


def _webmap(data: object, where: str) -> dict[str, Any]:
    """Read the [webmap] table: an optional street basemap for ``webmap.html``.

    Returns
    -------
    dict
        ``basemap_url`` and ``basemap_attribution`` (None when not given), for :class:`RunParams`.
    """
    t = _table(data, where, "webmap")
    url = _read(t, TABLES["webmap"]["basemap_url"])
    attribution = _read(t, TABLES["webmap"]["basemap_attribution"])
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


def _quantities(data: object, where: str, root: Path) -> QuantitiesConfig:
    """Read the [quantities] table: the price list of the estimate, its path checked."""
    t = _table(data, where, "quantities")
    keys = TABLES["quantities"]
    allow = _read(t, keys["allow_outside"])
    raw = _read(t, keys["price_list"])
    path = None if raw is None else site_path(raw, root, t.key("price_list"),
                                              allow_outside=allow)
    return QuantitiesConfig(price_list=path, allow_outside=allow)


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
        # the zone's name becomes GeoPackage values, DXF layer names (GC-ZONE-<name>) and
        # report rows: an id of the safe set, as level ids (the contract of issue 11)
        if isinstance(kw.get("name"), str) and kw["name"].strip():
            check_id(kw["name"], f"{w}.name", example='"repair", "anodes"')
        elif "name" not in kw and isinstance(getattr(cls, "name", None), str) and cls.name:
            check_id(cls.name, f"{w}.rule: the zone name of rule {r['rule']!r}",
                     example='"repair", "anodes"')
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
    t = _table(data, where, "condition")
    if "combined" not in t.data:
        return None
    from geo_corrosion.condition.classes import get_class_set
    from geo_corrosion.condition.combined import DEFAULT_RULES, KINDS, RuleTable
    from geo_corrosion.errors import ConditionError

    file = where.removesuffix(": [condition]")
    w = f"{file}: [condition.combined]"
    ct = _table(t.data["combined"], w, "condition.combined")
    sets = {k: get_class_set(v) for k, v in KINDS.items()}
    if ct.has("class_sets"):
        st = Table(ct.data["class_sets"], ct.key("class_sets"), tuple(KINDS))
        for kind in st.data:
            try:
                cs = get_class_set(st.string(kind), field=True)
            except ConditionError as err:
                raise SiteFileError(f"{st.key(kind)}: {err}") from err
            if cs.variable != sets[kind].variable:
                raise SiteFileError(f"{st.key(kind)}: class set {cs.name!r} classifies "
                                    f"{cs.variable}, not the {kind} ({sets[kind].variable})")
            sets[kind] = cs
    if ct.has("classes"):
        classes: list[str] = []
        for j, c in enumerate(ct.array("classes")):
            kt = _table(c, f"{ct.key('classes')}[{j}]", "condition.combined.classes")
            # a class key names class layers, legend entries and columns: an id of the safe set
            key = check_id(kt.string("key"), kt.key("key"), example='"act_now", "watch"')
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
    default = _read(ct, TABLES["condition.combined"]["default"])
    if default not in classes:
        raise SiteFileError(f"{ct.key('default')}: {default!r} is not one of the classes: "
                            f"{', '.join(classes)}")
    if ct.has("rules"):
        for i, r in enumerate(ct.array("rules")):
            rt = _table(r, f"{ct.key('rules')}[{i}]", "condition.combined.rules")
            problem = _combined_rule_problem(rt.data, rt.string("name", f"rule {i + 1}"), classes,
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


def _array(top: Table, name: str) -> list[Any]:
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
    top = Table(data, str(p), TOP.names)
    if "site" not in data:
        raise SiteFileError(f"{p}: missing the [site] table (name, crs, units)")
    st = _table(data["site"], f"{p}: [site]", "site")
    keys = TABLES["site"]
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
    site = {k: _read(st, keys[k]) for k in ("name", "owner", "units", "notes")}
    run, layout = _run(data.get("run", {}), f"{p}: [run]", str(site["units"]))
    return SiteConfig(
        path=p.resolve(),
        root=root,
        crs=crs,
        crs_unit=crs_unit,
        **site,
        levels=levels,
        surveys=surveys,
        project=_project(data.get("project"), f"{p}: [project]"),
        run=RunParams(**run, **_webmap(data.get("webmap", {}), f"{p}: [webmap]")),
        layout=layout,
        zoning=_zoning(_array(top, "zoning"), f"{p}: [[zoning]]"),
        combined_rules=_condition(data.get("condition"), f"{p}: [condition]"),
        drawings=_drawings(data.get("drawings", {}), f"{p}: [drawings]"),
        quantities=_quantities(data.get("quantities", {}), f"{p}: [quantities]", root),
    )

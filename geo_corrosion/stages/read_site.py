"""Reading the site file: a TOML file that says what each file of a survey folder is.

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
import re
import tomllib
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from geo_corrosion._toml import Table
from geo_corrosion.config import (
    COORDS,
    OVERLAY_KINDS,
    ControlPoint,
    GridConfig,
    LayerRef,
    LevelConfig,
    OverlayRef,
    RunParams,
    SiteConfig,
    SurveyConfig,
)
from geo_corrosion.crs import site_crs
from geo_corrosion.errors import SiteFileError, UnitError
from geo_corrosion.units import LENGTH_TO_M, normalize_unit, parse_area, parse_length

__all__ = ["read_site"]



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
    t = Table(data, where, _LAYER_KEYS)
    unit = t.opt_str("unit")
    if unit is not None:
        try:
            unit = normalize_unit(unit, accepted=tuple(LENGTH_TO_M), where=f"{t.key('unit')}: ")
        except UnitError as err:
            raise SiteFileError(str(err)) from err
    return LayerRef(
        path=(root / t.string("path")).resolve(),
        layer=t.opt_str("layer"),
        coords=t.string("coords", default_coords, choices=COORDS),
        unit=unit,
        where=where,
    )


def _grid(data: object, where: str) -> GridConfig:
    t = Table(data, where, _GRID_KEYS)
    try:
        unit = normalize_unit(t.string("unit"), accepted=("m", "ft", "us-ft"),
                              where=f"{t.key('unit')}: ")
    except UnitError as err:
        raise SiteFileError(str(err)) from err
    cps = []
    for i, cp in enumerate(t.array("control_points")):
        ct = Table(cp, f"{t.key('control_points')}[{i}]", _CP_KEYS)
        cps.append(ControlPoint(ct.string("id", f"CP{i + 1}"), ct.pair("local"), ct.pair("site")))
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


def _mm(t: Table, name: str) -> float | None:
    return parse_length(t.data[name], where=t.key(name)) * 1000.0 if t.has(name) else None


def _level(data: object, where: str, root: Path) -> LevelConfig:
    t = Table(data, where, _LEVEL_KEYS)
    lid = t.string("id")
    if "slab" not in t.data:
        raise SiteFileError(f"{t.key('slab')}: missing; give the slab outline as {{ path, layer }}")
    overlays = []
    for i, o in enumerate(t.array("overlays")):
        ow = f"{t.key('overlays')}[{i}]"
        ot = Table(o, ow, _OVERLAY_KEYS)
        kind = ot.string("kind", choices=OVERLAY_KINDS)
        rest = {k: v for k, v in ot.data.items() if k != "kind"}
        overlays.append(OverlayRef(kind, _layer(rest, ow, root)))
    if "grid" not in t.data:
        raise SiteFileError(f"{t.key('grid')}: missing; every level needs a [levels.grid] table")
    return LevelConfig(
        id=lid,
        name=t.string("name", lid),
        slab=_layer(t.data["slab"], t.key("slab"), root),
        exclusions=tuple(
            _layer(e, f"{t.key('exclusions')}[{i}]", root)
            for i, e in enumerate(t.array("exclusions"))
        ),
        joints=_layer(t.data["joints"], t.key("joints"), root) if t.has("joints") else None,
        overlays=tuple(overlays),
        grid=_grid(t.data["grid"], t.key("grid")),
        specified_cover_mm=_mm(t, "specified_cover"),
        cover_tolerance_mm=_mm(t, "cover_tolerance"),
    )


def _survey(data: object, where: str, root: Path, level_ids: set[str]) -> SurveyConfig:
    t = Table(data, where, _SURVEY_KEYS)
    sid = t.string("id")
    level = t.string("level")
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
    kind = t.string("kind")
    options = _survey_options(t, kind, root)
    sep = t.string("separator", ",")
    dec = t.string("decimal", ".", choices=(".", ","))
    if sep == dec:
        raise SiteFileError(f"{where}: separator and decimal cannot both be {sep!r}")
    return SurveyConfig(
        id=sid,
        level=level,
        kind=kind,
        path=(root / t.string("path")).resolve(),
        unit=t.string("unit"),
        coords=t.string("coords", "local", choices=COORDS),
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


def _survey_options(t: Table, kind: str, root: Path) -> dict[str, Any]:
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


def _check_layout(t: Table, values: dict[str, float | None]) -> None:
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


def _variogram(t: Table) -> dict[str, dict[str, Any]]:
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
        kt = Table(spec, w, _VARIOGRAM_KEYS)
        fx: dict[str, Any] = {}
        if kt.has("model"):
            fx["model"] = kt.string("model", choices=VARIOGRAM_MODELS[1:])
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
    t = Table(data, where, _RUN_KEYS)
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
        variogram_model=t.string("variogram_model", d.variogram_model, choices=VARIOGRAM_MODELS),
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
    t = Table(data, where, _WEBMAP_KEYS)
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
    t = Table(data, where, ("combined",))
    if "combined" not in t.data:
        return None
    from geo_corrosion.condition.classes import get_class_set
    from geo_corrosion.condition.combined import DEFAULT_RULES, KINDS, RuleTable
    from geo_corrosion.errors import ConditionError

    file = where.removesuffix(": [condition]")
    w = f"{file}: [condition.combined]"
    ct = Table(t.data["combined"], w, _COMBINED_KEYS)
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
            kt = Table(c, f"{ct.key('classes')}[{j}]", _COMBINED_CLASS_KEYS)
            key = kt.string("key")
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
    default = ct.string("default", "unclassified")
    if default not in classes:
        raise SiteFileError(f"{ct.key('default')}: {default!r} is not one of the classes: "
                            f"{', '.join(classes)}")
    if ct.has("rules"):
        for i, r in enumerate(ct.array("rules")):
            # a rule's keys: the rule table's columns (the roles of combined.KINDS)
            rt = Table(r, f"{ct.key('rules')}[{i}]", ("name", "class", *KINDS, "low_cover"))
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


_TOP_KEYS = ("site", "run", "levels", "surveys", "zoning", "condition", "webmap")


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
    top = Table(data, str(p), _TOP_KEYS)
    if "site" not in data:
        raise SiteFileError(f"{p}: missing the [site] table (name, crs, units)")
    st = Table(data["site"], f"{p}: [site]", _SITE_KEYS)
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
        name=st.string("name"),
        owner=st.string("owner", "(owner not given)"),
        crs=crs,
        crs_unit=crs_unit,
        units=st.string("units", "metric", choices=("metric", "us")),
        notes=st.text("notes"),
        levels=levels,
        surveys=surveys,
        run=dataclasses.replace(_run(data.get("run", {}), f"{p}: [run]"),
                                **_webmap(data.get("webmap", {}), f"{p}: [webmap]")),
        zoning=_zoning(_array(top, "zoning"), f"{p}: [[zoning]]"),
        combined_rules=_condition(data.get("condition"), f"{p}: [condition]"),
    )

"""Web map: one self-contained HTML file the owner can open anywhere, with no network.

The map is built **from a run's output folder** (``survey.gpkg``, ``rasters/*.tif``,
``run.json``), so ``geo-corrosion map RUN_DIR`` rebuilds it and ``geo-corrosion run``
calls the same :func:`write_webmap` after the other exporters.

The page is folium's Leaflet map with our own script (:mod:`.app`): a level switch and,
per level, its layers in three groups (maps, survey, repairs) with short names from
:mod:`.labels`.  Each level's data is a JSON block parsed, and each layer built, only
when first shown, so a big garage opens fast; readings are drawn on a canvas;
coordinates are rounded to 1e-7 degree (about 1 cm).  Surfaces and probability maps are
images at the raster's cell size.  Colours are :mod:`.palette`: one severity ramp for
every map, of which one is shown at a time, and distinct hues, outlines and hatching for
everything over it.  Popups: a reading's point, grid position, value as read with its
electrode, value as mapped and QA flags; a repair's dimensions, depth class, removal
depth, area, perimeter, saw-cut length, volume and bid item.  Leaflet is inlined from its
release files vendored in this package (:mod:`.assets`, BSD-2-Clause).  Every text from
an input file is HTML-escaped before it reaches the page.
"""

from __future__ import annotations

import io
import json
import logging
import re
from pathlib import Path
from typing import TYPE_CHECKING, Any, ClassVar

import numpy as np

from geo_corrosion._io import atomic_write
from geo_corrosion.cautions import CAUTIONS
from geo_corrosion.config import BREAKING_JOINT_TYPES
from geo_corrosion.errors import ExportError
from geo_corrosion.exporters._html import escape, png_data_url
from geo_corrosion.exporters.base import Exporter
from geo_corrosion.exporters.runfiles import RunLayers
from geo_corrosion.exporters.webmap.app import APP_CSS, APP_JS
from geo_corrosion.exporters.webmap.assets import LEAFLET_VERSION, leaflet_assets
from geo_corrosion.exporters.webmap.labels import term, unit_label, word
from geo_corrosion.exporters.webmap.palette import (
    NO_ACTION_COLOR,
    OVERLAY,
    SEVERITY_RAMP,
    ZONE_COLORS,
    class_ramp,
    hex_color,
    point_class_colors,
    ramp_colors,
    reading_color,
)
from geo_corrosion.measurements import MeasurementKind, Role
from geo_corrosion.model.manifest import (
    KindRecord,
    LevelRecord,
    Manifest,
    SiteRecord,
    read_run,
    result_manifest,
)
from geo_corrosion.vocabulary import (
    class_label,
    fmt_area,
    fmt_depth,
    fmt_length,
    fmt_number,
    fmt_potential,
    humanise,
)

if TYPE_CHECKING:
    import folium
    import geopandas as gpd

    from geo_corrosion.model.results import RunResult

__all__ = ["WebMapExporter", "build_webmap", "write_webmap", "MAP_NAME",
           "SEVERITY_RAMP", "ramp_colors"]

log = logging.getLogger(__name__)
MAP_NAME = "webmap.html"
WGS84 = "EPSG:4326"
#: Decimal places of longitude and latitude on the page: 1e-7 degree is about 1 cm.
COORD_DECIMALS = 7
_HEX = re.compile(r"^#[0-9A-Fa-f]{6}$")

_e = escape


def _num(x: float) -> str:
    """Format a reading: 1 decimal from 10 up (mV, mm, kOhm.cm), else 3 significant digits."""
    return f"{x:.1f}" if abs(x) >= 10 else f"{x:.3g}"


def _hex(rgb: np.ndarray) -> str:
    return hex_color(rgb)


def _surface_overlay(tif: Path, direction: int
                     ) -> tuple[str, list[list[float]], float, float] | None:
    """Warp a GeoTIFF to lon/lat at its cell size, coloured with our ramp.

    Returns the PNG data URL, its bounds, and the values at the ramp's ends.
    """
    import rasterio
    import rasterio.errors
    import rasterio.warp
    from PIL import Image

    try:
        src = rasterio.open(tif)
    except rasterio.errors.RasterioIOError as err:
        raise ExportError(f"{tif}: cannot be read as a GeoTIFF ({err}); "
                          "re-run `geo-corrosion run`") from err
    with src:
        band = src.read(1, masked=True).astype("float32").filled(np.nan)
        t = src.transform
        cols = np.array([0, src.width, src.width, 0], float)
        rows = np.array([0, 0, src.height, src.height], float)
        xs = t.c + t.a * cols + t.b * rows  # rotated grid: envelope of its corners
        ys = t.f + t.d * cols + t.e * rows
        tr, w, h = rasterio.warp.calculate_default_transform(
            src.crs, WGS84, src.width, src.height, xs.min(), ys.min(), xs.max(), ys.max())
        # keep the pixels roughly square and no coarser than the source grid
        dst = np.full((h, w), np.nan, dtype="float32")
        rasterio.warp.reproject(band, dst, src_transform=src.transform, src_crs=src.crs,
                                dst_transform=tr, dst_crs=WGS84, src_nodata=np.nan,
                                dst_nodata=np.nan,
                                resampling=rasterio.warp.Resampling.nearest)
    ok = np.isfinite(dst)
    if not ok.any():
        return None
    lo, hi = (float(v) for v in np.percentile(dst[ok], [2, 98]))
    if "probability" in tif.stem:
        lo, hi = 0.0, 1.0
    if hi <= lo:
        hi = lo + 1.0
    t = (np.nan_to_num(dst, nan=lo) - lo) / (hi - lo)
    if direction < 0:
        t = 1 - t
    rgba = np.concatenate([ramp_colors(t), np.where(ok, 0.85, 0.0)[..., None]], axis=-1)
    buf = io.BytesIO()
    Image.fromarray((rgba * 255).round().astype(np.uint8)).save(buf, format="PNG",
                                                                 optimize=True)
    west, north = tr.c, tr.f
    east, south = tr.c + tr.a * w, tr.f + tr.e * h
    return png_data_url(buf.getvalue()), [[_r(south), _r(west)], [_r(north), _r(east)]], lo, hi


def _r(x: float) -> float:
    return round(float(x), COORD_DECIMALS)


def _round_geom(g: Any) -> Any:
    """Return a geometry with its coordinates rounded to :data:`COORD_DECIMALS`."""
    import shapely

    return shapely.transform(g, lambda c: np.round(c, COORD_DECIMALS))


def _fc(gdf: gpd.GeoDataFrame, props: dict[str, list[str]]) -> dict[str, Any]:
    """Return a lon/lat FeatureCollection, coordinates rounded, with the given properties."""
    from shapely.geometry import mapping

    g = gdf.to_crs(WGS84)
    feats = []
    for i, geom in enumerate(g.geometry):
        if geom is None or geom.is_empty:
            continue
        feats.append({"type": "Feature", "properties": {k: v[i] for k, v in props.items()},
                      "geometry": mapping(_round_geom(geom))})
    return {"type": "FeatureCollection", "features": feats}


def _esc_col(gdf: gpd.GeoDataFrame, col: str) -> list[str]:
    if col not in gdf.columns:
        return [""] * len(gdf)
    return [_e(v) if v is not None and v == v else "" for v in gdf[col]]


def _gradient_legend(title: str, lo: float, hi: float, unit: str, direction: int) -> str:
    stops = SEVERITY_RAMP if direction > 0 else SEVERITY_RAMP[::-1]
    grad = ",".join(stops)
    u = _e(unit_label(unit))
    return (f'<div class="gc-leg-title">{title}</div>'
            f'<div class="gc-ramp" data-colors="{" ".join(SEVERITY_RAMP)}" '
            f'style="background:linear-gradient(to right,{grad})"></div>'
            f'<div class="gc-ramp-lab"><span>{lo:.3g} {u}</span>'
            f'<span>{hi:.3g} {u}</span></div>'
            '<div class="gc-note">darker = more severe</div>')


def _swatch_legend(title: str, items: list[tuple[str, str]], kind: str = "fill") -> str:
    """Return a legend of swatches (``kind``: fill, line, dash, hatch or dot)."""
    rows = "".join(
        f'<div><span class="gc-sw gc-{kind}" data-color="{c}" style="--c:{c}"></span>'
        f"{text}</div>" for c, text in items)
    return f'<div class="gc-leg-title">{title}</div>{rows}'


class _Level:
    """One level's page data: its slab, its always-drawn base and its layers."""

    def __init__(self, lid: str, name: str) -> None:
        self.lid = lid
        self.name = name
        self.bounds: list[list[float]] | None = None
        self.base: list[dict[str, Any]] = []
        self.layers: list[dict[str, Any]] = []

    def add(self, key: str, text: str, group: str, spec: dict[str, Any], legend: str,
            colors: list[str], *, on: bool = False, fill: bool = False,
            excl: str | None = None) -> None:
        """Add a layer; ``fill``: a map under the rest; ``excl``: one of its set at a time."""
        self.layers.append({"key": key, "label": text, "group": group, "on": on,
                            "fill": fill, "excl": excl or ("maps" if fill else None),
                            "legend": legend, "colors": colors, **spec})

    def data(self) -> dict[str, Any]:
        return {"id": self.lid, "name": self.name, "bounds": self.bounds, "base": self.base,
                "layers": self.layers}


def _dimensions(rep: gpd.GeoDataFrame, units: Any, crs_to_m: float) -> list[str]:
    """Overall length x width of each repair (its minimum rotated rectangle)."""
    if "dimensions" in rep.columns:  # rounded dimensions written by the repair layout
        return _esc_col(rep, "dimensions")
    out = []
    for g in rep.geometry:
        if g is None or g.is_empty:
            out.append("")
            continue
        xy = np.asarray(g.minimum_rotated_rectangle.exterior.coords)
        sides = np.hypot(*np.diff(xy[:3], axis=0).T) * crs_to_m
        a, b = sorted(sides, reverse=True)
        out.append(f"{fmt_length(a, units)} x {fmt_length(b, units)}")
    return out


def _level(run_dir: Path, lid: str, info: LevelRecord, layers: RunLayers,
           units: Any) -> _Level:
    """Collect one level's base and layers (nothing is drawn here: the page builds them)."""
    from geo_corrosion.units import LENGTH_TO_M

    lv = _Level(lid, _e(info.name or lid))
    grid_unit = unit_label(info.georeference.local_unit)
    crs_to_m = LENGTH_TO_M.get(info.georeference.crs_unit, 1.0)
    slab = layers.get(f"{lid}_slab")
    if slab is not None:
        x0, y0, x1, y1 = slab.to_crs(WGS84).total_bounds
        lv.bounds = [[_r(y0), _r(x0)], [_r(y1), _r(x1)]]
        area = [fmt_area(a, units) for a in slab["area_m2"].to_numpy(float)]
        lv.base.append({"type": "geojson", "key": "slab", "fc": _fc(slab, {
            "Level": [lv.name] * len(slab), "Slab area": area}),
            "style": {"color": OVERLAY["slab"], "weight": 2, "fill": False},
            "tooltip": True, "colors": [OVERLAY["slab"]],
            "legend": _swatch_legend(lv.name, [(OVERLAY["slab"], "slab outline")], "line")})
    exc = layers.get(f"{lid}_exclusions")
    if exc is not None:
        lv.base.append({"type": "geojson", "key": "exclusions", "fc": _fc(exc, {
            "Not surveyed": _esc_col(exc, "label")}),
            "style": {"color": OVERLAY["exclusion"], "weight": 1, "pattern": "hatch",
                      "fillOpacity": 1.0}, "tooltip": True, "colors": [OVERLAY["exclusion"]],
            "legend": _swatch_legend("", [(OVERLAY["exclusion"], "not surveyed (opening, column)")],
                                     "hatch")})
    kinds = {k: v for k, v in info.kinds.items() if v.surface is not None}
    _maps(lv, run_dir, lid, kinds, layers, units)
    _survey(lv, lid, kinds, layers, units, grid_unit)
    for kind, kv in info.kinds.items():  # kinds too sparse for a surface: classed points
        if kv.representation == "points":
            _points(lv, lid, kind, kv, layers, units)
    _repairs(lv, lid, layers, units, crs_to_m)
    return lv


def _kind_label(kind: str) -> str:
    text = term(kind, humanise(kind))
    return _e(text[:1].upper() + text[1:])


def _maps(lv: _Level, run_dir: Path, lid: str, kinds: dict[str, KindRecord],
          layers: RunLayers, units: Any) -> None:
    """Add surfaces, probability maps and class layers: one fill at a time, the ramp's colours."""
    for kind, kv in kinds.items():
        mk = _kind(kind)
        d = mk.severity_direction if mk is not None else 1
        # the potential surface is the one shown when the map opens
        shown = mk is not None and Role.POTENTIAL in mk.roles
        tif = run_dir / "rasters" / f"{lid}_{kind}.tif"
        ov = _surface_overlay(tif, d) if tif.is_file() else None
        name = _kind_label(kind)
        if ov is not None:
            url, bounds, lo, hi = ov
            lv.add(f"surface_{kind}", f"{name} {word('surface')}", "maps",
                   {"type": "image", "url": url, "bounds": bounds, "opacity": 0.85},
                   _gradient_legend(f"{name}, kriged", lo, hi, kv.unit, d),
                   list(SEVERITY_RAMP), on=shown, fill=True)
        prob = run_dir / "rasters" / f"{lid}_{kind}_probability.tif"
        pov = _surface_overlay(prob, 1) if prob.is_file() else None
        if pov is not None:
            meaning = ""
            try:
                import rasterio

                with rasterio.open(prob) as src:
                    meaning = src.tags().get("meaning", "")
            except Exception:  # noqa: BLE001 - the tag is only a legend text
                meaning = ""
            lv.add(f"probability_{kind}", f"{name} {word('probability')}", "maps",
                   {"type": "image", "url": pov[0], "bounds": pov[1], "opacity": 0.85},
                   _gradient_legend(f"{name}: probability of "
                                    f"{_e(meaning) or 'exceeding its threshold'}",
                                    0.0, 1.0, "", 1), list(SEVERITY_RAMP), fill=True)
    for layer_name, key, text, title in _class_layers(lid, kinds, layers):
        cls = layers.get(layer_name)
        if cls is None or not len(cls):
            continue
        cls = cls.reset_index(drop=True)
        recolor = _class_palette(cls)
        cls["_c"] = [recolor.get(str(c).upper(), "#999999") for c in cls.get(
            "color", ["#999999"] * len(cls))]
        area = [fmt_area(a, units) for a in cls["area_m2"].to_numpy(float)]
        cls["_label"] = _class_names(cls)
        items = sorted({(c, k) for c, k in zip(cls["_c"], cls["_label"], strict=True)},
                       key=lambda it: -list(recolor.values()).index(it[0])
                       if it[0] in recolor.values() else 0)
        lv.add(key, text, "maps", {"type": "geojson", "fc": _fc(cls, {
            "_c": list(cls["_c"]), "Class": list(cls["_label"]), "Area": area}),
            "style": {"weight": 0, "fillOpacity": 0.85, "byColor": True}, "popup": True},
            _swatch_legend(title, items), [c for c, _ in items], fill=True)


def _class_palette(cls: gpd.GeoDataFrame) -> dict[str, str]:
    """Map a class layer's colours onto the ramp, least severe to most severe.

    The class set's own colours (``condition/classes.py``) run from blue (benign) to
    vermilion and purple (severe); their rank gives the order.  A class set the map does
    not know keeps the order of its class codes.
    """
    name = str(cls["class_set"].iloc[0]) if "class_set" in cls.columns else ""
    present = [str(c).upper() for c in cls.get("color", [])]
    codes = list(cls["class_code"]) if "class_code" in cls.columns else None
    return class_ramp(name, present, codes)



def _points(lv: _Level, lid: str, kind: str, kv: KindRecord, layers: RunLayers,
            units: Any) -> None:
    """Add a kind shown as points: its readings coloured by class, and their Thiessen cells.

    The points (on the canvas, one hue per class from :func:`.palette.point_class_colors`,
    the legend saying why there is no surface) are shown when the level opens; the cells
    (a map of the "Maps" group, labelled: nearest reading, not a surface) are off.
    """
    pts = layers.get(f"{lid}_points_{kind}")
    if pts is None or not len(pts):
        return
    pts = pts.reset_index(drop=True).to_crs(WGS84)
    name = _kind_label(kind)
    reason = _e(kv.representation_reason or kv.skipped or "too few readings for a surface")
    classed = "class" in pts.columns and "class_code" in pts.columns
    if classed:
        from geo_corrosion.condition.classes import CLASS_SETS

        codes = [int(c) for c in pts["class_code"]]
        cs = CLASS_SETS.get(str(pts["class_set"].iloc[0])) if "class_set" in pts else None
        # one colour per class of the whole set, so a class keeps its colour on every level
        n = len(cs.colors) if cs is not None else max(codes) + 1
        pc = dict(enumerate(point_class_colors(n)))
        names = _class_names(pts)
        fills = [pc.get(c, NO_ACTION_COLOR) for c in codes]
        # most severe first, as the class layers' legends
        seen = dict.fromkeys((pc.get(c, NO_ACTION_COLOR), nm or "no class")
                             for c, nm in sorted(zip(codes, names, strict=True), reverse=True))
        items = list(seen)
    else:
        color = reading_color(kind, 0)
        names = [""] * len(pts)
        fills = [color] * len(pts)
        items = [(color, "reading")]
    u = unit_label(kv.unit)
    cols: dict[str, Any] = {
        "Point": _esc_col(pts, "point_id"),
        "Value": [(fmt_potential(x) if kv.unit == "mV" else f"{_num(x)}\u00a0{_e(u)}")
                  if np.isfinite(x) else "no value" for x in pts["value"].to_numpy(float)],
        "Class": names,
        "Shown as": ["points: no surface"] * len(pts),
    }
    xy = np.column_stack([pts.geometry.y.to_numpy(float), pts.geometry.x.to_numpy(float)])
    lv.add(f"points_{kind}", f"{name} {word('readings')} (points, no surface)", "survey",
           {"type": "points", "latlon": np.round(xy, COORD_DECIMALS).ravel().tolist(),
            "color": items[0][0], "fills": _compact(fills), "radius": 6, "ring": False,
            "cols": {k: _compact(c) for k, c in cols.items()}},
           _swatch_legend(f"{name} readings, shown as points", items, "dot")
           + f'<div class="gc-note">no surface: {reason}</div>',
           [c for c, _ in items], on=True)
    cells = layers.get(f"{lid}_thiessen_{kind}")
    if cells is None or not len(cells):
        return
    cells = cells.reset_index(drop=True)
    if "color" in cells.columns and "class" in cells.columns:
        recolor = _class_palette(cells)
        cells["_c"] = [recolor.get(str(c).upper(), NO_ACTION_COLOR) for c in cells["color"]]
        cells["_label"] = _class_names(cells)
        citems = sorted({(c, k) for c, k in zip(cells["_c"], cells["_label"], strict=True)},
                        key=lambda it: -list(recolor.values()).index(it[0])
                        if it[0] in recolor.values() else 0)
    else:
        cells["_c"] = SEVERITY_RAMP[2]
        cells["_label"] = ""
        citems = [(SEVERITY_RAMP[2], "cell of a reading")]
    area = [fmt_area(a, units) for a in cells["area_m2"].to_numpy(float)]
    lv.add(f"thiessen_{kind}", f"{name} Thiessen cells (nearest reading, not a surface)",
           "maps", {"type": "geojson", "fc": _fc(cells, {
               "_c": list(cells["_c"]), "Nearest reading": _esc_col(cells, "point_id"),
               "Class": list(cells["_label"]), "Area": area}),
               "style": {"weight": 0, "fillOpacity": 0.85, "byColor": True}, "popup": True},
           _swatch_legend(f"{name} Thiessen cells", citems)
           + '<div class="gc-note">each cell takes the class of its nearest reading; '
             "not a surface</div>", [c for c, _ in citems], fill=True)


def _class_layers(lid: str, kinds: dict[str, KindRecord], layers: RunLayers
                  ) -> list[tuple[str, str, str, str]]:
    """(GeoPackage layer, key, layer-control label, legend title) of a level's class layers."""
    out = []
    for kind in kinds:
        name = f"{lid}_classes_{kind}"
        if name not in layers.names:
            continue
        mk = _kind(kind)
        titles = mk.class_layer_titles if mk is not None else None
        text, title = titles or (f"{_kind_label(kind)} {word('classes')}",) * 2
        out.append((name, f"classes_{kind}", _e(text[:1].upper() + text[1:]), _e(title)))
    if f"{lid}_combined_classes" in layers.names:
        out.append((f"{lid}_combined_classes", "classes_combined", word("combined"),
                    "Combined condition (rule table in run.json)"))
    return out


def _survey(lv: _Level, lid: str, kinds: dict[str, KindRecord], layers: RunLayers,
            units: Any, grid_unit: str) -> None:
    """Add readings, contours with their values, sounding and joints."""
    spare = 0
    for kind, kv in kinds.items():
        if kind not in ("potential", "resistivity", "corrosion_rate", "cover"):
            spare += 1
        color = reading_color(kind, spare - 1)
        _readings(lv, lid, kind, kv, layers, grid_unit, color)
        cont = layers.get(f"{lid}_contours_{kind}")
        if cont is not None:
            interval = kv.surface.contour_interval if kv.surface is not None else None
            u = unit_label(kv.unit)
            text = [f"{float(v):g}" for v in cont["value"]]
            every = (f"every {interval:g} {_e(u)}" if isinstance(interval, int | float)
                     else "contour")
            lv.add(f"contours_{kind}", f"{_kind_label(kind)} {word('contours')}", "survey",
                   {"type": "geojson", "fc": _fc(cont.reset_index(drop=True), {
                       "Contour": [f"{t} {_e(u)}" for t in text]}),
                    "style": {"color": OVERLAY["contour"], "weight": 1, "dashArray": "4 3",
                              "fill": False},
                    "tooltip": True, "labels": _contour_labels(cont, text)},
                   _swatch_legend(f"{_kind_label(kind)} contours ({_e(u)})",
                                  [(OVERLAY["contour"], every)], "dash"),
                   [OVERLAY["contour"]], excl="contours")
    for key, what in (("delaminations", "delamination"), ("spalls", "spall")):
        g = layers.get(f"{lid}_{key}")
        if g is None:
            continue
        g = g.reset_index(drop=True)
        area = [fmt_area(a, units) for a in g["area_m2"].to_numpy(float)]
        color = OVERLAY[what]
        lv.add(key, word(key), "survey", {"type": "geojson", "fc": _fc(g, {
            "Label": _esc_col(g, "label"), "Area": area, "From": _esc_col(g, "source")}),
            "style": {"color": color, "weight": 1.5,
                      "pattern": "hatch" if what == "delamination" else "cross",
                      "fillOpacity": 1.0}, "tooltip": True},
            _swatch_legend(word(key), [(color, f"{what}s (from the plans)")], "hatch"),
            [color], on=True)
    _joints(lv, lid, layers)
    _qa(lv, lid, layers)


def _contour_labels(cont: gpd.GeoDataFrame, text: list[str]) -> list[list[Any]]:
    """One label point per contour line part: its middle (lat, lon, value)."""
    g = cont.to_crs(WGS84)
    out: list[list[Any]] = []
    for geom, t in zip(g.geometry, text, strict=True):
        if geom is None or geom.is_empty:
            continue
        parts = list(getattr(geom, "geoms", [geom]))
        longest = max(p.length for p in parts)
        for p in parts:
            if p.length < 0.25 * longest:
                continue  # no label on short pieces: they would crowd the map
            pt = p.interpolate(0.5, normalized=True)
            out.append([_r(pt.y), _r(pt.x), t])
    return out


def _joints(lv: _Level, lid: str, layers: RunLayers) -> None:
    """Add a level's joint lines (breaking the bar mat or not, styled apart), when it has any."""
    j = layers.get(f"{lid}_joints")
    if j is None or not len(j):
        return
    j = j.reset_index(drop=True)
    types = [str(t) for t in j["joint_type"]] if "joint_type" in j.columns else [""] * len(j)
    brk = ([bool(v) for v in j["breaks_continuity"]] if "breaks_continuity" in j.columns
           else [t in BREAKING_JOINT_TYPES for t in types])
    colors = [OVERLAY["joint_break"] if b else OVERLAY["joint"] for b in brk]
    items = []
    if any(brk):
        items.append((OVERLAY["joint_break"],
                      "expansion/isolation joint (mat not continuous across it)"))
    if not all(brk):
        items.append((OVERLAY["joint"], "construction/control joint"))
    lv.add("joints", word("joints"), "survey", {"type": "geojson", "fc": _fc(j, {
        "_c": colors,
        "Joint": [_e(term(t, humanise(t) + " joint")) if t else "joint" for t in types],
        "Bar continuity": ["broken: kriged apart" if b else "continuous" for b in brk],
        "Label": _esc_col(j, "label"), "From": _esc_col(j, "source")}),
        "style": {"weight": 3, "dashArray": "8 4", "fill": False, "byColor": True},
        "tooltip": True},
        _swatch_legend("Joints", items, "dash"), [c for c, _ in items], on=True)


def _readings(lv: _Level, lid: str, kind: str, kv: KindRecord, layers: RunLayers,
              grid_unit: str, color: str) -> None:
    """Add a kind's readings on a canvas: dots of one hue, flagged ones ringed; popups."""
    from geo_corrosion.corrections import ELECTRODES

    g = layers.get(f"readings_{kind}")
    col = _value_column(kind)
    if g is None or "level_id" not in g.columns or col is None or col not in g.columns:
        return
    g = g[g["level_id"].astype(str) == lid]
    if not len(g):
        return
    g = g.to_crs(WGS84)
    u = unit_label(kv.unit)
    v = g[col].to_numpy(float)
    flags = (g["qa_flags"].fillna("").astype(str).tolist() if "qa_flags" in g.columns
             else [""] * len(g))
    cols: dict[str, Any] = {
        "Point": _esc_col(g, "point_id"),
        "Grid x, y": [f"{x:.2f}, {y:.2f} {grid_unit}" for x, y in
                      zip(g["x_local"].to_numpy(float), g["y_local"].to_numpy(float),
                          strict=True)],
    }
    if "raw_value" in g.columns:
        raw = g["raw_value"].to_numpy(float)
        ru = _esc_col(g, "raw_unit")
        el = ([_e(term(f"electrode.{c}", ELECTRODES[c].name if c in ELECTRODES else c))
               if c else "" for c in g["electrode"].fillna("").astype(str)]
              if "electrode" in g.columns else [""] * len(g))
        cols["As read"] = [
            (f"{_num(r)} {unit_label(x) if x != 'mV' else 'mV'}" if np.isfinite(r) else "")
            + (f" vs {e}" if e else "") for r, x, e in zip(raw, ru, el, strict=True)]
    cols["Value"] = [(fmt_potential(x) if kv.unit == "mV" else f"{_num(x)}\u00a0{_e(u)}")
                     if np.isfinite(x) else "no value" for x in v]
    cols["QA flags"] = [_e(", ".join(f"{c} ({term(c, c)})" for c in f.split(",") if c))
                        for f in flags]
    cols["Where"] = _esc_col(g, "where")
    xy = np.column_stack([g.geometry.y.to_numpy(float), g.geometry.x.to_numpy(float)])
    lv.add(f"readings_{kind}", f"{_kind_label(kind)} {word('readings')}", "survey",
           {"type": "points", "latlon": np.round(xy, COORD_DECIMALS).ravel().tolist(),
            "color": color, "radius": 3, "ring": False,
            "cols": {k: _compact(c) for k, c in cols.items()}},
           _swatch_legend(f"{_kind_label(kind)} readings ({_e(u)})",
                          [(color, "reading; click for its values")], "dot"),
           [color])


def _qa(lv: _Level, lid: str, layers: RunLayers) -> None:
    """Add the QA findings of a level's readings: a ring on each, the finding in its popup."""
    q = layers.get("qa_flags")
    if q is None or "level_id" not in q.columns:
        return
    q = q[(q["level_id"].astype(str) == lid) & q.geometry.notna()]
    q = q[~q.geometry.is_empty]
    if not len(q):
        return
    q = q.to_crs(WGS84)
    xy = np.column_stack([q.geometry.y.to_numpy(float), q.geometry.x.to_numpy(float)])
    cols = {"Where": _esc_col(q, "where"),
            "Check": [_e(f"{c} ({term(c, c)})") for c in q["rule"].astype(str)],
            "Severity": [_e(term(f"severity.{s}", humanise(s))) for s in
                         q["severity"].fillna("").astype(str)] if "severity" in q.columns
            else [""] * len(q),
            "Finding": _esc_col(q, "message")}
    lv.add("qa_flags", word("qa_flags"), "survey",
           {"type": "points", "latlon": np.round(xy, COORD_DECIMALS).ravel().tolist(),
            "color": OVERLAY["flag"], "radius": 7, "ring": True,
            "cols": {k: _compact(c) for k, c in cols.items()}},
           _swatch_legend("QA findings", [(OVERLAY["flag"], "ring: a reading with a QA "
                                           "finding; click for it")], "ring"),
           [OVERLAY["flag"]])


def _compact(values: list[str]) -> Any:
    """Return a column of strings as is, or as a dictionary and codes when it repeats itself."""
    uniq = list(dict.fromkeys(values))
    if len(uniq) * 4 > len(values):
        return values
    idx = {u: i for i, u in enumerate(uniq)}
    return {"d": uniq, "i": [idx[v] for v in values]}


def _repairs(lv: _Level, lid: str, layers: RunLayers, units: Any, crs_to_m: float) -> None:
    """Add zones (outlines) and repairs (outlines, popup with what a contractor asks)."""
    from geo_corrosion.quantities import DEPTH_CLASS_ITEMS

    zones = layers.get(f"{lid}_zones")
    if zones is not None:
        zones = zones.reset_index(drop=True)
        named = [z for z in dict.fromkeys(zones["zone"].astype(str)) if z != "no_action"]
        zc = {z: ZONE_COLORS[i % len(ZONE_COLORS)] for i, z in enumerate(named)}
        if "no_action" in set(zones["zone"].astype(str)):
            zc["no_action"] = NO_ACTION_COLOR  # the rest of the slab
        area = [fmt_area(a, units) for a in zones["area_m2"].to_numpy(float)]
        lv.add("zones", word("zones"), "repairs", {"type": "geojson", "fc": _fc(zones, {
            "_c": [zc[str(z)] for z in zones["zone"]],
            "Zone": [_e(term(str(z), humanise(str(z)))) for z in zones["zone"]],
            "Treatment": _esc_col(zones, "treatment"),
            "Bid item": _bid_items(zones), "Area": area}),
            "style": {"weight": 3, "dashArray": "10 5", "fill": True, "fillOpacity": 0,
                      "byColor": True}, "popup": True},
            _swatch_legend("Zones (outlines)", [(c, _e(term(z, humanise(z))))
                                                for z, c in zc.items()],
                           "dash"), list(zc.values()))
    rep = layers.get(f"{lid}_repairs")
    if rep is None:
        return
    rep = rep.reset_index(drop=True)
    depth = rep["depth_class"].astype(str).tolist() if "depth_class" in rep else [""] * len(rep)
    if "bid_item" not in rep.columns:
        rep["bid_item"] = [DEPTH_CLASS_ITEMS.get(c, "") for c in depth]
    bid = _bid_items(rep)

    def fmt(col: str, conv: Any, unit: str) -> list[str]:
        if col not in rep.columns:
            return [""] * len(rep)
        return [f"{fmt_number(float(conv(x)), 1)}\u00a0{unit_label(unit)}"
                if np.isfinite(x) else "" for x in rep[col].to_numpy(float)]

    props = {
        "Repair": _esc_col(rep, "repair_id"),
        "Zone": [_e(term(z, humanise(z))) if z else "" for z in _zone_of(rep, zones)],
        "Dimensions": _dimensions(rep, units, crs_to_m),
        "Location": _esc_col(rep, "location"),
        "Sounded areas": _esc_col(rep, "sounded"),
        "Depth class": [_e(term(c, humanise(c))) if c else "" for c in depth],
        "Removal depth": ([fmt_depth(x, units) for x in rep["depth_mm"].to_numpy(float)]
                          if "depth_mm" in rep.columns else [""] * len(rep)),
        "Area": ([fmt_area(x, units) for x in rep["area_m2"].to_numpy(float)]
                 if "area_m2" in rep.columns else [""] * len(rep)),
        "Perimeter": ([fmt_length(x, units) for x in rep["perimeter_m"].to_numpy(float)]
                      if "perimeter_m" in rep.columns else [""] * len(rep)),
        "Saw-cut length": fmt("outline_m", units.length_from_m, units.length),  # LF or m
        "Volume": fmt("volume_m3", units.volume_from_m3, units.volume),
        "Bid item": bid,
        "Rounding": _esc_col(rep, "rounding_note"),
        "_id": [str(x) for x in rep.get("repair_id", [""] * len(rep))],
    }
    props = {k: v for k, v in props.items() if any(v)}
    lv.add("repairs", word("repair_outlines"), "repairs", {"type": "geojson",
           "fc": _fc(rep, props), "style": {"color": OVERLAY["repair"], "weight": 2.5,
                                            "fill": True, "fillOpacity": 0},
           "popup": True},
           _swatch_legend("Repairs (estimates for bidding)",
                          [(OVERLAY["repair"], "saw-cut outline; click for details")], "line"),
           [OVERLAY["repair"]], on=True)


def _bid_items(g: gpd.GeoDataFrame) -> list[str]:
    """Return each row's bid item as its code and words (``REP-FD (Full-depth repair)``)."""
    if "bid_item" not in g.columns:
        return [""] * len(g)
    out = []
    for c in g["bid_item"]:
        c = "" if c is None or c != c else str(c)
        out.append(_e(f"{c} ({term(c, c)})" if c and term(c, c) != c else c))
    return out


def _class_names(cls: gpd.GeoDataFrame) -> list[str]:
    """Return the owner's name of each class (its class set's key through the vocabulary)."""
    from geo_corrosion.condition.classes import CLASS_SETS

    if "class_key" in cls.columns:  # combined condition
        return [_e(term(str(k), str(t))) for k, t in zip(cls["class_key"], cls["class"],
                                                        strict=True)]
    name = str(cls["class_set"].iloc[0]) if "class_set" in cls.columns else ""
    cs = CLASS_SETS.get(name)
    out = []
    for code, text in zip(cls.get("class_code", [None] * len(cls)), cls["class"], strict=True):
        key = (cs.keys[int(code)] if cs is not None and code is not None
               and 0 <= int(code) < len(cs.keys) else None)
        out.append(_e(class_label(name, key, str(text)) if key else str(text)))
    return out


def _zone_of(rep: gpd.GeoDataFrame, zones: gpd.GeoDataFrame | None) -> list[str]:
    """Return the zone holding most of each repair's area ("" when there are no zones)."""
    if zones is None:
        return [""] * len(rep)
    import shapely

    # zones read back from the GeoPackage may hold a ring that touches itself (a staircase
    # outline of a large garage): made valid once, so that the overlay cannot fail on them
    # (GEOS "TopologyException: Ring edge missing" on a 100,000-reading garage)
    zg = shapely.make_valid(np.asarray(zones.geometry.values))
    env = shapely.envelope(zg)
    out = []
    for geom in rep.geometry:
        g = shapely.make_valid(geom)
        # only the zones whose bounds meet the repair's can share area with it (the others'
        # overlays, which cost as much as any, give 0)
        near = np.flatnonzero(shapely.intersects(env, shapely.envelope(g)))
        inter = np.zeros(len(zg))
        if len(near):
            inter[near] = shapely.area(shapely.intersection(zg[near], g))
        out.append(str(zones["zone"].iloc[int(inter.argmax())]) if inter.max() > 0 else "")
    return out


def _kind(name: str) -> MeasurementKind | None:
    """Return the measurement kind of a run's kind name; None if unknown or broken.

    The map is built from a run folder, perhaps where a plugin kind of the run is not
    installed: its layers then get the defaults (no readings layer).
    """
    from geo_corrosion.measurements import get_kind

    try:
        return get_kind(name)
    except Exception:  # noqa: BLE001 - an unknown or broken kind: defaults
        return None


def _value_column(kind: str) -> str | None:
    """Return the value column of a measurement kind (from the plugin registry)."""
    k = _kind(kind)
    return (str(k.value_column) or None) if k is not None else None


def build_webmap(run_dir: str | Path, manifest: Manifest | None = None) -> str:
    """Build the web map of an output folder; return the HTML text of the page.

    Parameters
    ----------
    run_dir : str or Path
        Output folder of a run (``survey.gpkg``, ``rasters/``, ``run.json``).
    manifest : Manifest, optional
        The run manifest; read from ``run_dir/run.json`` when omitted (``run`` passes it
        because it writes ``run.json`` last).

    Raises
    ------
    ExportError
        No ``run.json``, or a run without levels.
    """
    import folium

    from geo_corrosion.units import report_units

    run_dir = Path(run_dir)
    man = manifest if manifest is not None else read_run(run_dir)
    if not man.levels:
        raise ExportError(f"{run_dir}: run.json lists no levels; nothing to map")
    site = man.site
    units = report_units(site.report_units)
    layers = RunLayers(run_dir)
    fmap = folium.Map(location=[0, 0], zoom_start=19, max_zoom=23, tiles=None,
                      control_scale=False, zoom_control=False, prefer_canvas=False)
    fmap.default_js = []
    fmap.default_css = []
    js, css, licence = leaflet_assets()
    root = _page(fmap)
    root.header.add_child(folium.Element(f"<style>{css}</style><style>{APP_CSS}</style>"),
                          name="leaflet_css")
    root.header.add_child(folium.Element(f"<script>{js}</script>"), name="leaflet_js")
    root.header.add_child(folium.Element(
        f"<!-- Leaflet {LEAFLET_VERSION}, inlined from its release files. Its licence:\n"
        f"{licence}\n-->"), name="leaflet_licence")
    root.title = _e(site.name)
    levels = [_level(run_dir, str(lid), info, layers, units) for lid, info in man.levels.items()]
    _panels(fmap, levels, site, man)
    return root.render()


def _page(fmap: folium.Map) -> folium.Figure:
    """Return the page a map is drawn on (folium types ``get_root`` as a bare ``Element``)."""
    import folium

    root = fmap.get_root()
    if not isinstance(root, folium.Figure):  # folium.Map puts itself on a Figure when made
        raise ExportError(f"the web map is not on a page (found {type(root).__name__}); "
                          "this folium version is not supported")
    return root


def _js(obj: Any) -> str:
    """JSON for an inline script: every ``<`` escaped so no text can close the element."""
    # "<" only occurs inside JSON strings: \u003c is the same string to JSON and to JS
    return json.dumps(obj, separators=(",", ":")).replace("<", "\\u003c")


def _panels(fmap: folium.Map, levels: list[_Level], site: SiteRecord, man: Manifest) -> None:
    """Side panel (title, cautions, legend), each level's data and the page's script."""
    import folium

    cautions = man.cautions or list(CAUTIONS)
    items = "".join(f"<li>{_e(c)}</li>" for c in cautions)
    owner = f" &middot; {_e(site.owner)}" if site.owner else ""
    blocks = "".join(f'<script type="application/json" id="gc-level-{i}">{_js(lv.data())}'
                     "</script>" for i, lv in enumerate(levels))
    tile_url = man.parameters.basemap_url
    config = {"levels": [{"id": lv.lid, "name": lv.name, "bounds": lv.bounds}
                         for lv in levels],
              "groups": {g: word(g) for g in ("maps", "survey", "repairs")},
              "basemap": ({"url": tile_url, "attribution": _e(man.parameters.basemap_attribution)}
                          if isinstance(tile_url, str) and tile_url.startswith("https://")
                          else None)}
    _page(fmap).html.add_child(folium.Element(
        '<div id="gc-side" class="gc-panel">'
        f'<div id="gc-title">{_e(site.name)}{owner}</div>'
        '<div id="gc-cautions"><details><summary><b>Cautions</b> '
        f"(survey data, not a structural assessment)</summary><ul>{items}</ul></details></div>"
        '<div id="gc-legend"><b>Legend</b><div id="gc-legend-body"></div>'
        '<div class="gc-note">Colours: one ramp for every map (light = least severe), '
        "readable in grey scale and by colour-blind viewers (hues after Okabe &amp; Ito "
        "2008 and Tol 2021); outlines and hatching for what lies over it.</div></div></div>"
        + blocks))
    script = (f"document.addEventListener('DOMContentLoaded', function(){{\n"
              f"  gcStart({fmap.get_name()}, {_js(config)});\n}});\n")
    _page(fmap).script.add_child(folium.Element(APP_JS + script))


def write_webmap(run_dir: str | Path, manifest: Manifest | None = None) -> Path:
    """Build the web map of an output folder and write ``run_dir/webmap.html`` atomically."""
    run_dir = Path(run_dir)
    text = build_webmap(run_dir, manifest)
    return atomic_write(run_dir / MAP_NAME, lambda tmp: tmp.write_text(text, encoding="utf-8"),
                        what="web map")


class WebMapExporter(Exporter):
    """Write ``webmap.html`` from the files the other exporters wrote."""

    name: ClassVar[str] = "webmap"
    run_last: ClassVar[bool] = True
    needs: ClassVar[tuple[str, ...] | None] = ("geopackage", "geotiff")
    description: ClassVar[str] = "a self-contained HTML web map for the owner (webmap.html)"

    def export(self, result: RunResult, out_dir: Path) -> list[Path]:
        """Write the web map (needs ``survey.gpkg`` and ``rasters/`` in ``out_dir``)."""
        return [write_webmap(out_dir, result_manifest(result))]

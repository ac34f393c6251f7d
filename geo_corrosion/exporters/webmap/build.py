"""Web map: one self-contained HTML file the owner can open anywhere, with no network.

The map is built with folium **from a run's output folder** (``survey.gpkg``,
``rasters/*.tif``, ``run.json``), so ``geo-corrosion map RUN_DIR`` rebuilds it and
``geo-corrosion run`` calls the same :func:`write_webmap` after the other exporters.

Each level is a base layer (radio button: the level switch; its slab outline is always
drawn) with its own overlays: kriged surfaces and probability maps as image overlays,
contour lines, ASTM C876 classes, delaminations and spalls, zones, repairs (popup with
id, zone, depth class, area in the reporting unit and bid item) and readings (value and
QA flags).  Legends follow the overlays shown; a scale bar and a cautions panel are
always there.  Leaflet is inlined from its release files vendored in this package
(:mod:`~geo_corrosion.exporters.webmap.assets`, BSD-2-Clause), at the version folium
declares; nothing is fetched from a CDN.  Every text that comes from input files is
HTML-escaped before it reaches the page.
"""

from __future__ import annotations

import html
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
from geo_corrosion.exporters.webmap.assets import LEAFLET_VERSION, leaflet_assets
from geo_corrosion.measurements import MeasurementKind, Role
from geo_corrosion.model.manifest import (
    KindRecord,
    LevelRecord,
    Manifest,
    SiteRecord,
    read_run,
    result_manifest,
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

#: Our sequential palette, light (least severe) to dark (most severe).  Lightness falls
#: monotonically, so the order reads in grey scale and for the common colour-vision
#: deficiencies; the hues are taken from Okabe & Ito (2008).
SEVERITY_RAMP: tuple[str, ...] = ("#F7F3E3", "#F0E442", "#E69F00", "#D55E00", "#5B2149")
#: Overlay colours (Okabe & Ito 2008 qualitative set).
COLORS = {"slab": "#303030", "delamination": "#D55E00", "spall": "#CC79A7",
          "repair": "#0072B2", "exclusion": "#999999", "contour": "#000000",
          "flag": "#000000"}
NO_ACTION_COLOR = "#AAAAAA"
#: Joint lines: breaking (expansion, isolation: the mat is not continuous across them) and
#: not (construction, control), told apart by colour, width and dash (Okabe & Ito hues).
JOINT_STYLES = {
    "break": {"color": "#CC79A7", "weight": 4, "dashArray": "10 4", "opacity": 0.95},
    "cont": {"color": "#555555", "weight": 2, "dashArray": "3 4", "opacity": 0.9},
}
JOINT_LABELS = {"break": "expansion/isolation joint (mat not continuous across it)",
                "cont": "construction/control joint"}
ZONE_COLORS = ("#0072B2", "#009E73", "#56B4E9", "#E69F00", "#CC79A7", "#F0E442", "#D55E00")
_HEX = re.compile(r"^#[0-9A-Fa-f]{6}$")


_e = escape


def _num(x: float) -> str:
    """Format a reading: 1 decimal from 10 up (mV, mm, kOhm.cm), else 3 significant digits."""
    return f"{x:.1f}" if abs(x) >= 10 else f"{x:.3g}"


def _safe_color(c: Any, default: str) -> str:
    return str(c) if isinstance(c, str) and _HEX.match(c) else default


def ramp_colors(t: np.ndarray) -> np.ndarray:
    """Map values in [0, 1] onto :data:`SEVERITY_RAMP`; return RGB in [0, 1], shape (..., 3)."""
    stops = np.array([[int(h[i:i + 2], 16) / 255 for i in (1, 3, 5)] for h in SEVERITY_RAMP])
    x = np.linspace(0, 1, len(stops))
    t = np.clip(np.asarray(t, float), 0, 1)
    return np.stack([np.interp(t, x, stops[:, k]) for k in range(3)], axis=-1)


def _hex(rgb: np.ndarray) -> str:
    return "#" + "".join(f"{int(round(v * 255)):02X}" for v in rgb)


def _surface_overlay(tif: Path, direction: int
                     ) -> tuple[str, list[list[float]], float, float] | None:
    """Warp a GeoTIFF to lon/lat and colour it with our ramp: data URL, bounds, lo, hi."""
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
    rgba = np.concatenate([ramp_colors(t), np.where(ok, 0.8, 0.0)[..., None]], axis=-1)
    buf = io.BytesIO()
    Image.fromarray((rgba * 255).round().astype(np.uint8)).save(buf, format="PNG")
    west, north = tr.c, tr.f
    east, south = tr.c + tr.a * w, tr.f + tr.e * h
    return png_data_url(buf.getvalue()), [[south, west], [north, east]], lo, hi


def _geojson(gdf: gpd.GeoDataFrame, name: str, style: Any, fields: dict[str, str], *,
             show: bool, popup: bool = False, marker: Any = None,
             style_columns: tuple[str, ...] = ()) -> folium.GeoJson:
    """Build a GeoJSON layer whose property values are escaped.

    ``fields`` maps the columns shown in the popup or tooltip to their labels;
    ``style_columns`` are kept in the properties for the style function only.
    """
    import folium

    g = gdf.to_crs(WGS84)
    keep = [c for c in fields if c in g.columns]
    props = {c: [_e(v) for v in g[c]] for c in (*keep, *style_columns) if c in g.columns}
    import geopandas as gpd

    out = gpd.GeoDataFrame(props, geometry=g.geometry.values, crs=WGS84)
    aliases = [html.escape(fields[c]) for c in keep]
    kw: dict[str, Any] = {}
    if keep and popup:
        kw["popup"] = folium.GeoJsonPopup(fields=keep, aliases=aliases, labels=True)
    elif keep:
        kw["tooltip"] = folium.GeoJsonTooltip(fields=keep, aliases=aliases)
    style_fn = style if callable(style) else (lambda _f, st=style: st)
    return folium.GeoJson(out.__geo_interface__, name=name, style_function=style_fn,
                          show=show, marker=marker, **kw)


def _gradient_legend(title: str, lo: float, hi: float, unit: str, direction: int) -> str:
    stops = SEVERITY_RAMP if direction > 0 else SEVERITY_RAMP[::-1]
    grad = ",".join(stops)
    return (f'<div class="gc-leg-title">{title}</div>'
            f'<div class="gc-ramp" style="background:linear-gradient(to right,{grad})"></div>'
            f'<div class="gc-ramp-lab"><span>{lo:.3g} {_e(unit)}</span>'
            f'<span>{hi:.3g} {_e(unit)}</span></div>'
            '<div class="gc-note">darker = more severe (our ramp; reads in grey scale)</div>')


def _swatch_legend(title: str, items: list[tuple[str, str]], line: bool = False) -> str:
    rows = "".join(
        f'<div><span class="gc-sw{" gc-line" if line else ""}" style="background:{c}"></span>'
        f"{label}</div>" for c, label in items)
    return f'<div class="gc-leg-title">{title}</div>{rows}'


_CSS = """
.gc-panel{position:fixed;z-index:1000;background:#fff;border:1px solid #777;padding:6px 8px;
 font:11px/1.35 sans-serif;max-width:360px;max-height:40vh;overflow:auto}
#gc-cautions{top:62px;left:54px;max-height:24vh} #gc-legend{bottom:28px;right:10px;min-width:180px}
.leaflet-control-layers{max-height:55vh;overflow:auto;font-size:11px}
#gc-title{top:10px;left:54px;font-size:13px;font-weight:bold}
.gc-leg-title{font-weight:bold;margin-top:4px} .gc-note{color:#555;font-size:10px}
.gc-ramp{height:10px;border:1px solid #555} .gc-ramp-lab{display:flex;justify-content:space-between}
.gc-sw{display:inline-block;width:14px;height:10px;margin-right:5px;border:1px solid #444;
 vertical-align:middle} .gc-line{height:3px}
"""


class _Builder:
    """Collects layers, legends and level membership while the map is built."""

    def __init__(self, fmap: folium.Map) -> None:
        self.fmap = fmap
        self.legends: dict[str, str] = {}  # JS variable name -> legend HTML
        self.labels: dict[str, str] = {}  # JS variable name -> layer-control label (escaped)
        self.levels: dict[str, dict[str, Any]] = {}  # level id -> {"base", "overlays", "shown"}

    def add(self, lid: str, layer: Any, show: bool, legend: str | None = None) -> None:
        layer.add_to(self.fmap)
        lv = self.levels[lid]
        lv["overlays"].append(layer.get_name())
        self.labels[layer.get_name()] = layer.layer_name
        if show:
            lv["shown"].append(layer.get_name())
        if legend:
            self.legends[layer.get_name()] = legend


def _level(b: _Builder, run_dir: Path, lid: str, info: LevelRecord, layers: RunLayers,
           units: Any, first: bool) -> None:
    """Add one level's base layer and overlays."""
    import folium

    from geo_corrosion.quantities import DEPTH_CLASS_ITEMS

    lname = _e(info.name or lid)
    base = folium.FeatureGroup(name=f"{lname} ({_e(lid)})", overlay=False, show=first)
    slab = layers.get(f"{lid}_slab")
    if slab is not None:
        slab["area_rep"] = [f"{a:,.0f} {units.area}"
                            for a in units.area_from_m2(slab["area_m2"].to_numpy(float))]
        _geojson(slab, "slab", {"color": COLORS["slab"], "weight": 2, "fillOpacity": 0.0},
                 {"name": "level", "area_rep": "slab area"}, show=True).add_to(base)
    exc = layers.get(f"{lid}_exclusions")
    if exc is not None:
        _geojson(exc, "exclusions", {"color": COLORS["exclusion"], "weight": 1,
                 "fillColor": COLORS["exclusion"], "fillOpacity": 0.5},
                 {"label": "exclusion"}, show=True).add_to(base)
    base.add_to(b.fmap)
    b.levels[lid] = {"base": base.get_name(), "overlays": [], "shown": [], "name": lname}
    kinds = {k: v for k, v in info.kinds.items() if v.surface is not None}
    for kind, kv in kinds.items():
        unit = kv.unit
        label = _e(kind.replace("_", " "))
        mk = _kind(kind)
        d = mk.severity_direction if mk is not None else 1
        # the potential surface is the one shown when the map opens
        shown = mk is not None and Role.POTENTIAL in mk.roles
        tif = run_dir / "rasters" / f"{lid}_{kind}.tif"
        ov = _surface_overlay(tif, d) if tif.is_file() else None
        if ov is not None:
            url, bounds, lo, hi = ov
            layer = folium.raster_layers.ImageOverlay(
                url, bounds=bounds, name=f"{lname}: {label} surface",
                show=first and shown)
            b.add(lid, layer, shown,
                  _gradient_legend(f"{lname}: kriged {label}", lo, hi, unit, d))
        cont = layers.get(f"{lid}_contours_{kind}")
        if cont is not None:
            interval = kv.surface.contour_interval if kv.surface is not None else None
            cont["value_unit"] = [f"{v:g} {unit}" for v in cont["value"]]
            b.add(lid, _geojson(cont, f"{lname}: {label} contours",
                                {"color": COLORS["contour"], "weight": 1, "dashArray": "4 3"},
                                {"value_unit": "contour"}, show=False),
                  False, _swatch_legend(f"{lname}: {label} contours",
                                        [(COLORS["contour"], f"every {interval:g} {_e(unit)}"
                                          if isinstance(interval, int | float) else "contour")],
                                        line=True))
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
            b.add(lid, folium.raster_layers.ImageOverlay(
                pov[0], bounds=pov[1], name=f"{lname}: probability, {label}", show=False),
                False, _gradient_legend(f"{lname}: probability that {label} is "
                                        f"{_e(meaning) or 'beyond its threshold'}",
                                        0.0, 1.0, "", 1))
    for layer_name, label, title in _class_layers(lid, kinds, layers):
        cls = layers.get(layer_name)
        if cls is None or not len(cls):
            continue
        cls["color"] = [_safe_color(c, "#999999") for c in cls.get("color", ["#999999"] * len(cls))]
        cls["area_rep"] = [f"{v:.1f} {units.area}"
                           for v in units.area_from_m2(cls["area_m2"].to_numpy(float))]
        items = [(c, _e(k)) for c, k in zip(cls["color"], cls["class"], strict=True)]
        b.add(lid, _classes_layer(cls, f"{lname}: {label}", units), False,
              _swatch_legend(f"{lname}: {title}", items))
    for kind, kv in info.kinds.items():  # kinds too sparse for a surface: classed points
        if kv.representation == "points":
            _points(b, lid, lname, kind, kv, layers, units, first)
    for key, color, what in (("delaminations", COLORS["delamination"], "delamination"),
                             ("spalls", COLORS["spall"], "spall")):
        g = layers.get(f"{lid}_{key}")
        if g is None:
            continue
        g["area_rep"] = units.area_from_m2(g["area_m2"].to_numpy(float))
        b.add(lid, _geojson(g, f"{lname}: {key}", {"color": color, "weight": 1,
                            "fillColor": color, "fillOpacity": 0.5},
                            {"label": "label", "area_rep": f"area ({units.area})",
                             "source": "source"}, show=first),
              True, _swatch_legend(f"{lname}: sounding", [(color, what + "s (from the plans)")]))
    _joints(b, lid, lname, layers, first)
    zones = layers.get(f"{lid}_zones")
    if zones is not None:
        zones = zones.reset_index(drop=True)
        named = [z for z in dict.fromkeys(zones["zone"]) if z != "no_action"]
        zc = {z: ZONE_COLORS[i % len(ZONE_COLORS)] for i, z in enumerate(named)}
        if "no_action" in set(zones["zone"]):
            zc["no_action"] = NO_ACTION_COLOR  # outline only: the rest of the slab
        zones["_c"] = [zc[z] for z in zones["zone"]]
        zones["area_rep"] = units.area_from_m2(zones["area_m2"].to_numpy(float))
        b.add(lid, _styled(zones, f"{lname}: zones", {"zone": "zone", "treatment": "treatment",
                           "bid_item": "bid item", "area_rep": f"area ({units.area})"},
                           lambda c: {"color": c, "weight": 1, "fillColor": c,
                                      "fillOpacity": 0.0 if c == NO_ACTION_COLOR else 0.3}),
              False, _swatch_legend(f"{lname}: zones", [(c, _e(z) + (" (outline only)" if
                                    c == NO_ACTION_COLOR else "")) for z, c in zc.items()]))
    rep = layers.get(f"{lid}_repairs")
    if rep is not None:
        rep = rep.reset_index(drop=True)
        rep["area_rep"] = [f"{v:.1f} {units.area}" for v in
                           units.area_from_m2(rep["area_m2"].to_numpy(float))]
        if "bid_item" not in rep.columns:
            rep["bid_item"] = [DEPTH_CLASS_ITEMS.get(str(c), "") for c in rep["depth_class"]]
        rep["zone"] = _zone_of(rep, zones)
        b.add(lid, _geojson(rep, f"{lname}: repairs", {"color": COLORS["repair"], "weight": 2,
                            "fillColor": COLORS["repair"], "fillOpacity": 0.15},
                            {"repair_id": "repair", "zone": "zone", "depth_class": "depth class",
                             "area_rep": "area", "bid_item": "bid item"}, show=first, popup=True),
              True, _swatch_legend(f"{lname}: repairs (estimates for bidding)",
                                   [(COLORS["repair"],
                                     "saw-cut repair outline; click for details")]))
    _readings(b, lid, lname, layers, kinds)


def _joints(b: _Builder, lid: str, lname: str, layers: RunLayers, first: bool) -> None:
    """Add a level's joint lines, breaking and not styled apart, with their legend."""
    j = layers.get(f"{lid}_joints")
    if j is None or not len(j):
        return
    j = j.reset_index(drop=True)
    if "joint_type" not in j.columns:  # a run folder written before joints had types
        j["joint_type"] = "construction"
    brk = (j["breaks_continuity"].astype(bool) if "breaks_continuity" in j.columns
           else j["joint_type"].isin(BREAKING_JOINT_TYPES))
    j["_c"] = ["break" if v else "cont" for v in brk]
    j["continuity"] = ["broken: kriged apart" if v else "continuous" for v in brk]
    used = [k for k in ("break", "cont") if k in set(j["_c"])]
    items = "".join(
        f'<div><span class="gc-sw gc-line" style="background:{JOINT_STYLES[k]["color"]};'
        f'height:{JOINT_STYLES[k]["weight"]}px"></span>{JOINT_LABELS[k]}</div>' for k in used)
    b.add(lid, _geojson(j, f"{lname}: joints",
                        lambda f: JOINT_STYLES.get(f["properties"].get("_c", "cont"),
                                                   JOINT_STYLES["cont"]),
                        {"joint_type": "joint type", "continuity": "bar continuity",
                         "source": "source"}, show=first, style_columns=("_c",)),
          True, f'<div class="gc-leg-title">{lname}: joints</div>{items}')


def _points(b: _Builder, lid: str, lname: str, kind: str, kv: KindRecord, layers: RunLayers,
            units: Any, first: bool) -> None:
    """Add a kind shown as points: its readings coloured by class, and their Thiessen cells.

    The points are shown when the level opens; the cells (labelled: nearest reading, not a
    surface) are listed in the layer control, off.
    """
    import folium

    label = _e(kind.replace("_", " "))
    reason = _e(kv.representation_reason or kv.skipped or "too few readings for a surface")
    pts = layers.get(f"{lid}_points_{kind}")
    if pts is None:
        return
    pts = pts.reset_index(drop=True)
    pts["_c"] = [_safe_color(c, "#0072B2") for c in pts.get("color", ["#0072B2"] * len(pts))]
    pts["value_unit"] = [f"{_num(float(v))} {u}" for v, u in zip(pts["value"], pts["unit"],
                                                                   strict=True)]
    fields = {"point_id": "point", "value_unit": "value", "class": "class",
              "representation": "shown as"}
    if "class" in pts and "color" in pts:
        order = pts.sort_values("class_code") if "class_code" in pts else pts
        seen = dict.fromkeys(zip(order["_c"], order["class"], strict=True))
        items = [(c, _e(k)) for c, k in seen]
    else:
        items = [("#0072B2", "reading")]
    layer = _geojson(
        pts, f"{lname}: {label} readings (points, no surface)",
        lambda f: {"color": "#000000", "weight": 1, "fillColor": f["properties"]["_c"],
                   "fillOpacity": 0.95, "radius": 6},
        fields, show=first, popup=True, style_columns=("_c",),
        marker=folium.CircleMarker(radius=6, fill=True))
    b.add(lid, layer, True, _swatch_legend(f"{lname}: {label} readings, shown as points", items)
          + f'<div class="gc-note">no surface: {reason}</div>')
    cells = layers.get(f"{lid}_thiessen_{kind}")
    if cells is None:
        return
    cells = cells.reset_index(drop=True)
    cells["_c"] = [_safe_color(c, "#0072B2") for c in cells.get("color",
                                                                 ["#0072B2"] * len(cells))]
    cells["area_rep"] = [f"{v:.1f} {units.area}"
                         for v in units.area_from_m2(cells["area_m2"].to_numpy(float))]
    b.add(lid, _styled(cells, f"{lname}: {label} Thiessen cells (nearest reading, not a "
                       "surface)", {"point_id": "nearest reading", "class": "class",
                                    "area_rep": f"area ({units.area})"},
                       lambda c: {"color": "#555555", "weight": 1, "fillColor": c,
                                  "fillOpacity": 0.3}),
          False, _swatch_legend(f"{lname}: {label} Thiessen cells", items)
          + '<div class="gc-note">each cell takes the class of its nearest reading; '
            "not a surface</div>")


def _class_layers(lid: str, kinds: dict[str, KindRecord], layers: RunLayers
                  ) -> list[tuple[str, str, str]]:
    """(GeoPackage layer, layer-control label, legend title) of a level's class layers."""
    out = []
    for kind in kinds:
        name = f"{lid}_classes_{kind}"
        if name not in layers.names:
            continue
        mk = _kind(kind)
        titles = mk.class_layer_titles if mk is not None else None
        label, title = titles or (f"{kind.replace('_', ' ')} classes",) * 2
        out.append((name, _e(label), _e(title)))
    if f"{lid}_combined_classes" in layers.names:
        out.append((f"{lid}_combined_classes", "combined condition",
                    "combined condition (rule table in run.json)"))
    return out


def _classes_layer(cls: gpd.GeoDataFrame, name: str, units: Any) -> folium.GeoJson:
    return _styled(cls.assign(_c=cls["color"]), name,
                   {"class": "class", "area_rep": f"area ({units.area})"},
                   lambda c: {"weight": 0, "fillColor": c, "fillOpacity": 0.55})


def _styled(g: gpd.GeoDataFrame, name: str, fields: dict[str, str], style: Any) -> folium.GeoJson:
    """Build a layer styled by its ``_c`` colour column (kept out of the tooltip)."""
    return _geojson(g, name, lambda f: style(f["properties"].get("_c", "#999999")), fields,
                    show=False, style_columns=("_c",))


def _zone_of(rep: gpd.GeoDataFrame, zones: gpd.GeoDataFrame | None) -> list[str]:
    """Return the zone holding most of each repair's area ("" when there are no zones)."""
    if zones is None:
        return [""] * len(rep)
    out = []
    for geom in rep.geometry:
        inter = zones.geometry.intersection(geom).area
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


def _readings(b: _Builder, lid: str, lname: str, layers: RunLayers,
              kinds: dict[str, KindRecord]) -> None:
    """One circle-marker layer per kind: value, unit and QA flags; flagged readings outlined."""
    import folium

    for kind, kv in kinds.items():
        g = layers.get(f"readings_{kind}")
        if g is None or "level_id" not in g.columns:
            continue
        g = g[g["level_id"].astype(str) == lid]
        unit = kv.unit
        col = _value_column(kind)
        if col is None or col not in g.columns or not len(g):
            continue
        g = g.copy()
        v = g[col].to_numpy(float)
        ok = np.isfinite(v)
        lo, hi = (np.percentile(v[ok], [2, 98]) if ok.any() else (0.0, 1.0))
        mk = _kind(kind)
        d = mk.severity_direction if mk is not None else 1
        t = np.clip((np.nan_to_num(v, nan=lo) - lo) / max(hi - lo, 1e-9), 0, 1)
        t = np.round((1 - t if d < 0 else t) * 8) / 8  # 9 colours: compact page
        g["_c"] = [_hex(c) for c in ramp_colors(t)]
        g["value"] = [f"{_num(x)} {unit}" if np.isfinite(x) else "no value" for x in v]
        flags = g["qa_flags"].fillna("").astype(str) if "qa_flags" in g else [""] * len(g)
        g["qa"] = list(flags)
        g["_f"] = ["1" if f else "" for f in flags]
        keep = {"point_id": "point", "value": "value", "qa": "QA flags", "where": "where"}
        layer = _geojson(
            g, f"{lname}: {_e(kind.replace('_', ' '))} readings",
            lambda f: {"color": COLORS["flag"] if f["properties"].get("qa") else
                       f["properties"]["_c"], "weight": 2 if f["properties"].get("qa") else 0,
                       "fillColor": f["properties"]["_c"], "fillOpacity": 0.9,
                       "radius": 5 if f["properties"].get("qa") else 3},
            keep, show=False, popup=True, style_columns=("_c",),
            marker=folium.CircleMarker(radius=3, fill=True))
        b.add(lid, layer, False, _gradient_legend(
            f"{lname}: {_e(kind.replace('_', ' '))} readings", float(lo), float(hi), unit, d)
            + '<div><span class="gc-sw" style="border:2px solid #000"></span>'
              "black ring: reading with a QA flag</div>")


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
    levels = man.levels
    if not levels:
        raise ExportError(f"{run_dir}: run.json lists no levels; nothing to map")
    site = man.site
    units = report_units(site.report_units)
    layers = RunLayers(run_dir)
    fmap = folium.Map(location=[0, 0], zoom_start=19, max_zoom=23, tiles=None,
                      control_scale=True, prefer_canvas=True)
    fmap.default_js = []
    fmap.default_css = []
    js, css, licence = leaflet_assets()
    root = _page(fmap)
    root.header.add_child(folium.Element(f"<style>{css}</style><style>{_CSS}</style>"),
                          name="leaflet_css")
    root.header.add_child(folium.Element(f"<script>{js}</script>"), name="leaflet_js")
    root.header.add_child(folium.Element(
        f"<!-- Leaflet {LEAFLET_VERSION}, inlined from its release files. Its licence:\n"
        f"{licence}\n-->"), name="leaflet_licence")
    root.title = _e(site.name)
    tile_url = man.parameters.basemap_url
    if isinstance(tile_url, str) and tile_url.startswith("https://"):
        # optional street tiles: off by default; offline, the tiles fail quietly
        # max_native_zoom: street tiles stop near zoom 19; the deck is drawn closer
        folium.TileLayer(tiles=tile_url, name="street basemap (online only)", overlay=True,
                         show=False, max_zoom=23, max_native_zoom=19,
                         attr=_e(man.parameters.basemap_attribution),
                         error_tile_url="data:image/gif;base64,R0lGODlhAQABAAAAACw=").add_to(fmap)
    b = _Builder(fmap)
    bounds = None
    for i, (lid, info) in enumerate(levels.items()):
        _level(b, run_dir, str(lid), info, layers, units, first=i == 0)
        slab = layers.get(f"{lid}_slab")
        if bounds is None and slab is not None:
            x0, y0, x1, y1 = slab.to_crs(WGS84).total_bounds
            bounds = [[float(y0), float(x0)], [float(y1), float(x1)]]
    if bounds is not None:
        fmap.fit_bounds(bounds)
    control = folium.LayerControl(collapsed=False)
    control.add_to(fmap)
    _panels(fmap, b, site, man, control.get_name())
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
    """JSON for an inline script: ``</`` escaped so no text can close the script element."""
    return json.dumps(obj).replace("</", "<\\/").replace("<!--", "<\\!--")


def _panels(fmap: folium.Map, b: _Builder, site: SiteRecord, man: Manifest,
            control: str) -> None:
    """Title, cautions and legend panels, and the script that keeps them in step."""
    import folium

    cautions = man.cautions or list(CAUTIONS)
    items = "".join(f"<li>{_e(c)}</li>" for c in cautions)
    owner = f" &middot; {_e(site.owner)}" if site.owner else ""
    _page(fmap).html.add_child(folium.Element(
        f'<div id="gc-title" class="gc-panel">{_e(site.name)}{owner}</div>'
        f'<div id="gc-cautions" class="gc-panel"><details open><summary><b>Cautions</b> '
        f"(survey data, not a structural assessment)</summary><ul>{items}</ul></details></div>"
        '<div id="gc-legend" class="gc-panel"><b>Legend</b><div id="gc-legend-body"></div>'
        '<div class="gc-note">Colours: our own palette, chosen to read in grey scale and for '
        "colour-blind viewers (hues after Okabe &amp; Ito 2008).</div></div>"))
    legends = _js(b.legends)
    levels = _js(b.levels)
    labels = _js(b.labels)
    names = sorted({n for lv in b.levels.values() for n in lv["overlays"]} |
                   {lv["base"] for lv in b.levels.values()})
    refs = ",".join(f"{json.dumps(n)}:{n}" for n in names)  # JS identifiers made by folium
    # in the script, a line ending in a backslash goes on in the next: one line on the page
    script = f"""
document.addEventListener('DOMContentLoaded', function(){{
  var map = {fmap.get_name()};
  var L_ = {{{refs}}};
  var legends = {legends};
  var levels = {levels};
  var labels = {labels};
  // for tests and scripts: layers by JS name, their labels, and the levels
  window.gcLayers = L_; window.gcLevels = levels; window.gcMap = map; window.gcLabels = labels;
  window.gcLegends = legends;
  function legendUpdate(){{
    var body = document.getElementById('gc-legend-body'); var out = '';
    for (var k in legends) {{ if (map.hasLayer(L_[k])) out += legends[k]; }}
    body.innerHTML = out;
  }}
  var current = null;
  function filterRows(){{
    // list only the current level's overlays in the layer control
    if (current === null) return;
    var other = {{}};
    for (var id in levels) {{ if (id !== current) levels[id].overlays.forEach(function(n){{
      other[L.stamp(L_[n])] = true; }}); }}
    document.querySelectorAll('.leaflet-control-layers-overlays label').forEach(function(lab){{
      var inp = lab.querySelector('input');
      lab.style.display = (inp && other[inp.layerId]) ? 'none' : '';
    }});
  }}
  var ctl = {control};
  var upd = ctl._update;
  ctl._update = function(){{ var r = upd.apply(this, arguments); filterRows(); return r; }};
  function showLevel(lid){{
    for (var id in levels) {{
      var lv = levels[id];
      lv.overlays.forEach(function(n){{ if (id !== lid && map.hasLayer(L_[n])) \
map.removeLayer(L_[n]); }});
    }}
    levels[lid].shown.forEach(function(n){{ if (!map.hasLayer(L_[n])) map.addLayer(L_[n]); }});
    current = lid; filterRows();
    legendUpdate();
  }}
  map.on('baselayerchange', function(e){{
    for (var id in levels) {{ if (L_[levels[id].base] === e.layer) showLevel(id); }}
  }});
  map.on('overlayadd overlayremove', legendUpdate);
  var first = Object.keys(levels)[0];
  for (var id in levels) {{ if (id !== first && map.hasLayer(L_[levels[id].base]))
    map.removeLayer(L_[levels[id].base]); }}
  if (!map.hasLayer(L_[levels[first].base])) map.addLayer(L_[levels[first].base]);
  showLevel(first);
}});
"""
    _page(fmap).script.add_child(folium.Element(script))


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
    description: ClassVar[str] = "a self-contained HTML web map for the owner (webmap.html)"

    def export(self, result: RunResult, out_dir: Path) -> list[Path]:
        """Write the web map (needs ``survey.gpkg`` and ``rasters/`` in ``out_dir``)."""
        return [write_webmap(out_dir, result_manifest(result))]

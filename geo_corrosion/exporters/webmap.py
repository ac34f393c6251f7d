"""Web map exporter: one HTML file the owner can open in a browser.

Built with folium.  Each level's slab, class areas, surfaces (as image overlays
warped to lon/lat), delaminations, spalls, repairs and readings are layers
toggled from a layer control; the cautions sit in a panel.  Text from input
files is HTML-escaped before it reaches the page.
"""

from __future__ import annotations

import base64
import html
import io
from pathlib import Path
from typing import TYPE_CHECKING, Any, ClassVar

import numpy as np

from geo_corrosion.cautions import CAUTIONS
from geo_corrosion.errors import ExportError
from geo_corrosion.exporters.base import Exporter
from geo_corrosion.exporters.layers import level_layers

if TYPE_CHECKING:
    import folium

    from geo_corrosion.mapping import KindSurface
    from geo_corrosion.model import Level
    from geo_corrosion.results import RunResult

__all__ = ["WebMapExporter", "build_map", "MAP_NAME"]

MAP_NAME = "webmap.html"
WGS84 = "EPSG:4326"
#: Our palette for overlays (colour-blind-safe, after Okabe & Ito 2008).
COLORS = {"slab": "#404040", "delamination": "#D55E00", "spall": "#CC79A7",
          "repair": "#0072B2", "exclusion": "#999999"}


def _surface_png(level: Level, s: KindSurface, crs_src: Any) -> tuple[str, list[list[float]]]:
    """Warp a surface to lon/lat and colour it; return a data URL and its bounds."""
    import rasterio.warp
    from matplotlib import colormaps
    from matplotlib.colors import Normalize
    from PIL import Image

    from geo_corrosion.exporters.rasters import surface_transform

    src_t = surface_transform(level, s)
    import pyproj
    import rasterio.transform

    nx, ny = s.grid.nx, s.grid.ny
    cols = np.array([0, nx, nx, 0], float)
    rows = np.array([0, 0, ny, ny], float)
    X = src_t.c + src_t.a * cols + src_t.b * rows
    Y = src_t.f + src_t.d * cols + src_t.e * rows
    lon, lat = pyproj.Transformer.from_crs(crs_src, WGS84, always_xy=True).transform(X, Y)
    w = h = max(nx, ny)
    dst_t = rasterio.transform.from_bounds(lon.min(), lat.min(), lon.max(), lat.max(), w, h)
    dst = np.full((h, w), np.nan, dtype="float32")
    rasterio.warp.reproject(s.mean.astype("float32"), dst, src_transform=src_t,
                            src_crs=crs_src, dst_transform=dst_t, dst_crs=WGS84,
                            src_nodata=np.nan, dst_nodata=np.nan,
                            resampling=rasterio.warp.Resampling.bilinear)
    vals = dst[np.isfinite(dst)]
    lo, hi = (np.percentile(vals, [2, 98]) if vals.size else (0.0, 1.0))
    cmap = colormaps["cividis_r" if s.kind.name == "potential" else "cividis"]
    rgba = cmap(Normalize(lo, hi)(np.nan_to_num(dst, nan=lo)))
    rgba[..., 3] = np.where(np.isfinite(dst), 0.75, 0.0)
    buf = io.BytesIO()
    Image.fromarray((rgba * 255).astype(np.uint8)).save(buf, format="PNG")
    west, north = dst_t.c, dst_t.f
    east, south = dst_t.c + dst_t.a * w, dst_t.f + dst_t.e * h
    url = "data:image/png;base64," + base64.b64encode(buf.getvalue()).decode()
    return url, [[south, west], [north, east]]


def _geojson(gdf: Any, name: str, style: dict[str, Any], fields: list[str],
             show: bool = True) -> folium.GeoJson:
    import folium

    g = gdf.to_crs(WGS84).copy()
    keep = [f for f in fields if f in g.columns]
    for c in keep:
        g[c] = g[c].map(lambda v: html.escape(f"{v:.2f}" if isinstance(v, float) else str(v)))
    g = g[[*keep, "geometry"]]
    tooltip = folium.GeoJsonTooltip(fields=keep) if keep else None
    return folium.GeoJson(g.__geo_interface__, name=html.escape(name),
                          style_function=lambda _f, st=style: st, tooltip=tooltip, show=show)


def _leaflet_assets() -> tuple[str, str]:
    """Leaflet's script and stylesheet, from the ``django-js-lib-leaflet`` distribution.

    That PyPI package ships Leaflet's own release files (BSD-2-Clause licence) with no
    Django dependency; we read the files without importing anything.  The stylesheet's
    images are inlined as data URLs so the page needs no network at all.
    """
    import re
    from importlib.metadata import PackageNotFoundError, distribution

    try:
        dist = distribution("django-js-lib-leaflet")
    except PackageNotFoundError as err:  # pragma: no cover - a declared dependency
        raise ExportError("the web map needs the package django-js-lib-leaflet "
                          "(pip install django-js-lib-leaflet)") from err
    base = Path(str(dist.locate_file("js_lib_leaflet/static/js_lib_leaflet")))
    js = (base / "leaflet.js").read_text(encoding="utf-8")
    css = (base / "leaflet.css").read_text(encoding="utf-8")

    def inline(m: re.Match[str]) -> str:
        img = base / m.group(1)
        if not img.is_file():
            return m.group(0)
        return "url(data:image/png;base64," + base64.b64encode(img.read_bytes()).decode() + ")"

    css = re.sub(r"url\((images/[^)]+\.png)\)", inline, css)
    js = js.replace("//# sourceMappingURL=leaflet.js.map", "")
    return js, css


def build_map(result: RunResult) -> folium.Map:
    """Build the folium map of a run (one group of layers per level)."""
    import folium

    crs = result.site.crs
    first = True
    fmap: folium.Map | None = None
    for lid, lr in result.levels.items():
        layers = level_layers(lr, crs)
        slab = layers["slab"].to_crs(WGS84)
        if fmap is None:
            c = slab.geometry.iloc[0].centroid
            fmap = folium.Map(location=[c.y, c.x], zoom_start=19, max_zoom=23, tiles=None,
                              control_scale=True)
            # self-contained page: no CDN links; Leaflet inlined, nothing else is needed
            fmap.default_js = []
            fmap.default_css = []
            js, css = _leaflet_assets()
            fmap.get_root().header.add_child(folium.Element(f"<style>{css}</style>"),
                                             name="leaflet_css")
            fmap.get_root().header.add_child(folium.Element(f"<script>{js}</script>"),
                                             name="leaflet_js")
        if first:
            x0, y0, x1, y1 = slab.total_bounds
            fmap.fit_bounds([[y0, x0], [y1, x1]])
        name = html.escape(lr.level.config.name)
        _geojson(layers["slab"], f"{name}: slab", {"color": COLORS["slab"], "weight": 2,
                 "fillOpacity": 0.02}, ["name", "area_m2"], show=first).add_to(fmap)
        for kind, s in lr.surfaces.items():
            url, bounds = _surface_png(lr.level, s, crs.to_wkt())
            folium.raster_layers.ImageOverlay(url, bounds=bounds, name=f"{name}: {kind} surface",
                                              show=first and kind == "potential").add_to(fmap)
        if "classes_potential" in layers:
            _geojson(layers["classes_potential"], f"{name}: ASTM C876 classes",
                     {"weight": 0, "fillOpacity": 0.45}, ["class", "area_m2"],
                     show=False).add_to(fmap)
        for key, color in (("delaminations", COLORS["delamination"]), ("spalls", COLORS["spall"])):
            if key in layers:
                _geojson(layers[key], f"{name}: {key}", {"color": color, "weight": 1,
                         "fillOpacity": 0.5}, ["label", "area_m2"], show=first).add_to(fmap)
        if "repairs" in layers:
            _geojson(layers["repairs"], f"{name}: repair areas",
                     {"color": COLORS["repair"], "weight": 2, "fillOpacity": 0.1},
                     ["repair_id", "area_m2", "depth_class"], show=first).add_to(fmap)
        first = False
    assert fmap is not None
    panel = "<br>".join(html.escape(c) for c in CAUTIONS)
    title = html.escape(result.site.config.name)
    fmap.get_root().html.add_child(folium.Element(
        f'<div style="position:fixed;bottom:40px;left:10px;z-index:9999;max-width:380px;'
        f'background:white;padding:6px;font:10px sans-serif;border:1px solid #888">'
        f"<b>{title}</b><br>{panel}</div>"))
    folium.LayerControl(collapsed=False).add_to(fmap)
    return fmap


class WebMapExporter(Exporter):
    """Write ``webmap.html``."""

    name: ClassVar[str] = "webmap"
    description: ClassVar[str] = "an HTML web map for the owner (webmap.html)"

    def export(self, result: RunResult, out_dir: Path) -> list[Path]:
        """Write the web map."""
        path = out_dir / MAP_NAME
        build_map(result).save(str(path))
        return [path]

"""Reading plan geometry: GeoJSON, GeoPackage, Shapefile and DXF layers.

Everything is returned in the level's **local grid** coordinates, the frame in
which layouts are drawn.  DXF: closed LWPOLYLINE/POLYLINE, CIRCLE and HATCH
boundary paths become polygons; open polylines and LINEs become lines.  The DXF
drawing unit comes from its ``$INSUNITS`` header, or from ``unit`` in the site
file when the header does not say; a DXF in unknown units is refused.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any, TypeAlias

import numpy as np
import shapely
from shapely.geometry import LineString, MultiPolygon, Point, Polygon
from shapely.geometry.base import BaseGeometry

from geo_corrosion.config import LayerRef
from geo_corrosion.crs import LocalGrid
from geo_corrosion.errors import GeometryWarning, IngestError
from geo_corrosion.units import LENGTH_TO_M

if TYPE_CHECKING:
    import pandas as pd

__all__ = ["Feature", "read_layer", "read_polygons", "read_lines", "read_grid_lines",
           "DXF_UNITS"]

#: $INSUNITS codes of the DXF reference that name plan length units.
DXF_UNITS = {1: "in", 2: "ft", 4: "mm", 5: "cm", 6: "m", 21: "us-ft"}
CIRCLE_SEGMENTS = 64
#: An open outline whose ends are closer than this share of its length is closed.
CLOSE_TOLERANCE = 0.02

#: A shape read from a file: geometry, where it was read, label, delamination depth (mm).
_Raw: TypeAlias = tuple[BaseGeometry, str, str, float | None]


@dataclass(frozen=True)
class Feature:
    """One shape read from a layer, in local grid coordinates."""

    geometry: BaseGeometry
    where: str  # "plans/L2.dxf layer DELAM entity #3 (handle 2A)"
    label: str = ""
    depth_mm: float | None = None  # delamination depth where the layer gives it, mm


def _check_file(ref: LayerRef) -> None:
    if not ref.path.is_file():
        raise IngestError(f"{ref.where}: file not found: {ref.path}")
    if ref.path.stat().st_size == 0:
        raise IngestError(f"{ref.where}: file is empty: {ref.path}")


#: DXF documents read inside :func:`dxf_documents_kept`, by resolved path, size and
#: modification time: a level's plan file is named by several layers (slab, exclusions,
#: joints, grid lines and their labels), and parsing it again for each was most of reading
#: the plans.  None outside (every read parses the file).
_DOCS: dict[tuple[str, int, int], Any] | None = None


@contextmanager
def dxf_documents_kept() -> Iterator[None]:
    """Parse each DXF file once while the block runs (opening a site), then let them go."""
    global _DOCS
    outer = _DOCS
    if outer is None:
        _DOCS = {}
    try:
        yield
    finally:
        _DOCS = outer


def _read_dxf(path: Path) -> Any:
    """Return the DXF document at ``path`` (recover mode), once per file in a kept block.

    The documents are only read, never changed, by this module.
    """
    from ezdxf import recover

    if _DOCS is None:
        return recover.readfile(str(path))[0]
    st = path.stat()
    key = (str(path.resolve()), st.st_size, st.st_mtime_ns)
    doc = _DOCS.get(key)
    if doc is None:
        doc = _DOCS[key] = recover.readfile(str(path))[0]
    return doc


def _dxf_features(ref: LayerRef) -> tuple[list[tuple[BaseGeometry, str, str]], str]:
    # DXFStructureError from the module defining it: ezdxf's __init__ re-exports it
    # unmarked, which strict mypy does not accept
    from ezdxf.lldxf.const import DXFStructureError

    try:
        doc = _read_dxf(ref.path)
    except (OSError, DXFStructureError) as err:
        raise IngestError(f"{ref.where}: cannot read DXF {ref.path.name}: {err}") from err
    code = int(doc.header.get("$INSUNITS", 0))
    unit = DXF_UNITS.get(code) or ref.unit
    if unit is None:
        raise IngestError(
            f"{ref.where}: {ref.path.name} does not say its drawing unit ($INSUNITS = {code}); "
            "add unit = \"ft\" (or m, mm, in) to this layer in the site file"
        )
    layers = {layer.dxf.name.upper(): layer.dxf.name for layer in doc.layers}
    if ref.layer is None:
        raise IngestError(f"{ref.where}: a DXF layer must be named with layer = \"...\"")
    if ref.layer.upper() not in layers:
        raise IngestError(
            f"{ref.where}: {ref.path.name} has no layer {ref.layer!r}; its layers are: "
            f"{', '.join(sorted(layers.values()))}"
        )
    out: list[tuple[BaseGeometry, str, str]] = []
    msp = doc.modelspace()
    wanted = ref.layer.upper()
    # compared by name, not through ezdxf's query language: a layer name may hold any
    # character (a quote broke the query)
    # typed Any: each entity is read by its dxftype() below, with that type's attributes
    on_layer: list[Any] = [e for e in msp if str(e.dxf.get("layer", "")).upper() == wanted]
    # arcs of bulged polylines, ellipses and splines are flattened to this chord distance:
    # 1 mm in the drawing's unit (common practice for plan outlines)
    chord = 0.001 / LENGTH_TO_M[unit]
    for i, e in enumerate(on_layer):
        w = (f"{ref.path.name} layer {ref.layer} entity #{i + 1} ({e.dxftype()}, "
             f"handle {e.dxf.handle})")
        t = e.dxftype()
        try:
            if t == "LWPOLYLINE" and not any(b for *_xy, b in e.get_points("xyb")):
                pts = [(p[0], p[1]) for p in e.get_points("xy")]
                closed = e.closed or (len(pts) > 3 and pts[0] == pts[-1])
                geom: BaseGeometry = (Polygon(pts) if closed and len(pts) >= 3
                                      else LineString(pts))
            elif t == "POLYLINE" and not any(v.dxf.get("bulge", 0) for v in e.vertices):
                pts = [(v.dxf.location.x, v.dxf.location.y) for v in e.vertices]
                closed = e.is_closed or (len(pts) > 3 and pts[0] == pts[-1])
                geom = Polygon(pts) if closed and len(pts) >= 3 else LineString(pts)
            elif t == "CIRCLE":
                c = e.dxf.center
                if not (math.isfinite(c.x) and math.isfinite(c.y)):
                    raise IngestError(f"{ref.where}: {w} has a centre that is not a finite "
                                      "number (NaN or infinite); fix or redraw the outline")
                if not e.dxf.radius > 0:
                    raise IngestError(f"{ref.where}: {w} has radius {e.dxf.radius}; a "
                                      "zero-radius circle outlines nothing: delete it or "
                                      "redraw the outline")
                geom = Point(c.x, c.y).buffer(e.dxf.radius, quad_segs=CIRCLE_SEGMENTS // 4)
            elif t in ("LWPOLYLINE", "POLYLINE", "ELLIPSE", "SPLINE", "ARC"):
                geom = _flattened(e, chord)
            elif t == "LINE":
                s, f = e.dxf.start, e.dxf.end
                geom = LineString([(s.x, s.y), (f.x, f.y)])
            elif t == "HATCH":
                for path in e.paths:
                    verts = _hatch_path_vertices(path)
                    if len(verts) >= 3:
                        _check_finite(Polygon(verts), ref, w)
                        out.append((Polygon(verts), w, ""))
                continue
            elif t in ("TEXT", "MTEXT", "POINT", "DIMENSION", "LEADER", "MULTILEADER"):
                continue  # annotation: not an outline
            elif t == "INSERT":
                raise IngestError(
                    f"{ref.where}: {w} is a block reference ({e.dxf.get('name', '?')}); "
                    "outlines inside blocks are not read: explode the block in the drawing "
                    "so its outlines sit on this layer")
            else:
                raise IngestError(
                    f"{ref.where}: {w} is a {t}, which is not read as an outline; redraw it as "
                    "a closed polyline, circle or hatch, or move it to another layer")
        except (ValueError, TypeError) as err:
            raise IngestError(f"{ref.where}: cannot read {w}: {err}") from err
        _check_finite(geom, ref, w)
        out.append((geom, w, ""))
    return out, unit


def _flattened(e: Any, chord: float) -> BaseGeometry:
    """Return an arc-bearing outline flattened to chords (a polygon when it closes)."""
    from ezdxf import path as dxf_path

    pts = [(v.x, v.y) for v in dxf_path.make_path(e).flattening(chord)]
    closed = (len(pts) > 3 and math.dist(pts[0], pts[-1]) <= chord) or bool(
        getattr(e, "closed", False) or getattr(e, "is_closed", False))
    return Polygon(pts) if closed and len(pts) >= 3 else LineString(pts)


def _check_finite(geom: BaseGeometry, ref: LayerRef, w: str) -> None:
    """Refuse an outline with a NaN or infinite coordinate, naming the entity."""
    if geom.is_empty:
        return
    xy = shapely.get_coordinates(geom)
    if not np.isfinite(xy).all():
        raise IngestError(f"{ref.where}: {w} has a coordinate that is not a finite number "
                          "(NaN or infinite); fix or redraw the outline")


def _hatch_path_vertices(path: object) -> list[tuple[float, float]]:
    if hasattr(path, "vertices"):  # polyline path
        return [(v[0], v[1]) for v in path.vertices]
    verts: list[tuple[float, float]] = []
    for edge in getattr(path, "edges", []):
        if edge.EDGE_TYPE == "LineEdge":
            verts.append((edge.start[0], edge.start[1]))
        elif edge.EDGE_TYPE == "ArcEdge":
            a0, a1 = math.radians(edge.start_angle), math.radians(edge.end_angle)
            if a1 < a0:
                a1 += 2 * math.pi
            for a in np.linspace(a0, a1, 16, endpoint=False):
                verts.append((edge.center[0] + edge.radius * math.cos(a),
                              edge.center[1] + edge.radius * math.sin(a)))
        else:  # ellipse/spline edges: use their end points
            verts.append((edge.start_point[0], edge.start_point[1]))
    return verts


def _gis_features(ref: LayerRef, site_crs: object) -> tuple[list[_Raw], object]:
    import pyogrio

    try:
        gdf = pyogrio.read_dataframe(ref.path, layer=ref.layer)
    except Exception as err:  # pyogrio raises several DataSource errors
        raise IngestError(f"{ref.where}: cannot read {ref.path.name}"
                          f"{' layer ' + repr(ref.layer) if ref.layer else ''}: {err}") from err
    if ref.coords == "site" and gdf.crs is not None and site_crs is not None:
        if not gdf.crs.equals(site_crs):
            gdf = gdf.to_crs(site_crs)
    label_col = next((c for c in ("label", "name", "id") if c in gdf.columns), None)
    depth = _depth_mm_column(gdf, ref)
    feats: list[_Raw] = []
    for i, geom in enumerate(gdf.geometry):
        if geom is None or geom.is_empty:
            continue
        label = str(gdf[label_col].iloc[i]) if label_col else ""
        feats.append((geom, f"{ref.path.name} feature #{i + 1}", label, depth[i]))
    return feats, gdf.crs


def _depth_mm_column(gdf: pd.DataFrame, ref: LayerRef) -> list[float | None]:
    """Delamination depth per feature from a ``depth_mm`` or ``depth_in`` attribute."""
    import pandas as pd

    for col, factor in (("depth_mm", 1.0), ("depth_in", 25.4)):
        if col in gdf.columns:
            vals = pd.to_numeric(gdf[col], errors="coerce")
            bad = vals.isna() & gdf[col].notna()
            if bad.any():
                i = int(bad.to_numpy().nonzero()[0][0])
                raise IngestError(f"{ref.where}: {ref.path.name} feature #{i + 1}: {col} holds "
                                  f"{gdf[col].iloc[i]!r}, not a number")
            return [None if pd.isna(v) else float(v) * factor for v in vals]
    return [None] * len(gdf)


def read_layer(ref: LayerRef, grid: LocalGrid, *, site_crs: object = None) -> list[Feature]:
    """Read every shape of a layer, converted to local grid coordinates.

    Raises
    ------
    IngestError
        Missing or unreadable file, unknown layer, DXF in unknown units.
    """
    _check_file(ref)
    raw: list[_Raw]
    if ref.path.suffix.lower() == ".dxf":
        shapes, unit = _dxf_features(ref)
        target = grid.unit if ref.coords == "local" else grid.crs_unit
        f = LENGTH_TO_M[unit] / LENGTH_TO_M[target]
        if f != 1.0:
            shapes = [(shapely.affinity.scale(g, f, f, origin=(0, 0)), w, lab)
                      for g, w, lab in shapes]
        raw = [(*r, None) for r in shapes]  # a DXF gives no delamination depth
    else:
        raw, _ = _gis_features(ref, site_crs)
    feats = []
    for g, w, lab, dep in raw:
        if ref.coords == "site":
            g = grid.geom_to_local(g)
        feats.append(Feature(g, f"{ref.where}: {w}", lab, dep))
    return feats


def _explode_polygons(geom: BaseGeometry) -> list[Polygon]:
    if isinstance(geom, Polygon):
        return [geom]
    if isinstance(geom, MultiPolygon):
        return list(geom.geoms)
    return []


def read_polygons(
    ref: LayerRef, grid: LocalGrid, *, site_crs: object = None, what: str = "shapes",
    repair: bool = True,
) -> list[Feature]:
    """Read the closed shapes of a layer as valid polygons (local grid coordinates).

    Self-intersecting outlines are repaired with :func:`shapely.make_valid` when
    ``repair`` and the repair keeps an area (with a GeometryWarning); a nearly closed
    polyline is closed (warned); open lines on a polygon layer raise.

    Raises
    ------
    IngestError
        If the layer holds no closed shape.
    """
    feats = read_layer(ref, grid, site_crs=site_crs)
    out: list[Feature] = []
    open_lines: list[Feature] = []
    for f in feats:
        g = f.geometry
        if g.geom_type == "LineString" and len(g.coords) >= 3:
            ends = Point(g.coords[0]).distance(Point(g.coords[-1]))
            if ends <= CLOSE_TOLERANCE * g.length:
                # nearly closed: closing it is safe and keeps the drawn shape
                warnings.warn(f"{f.where}: outline was not closed (ends {ends:.3g} apart); "
                              "closed it", GeometryWarning, stacklevel=2)
                g = Polygon(list(g.coords))
                f = Feature(g, f.where + " (closed)", f.label, f.depth_mm)
            else:
                open_lines.append(f)
                continue
        elif g.geom_type in ("LineString", "MultiLineString"):
            open_lines.append(f)
            continue
        for poly in _explode_polygons(g):
            if not poly.is_valid:
                reason = shapely.is_valid_reason(poly)
                fixed = shapely.make_valid(poly)
                parts = [p for p in getattr(fixed, "geoms", [fixed]) if isinstance(p, Polygon)]
                parts = [q for p in parts for q in _explode_polygons(p)] or _explode_polygons(fixed)
                if not repair or not parts or sum(p.area for p in parts) <= 0:
                    raise IngestError(
                        f"{f.where}: the outline is not a valid polygon ({reason}) and cannot "
                        "be repaired; redraw it as a simple closed polyline"
                    )
                warnings.warn(f"{f.where}: self-intersecting outline ({reason}) repaired into "
                              f"{len(parts)} polygon(s)", GeometryWarning, stacklevel=2)
                out.extend(Feature(p, f.where + " (self-intersection repaired)", f.label,
                                   f.depth_mm) for p in parts)
            elif poly.area > 0:
                out.append(Feature(poly, f.where, f.label, f.depth_mm))
    if not out:
        raise IngestError(
            f"{ref.where}: no closed {what} found in {ref.path.name}"
            f"{' on layer ' + repr(ref.layer) if ref.layer else ''}; draw them as closed "
            "polylines, circles or hatches"
        )
    if open_lines:
        lst = "; ".join(f.where.split(": ", 1)[-1] for f in open_lines[:5])
        raise IngestError(
            f"{ref.where}: {len(open_lines)} open line(s) among the {what}: {lst}. Close each "
            "outline in the drawing (or move cracks to a layer declared as kind = \"crack\")"
        )
    return out


def read_lines(ref: LayerRef, grid: LocalGrid, *, site_crs: object = None) -> list[Feature]:
    """Read the lines of a layer (joints, cracks); polygon outlines count as their boundary."""
    out = []
    for f in read_layer(ref, grid, site_crs=site_crs):
        g = f.geometry
        if g.geom_type in ("Polygon", "MultiPolygon"):
            g = g.boundary
        if g.geom_type in ("LineString", "MultiLineString", "LinearRing"):
            out.append(Feature(g, f.where, f.label))
    return out


def _dxf_texts(ref: LayerRef, grid: LocalGrid) -> list[tuple[Point, str]]:
    """Return the TEXT and MTEXT of a DXF layer: insertion point (local grid) and text."""
    doc = _read_dxf(ref.path)  # read already by read_lines
    code = int(doc.header.get("$INSUNITS", 0))
    unit = DXF_UNITS.get(code) or ref.unit or grid.unit
    target = grid.unit if ref.coords == "local" else grid.crs_unit
    f = LENGTH_TO_M[unit] / LENGTH_TO_M[target]
    wanted = (ref.layer or "").upper()
    out = []
    ents: list[Any] = list(doc.modelspace())  # typed Any: read by dxftype(), as above
    for e in ents:
        if str(e.dxf.get("layer", "")).upper() != wanted or e.dxftype() not in ("TEXT", "MTEXT"):
            continue
        text = (e.plain_text() if e.dxftype() == "MTEXT" else str(e.dxf.text)).strip()
        p = Point(e.dxf.insert.x * f, e.dxf.insert.y * f)
        if ref.coords == "site":
            p = Point(shapely.get_coordinates(grid.geom_to_local(p))[0])
        if text:
            out.append((p, text))
    return out


def read_grid_lines(ref: LayerRef, grid: LocalGrid, *, site_crs: object = None
                    ) -> list[Feature]:
    """Read column-grid lines with their labels (``C``, ``3``).

    A GIS layer labels each line by its ``label``, ``name`` or ``id`` attribute; a DXF
    layer by a TEXT or MTEXT on the same layer, the one nearest to either end of the line
    (where a grid bubble is drawn).

    Raises
    ------
    IngestError
        If the layer has no line, or a line has no label.
    """
    lines = read_lines(ref, grid, site_crs=site_crs)
    if not lines:
        raise IngestError(f"{ref.where}: no column-grid line on this layer; draw the column "
                          "lines as lines, or remove column_grid")
    if ref.path.suffix.lower() == ".dxf":
        texts = _dxf_texts(ref, grid)
        named = []
        for ln in lines:
            ends = [Point(c) for c in shapely.get_coordinates(ln.geometry)[[0, -1]]]
            best = min(texts, key=lambda t: min(t[0].distance(e) for e in ends), default=None)
            named.append(Feature(ln.geometry, ln.where, best[1] if best else ""))
        lines = named
    nameless = [ln.where for ln in lines if not ln.label]
    if nameless:
        raise IngestError(f"{ref.where}: column-grid line(s) without a label: "
                          f"{', '.join(nameless[:3])}; give each line a label attribute, or "
                          "in a DXF a text (its name, e.g. C or 3) at one of its ends on the "
                          "same layer")
    return lines

"""DXF drawing of one level's repair layout (ezdxf).

Layers, with names of this project's own: ``GC-SLAB``, ``GC-EXCLUSION``,
``GC-JOINT`` (construction and control joints), ``GC-JOINT-BREAK`` (expansion and isolation
joints, which break the mat's continuity; only when a level has one), ``GC-DELAM`` (sounded
delaminations and spalls),
``GC-REPAIR-<DEPTH CLASS>`` (one per depth class), ``GC-ZONE-<ZONE NAME>`` (one per
zone) and ``GC-TEXT`` (repair ids and areas, title, cautions).  Coordinates are the
level's local grid in its plan unit, and ``$INSUNITS`` says which.
"""

from __future__ import annotations

import os
import re
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import geopandas as gpd
from shapely.geometry import Polygon
from shapely.geometry.base import BaseGeometry

from geo_corrosion._io import atomic_write
from geo_corrosion.errors import ExportError
from geo_corrosion.repair import polygon_parts
from geo_corrosion.units import ReportUnits, report_units

__all__ = ["LAYER_SLAB", "LAYER_EXCLUSION", "LAYER_JOINT", "LAYER_JOINT_BREAK", "LAYER_DELAM",
           "LAYER_TEXT", "layer_name", "write_level_dxf"]

LAYER_SLAB = "GC-SLAB"
LAYER_EXCLUSION = "GC-EXCLUSION"
LAYER_JOINT = "GC-JOINT"
#: Joints that break the electrical continuity of the mat (expansion, isolation): a layer of
#: their own, added only when a level has one.
LAYER_JOINT_BREAK = "GC-JOINT-BREAK"
LAYER_DELAM = "GC-DELAM"
LAYER_TEXT = "GC-TEXT"

#: DXF $INSUNITS codes: 6 metres, 2 feet, 21 US survey feet.
_INSUNITS = {"m": 6, "ft": 2, "us-ft": 21}
_COLOURS = {LAYER_SLAB: 7, LAYER_EXCLUSION: 8, LAYER_JOINT: 4, LAYER_DELAM: 1, LAYER_TEXT: 7}
_REPAIR_COLOURS = {"PARTIAL-ABOVE-BARS": 3, "PARTIAL-BELOW-BARS": 5, "FULL-DEPTH": 6}
_ZONE_COLOURS = (30, 50, 140, 170, 200, 230, 9)


def layer_name(prefix: str, name: str) -> str:
    """Return a DXF-safe layer name.

    Examples
    --------
    >>> layer_name("GC-REPAIR", "full_depth")
    'GC-REPAIR-FULL-DEPTH'
    """
    clean = re.sub(r"[^A-Z0-9]+", "-", str(name).upper()).strip("-") or "UNNAMED"
    return f"{prefix}-{clean}"[:250]


def _rings(geom: BaseGeometry) -> list[list[tuple[float, float]]]:
    out = []
    for p in polygon_parts(geom):
        for ring in (p.exterior, *p.interiors):
            out.append([(float(x), float(y)) for x, y in list(ring.coords)[:-1]])
    return out


def write_level_dxf(path: str | os.PathLike[str], *, slab: Polygon,
                    exclusions: Sequence[BaseGeometry], joints: Sequence[BaseGeometry],
                    repairs: gpd.GeoDataFrame | None, zones: gpd.GeoDataFrame | None,
                    delaminations: Sequence[BaseGeometry], unit: str, title: str,
                    cautions: list[str], units: ReportUnits | None = None,
                    text_height: float | None = None,
                    breaking_joints: Sequence[BaseGeometry] = ()) -> Path:
    """Write the DXF drawing of one level.

    Parameters
    ----------
    path : path-like
        Output file; written atomically.
    slab, exclusions, joints : geometries
        The level's outline, excluded areas and joint lines (local grid, plan unit); a
        joint may be any lineal geometry (LineString, MultiLineString, LinearRing).
    repairs : GeoDataFrame or None
        Frame of :func:`geo_corrosion.repair.layout_repairs`.
    zones : GeoDataFrame or None
        Frame of :func:`geo_corrosion.zoning.zone`.
    delaminations : sequence of geometry
        Sounded delaminations and spalls.
    unit : {"m", "ft", "us-ft"}
        Plan length unit; sets ``$INSUNITS``.
    title : str
    cautions : list of str
        Printed as a numbered text block below the slab.
    units : ReportUnits, optional
        Reporting units of the area labels (default: metric for "m", US for feet).
    text_height : float, optional
        Text height in the plan unit (default: 1/100 of the slab's larger side).
    breaking_joints : sequence of geometry
        Joint lines that break the mat's electrical continuity (expansion, isolation), drawn
        on :data:`LAYER_JOINT_BREAK`; ``joints`` holds the others.

    Returns
    -------
    Path

    Raises
    ------
    ExportError
        For an unknown unit or a file that cannot be written.
    """
    # ezdxf.new is imported from the module defining it: ezdxf's __init__ re-exports it
    # unmarked, which strict mypy does not accept
    from ezdxf.enums import TextEntityAlignment
    from ezdxf.filemanagement import new as new_drawing

    if unit not in _INSUNITS:
        raise ExportError(f"DXF: plan unit {unit!r} has no DXF unit code; use 'm' or 'ft'")
    if not isinstance(slab, Polygon) or slab.is_empty:
        raise ExportError("DXF: the slab must be a polygon")
    units = units or report_units("metric" if unit == "m" else "us")
    x0, y0, x1, y1 = slab.bounds
    h = text_height or max(x1 - x0, y1 - y0) / 100.0
    doc = new_drawing("R2010", setup=True)
    doc.header["$INSUNITS"] = _INSUNITS[unit]
    doc.header["$MEASUREMENT"] = 1 if unit == "m" else 0
    msp = doc.modelspace()

    def layer(name: str, colour: int) -> str:
        if name not in doc.layers:
            doc.layers.add(name, color=colour)
        return name

    def outline(geom: BaseGeometry, lay: str) -> None:
        for ring in _rings(geom):
            if len(ring) >= 2:
                msp.add_lwpolyline(ring, close=True, dxfattribs={"layer": lay})

    for name, colour in _COLOURS.items():
        layer(name, colour)
    outline(slab, LAYER_SLAB)
    for e in exclusions:
        outline(e, LAYER_EXCLUSION)
    for lay, lines in ((LAYER_JOINT, joints), (LAYER_JOINT_BREAK, breaking_joints)):
        for j in lines:
            if j is not None and not j.is_empty:
                layer(lay, 6)  # GC-JOINT is declared above; the breaking layer when used
                for part in getattr(j, "geoms", [j]):
                    msp.add_lwpolyline([(float(x), float(y)) for x, y in part.coords],
                                       dxfattribs={"layer": lay})
    for d in delaminations:
        outline(d, LAYER_DELAM)
    if zones is not None and len(zones):
        for k, z in enumerate(zones.itertuples(index=False)):
            lay = layer(layer_name("GC-ZONE", getattr(z, "zone", f"Z{k}")),
                        _ZONE_COLOURS[k % len(_ZONE_COLOURS)])
            outline(z.geometry, lay)
    if repairs is not None and len(repairs):
        for r in repairs.itertuples(index=False):
            cls = str(getattr(r, "depth_class", "") or "unclassified")
            lay = layer_name("GC-REPAIR", cls)
            layer(lay, _REPAIR_COLOURS.get(lay.removeprefix("GC-REPAIR-"), 2))
            outline(r.geometry, lay)
            pt = r.geometry.centroid
            if not r.geometry.contains(pt):
                pt = r.geometry.representative_point()
            area = float(units.area_from_m2(float(r.area_m2)))
            for dy, text in ((0.6 * h, str(r.repair_id)), (-0.6 * h, f"{area:.2f} {units.area}")):
                msp.add_text(text, height=h, dxfattribs={"layer": LAYER_TEXT}).set_placement(
                    (pt.x, pt.y + dy), align=TextEntityAlignment.MIDDLE_CENTER)
    msp.add_text(title, height=2 * h, dxfattribs={"layer": LAYER_TEXT}).set_placement(
        (x0, y1 + 2 * h), align=TextEntityAlignment.BOTTOM_LEFT)
    if cautions:
        body = "\\P".join(["CAUTIONS"] + [f"{i}. {c}" for i, c in enumerate(cautions, 1)])
        mt = msp.add_mtext(body, dxfattribs={"layer": LAYER_TEXT, "char_height": 0.8 * h,
                                             "width": max(x1 - x0, 40 * h)})
        mt.set_location((x0, y0 - 2 * h))

    def save(tmp: Any) -> None:
        doc.saveas(tmp)

    return atomic_write(Path(path), save)

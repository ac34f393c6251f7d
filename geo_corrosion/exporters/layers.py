"""Vector layers of a run in the site CRS, shared by the GeoPackage and the web map.

Layer names are ``<level>_<what>`` (e.g. ``L2_repairs``), plus ``qa_flags`` for
the whole site.  Every layer is a GeoDataFrame in the site CRS whose area and
length columns carry their unit in the name.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any, cast

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely
from numpy.typing import NDArray
from shapely.geometry.base import BaseGeometry

from geo_corrosion.model.results import LevelResult, RunResult
from geo_corrosion.model.surface import KindPoints
from geo_corrosion.repair.tender import SOUNDING_PREFIX, sounding_labels
from geo_corrosion.units import LENGTH_TO_M

__all__ = ["level_layers", "site_layers", "to_site_frame"]


def to_site_frame(
    rows: Iterable[dict[str, Any]], lr: LevelResult, crs: Any
) -> gpd.GeoDataFrame:
    """Build a site-CRS GeoDataFrame from rows whose ``geometry`` is in local grid coordinates."""
    rows = list(rows)
    if not rows:
        return gpd.GeoDataFrame({"level_id": []}, geometry=[], crs=crs)
    df = pd.DataFrame(rows)
    local = np.empty(len(df), dtype=object)
    local[:] = list(df.pop("geometry"))
    # all the geometries in one call, as LocalGrid.geom_to_site does one by one (the same
    # arithmetic per vertex)
    grid = lr.level.grid
    geoms = shapely.transform(local, lambda xy: np.column_stack(grid.to_site(xy[:, 0], xy[:, 1])))
    df.insert(0, "level_id", lr.level.id)
    return gpd.GeoDataFrame(df, geometry=geoms, crs=crs)


def _records(df: pd.DataFrame) -> list[dict[str, Any]]:
    """Return the rows of a frame as dicts (its column labels are str)."""
    # pandas-stubs type record keys as Hashable, since labels may be any hashable
    return cast("list[dict[str, Any]]", df.to_dict("records"))


def _feature_rows(feats: Iterable[Any], **extra: Any) -> list[dict[str, Any]]:
    return [{"source": f.where, "label": f.label, **extra, "geometry": f.geometry} for f in feats]


def level_layers(lr: LevelResult, crs: Any) -> dict[str, gpd.GeoDataFrame]:
    """Every vector layer of one level, in the site CRS."""
    lv = lr.level
    a2 = LENGTH_TO_M[lv.unit] ** 2
    out: dict[str, gpd.GeoDataFrame] = {}
    out["slab"] = to_site_frame(
        [{"name": lv.config.name, "area_m2": lv.slab.area * a2, "geometry": lv.slab}], lr, crs)
    if lv.exclusions:
        out["exclusions"] = to_site_frame(_feature_rows(lv.exclusions), lr, crs)
    if lv.joints:
        out["joints"] = to_site_frame(
            [{**r, "joint_type": getattr(j, "joint_type", "construction"),
              "breaks_continuity": bool(getattr(j, "breaks_continuity", False))}
             for r, j in zip(_feature_rows(lv.joints), lv.joints, strict=True)], lr, crs)
    for kind, feats in lv.overlays.items():
        rows = _feature_rows(feats, kind=kind)
        numbers = (sounding_labels([f.geometry for f in feats], SOUNDING_PREFIX[kind])
                   if kind in SOUNDING_PREFIX else [""] * len(rows))
        for r, n in zip(rows, numbers, strict=True):
            r["area_m2"] = r["geometry"].area * a2
            if kind in SOUNDING_PREFIX:  # the number on the sounding plan (D1, S1)
                r["number"] = n
        out[{"delamination": "delaminations", "spall": "spalls", "patch": "patches",
             "crack": "cracks", "soffit_delamination": "soffit_delaminations"}[kind]] = (
            to_site_frame(rows, lr, crs))
    for name, s in lr.surfaces.items():
        unit = s.kind.canonical_unit
        out[f"contours_{name}"] = to_site_frame(
            [{"value": v, "unit": unit, "geometry": g} for v, g in s.lines if not g.is_empty],
            lr, crs)
        out[f"bands_{name}"] = to_site_frame(
            [{"value_from": lo, "value_to": hi, "unit": unit, "area_m2": g.area * a2, "geometry": g}
             for lo, hi, g in s.bands if not g.is_empty], lr, crs)
        if s.classes is not None and len(s.classes):
            c = s.classes.copy()
            c["area_m2"] = c.pop("area_local") * a2
            out[f"classes_{name}"] = to_site_frame(_records(c), lr, crs)
        res = s.residuals
        from shapely import points

        # an (n, 2) array gives an array of n points; the stubs cannot tell it from one point
        res_pts = cast("NDArray[np.object_]",
                       points(np.column_stack([res["x_local"], res["y_local"]])))
        out[f"cv_residuals_{name}"] = to_site_frame(
            [{"reading_id": r, "residual": v, "unit": unit, "geometry": g}
             for r, v, g in zip(res["reading_id"], res["residual"], res_pts, strict=True)],
            lr, crs)
    for name, p in lr.points.items():  # kinds too sparse for a surface: classed points
        _points_layers(out, name, p, lr, crs, a2)
    cond = lr.condition
    if cond is not None and cond.combined_polygons is not None and len(cond.combined_polygons):
        c = cond.combined_polygons.copy()
        c["area_m2"] = c.pop("area_local") * a2
        out["combined_classes"] = to_site_frame(_records(c), lr, crs)
    if lr.zones is not None and len(lr.zones):
        z = pd.DataFrame(lr.zones.drop(columns="geometry"))
        z["geometry"] = list(lr.zones.geometry)
        out["zones"] = to_site_frame(_records(z.drop(columns=[c for c in ("level_id",) if c in z])),
                                     lr, crs)
    if lr.repairs is not None and len(lr.repairs):
        rep = pd.DataFrame(lr.repairs.drop(columns="geometry"))
        rep["geometry"] = list(lr.repairs.geometry)
        if "level_id" in rep:
            rep = rep.drop(columns="level_id")
        out["repairs"] = to_site_frame(_records(rep), lr, crs)
    if lr.pay_areas is not None and len(lr.pay_areas):
        pa = pd.DataFrame(lr.pay_areas.drop(columns=["geometry", "level_id"]))
        pa["geometry"] = list(lr.pay_areas.geometry)
        out["pay_areas"] = to_site_frame(_records(pa), lr, crs)
    return out


def _points_layers(out: dict[str, gpd.GeoDataFrame], name: str, p: KindPoints, lr: LevelResult,
                   crs: Any, a2: float) -> None:
    """Add ``points_<kind>`` (classed readings) and ``thiessen_<kind>`` (their cells)."""
    from shapely import points

    from geo_corrosion.surfaces.thiessen import THIESSEN_LABEL

    pts = p.points
    cols = [c for c in ("reading_id", "point_id", "value", "unit", "class", "class_code",
                        "color", "class_set") if c in pts]
    rows = _records(pts[cols])
    geoms = cast("NDArray[np.object_]", points(np.column_stack([pts["x_local"],
                                                                pts["y_local"]])))
    for r, g in zip(rows, geoms, strict=True):
        r["representation"] = "points"
        r["geometry"] = g
    out[f"points_{name}"] = to_site_frame(rows, lr, crs)
    cells = pts.drop_duplicates(subset=["x_local", "y_local"])
    out[f"thiessen_{name}"] = to_site_frame(
        [{**{c: r[c] for c in cols}, "label": THIESSEN_LABEL,
          "area_m2": r["cell"].area * a2, "geometry": r["cell"]}
         for r in _records(cells) if not r["cell"].is_empty], lr, crs)


def site_layers(result: RunResult) -> dict[str, gpd.GeoDataFrame]:
    """Every vector layer of a run: per-level layers, readings and QA flags."""
    crs = result.site.crs
    layers: dict[str, gpd.GeoDataFrame] = {}
    for lid, lr in result.levels.items():
        for name, gdf in level_layers(lr, crs).items():
            layers[f"{lid}_{name}"] = gdf
    kinds: dict[str, list[gpd.GeoDataFrame]] = {}
    for s in result.site.surveys:
        kinds.setdefault(s.kind.name, []).append(s.frame)
    flags = result.flags
    for kind, frames in kinds.items():
        df = gpd.GeoDataFrame(pd.concat(frames, ignore_index=True), crs=crs)
        if not flags.empty:
            f = (flags[flags["reading_id"] != ""].groupby("reading_id")["rule"]
                 .agg(lambda r: ",".join(sorted(set(r)))))
            # object first: a kind none of whose readings is flagged maps to all-NaN floats
            df["qa_flags"] = df["reading_id"].map(f).astype(object).fillna("")
        else:
            df["qa_flags"] = ""
        layers[f"readings_{kind}"] = df
    if not flags.empty:
        pts: dict[str, BaseGeometry] = {}  # reading id -> its point
        for s in result.site.surveys:
            pts.update(zip(s.frame["reading_id"], s.frame.geometry, strict=True))
        geoms: list[BaseGeometry | None] = [pts.get(r) for r in flags["reading_id"]]
        layers["qa_flags"] = gpd.GeoDataFrame(flags.copy(), geometry=geoms, crs=crs)
    return layers

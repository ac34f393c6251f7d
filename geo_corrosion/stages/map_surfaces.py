"""The surfaces stage of the pipeline: kriged surfaces, contours and class areas per level.

For each level and measurement kind: the readings fit for mapping (QA errors,
implausible values and readings outside the deck left out, never deleted), a
fitted variogram chosen by cross-validation, local ordinary kriging onto a grid
aligned with the level's survey grid, clipped to the slab minus exclusions and
masked beyond the kind's mask distance of any reading (its own, from its spacing and
fitted range, or ``max_distance``), contour lines and bands, and the class areas of the
kind's class set.  A kind too sparse for a surface is shown as its readings (points).
Geometry is produced in local grid coordinates; exporters transform it to the site CRS.
"""

from __future__ import annotations

import dataclasses
import logging
import math
from collections.abc import Callable, Sequence
from typing import Any

import numpy as np
import pandas as pd
import rasterio.features
import shapely
from numpy.typing import NDArray
from shapely.geometry import shape
from shapely.geometry.base import BaseGeometry

from geo_corrosion.config import RunParams
from geo_corrosion.errors import KrigingError
from geo_corrosion.measurements import MeasurementKind
from geo_corrosion.model.site import Level, Survey
from geo_corrosion.model.surface import KindSurface, LevelSurfaces
from geo_corrosion.stages.map_points import kind_points, points_record
from geo_corrosion.surfaces import (
    CrossValidation,
    GridSpec,
    VariogramFit,
    check_contour_interval,
    contour_bands,
    contour_lines,
    contours_by_region,
    cross_validate,
    experimental_variograms,
    fit_variogram,
    grid_for_polygon,
    krige_grid,
    krige_regions,
    region_labels,
    surface_mask,
)
from geo_corrosion.surfaces.density import MIN_READINGS_FOR_SURFACE as DEFAULT_MIN_READINGS
from geo_corrosion.surfaces.density import (
    SparseReadingsError,
    binding_radius,
    count_reason,
    density_rule,
    kind_neighbourhood,
    nearest_neighbour_spacing,
    spacing_reason,
    surface_reason,
    uncorrelated_reason,
)
from geo_corrosion.units import LENGTH_TO_M, ReportUnits

__all__ = ["map_level", "mappable_readings", "build_surface", "reading_statistics",
           "check_kind_interval", "EXCLUDING_RULES", "MIN_READINGS_FOR_SURFACE"]

log = logging.getLogger(__name__)

#: QA severities whose readings are left out of surfaces.
EXCLUDING_SEVERITIES = ("error",)
#: QA rules whose readings are left out of surfaces even at warning level.
EXCLUDING_RULES = ("QA-RANGE-LOW", "QA-RANGE-HIGH", "QA-OUTSIDE-SLAB", "QA-IN-EXCLUSION",
                   "QA-NAN-VALUE", "QA-NAN-XY")


def mappable_readings(surveys: list[Survey], flags: pd.DataFrame) -> pd.DataFrame:
    """Return the readings of these surveys fit for a surface (QA exclusions applied)."""
    frames = [s.frame for s in surveys]
    if not frames:
        return pd.DataFrame()
    df = pd.concat(frames, ignore_index=True)
    col = surveys[0].kind.value_column
    bad = set()
    if flags is not None and not flags.empty:
        sel = flags["severity"].isin(EXCLUDING_SEVERITIES) | flags["rule"].isin(EXCLUDING_RULES)
        bad = set(flags.loc[sel & (flags["reading_id"] != ""), "reading_id"])
    keep = ~df["reading_id"].isin(bad) & np.isfinite(df[col].to_numpy(float))
    out: pd.DataFrame = df.loc[keep].reset_index(drop=True)
    return out


def merge_repeats(readings: pd.DataFrame, value_column: str) -> pd.DataFrame:
    """Average readings taken at one location (repeats, duplicates) into one.

    QA has already reported them; kriging needs one value per location.  The
    merged row keeps every reading id, comma-joined.
    """
    key = [readings["x_local"].round(6), readings["y_local"].round(6)]
    if not readings.duplicated(subset=["x_local", "y_local"]).any():
        return readings
    g = readings.groupby(key, sort=False)
    out = g.first()
    out[value_column] = g[value_column].mean()
    out["reading_id"] = g["reading_id"].agg(",".join)
    return out.reset_index(drop=True)


def directional_variograms(
    x: NDArray[np.float64], y: NDArray[np.float64], z: NDArray[np.float64],
    kind: MeasurementKind, fit: VariogramFit, *, groups: NDArray[np.intp] | None = None,
) -> dict[str, Any]:
    """Experimental variograms along the grid axes (the deck's bar directions).

    Reported with an anisotropy indication: the ratio of the mean semivariance
    over lags up to half the fitted range, along x to along y (1 = isotropic).
    The engine does not fit anisotropy automatically; fix it in the site file
    (``[run.variogram.<kind>] anisotropy_ratio, anisotropy_angle_deg``).  ``groups`` (the
    continuity region of each reading) keeps pairs within one region.
    """
    zz = np.log(z) if kind.krige_transform == "log" else z
    ev0 = fit.experimental  # None when the fit fell back (too few readings to estimate)
    max_lag = float(ev0.lags.max()) if ev0 is not None and len(ev0.lags) else None
    out: dict[str, Any] = {}
    means = {}
    axes = (("along_x", 0.0), ("along_y", 90.0))
    # one set of pairs binned in both directions (the same as one call per direction)
    evs = experimental_variograms(x, y, zz, max_lag=max_lag, directions=[a for _, a in axes],
                                  groups=groups)
    for (label, ang), ev in zip(axes, evs, strict=True):
        sel = (ev.lags <= 0.5 * fit.model.range) & (ev.counts > 0)
        means[label] = float(np.mean(ev.gamma[sel])) if sel.any() else float("nan")
        out[label] = {"direction_deg": ang, "lags": ev.lags.tolist(), "gamma": ev.gamma.tolist(),
                      "pairs": ev.counts.tolist()}
    out["anisotropy_indication"] = (means["along_x"] / means["along_y"]
                                    if means["along_y"] > 0 else None)
    return out


def _class_polygons(
    kind: MeasurementKind, mean: NDArray[np.float64], grid: GridSpec, deck: BaseGeometry,
    class_set: str | None = None,
) -> pd.DataFrame | None:
    from geo_corrosion.condition.classes import get_class_set

    name = class_set or kind.class_set
    if name is None:
        return None
    cs = get_class_set(name)
    codes = cs.codes(mean).astype(np.int16)
    valid = codes >= 0
    rows = []
    for code, label in enumerate(cs.labels):
        m = valid & (codes == code)
        if not m.any():
            continue
        polys = [shape(g) for g, v in rasterio.features.shapes(
            m.astype(np.uint8), mask=m, transform=grid.affine()) if v == 1]
        geom = shapely.intersection(shapely.union_all(polys), deck)
        if geom.is_empty:
            continue
        rows.append({"class": label, "class_code": code, "color": cs.colors[code],
                     "class_set": cs.name, "source": cs.source, "area_local": geom.area,
                     "geometry": geom})
    return pd.DataFrame(rows)


def calibrate_variance(fit: VariogramFit, cv: CrossValidation
                       ) -> tuple[VariogramFit, CrossValidation]:
    """Scale the variogram so that the leave-one-out MSSE of its kriging variance is 1.

    Ordinary kriging weights do not change when the variogram is multiplied by a constant;
    the kriging variance and the Lagrange multiplier are multiplied by it.  Scaling nugget
    and partial sill by the MSSE therefore keeps every estimate in the kriged space (for
    lognormal kinds the back-transform then uses the calibrated variance) and makes the
    mean standardized squared error exactly 1,
    so the probability maps and area intervals use an honest variance (common practice:
    the MSSE, or mean squared deviation ratio, should be close to 1;
    [Webster-Oliver-2007 §8.3, from memory]).  The factor and the
    MSSE before calibration are kept in the notes of the fit and in the cross-validation
    record.  No change when the MSSE is not a positive finite number.
    """
    f = float(cv.msse)
    if not (math.isfinite(f) and f > 0) or fit.fallback:
        return fit, cv
    m = fit.model
    model = dataclasses.replace(m, nugget=m.nugget * f, psill=m.psill * f)
    note = (f"kriging variance calibrated: nugget and partial sill multiplied by {f:.4g}, the "
            "leave-one-out MSSE of the fitted model, so that the MSSE is 1 (kriged-space estimates "
            "unchanged)")
    fit = dataclasses.replace(fit, model=model, notes=(*fit.notes, note),
                              variance_factor=f)
    cv = dataclasses.replace(cv, variance=np.asarray(cv.variance) * f, msse=1.0,
                             msse_before_calibration=f)
    return fit, cv


def build_surface(
    level: Level,
    kind: MeasurementKind,
    readings: pd.DataFrame,
    params: RunParams,
    *,
    progress: Callable[[int, int], None] | None = None,
    class_set: str | None = None,
) -> KindSurface:
    """Fit, krige, contour and classify one kind on one level.

    Raises
    ------
    KrigingError
        Too few readings, or a grid too large to compute.
    """
    u = LENGTH_TO_M[level.unit]
    cell = params.cell_size_m / u
    col = kind.value_column
    readings = merge_repeats(readings, col)
    x = readings["x_local"].to_numpy(float)
    y = readings["y_local"].to_numpy(float)
    z = readings[col].to_numpy(float)
    if len(z) < 3:
        raise KrigingError(
            f"level {level.id}: only {len(z)} usable {kind.name} reading(s); a surface needs more"
        )
    fixed = dict(params.variogram.get(kind.name, {}))
    if "range_m" in fixed:
        fixed["range"] = fixed.pop("range_m") / u
    chosen = fixed.get("model") or params.variogram_model
    models = (("spherical", "exponential", "gaussian", "matern") if chosen == "auto"
              else (chosen,))
    # a kind read against the mat is kriged per continuity region (the deck split at the
    # joints that break the mat): pairs, neighbours and cross-validation stay in one region
    regions = level.continuity_regions() if kind.needs_continuity else []
    groups = region_labels(regions, x, y) if len(regions) > 1 else None
    fit = fit_variogram(x, y, z, models=models, transform=kind.krige_transform,
                        n_neighbors=params.n_neighbors, fixed=fixed or None, groups=groups)
    # the density rule and the kind's own neighbourhood (surfaces/density.py)
    spacing = nearest_neighbour_spacing(x, y)
    if fit.uncorrelated:  # a pure nugget: shown as points, never refused (#16)
        raise SparseReadingsError(uncorrelated_reason(spacing, level.unit))
    sparse = spacing_reason(spacing, float(fit.model.range), density_rule(params.kinds, kind.name),
                            level.unit)
    if sparse is not None:
        raise SparseReadingsError(sparse)
    hood = kind_neighbourhood(params.kinds, params.max_distance_m, kind.name, spacing,
                              float(fit.model.range), u)
    cv = cross_validate(x, y, z, fit.model, n_neighbors=params.n_neighbors,
                        transform=kind.krige_transform, groups=groups)
    if params.calibrate_variance and not ({"nugget", "psill"} & set(fixed)):
        fit, cv = calibrate_variance(fit, cv)
    directional = directional_variograms(x, y, z, kind, fit, groups=groups)
    deck = level.deck
    grid = grid_for_polygon(deck, cell)
    cell_region = None
    if groups is None:
        mask = surface_mask(grid, deck, x, y, max_distance=hood.mask_distance)
        cx, cy = grid.row_centers(slice(None))
        flat = mask.ravel()
        radius = binding_radius(x, y, cx[flat], cy[flat], params.n_neighbors,
                                hood.search_radius, fit.model.transform_coords)
        mean, var = krige_grid(x, y, z, grid, fit.model, mask=mask,
                               n_neighbors=params.n_neighbors, radius=radius,
                               transform=kind.krige_transform, progress=progress)
    else:
        cell_region, mean, var, region_notes = krige_regions(
            x, y, z, groups, regions, grid, fit.model, max_distance=hood.mask_distance,
            n_neighbors=params.n_neighbors, transform=kind.krige_transform,
            search_radius=hood.search_radius)
        counts = ", ".join(str(int((groups == r).sum())) for r in range(len(regions)))
        fit = dataclasses.replace(fit, notes=(
            *fit.notes,
            f"kriged in {len(regions)} continuity regions split by joints that break the "
            f"mat's continuity ({counts} readings): one variogram fitted on pairs within a "
            "region, each region kriged from its own readings only", *region_notes))
    res = pd.DataFrame({"reading_id": readings["reading_id"], "x_local": x, "y_local": y,
                        "residual": np.asarray(cv.residuals, float)})
    interval = kind.contour_interval_for(params)
    check_kind_interval(kind, interval)
    if cell_region is None:
        lines = contour_lines(mean, grid, interval=interval)
        bands = contour_bands(mean, grid, interval=interval)
    else:  # traced region by region: no contour runs along a breaking joint
        lines, bands = contours_by_region(mean, grid, cell_region, interval=interval)
    classes = _class_polygons(kind, mean, grid, deck, class_set)
    return KindSurface(kind, grid, mean, var, fit, cv.to_dict(value_unit=kind.canonical_unit),
                       res, len(z), interval, lines, bands, classes, directional,
                       regions=cell_region, neighbourhood=hood)


def check_kind_interval(kind: MeasurementKind, interval: float) -> None:
    """Refuse a contour interval that is not positive or coarser than the kind allows.

    Raises
    ------
    KrigingError
        Naming the kind's limit and its source.
    """
    check_contour_interval(interval, kind.max_contour_interval, unit=kind.canonical_unit,
                           source=kind.max_contour_interval_source,
                           what=f"{kind.name} surfaces")


#: Fewest usable readings for which a kind is kriged on a level (the default of the density
#: rule, :mod:`geo_corrosion.surfaces.density`; ``[run.kinds.<kind>] min_readings_for_surface``).
MIN_READINGS_FOR_SURFACE = DEFAULT_MIN_READINGS


def reading_statistics(values: NDArray[np.float64]) -> dict[str, float]:
    """Count, mean, standard deviation, extremes and percentiles of the finite values."""
    v = values[np.isfinite(values)]
    if not v.size:
        return {"n": 0}
    p = np.percentile(v, [5, 10, 50, 90, 95])
    return {"n": int(v.size), "mean": float(v.mean()), "std": float(v.std(ddof=1)) if v.size > 1
            else 0.0, "min": float(v.min()), "p5": float(p[0]), "p10": float(p[1]),
            "median": float(p[2]), "p90": float(p[3]), "p95": float(p[4]), "max": float(v.max())}


def map_level(level: Level, surveys: Sequence[Survey], flags: pd.DataFrame, params: RunParams,
              *, units: ReportUnits, progress: Callable[[str], None] | None = None
              ) -> LevelSurfaces:
    """Krige every kind surveyed on a level, with the statistics ``run.json`` keeps.

    A kind below the density rule of :mod:`geo_corrosion.surfaces.density` (fewer than
    ``min_readings_for_surface`` usable readings, or readings too far apart for the fitted
    range), or whose kriging fails, gets no surface: it is shown as points
    (``LevelSurfaces.points``, :mod:`geo_corrosion.stages.map_points`) and the reason is kept
    in ``skipped`` and in the kind's record (``representation``, ``representation_reason``).

    Parameters
    ----------
    level : Level
    surveys : sequence of Survey
        The level's surveys (every kind).
    flags : DataFrame
        The QA flag table; flagged readings are left out of the surfaces.
    params : RunParams
    units : ReportUnits
        Reporting units, for the areas given beside m2.
    progress : callable, optional
        Receives a line of text per kind.
    """
    say = progress or (lambda _m: None)
    a2 = LENGTH_TO_M[level.unit] ** 2
    out = LevelSurfaces()
    kinds = {s.kind.name: s.kind for s in surveys}
    for name, kind in kinds.items():
        of_kind = [s for s in surveys if s.kind.name == name]
        readings = mappable_readings(of_kind, flags)
        values = readings[kind.value_column].to_numpy(float) if len(readings) else np.array([])
        entry: dict[str, Any] = {"readings": sum(len(s.frame) for s in of_kind),
                                 "readings_mapped": len(readings),
                                 "unit": kind.canonical_unit,
                                 "statistics": reading_statistics(values)}
        if kind.class_set and len(readings):
            vc = pd.Series(kind.classify(values)).value_counts()
            entry["class_share_of_readings"] = {str(k): float(v / len(readings))
                                                for k, v in vc.items()}
        out.kinds[name] = entry
        class_set = next((sv.config.options.get("class_set") for sv in of_kind
                          if sv.config.options.get("class_set")), None)
        rule = density_rule(params.kinds, name)
        spacing = (nearest_neighbour_spacing(readings["x_local"], readings["y_local"])
                   if len(readings) else float("nan"))
        few = (count_reason(len(readings), rule) if len(readings)
               else "no usable readings, so there is nothing to map")
        entry["representation"] = "points" if len(readings) else None
        entry["representation_reason"] = few
        entry["spacing"] = {"median_nearest_neighbour": spacing if math.isfinite(spacing)
                            else None, "unit": level.unit}
        entry["density_rule"] = rule.to_dict()
        if few is not None:
            _show_as_points(out, entry, level, kind, readings, few, class_set)
            say(f"level {level.id}: {name}: points, no surface ({few})")
            continue
        say(f"level {level.id}: kriging {len(readings)} {name} readings")
        try:
            s = build_surface(level, kind, readings, params, class_set=class_set)
        except KrigingError as err:  # SparseReadingsError too: readings too far apart
            _show_as_points(out, entry, level, kind, readings, str(err), class_set)
            say(f"level {level.id}: {name}: points, no surface: {err}")
            continue
        entry["representation"] = "surface"
        entry["representation_reason"] = surface_reason(
            len(readings), spacing, float(s.fit.model.range), rule, level.unit)
        out.surfaces[name] = s
        out.readings[name] = readings
        vunit = (kind.canonical_unit if kind.krige_transform is None
                 else f"ln({kind.canonical_unit})")
        mapped_area = float(np.isfinite(s.mean).sum()) * (s.grid.cell**2) * a2
        entry["surface"] = {
            "cell_size": s.grid.cell, "cell_unit": level.unit, "shape": list(s.grid.shape),
            "mapped_area_m2": mapped_area,
            "mapped_area_" + units.area: float(units.area_from_m2(mapped_area)),
            "variogram": s.fit.to_dict(value_unit=vunit, length_unit=level.unit),
            "cross_validation": s.cv,
            "directional_variograms": s.directional,
            "contour_interval": s.interval, "kriged_in": s.kind.krige_transform or "linear",
        }
        if s.neighbourhood is not None:
            entry["neighbourhood"] = s.neighbourhood.to_dict(level.unit)
        if s.classes is not None and len(s.classes):
            deck_area = level.deck.area * a2
            entry["class_areas"] = [
                {"class": r["class"], "area_m2": r["area_local"] * a2,
                 "area_" + units.area: float(units.area_from_m2(r["area_local"] * a2)),
                 "share_of_mapped_area": r["area_local"] * a2 / mapped_area if mapped_area else 0,
                 "share_of_deck": r["area_local"] * a2 / deck_area}
                for r in s.classes.to_dict("records")]
    return out


def _show_as_points(out: LevelSurfaces, entry: dict[str, Any], level: Level,
                    kind: MeasurementKind, readings: pd.DataFrame, reason: str,
                    class_set: str | None) -> None:
    """Record a kind that gets no surface; with usable readings, show them as points."""
    out.skipped[kind.name] = reason
    entry["surface"] = None
    entry["surface_skipped"] = reason
    entry["representation_reason"] = reason
    if not len(readings):
        return
    entry["representation"] = "points"
    p = kind_points(kind, readings, level.deck, reason, class_set=class_set)
    out.points[kind.name] = p
    entry["points"] = points_record(p, a2=LENGTH_TO_M[level.unit] ** 2)

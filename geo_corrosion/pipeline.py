"""The whole run: ingest, corrections, QA, surfaces, classes, repairs, quantities, exports.

:func:`run` chains the stages and writes the output folder atomically: every
file is written into a temporary folder beside the target, which replaces the
target only when everything succeeded.  A previous output folder is never
overwritten unless ``overwrite=True``.
"""

from __future__ import annotations

import hashlib
import json
import logging
import os
import platform
import shutil
import tempfile
import time
import warnings
from collections.abc import Callable
from dataclasses import asdict
from datetime import datetime, timezone
from importlib.metadata import PackageNotFoundError, version
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from geo_corrosion import qa
from geo_corrosion._io import atomic_write
from geo_corrosion.assessment import assess_level, life_estimates
from geo_corrosion.cautions import CAUTIONS
from geo_corrosion.config import SiteConfig, read_site
from geo_corrosion.errors import ExportError, GeoCorrosionWarning, KrigingError, QAError
from geo_corrosion.mapping import build_surface, mappable_readings
from geo_corrosion.model import Site
from geo_corrosion.planning import PlanningParams, low_cover_threshold_mm, plan_level
from geo_corrosion.quantities import bid_schedule
from geo_corrosion.repair import LayoutParams
from geo_corrosion.results import LevelResult, RunResult
from geo_corrosion.site import open_site
from geo_corrosion.units import LENGTH_TO_M, report_units

__all__ = ["check_site", "run", "process", "write_outputs", "file_sha256", "MANIFEST_NAME"]

log = logging.getLogger(__name__)
Progress = Callable[[str], None]
MANIFEST_NAME = "run.json"
MIN_READINGS_FOR_SURFACE = 30
DEFAULT_EXPORTERS = ("geopackage", "geotiff", "quantities", "drawings", "plots", "webmap",
                     "report")


def check_parameters(cfg: SiteConfig) -> None:
    """Refuse run parameters that the standards do not allow, before any work.

    Raises
    ------
    KrigingError
        A potential contour interval above 100 mV [ASTM-C876-91 §6.2, from memory].
    """
    from geo_corrosion.surfaces import check_contour_interval

    planning_params(cfg)  # layout parameters: negative or absurd values raise now

    try:
        check_contour_interval(cfg.run.contour_interval_mv, "potential")
    except KrigingError as err:
        raise KrigingError(f"{cfg.path}: [run].contour_interval_mv: {err}") from err


def _derive_flags(s: Any) -> pd.DataFrame:
    """QA rows for readings whose value could not be derived from raw instrument values."""
    f = s.frame
    rows = []
    for col, rule, sev in (("derive_message", "QA-DERIVE", "warning"),
                           ("derive_warning", "QA-DERIVE-NOTE", "info")):
        if col not in f:
            continue
        sel = f[col].fillna("").astype(str) != ""
        for r in f.loc[sel].itertuples():
            rows.append({"reading_id": r.reading_id, "survey_id": r.survey_id,
                         "level_id": r.level_id, "where": r.where, "rule": rule, "severity": sev,
                         "message": getattr(r, col), "value": float("nan")})
    if getattr(s, "kind", None) is not None and s.kind.name == "potential" \
            and "temperature_c" in f:
        from geo_corrosion.corrections import CSE_VALID_C

        t = f["temperature_c"].to_numpy(float)
        out = np.isfinite(t) & ((t < CSE_VALID_C[0]) | (t > CSE_VALID_C[1]))
        if out.all() and len(out) and np.unique(t).size == 1:  # one survey temperature
            out = np.zeros_like(out)
            rows.append({"reading_id": "", "survey_id": s.config.id, "level_id": s.config.level,
                         "where": s.config.path.name, "rule": "QA-TEMP-RANGE",
                         "severity": "warning", "value": float(t[0]),
                         "message": f"{s.config.path.name}: electrode temperature {t[0]:.1f} "
                                    "degC is outside 0-49 degC, where ASTM C876's CSE "
                                    "coefficient holds; the temperature correction is uncertain"})
        for r, tc in zip(f.loc[out].itertuples(), t[out], strict=True):
            rows.append({"reading_id": r.reading_id, "survey_id": r.survey_id,
                         "level_id": r.level_id, "where": r.where, "rule": "QA-TEMP-RANGE",
                         "severity": "warning", "value": float(tc),
                         "message": f"{r.where}: electrode temperature {tc:.1f} degC is outside "
                                    "0-49 degC, where ASTM C876's CSE coefficient holds; the "
                                    "temperature correction is uncertain"})
    return pd.DataFrame(rows, columns=qa.FLAG_COLUMNS)


def check_site(site: Site) -> pd.DataFrame:
    """QA of every survey and, across surveys, of every level and kind.

    Returns
    -------
    DataFrame
        One row per finding (:data:`geo_corrosion.qa.FLAG_COLUMNS`).
    """
    parts = []
    for s in site.surveys:
        lv = site.levels[s.config.level]
        parts.append(qa.check_survey(
            s.frame, kind=s.kind.name, value_column=s.kind.value_column,
            plausible_range=s.kind.plausible_range, slab_local=lv.slab,
            exclusions_local=lv.exclusion_polygons(),
            exclusion_names=[e.where for e in lv.exclusions],
            spacing=lv.config.grid.spacing if s.kind.name == "potential" else None,
        ))
    for lid in site.levels:
        kinds = {s.kind.name: s.kind for s in site.surveys_of(lid)}
        for name, kind in kinds.items():
            frames = [s.frame for s in site.surveys_of(lid, name)]
            if len(frames) > 1:
                parts.append(qa.check_level(
                    frames, kind=name, value_column=kind.value_column,
                    spacing=site.levels[lid].config.grid.spacing if name == "potential" else None))
    for s in site.surveys:
        parts.append(_derive_flags(s))
    parts = [p for p in parts if len(p)]
    if not parts:
        return pd.DataFrame(columns=qa.FLAG_COLUMNS)
    return pd.concat(parts, ignore_index=True)


def _stats(values: np.ndarray) -> dict[str, float]:
    v = values[np.isfinite(values)]
    if not v.size:
        return {"n": 0}
    p = np.percentile(v, [5, 10, 50, 90, 95])
    return {"n": int(v.size), "mean": float(v.mean()), "std": float(v.std(ddof=1)) if v.size > 1
            else 0.0, "min": float(v.min()), "p5": float(p[0]), "p10": float(p[1]),
            "median": float(p[2]), "p90": float(p[3]), "p95": float(p[4]), "max": float(v.max())}


def planning_params(cfg: SiteConfig) -> PlanningParams:
    """Layout and zoning parameters of a site (validated: absurd values raise RepairError)."""
    from geo_corrosion.plugins import ZONING_RULES

    p = cfg.run
    rules = tuple(ZONING_RULES.get(name)(**kw) for name, kw in cfg.zoning) or None
    return PlanningParams(
        layout=LayoutParams(
            margin_mm=p.repair_margin_m * 1000, merge_gap_mm=p.merge_gap_m * 1000,
            min_size_mm=p.min_repair_size_m * 1000, axis_angle_deg=p.axis_angle_deg,
            sawcut_depth_mm=p.sawcut_depth_mm, bar_diameter_mm=p.bar_diameter_mm,
            max_aggregate_mm=p.max_aggregate_mm, slab_thickness_mm=p.slab_thickness_mm),
        min_zone_area_m2=p.min_zone_area_m2, smoothing_m=p.zone_smoothing_m, rules=rules)


def process(site: Site, flags: pd.DataFrame, *, progress: Progress | None = None) -> RunResult:
    """Compute surfaces, classes, repairs and the schedule of an ingested, checked site."""
    say = progress or (lambda _m: None)
    params = site.config.run
    units = report_units(site.config.units)
    levels: dict[str, LevelResult] = {}
    planning = planning_params(site.config)
    for lid, lv in site.levels.items():
        lr = LevelResult(lv)
        a2 = LENGTH_TO_M[lv.unit] ** 2
        kinds = {s.kind.name: s.kind for s in site.surveys_of(lid)}
        for name, kind in kinds.items():
            surveys = site.surveys_of(lid, name)
            readings = mappable_readings(surveys, flags)
            n_all = sum(len(s.frame) for s in surveys)
            entry: dict[str, Any] = {"readings": n_all, "readings_mapped": len(readings),
                                     "unit": kind.canonical_unit,
                                     "statistics": _stats(readings[kind.value_column].to_numpy(float)
                                                          if len(readings) else np.array([]))}
            labels = kind.classify(readings[kind.value_column].to_numpy(float)) if len(readings) else []
            if kind.class_set and len(readings):
                vc = pd.Series(labels).value_counts()
                entry["class_share_of_readings"] = {str(k): float(v / len(readings))
                                                    for k, v in vc.items()}
            if len(readings) < MIN_READINGS_FOR_SURFACE:
                lr.skipped[name] = (f"{len(readings)} usable readings; a kriged surface needs at "
                                    f"least {MIN_READINGS_FOR_SURFACE}")
                entry["surface"] = None
                entry["surface_skipped"] = lr.skipped[name]
                say(f"level {lid}: {name}: no surface ({lr.skipped[name]})")
                lr.stats[name] = entry
                continue
            say(f"level {lid}: kriging {len(readings)} {name} readings")
            class_set = next((sv.config.options.get("class_set") for sv in surveys
                              if sv.config.options.get("class_set")), None)
            try:
                s = build_surface(lv, kind, readings, params, class_set=class_set)
            except KrigingError as err:
                lr.skipped[name] = str(err)
                entry["surface_skipped"] = str(err)
                say(f"level {lid}: {name}: no surface: {err}")
                lr.stats[name] = entry
                continue
            lr.surfaces[name] = s
            lr.readings[name] = readings
            vunit = kind.canonical_unit if kind.krige_transform is None else f"ln({kind.canonical_unit})"
            cell_area_m2 = (s.grid.cell**2) * a2
            mapped_area = float(np.isfinite(s.mean).sum()) * cell_area_m2
            entry["surface"] = {
                "cell_size": s.grid.cell, "cell_unit": lv.unit, "shape": list(s.grid.shape),
                "mapped_area_m2": mapped_area,
                "mapped_area_" + units.area: float(units.area_from_m2(mapped_area)),
                "variogram": s.fit.to_dict(value_unit=vunit, length_unit=lv.unit),
                "cross_validation": s.cv,
                "directional_variograms": s.directional,
                "contour_interval": s.interval, "kriged_in": s.kind.krige_transform or "linear",
            }
            if s.classes is not None and len(s.classes):
                deck_area = lv.deck.area * a2
                entry["class_areas"] = [
                    {"class": r["class"], "area_m2": r["area_local"] * a2,
                     "area_" + units.area: float(units.area_from_m2(r["area_local"] * a2)),
                     "share_of_mapped_area": r["area_local"] * a2 / mapped_area if mapped_area else 0,
                     "share_of_deck": r["area_local"] * a2 / deck_area}
                    for r in s.classes.to_dict("records")]
            lr.stats[name] = entry
        if lr.surfaces:
            say(f"level {lid}: condition assessment")
            cov = lr.surfaces.get("cover")
            low_cover = None
            if cov is not None:
                thr_mm, _src = low_cover_threshold_mm(lv)
                low_cover = np.nan_to_num(cov.mean, nan=np.inf) < thr_mm
            lr.condition = assess_level(
                lr.surfaces, {k: r[lr.surfaces[k].kind.value_column].to_numpy(float)
                              for k, r in lr.readings.items()}, deck=lv.deck, unit=lv.unit,
                rules=site.config.combined_rules, low_cover=low_cover)
            lr.stats["condition"] = lr.condition.stats
            life = {}
            for sv in site.surveys_of(lid, "corrosion_rate"):
                _, life[sv.id] = life_estimates(
                    sv.frame, cov, bar_diameter_mm=params.bar_diameter_mm)
            if life:
                lr.stats["condition"]["life"] = life
        say(f"level {lid}: laying out repairs and zones")
        lr.repairs, lr.zones, lr.stats["planning"] = plan_level(lv, lr.surfaces, planning)
        levels[lid] = lr
    import geopandas as gpd

    def _cat(frames: list[Any]) -> Any:
        frames = [f for f in frames if f is not None and len(f)]
        return gpd.GeoDataFrame(pd.concat(frames, ignore_index=True), geometry="geometry") \
            if frames else None

    allrep = _cat([lr.repairs for lr in levels.values()])
    allzones = _cat([lr.zones for lr in levels.values()])
    schedule = (bid_schedule(allrep, allzones, units=units, contingency=params.contingency,
                             anode_spacing_mm=params.anode_spacing_mm)
                if allrep is not None or allzones is not None else pd.DataFrame())
    return RunResult(site, flags, levels, schedule)


def file_sha256(path: Path) -> str:
    """SHA-256 of a file, hex."""
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for chunk in iter(lambda: f.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def _inputs(cfg: SiteConfig) -> list[dict[str, Any]]:
    paths = {cfg.path}
    for lv in cfg.levels:
        refs = [lv.slab, *lv.exclusions, *([lv.joints] if lv.joints else []),
                *[o.ref for o in lv.overlays]]
        paths.update(r.path for r in refs)
    paths.update(s.path for s in cfg.surveys)
    out = []
    for p in sorted(paths):
        try:
            rel = str(p.relative_to(cfg.root))
        except ValueError:
            rel = str(p)
        out.append({"path": rel, "sha256": file_sha256(p), "bytes": p.stat().st_size})
    return out


def _versions() -> dict[str, str]:
    out = {"python": platform.python_version()}
    for pkg in ("geo_corrosion", "numpy", "scipy", "pandas", "geopandas", "shapely", "pyproj",
                "pyogrio", "rasterio", "pykrige", "folium", "ezdxf", "openpyxl", "matplotlib"):
        try:
            out[pkg] = version(pkg)
        except PackageNotFoundError:
            out[pkg] = "not installed"
    try:
        import rasterio

        out["gdal"] = rasterio.__gdal_version__
    except ImportError:  # pragma: no cover
        pass
    return out


def _json_default(o: Any) -> Any:
    if isinstance(o, np.integer):
        return int(o)
    if isinstance(o, np.floating):
        return None if not np.isfinite(o) else float(o)
    if isinstance(o, np.ndarray):
        return o.tolist()
    if isinstance(o, Path):
        return str(o)
    return str(o)


def manifest(result: RunResult, started: float) -> dict[str, Any]:
    """The run manifest (run.json)."""
    cfg = result.site.config
    flags = result.flags
    summary = (qa.summarize(flags).to_dict("records") if len(flags) else [])
    sched = result.schedule.to_dict("records") if len(result.schedule) else []
    return {
        "geo_corrosion_run": 1,
        "site": {"name": cfg.name, "owner": cfg.owner, "crs": cfg.crs.to_string(),
                 "crs_unit": cfg.crs_unit, "report_units": cfg.units, "site_file": cfg.path.name},
        "created_utc": datetime.now(timezone.utc).isoformat(timespec="seconds"),
        "elapsed_s": round(time.perf_counter() - started, 2),
        "inputs": _inputs(cfg),
        "parameters": asdict(cfg.run),
        "versions": _versions(),
        "surveys": [{"id": s.id, "level": s.config.level, "kind": s.kind.name,
                     "file": s.config.path.name, "readings": len(s.frame),
                     "unit_in": s.config.unit, "unit": s.kind.canonical_unit,
                     "corrections": list(s.corrections)} for s in result.site.surveys],
        "qa": {"findings": len(flags), "summary": summary,
               "runnable": bool(qa.runnable(flags)) if len(flags) else True},
        "levels": {lid: {"name": lr.level.config.name,
                         "georeference": lr.level.grid.to_dict(),
                         "deck_area_m2": lr.level.deck.area * LENGTH_TO_M[lr.level.unit] ** 2,
                         "kinds": {k: v for k, v in lr.stats.items()
                                   if k not in ("condition", "planning")},
                         "condition": lr.stats.get("condition"),
                         "planning": lr.stats.get("planning"),
                         "zones": [] if lr.zones is None else [
                             {k: v for k, v in z.items() if k != "geometry"}
                             for z in lr.zones.to_dict("records")],
                         "repairs": 0 if lr.repairs is None else len(lr.repairs)}
                   for lid, lr in result.levels.items()},
        "schedule": sched,
        "warnings": list(result.warnings),
        "files": sorted(result.files),
        "cautions": list(CAUTIONS),
    }


def write_outputs(result: RunResult, out_dir: Path, *, exporters: tuple[str, ...] = DEFAULT_EXPORTERS,
                  progress: Progress | None = None, started: float | None = None) -> None:
    """Run the exporters into ``out_dir`` (an empty folder) and write run.json last."""
    from geo_corrosion.plugins import EXPORTERS

    say = progress or (lambda _m: None)
    t0 = started or time.perf_counter()
    for name in exporters:
        exp = EXPORTERS.get(name)
        say(f"writing {name}")
        inst = exp() if isinstance(exp, type) else exp
        for p in inst.export(result, out_dir):
            result.files.append(str(Path(p).relative_to(out_dir)))
    result.manifest = manifest(result, t0)
    text = json.dumps(result.manifest, indent=2, default=_json_default)
    atomic_write(out_dir / MANIFEST_NAME, lambda tmp: tmp.write_text(text, encoding="utf-8"),
                 what="run manifest")


def run(
    site: str | Path | SiteConfig,
    out_dir: str | Path,
    *,
    overwrite: bool = False,
    exporters: tuple[str, ...] = DEFAULT_EXPORTERS,
    progress: Progress | None = None,
) -> RunResult:
    """Run the whole job on a site and write the output folder.

    Parameters
    ----------
    site : str, Path or SiteConfig
        Site file or folder.
    out_dir : str or Path
        Output folder; must not exist unless ``overwrite``.
    overwrite : bool
        Replace an existing output folder (only once the new one is complete).
    exporters : tuple of str
        Exporter names from the registry.
    progress : callable, optional
        Receives a line of text at each step.

    Raises
    ------
    GeoCorrosionError
        Any bad input; nothing is written then.
    """
    started = time.perf_counter()
    out = Path(out_dir).resolve()
    if out.exists() and not overwrite:
        raise ExportError(f"{out} already exists; choose another --out or pass --overwrite")
    cfg = site if isinstance(site, SiteConfig) else read_site(site)
    check_parameters(cfg)
    if out == cfg.root or cfg.root.is_relative_to(out):
        raise ExportError(f"{out}: the output folder cannot be the site folder or hold it")
    # our warnings (fallback variograms, averaged repeats, repaired outlines) are
    # collected into run.json and shown as progress, never lost and never fatal
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", GeoCorrosionWarning)
        s = open_site(cfg, progress=progress)
        flags = check_site(s)
        if len(flags) and not qa.runnable(flags):
            errs = flags[flags["severity"] == "error"]
            lines = "\n".join(f"  - {r.where or r.survey_id}: {r.message}"
                              for r in errs.itertuples())
            raise QAError(f"the site cannot be run; QA found {len(errs)} error(s):\n{lines}")
        result = process(s, flags, progress=progress)
    notes = sorted({f"{w.category.__name__}: {w.message}" for w in caught
                    if issubclass(w.category, GeoCorrosionWarning)})
    for other in caught:
        if not issubclass(other.category, GeoCorrosionWarning):
            warnings.warn_explicit(other.message, other.category, other.filename, other.lineno)
    result.warnings.extend(notes)
    if progress:
        for n in notes:
            progress(f"note: {n}")
    out.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.partial-", dir=out.parent))
    before = len(result.warnings)
    try:
        write_outputs(result, tmp, exporters=exporters, progress=progress, started=started)
        if out.exists():
            old = out.with_name(f".{out.name}.old-{os.getpid()}")
            os.replace(out, old)
            os.replace(tmp, out)
            shutil.rmtree(old, ignore_errors=True)
        else:
            os.replace(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    if progress:  # notes of the exporters (e.g. a PDF that could not be made)
        for n in result.warnings[before:]:
            progress(f"note: {n}")
    return result

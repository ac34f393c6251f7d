"""The run manifest, ``run.json``: written at the end of a run and read back by the rebuilds.

It holds the inputs with checksums, every parameter, package versions, per-level
statistics, class areas, variograms, cross-validation, zones and the schedule.
:func:`manifest` builds it from a :class:`~geo_corrosion.model.results.RunResult`;
:func:`read_run` reads it from an output folder with messages that name the file.
"""

from __future__ import annotations

import hashlib
import json
import platform
import time
from datetime import datetime, timezone
from importlib.metadata import PackageNotFoundError, version
from pathlib import Path
from typing import Any

import numpy as np

from geo_corrosion import qa
from geo_corrosion.cautions import CAUTIONS
from geo_corrosion.config import SiteConfig
from geo_corrosion.errors import ExportError
from geo_corrosion.model.results import RunResult
from geo_corrosion.units import LENGTH_TO_M

__all__ = ["MANIFEST_NAME", "manifest", "read_run", "result_manifest", "file_sha256",
           "input_files", "package_versions", "json_default"]

MANIFEST_NAME = "run.json"


def file_sha256(path: Path) -> str:
    """SHA-256 of a file, hex."""
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for chunk in iter(lambda: f.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def input_files(cfg: SiteConfig) -> list[dict[str, Any]]:
    """Every input file of a site with its path (relative to the site folder), SHA-256 and size."""
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


def package_versions() -> dict[str, str]:
    out = {"python": platform.python_version()}
    for pkg in ("geo_corrosion", "numpy", "scipy", "pandas", "geopandas", "shapely", "pyproj",
                "pyogrio", "rasterio", "numba", "folium", "ezdxf", "openpyxl", "matplotlib"):
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


def json_default(o: Any) -> Any:
    """Turn numpy scalars and arrays and paths into JSON types (``json.dumps(default=...)``)."""
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
        "inputs": input_files(cfg),
        "parameters": cfg.parameters(),
        "versions": package_versions(),
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


def read_run(run_dir: str | Path) -> dict[str, Any]:
    """Read ``run.json`` of an output folder.

    Raises
    ------
    ExportError
        If the folder holds no readable ``run.json``.
    """
    man = Path(run_dir) / "run.json"
    if not man.is_file():
        raise ExportError(f"{run_dir} holds no run.json; is it the output folder of "
                          "`geo-corrosion run`?")
    try:
        data = json.loads(man.read_text(encoding="utf-8"))
    except (OSError, ValueError) as err:
        raise ExportError(f"{man}: cannot be read ({err}); re-run `geo-corrosion run`") from err
    if not isinstance(data, dict) or "levels" not in data:
        raise ExportError(f"{man}: not the manifest of a run (no 'levels'); re-run "
                          "`geo-corrosion run`")
    return data


def result_manifest(result: RunResult) -> dict[str, Any]:
    """Return the manifest of an in-memory run as ``run.json`` will hold it (JSON types only)."""
    return json.loads(json.dumps(manifest(result, time.perf_counter()), default=json_default))

"""The whole run: the stages chained, then the exporters, written atomically.

:func:`check` reads, opens and checks a site (what ``geo-corrosion check`` shows);
:func:`process` chains the computing stages of :mod:`geo_corrosion.stages` level by level;
:func:`run` does both, runs the exporters and writes the output folder atomically: every
file is written into a temporary folder beside the target, which replaces the target only
when everything succeeded.  A previous output folder is never overwritten unless
``overwrite=True``.  A run holds a lock on its output folder from start to end (a second
run into it is refused at once) and first repairs what an interrupted run left there
(:mod:`geo_corrosion._io`): after any interruption, the previous output or the new one is
in place.  This module computes nothing itself.
"""

from __future__ import annotations

import dataclasses
import json
import logging
import shutil
import tempfile
import time
import warnings
from collections.abc import Callable, Sequence
from pathlib import Path

import pandas as pd

from geo_corrosion._io import atomic_write, output_lock, recover_output, swap_in
from geo_corrosion.config import SiteConfig
from geo_corrosion.errors import ExportError, GeoCorrosionWarning
from geo_corrosion.exporters import EXPORTERS
from geo_corrosion.measurements import Role
from geo_corrosion.model.manifest import MANIFEST_NAME, json_default, manifest
from geo_corrosion.model.results import LevelResult, RunResult
from geo_corrosion.model.site import Site
from geo_corrosion.model.surface import with_role
from geo_corrosion.stages.assess_condition import assess_condition
from geo_corrosion.stages.check_site import (
    check_parameters,
    check_site,
    check_work,
    refuse_unrunnable,
)
from geo_corrosion.stages.map_surfaces import map_level
from geo_corrosion.stages.open_site import open_site
from geo_corrosion.stages.plan_repairs import (
    low_cover_mask,
    pay_area_frame,
    plan_level,
    planning_params,
    schedule_quantities,
)
from geo_corrosion.stages.read_site import read_site
from geo_corrosion.units import report_units

__all__ = ["check", "run", "process", "write_outputs", "default_exporters"]

log = logging.getLogger(__name__)
Progress = Callable[[str], None]


def default_exporters() -> list[str]:
    """Names of the exporters ``run`` uses unasked: ``default`` true, ``run_last`` ones last."""
    found = [(name, e) for name, e in EXPORTERS.load().items()
             if getattr(e, "default", False)]
    return [name for name, e in sorted(found, key=lambda ne: bool(getattr(ne[1], "run_last",
                                                                          False)))]


def check(site: str | Path | SiteConfig, *, progress: Progress | None = None
          ) -> tuple[Site, pd.DataFrame]:
    """Read, open and check a site: the opened site and its QA flag table.

    Raises
    ------
    GeoCorrosionError
        A site file, parameter or input file that cannot be used (named in the message).
    """
    cfg = site if isinstance(site, SiteConfig) else read_site(site)
    check_parameters(cfg)
    opened = open_site(cfg, progress=progress)
    check_work(opened)
    return opened, check_site(opened)


def process(site: Site, flags: pd.DataFrame, *, progress: Progress | None = None) -> RunResult:
    """Chain the computing stages over every level of an opened, checked site.

    Per level: surfaces (:func:`~geo_corrosion.stages.map_surfaces.map_level`), condition
    (:func:`~geo_corrosion.stages.assess_condition.assess_condition`), repairs and zones
    (:func:`~geo_corrosion.stages.plan_repairs.plan_level`); then the bid schedule of all
    levels.  The site given is not changed: the returned result holds a site whose surveys
    with life estimates (their kind's ``life_estimates`` hook) carry those columns.
    """
    say = progress or (lambda _m: None)
    params = site.config.run
    units = report_units(site.config.units)
    planning = planning_params(site.config)
    levels: dict[str, LevelResult] = {}
    frames: dict[str, pd.DataFrame] = {}
    for lid, lv in site.levels.items():
        mapped = map_level(lv, site.surveys_of(lid), flags, params, units=units, progress=say)
        low_cover = low_cover_mask(lv, with_role(mapped.surfaces, Role.COVER))
        condition = None
        if mapped.surfaces:
            say(f"level {lid}: condition assessment")
            condition, life_frames = assess_condition(
                lv, mapped, site.surveys_of(lid),
                rules=site.config.combined_rules, bar_diameter_mm=planning.layout.bar_diameter_mm,
                low_cover=low_cover, interval_method=params.interval_method,
                realisations=params.realisations, n_neighbors=params.n_neighbors,
                kinds=params.kinds)
            frames.update(life_frames)
        say(f"level {lid}: laying out repairs and zones")
        repairs, zones, notes = plan_level(lv, mapped.surfaces, planning, low_cover=low_cover)
        stats = dict(mapped.kinds)
        if condition is not None:
            stats["condition"] = condition.stats
        stats["planning"] = notes
        levels[lid] = LevelResult(lv, surfaces=mapped.surfaces, repairs=repairs, zones=zones,
                                  stats=stats, skipped=mapped.skipped, condition=condition,
                                  readings=mapped.readings, points=mapped.points,
                                  pay_areas=pay_area_frame(lv, zones, planning))
    surveys = tuple(dataclasses.replace(s, frame=frames[s.id]) if s.id in frames else s
                    for s in site.surveys)
    schedule = schedule_quantities(levels.values(), units=units, contingency=params.contingency,
                                   anode_spacing_mm=params.anode_spacing_mm,
                                   prices=site.prices)
    return RunResult(dataclasses.replace(site, surveys=surveys), flags, levels, schedule)


def write_outputs(result: RunResult, out_dir: Path, *, exporters: Sequence[str] | None = None,
                  progress: Progress | None = None, started: float | None = None) -> None:
    """Run the exporters into ``out_dir`` (an empty folder) and write run.json last."""
    say = progress or (lambda _m: None)
    t0 = started or time.perf_counter()
    for name in default_exporters() if exporters is None else exporters:
        exp = EXPORTERS.get(name)
        say(f"writing {name}")
        inst = exp() if isinstance(exp, type) else exp
        for p in inst.export(result, out_dir):
            result.files.append(str(Path(p).relative_to(out_dir)))
    result.manifest = manifest(result, t0).to_json()
    text = json.dumps(result.manifest, indent=2, default=json_default)
    atomic_write(out_dir / MANIFEST_NAME, lambda tmp: tmp.write_text(text, encoding="utf-8"),
                 what="run manifest")


def run(
    site: str | Path | SiteConfig,
    out_dir: str | Path,
    *,
    overwrite: bool = False,
    exporters: Sequence[str] | None = None,
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
    exporters : sequence of str, optional
        Exporter names from the registry; by default every exporter whose ``default`` is true
        (:func:`default_exporters`).
    progress : callable, optional
        Receives a line of text at each step.

    Raises
    ------
    GeoCorrosionError
        Any bad input; nothing is written then.
    ExportError
        If another run is writing into ``out_dir`` now (see :func:`geo_corrosion._io.output_lock`).

    Notes
    -----
    Under the lock, the run first repairs what an interrupted run into ``out_dir`` left
    (:func:`geo_corrosion._io.recover_output`): a previous output left as ``.<out>.old-*`` by a
    run killed between its two renames is moved back if ``out_dir`` is missing, and unfinished
    ``.<out>.partial-*`` folders are removed; each action is shown as a progress note.
    """
    started = time.perf_counter()
    out = Path(out_dir).resolve()
    with output_lock(out):
        return _run_locked(site, out, overwrite=overwrite, exporters=exporters,
                           progress=progress, started=started)


def _run_locked(site: str | Path | SiteConfig, out: Path, *, overwrite: bool,
                exporters: Sequence[str] | None, progress: Progress | None,
                started: float) -> RunResult:
    """Do :func:`run` while holding the lock on ``out``: repair, compute, write, swap in."""
    for n in recover_output(out):  # what an interrupted run into ``out`` left behind
        if progress:
            progress(f"note: {n}")
    if out.exists() and not overwrite:
        raise ExportError(f"{out} already exists; choose another --out or pass --overwrite")
    cfg = site if isinstance(site, SiteConfig) else read_site(site)
    if out == cfg.root or cfg.root.is_relative_to(out):
        raise ExportError(f"{out}: the output folder cannot be the site folder or hold it")
    # our warnings (fallback variograms, averaged repeats, repaired outlines) are
    # collected into run.json and shown as progress, never lost and never fatal
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", GeoCorrosionWarning)
        s, flags = check(cfg, progress=progress)  # the same checks as `geo-corrosion check`
        refuse_unrunnable(flags)
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
        swap_in(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    if progress:  # notes of the exporters (e.g. a PDF that could not be made)
        for n in result.warnings[before:]:
            progress(f"note: {n}")
    return result

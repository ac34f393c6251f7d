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
import os
import shutil
import tempfile
import time
import warnings
from collections.abc import Callable, Mapping, Sequence
from pathlib import Path

import pandas as pd

from geo_corrosion._io import atomic_write, output_lock, recover_output, swap_in
from geo_corrosion._timing import Timings, timed
from geo_corrosion.config import SiteConfig
from geo_corrosion.errors import ExportError, GeoCorrosionWarning
from geo_corrosion.exporters import EXPORTERS
from geo_corrosion.exporters.built_from import DOCUMENTS, GPKG_NAME, repair_checksums
from geo_corrosion.measurements import Role
from geo_corrosion.model.manifest import (
    MANIFEST_NAME,
    input_files,
    json_default,
    manifest,
    read_run,
)
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
from geo_corrosion.stages.reprice import (
    LevelEdits,
    precheck_edits,
    read_dxf_edits,
    read_gpkg_edits,
    repair_editor,
)
from geo_corrosion.units import report_units

__all__ = ["check", "run", "process", "write_outputs", "default_exporters", "reprice"]

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


def process(site: Site, flags: pd.DataFrame, *, progress: Progress | None = None,
            edits: Mapping[str, LevelEdits] | None = None) -> RunResult:
    """Chain the computing stages over every level of an opened, checked site.

    ``edits`` (re-pricing, :func:`reprice`): repair outlines edited by hand, by level, put in
    place of the layout's before zoning; the edited repairs are listed in ``result.edits``.

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
    records: list[dict[str, object]] = []
    clock: Timings = {}
    for lid, lv in site.levels.items():
        with timed(clock, "stages", "surfaces"):
            mapped = map_level(lv, site.surveys_of(lid), flags, params, units=units, progress=say)
        low_cover = low_cover_mask(lv, with_role(mapped.surfaces, Role.COVER))
        condition = None
        if mapped.surfaces:
            say(f"level {lid}: condition assessment")
            with timed(clock, "stages", "condition"):
                condition, life_frames = assess_condition(
                    lv, mapped, site.surveys_of(lid), rules=site.config.combined_rules,
                    bar_diameter_mm=planning.layout.bar_diameter_mm,
                    low_cover=low_cover, interval_method=params.interval_method,
                    realisations=params.realisations, n_neighbors=params.n_neighbors,
                    kinds=params.kinds)
            frames.update(life_frames)
        say(f"level {lid}: laying out repairs and zones")
        editor = (repair_editor(lv, planning, edits[lid], records)
                  if edits is not None and lid in edits else None)
        with timed(clock, "stages", "repairs"):
            repairs, zones, notes = plan_level(lv, mapped.surfaces, planning,
                                               low_cover=low_cover, edit=editor)
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
    with timed(clock, "stages", "quantities"):
        schedule = schedule_quantities(levels.values(), units=units,
                                       contingency=params.contingency,
                                       anode_spacing_mm=params.anode_spacing_mm,
                                       prices=site.prices)
    return RunResult(dataclasses.replace(site, surveys=surveys), flags, levels, schedule,
                     edits=list(records), timings=clock)


def write_outputs(result: RunResult, out_dir: Path, *, exporters: Sequence[str] | None = None,
                  progress: Progress | None = None, started: float | None = None) -> None:
    """Run the exporters into ``out_dir`` (an empty folder) and write run.json last."""
    say = progress or (lambda _m: None)
    t0 = started or time.perf_counter()
    for name in default_exporters() if exporters is None else exporters:
        exp = EXPORTERS.get(name)
        say(f"writing {name}")
        inst = exp() if isinstance(exp, type) else exp
        with timed(result.timings, "exporters", name):
            for p in inst.export(result, out_dir):
                result.files.append(str(Path(p).relative_to(out_dir)))
    if (out_dir / GPKG_NAME).is_file():  # what the documents were built from (#13)
        sums = repair_checksums(out_dir / GPKG_NAME)
        result.built_from = {d: dict(sums) for d in DOCUMENTS} if sums else {}
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
        t_check = time.perf_counter()
        s, flags = check(cfg, progress=progress)  # the same checks as `geo-corrosion check`
        refuse_unrunnable(flags)
        t_check = time.perf_counter() - t_check
        result = process(s, flags, progress=progress)
        result.timings.setdefault("stages", {})["check"] = t_check
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


def reprice(run_dir: str | Path, *, source: str | Path | None = None,
            site: str | Path | None = None, progress: Progress | None = None) -> RunResult:
    """Re-price a run from repair outlines edited in its GeoPackage, and rebuild it whole.

    The run's ``survey.gpkg`` ``<level>_repairs`` layers (edited in a GIS) are read back
    into each level's grid (:func:`geo_corrosion.stages.reprice.read_gpkg_edits`), the site
    is run again with those outlines in place of the layout's (checked by
    :func:`geo_corrosion.repair.edits.check_edits`), and every document (schedule, sheets,
    report, web map, ``run.json`` with ``edits`` and ``built_from``) is written into a new
    folder swapped in for the run folder under its lock: nothing is half-written.

    Parameters
    ----------
    run_dir : str or Path
        The output folder of ``geo-corrosion run``.
    source : str or Path, optional
        Where the edits are: a GeoPackage (default the run's ``survey.gpkg``) or a level's
        drawing sheet ``<level>_repairs.dxf`` (its ``GC-REPAIR-*`` outlines; the other levels
        then from the run's GeoPackage).  A relative path is taken in the run folder first.
    site : str or Path, optional
        The site file or folder; by default the folder recorded in ``run.json``.

    Raises
    ------
    GeoCorrosionError
        A bad edit (naming the file, the layer and the feature), a site whose inputs
        changed since the run, or a run folder that cannot be read; nothing is written.
    """
    started = time.perf_counter()
    out = Path(run_dir).resolve()
    with output_lock(out):
        for n in recover_output(out):
            if progress:
                progress(f"note: {n}")
        man = read_run(out)
        where = site if site is not None else man.site.folder
        if where is None:
            raise ExportError(f"{out / MANIFEST_NAME}: records no site folder; give it with "
                              "--site")
        if site is None:  # as a run from here names it, so the files' texts stay the same
            rel = os.path.relpath(where)
            where = where if rel.startswith("..") else rel
        cfg = read_site(where)
        recorded = {i.path: i.sha256 for i in man.inputs}
        now = {d["path"]: d["sha256"] for d in input_files(cfg)}
        moved = sorted(p for p in set(recorded) | set(now) if recorded.get(p) != now.get(p))
        if moved:
            raise ExportError(
                f"{cfg.path}: the site's inputs changed since the run in {out} "
                f"({', '.join(moved)}); re-pricing would mix them. Run `geo-corrosion run` "
                "again (edits are then lost) or restore the inputs")
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", GeoCorrosionWarning)
            s, flags = check(cfg, progress=progress)
            refuse_unrunnable(flags)
            src = None if source is None else Path(source)
            if src is not None and not src.is_absolute() and (out / src).exists():
                src = out / src
            if src is not None and not src.is_file():
                raise ExportError(f"{src}: no such file; give the edited GeoPackage or a "
                                  "level's drawings/<level>_repairs.dxf")
            is_dxf = src is not None and src.suffix.lower() == ".dxf"
            gpkg = src if src is not None and not is_dxf else out / GPKG_NAME
            edits = read_gpkg_edits(gpkg, s)
            if is_dxf and src is not None:
                edits.update(read_dxf_edits(src, s))
            precheck_edits(s, edits, {lid: [r.repair_id for r in lr.repair_list]
                                      for lid, lr in man.levels.items()})
            result = process(s, flags, progress=progress, edits=edits)
        notes = sorted({f"{w.category.__name__}: {w.message}" for w in caught
                        if issubclass(w.category, GeoCorrosionWarning)})
        result.warnings.extend(notes)
        if progress:
            for n in notes:
                progress(f"note: {n}")
        tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.partial-", dir=out.parent))
        try:
            write_outputs(result, tmp, progress=progress, started=started)
            swap_in(tmp, out)
        except BaseException:
            shutil.rmtree(tmp, ignore_errors=True)
            raise
        return result

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
import multiprocessing
import os
import pickle
import shutil
import sys
import tempfile
import time
import warnings
from collections.abc import Callable, Mapping, Sequence
from concurrent.futures import FIRST_COMPLETED, Future, ProcessPoolExecutor, wait
from pathlib import Path
from typing import Any

import pandas as pd

from geo_corrosion._io import atomic_write, held_lock_fds, output_lock, recover_output, swap_in
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
from geo_corrosion.surfaces import _threads  # the kriging thread count, without numba
from geo_corrosion.units import report_units

__all__ = ["check", "run", "process", "write_outputs", "default_exporters", "reprice",
           "default_jobs"]

log = logging.getLogger(__name__)
Progress = Callable[[str], None]

#: What forked workers read (set just before a pool is made; fork hands it over unpickled).
_SHARED: dict[str, Any] = {}


def default_jobs() -> int:
    """Return the default ``--jobs``: every core this process may run on."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # pragma: no cover - platforms without sched_getaffinity
        return max(1, os.cpu_count() or 1)


def _jobs(jobs: int | None) -> int:
    """Return the number of processes to use: 1 inside a daemon process (no children)."""
    n = default_jobs() if jobs is None else int(jobs)
    if n < 1:
        raise ExportError(f"--jobs must be 1 or more, got {jobs}")
    if n > 1 and multiprocessing.current_process().daemon:  # e.g. a pool's own worker
        return 1
    return n


def _numba_started() -> bool:
    """Whether this process already started numba's threading layer (unsafe to use after fork)."""
    try:
        import numba

        numba.threading_layer()  # type: ignore[attr-defined]
    except (ImportError, ValueError):  # not imported / "threading layer is not initialized"
        return False
    return True


def _worker_threads(jobs: int, workers: int) -> int:
    """Return the kriging threads of each of ``workers`` forked workers sharing ``jobs``.

    One when this process already started numba's threading layer: GNU OpenMP aborts a
    forked child that uses it ("fork() called from a process already using GNU OpenMP").
    """
    return 1 if _numba_started() else max(1, jobs // workers)


def _pool(workers: int) -> ProcessPoolExecutor:
    """Return a pool of forked processes (they inherit the imports and :data:`_SHARED`)."""
    return ProcessPoolExecutor(max_workers=workers,
                               mp_context=multiprocessing.get_context("fork"),
                               initializer=_worker_init, initargs=(held_lock_fds(),))


def _worker_init(lock_fds: frozenset[int]) -> None:
    """Set up a forked worker: drop the run's lock, end with the run if it is killed.

    The output lock (``flock``) belongs to every copy of its descriptor: a worker closes its
    copy, so a run killed with SIGKILL frees the folder at once.  On Linux the worker also
    asks to be killed when the run's process dies (``PR_SET_PDEATHSIG``), so that no
    orphan goes on writing.
    """
    for fd in lock_fds:
        try:
            os.close(fd)
        except OSError:
            pass
    if sys.platform.startswith("linux"):
        try:
            import ctypes
            import signal

            ctypes.CDLL(None, use_errno=True).prctl(1, signal.SIGKILL)  # PR_SET_PDEATHSIG
        except (OSError, AttributeError):  # pragma: no cover - no prctl: orphans end later
            pass


def _caught(caught: list[warnings.WarningMessage]) -> list[tuple[Any, ...]]:
    """Return recorded warnings in a picklable form, to be shown again by :func:`_rewarn`."""
    return [(w.message, w.category, w.filename, w.lineno) for w in caught]


def _rewarn(found: Sequence[tuple[Any, ...]]) -> None:
    """Issue again in this process the warnings a worker recorded."""
    for message, category, filename, lineno in found:
        warnings.warn_explicit(message, category, filename, lineno)


def _picklable(err: BaseException) -> BaseException:
    """Return ``err`` if it survives pickling, else a RuntimeError with its text."""
    try:
        pickle.loads(pickle.dumps(err))
    except Exception:  # noqa: BLE001 - any pickling failure
        return RuntimeError(f"{type(err).__name__}: {err}")
    return err


def _in_worker(fn: Callable[..., Any], threads: int, *args: Any) -> tuple[Any, ...]:
    """Run ``fn(say, *args)`` in a worker: (outcome or error, progress lines, warnings).

    The progress lines and warnings are shown by the parent in the serial order; an
    error is handed back as a value, so the parent shows it as the serial path would.
    """
    _threads.set_threads(threads)
    lines: list[str] = []
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", GeoCorrosionWarning)
        try:
            out: Any = fn(lines.append, *args)
            err: BaseException | None = None
        except Exception as e:  # noqa: BLE001 - re-raised by the parent
            out, err = None, _picklable(e)
    return out, err, lines, _caught(caught)


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
            edits: Mapping[str, LevelEdits] | None = None, jobs: int | None = None
            ) -> RunResult:
    """Chain the computing stages over every level of an opened, checked site.

    ``edits`` (re-pricing, :func:`reprice`): repair outlines edited by hand, by level, put in
    place of the layout's before zoning; the edited repairs are listed in ``result.edits``.

    Per level: surfaces (:func:`~geo_corrosion.stages.map_surfaces.map_level`), condition
    (:func:`~geo_corrosion.stages.assess_condition.assess_condition`), repairs and zones
    (:func:`~geo_corrosion.stages.plan_repairs.plan_level`); then the bid schedule of all
    levels.  The site given is not changed: the returned result holds a site whose surveys
    with life estimates (their kind's ``life_estimates`` hook) carry those columns.

    ``jobs`` (default: every core, :func:`default_jobs`): with more than one and several
    levels, the levels are computed side by side in forked processes (each level depends
    only on its own readings and the site's settings), each kriging on ``jobs // levels``
    threads; their progress lines and warnings are shown in level order, as with one job.
    The schedule of all levels is made after them, in this process.  One job: one level
    after another, the kriging on one thread.  The results are the same to the last bit.
    """
    say = progress or (lambda _m: None)
    params = site.config.run
    units = report_units(site.config.units)
    n = _jobs(jobs)
    levels: dict[str, LevelResult] = {}
    frames: dict[str, pd.DataFrame] = {}
    records: list[dict[str, object]] = []
    clock: Timings = {}  # each level's stages, added up (side by side: their sum)
    lids = list(site.levels)
    if n > 1 and len(lids) > 1:
        workers = min(n, len(lids))
        threads = _worker_threads(n, workers)
        _SHARED["level"] = (site, flags, edits)
        try:
            with _pool(workers) as pool:
                futs = [pool.submit(_in_worker, _level_in_worker, threads, lid) for lid in lids]
                try:
                    for lid, fut in zip(lids, futs, strict=True):
                        out, err, lines, found = fut.result()
                        for line in lines:
                            say(line)
                        _rewarn(found)
                        if err is not None:
                            raise err
                        levels[lid], life_frames, recs, level_clock = out
                        frames.update(life_frames)
                        records.extend(recs)
                        _add_times(clock, level_clock)
                except BaseException:
                    for f in futs:
                        f.cancel()
                    raise
        finally:
            _SHARED.pop("level", None)
    else:
        before = _threads.threads()
        _threads.set_threads(n)
        try:
            for lid in lids:
                levels[lid], life_frames, recs, level_clock = _process_level(
                    say, site, flags, lid, edits)
                frames.update(life_frames)
                records.extend(recs)
                _add_times(clock, level_clock)
        finally:
            _threads.set_threads(before)
    surveys = tuple(dataclasses.replace(s, frame=frames[s.id]) if s.id in frames else s
                    for s in site.surveys)
    with timed(clock, "stages", "quantities"):
        schedule = schedule_quantities(levels.values(), units=units,
                                       contingency=params.contingency,
                                       anode_spacing_mm=params.anode_spacing_mm,
                                       prices=site.prices)
    return RunResult(dataclasses.replace(site, surveys=surveys), flags, levels, schedule,
                     edits=list(records), timings=clock)


def _level_in_worker(say: Progress, lid: str) -> tuple[Any, ...]:
    """Compute level ``lid`` of the site handed over in :data:`_SHARED` (a forked worker)."""
    site, flags, edits = _SHARED["level"]
    return _process_level(say, site, flags, lid, edits)


def _process_level(say: Progress, site: Site, flags: pd.DataFrame, lid: str,
                   edits: Mapping[str, LevelEdits] | None
                   ) -> tuple[LevelResult, dict[str, pd.DataFrame], list[dict[str, object]],
                              Timings]:
    """Compute one level: result, life-estimate frames, edited repairs, times of its stages."""
    params = site.config.run
    units = report_units(site.config.units)
    planning = planning_params(site.config)
    lv = site.levels[lid]
    records: list[dict[str, object]] = []
    frames: dict[str, pd.DataFrame] = {}
    clock: Timings = {}
    with timed(clock, "stages", "surfaces"):
        mapped = map_level(lv, site.surveys_of(lid), flags, params, units=units, progress=say)
    low_cover = low_cover_mask(lv, with_role(mapped.surfaces, Role.COVER))
    condition = None
    if mapped.surfaces:
        say(f"level {lid}: condition assessment")
        with timed(clock, "stages", "condition"):
            condition, life_frames = assess_condition(
                lv, mapped, site.surveys_of(lid),
                rules=site.config.combined_rules,
                bar_diameter_mm=planning.layout.bar_diameter_mm,
                low_cover=low_cover, interval_method=params.interval_method,
                realisations=params.realisations, n_neighbors=params.n_neighbors,
                kinds=params.kinds)
        frames.update(life_frames)
    say(f"level {lid}: laying out repairs and zones")
    editor = (repair_editor(lv, planning, edits[lid], records)
              if edits is not None and lid in edits else None)
    with timed(clock, "stages", "repairs"):
        repairs, zones, notes = plan_level(lv, mapped.surfaces, planning, low_cover=low_cover,
                                           edit=editor)
    stats = dict(mapped.kinds)
    if condition is not None:
        stats["condition"] = condition.stats
    stats["planning"] = notes
    result = LevelResult(lv, surfaces=mapped.surfaces, repairs=repairs, zones=zones,
                         stats=stats, skipped=mapped.skipped, condition=condition,
                         readings=mapped.readings, points=mapped.points,
                         pay_areas=pay_area_frame(lv, zones, planning))
    return result, frames, records, clock


def _add_times(total: Timings, part: Timings) -> None:
    """Add the times of ``part`` to ``total`` (a stage of every level adds up)."""
    for group, names in part.items():
        g = total.setdefault(group, {})
        for name, secs in names.items():
            g[name] = g.get(name, 0.0) + secs


def write_outputs(result: RunResult, out_dir: Path, *, exporters: Sequence[str] | None = None,
                  progress: Progress | None = None, started: float | None = None,
                  jobs: int | None = None) -> None:
    """Run the exporters into ``out_dir`` (an empty folder) and write run.json last.

    ``jobs`` (default: every core): with more than one, exporters that do not depend on
    each other run side by side in forked processes; an exporter waits for those named in
    its ``needs`` (:class:`~geo_corrosion.exporters.base.Exporter`; a ``run_last`` one
    without ``needs`` waits for every other).  Files, notes and the first error (in the
    exporters' order) reach the caller as with one job.
    """
    say = progress or (lambda _m: None)
    t0 = started or time.perf_counter()
    names = list(default_exporters() if exporters is None else exporters)
    n = _jobs(jobs)
    if n > 1 and len(names) > 1:
        _export_parallel(result, out_dir, names, say, min(n, len(names)))
    else:
        for name in names:
            say(f"writing {name}")
            with timed(result.timings, "exporters", name):
                paths = _export_one(name, result, out_dir)
            for p in paths:
                result.files.append(str(Path(p).relative_to(out_dir)))
    if (out_dir / GPKG_NAME).is_file():  # what the documents were built from (#13)
        sums = repair_checksums(out_dir / GPKG_NAME)
        result.built_from = {d: dict(sums) for d in DOCUMENTS} if sums else {}
    result.manifest = manifest(result, t0).to_json()
    text = json.dumps(result.manifest, indent=2, default=json_default)
    atomic_write(out_dir / MANIFEST_NAME, lambda tmp: tmp.write_text(text, encoding="utf-8"),
                 what="run manifest")


def _export_one(name: str, result: RunResult, out_dir: Path) -> list[Path]:
    """Run exporter ``name`` into ``out_dir``; return the paths written."""
    exp = EXPORTERS.get(name)
    inst = exp() if isinstance(exp, type) else exp
    return list(inst.export(result, out_dir))


def exporter_needs(names: Sequence[str]) -> dict[str, set[str]]:
    """Return, for each exporter of ``names``, those of ``names`` it must wait for.

    An exporter's ``needs`` names them; a ``run_last`` exporter without ``needs`` (a
    plug-in written before ``needs`` existed) waits for every exporter that is not
    ``run_last``.  Names not among ``names`` are ignored.
    """
    out: dict[str, set[str]] = {}
    for name in names:
        exp = EXPORTERS.get(name)
        needs = getattr(exp, "needs", None)
        if needs is None and getattr(exp, "run_last", False):
            needs = [m for m in names if not getattr(EXPORTERS.get(m), "run_last", False)]
        out[name] = {m for m in (needs or ()) if m in names and m != name}
    return out


def _exporter_in_worker(say: Progress, name: str, out_dir: Path
                        ) -> tuple[list[Path], list[str], float]:
    """Run an exporter on the result in :data:`_SHARED` (a forked worker): paths, notes, s."""
    result: RunResult = _SHARED["result"]
    before = len(result.warnings)
    t0 = time.perf_counter()
    paths = _export_one(name, result, out_dir)
    return paths, result.warnings[before:], time.perf_counter() - t0


def _export_parallel(result: RunResult, out_dir: Path, names: list[str], say: Progress,
                     workers: int) -> None:
    """Run the exporters side by side, each once those it needs are done (see write_outputs)."""
    needs = exporter_needs(names)
    done: dict[str, tuple[Any, ...]] = {}
    running: dict[Future[tuple[Any, ...]], str] = {}
    failed = False
    _SHARED["result"] = result
    try:
        with _pool(workers) as pool:
            while len(done) < len(names):
                if not failed:
                    for name in names:
                        if (name not in done and name not in running.values()
                                and needs[name] <= set(done)):
                            say(f"writing {name}")
                            running[pool.submit(_in_worker, _exporter_in_worker, 1, name,
                                                out_dir)] = name
                if not running:
                    break
                finished, _ = wait(running, return_when=FIRST_COMPLETED)
                for fut in finished:
                    name = running.pop(fut)
                    done[name] = fut.result()
                    failed = failed or done[name][1] is not None
    finally:
        _SHARED.pop("result", None)
    if not failed and len(done) < len(names):
        raise ExportError("exporters that wait for each other: " + ", ".join(
            f"{m} needs {', '.join(sorted(needs[m]))}" for m in names if m not in done))
    for name in names:  # in the exporters' order, as one after another
        if name not in done:
            continue
        out, err, lines, found = done[name]
        for line in lines:
            say(line)
        _rewarn(found)
        if err is not None:
            raise err
        paths, notes, secs = out
        _add_times(result.timings, {"exporters": {name: secs}})
        result.warnings.extend(notes)
        for p in paths:
            result.files.append(str(Path(p).relative_to(out_dir)))


def run(
    site: str | Path | SiteConfig,
    out_dir: str | Path,
    *,
    overwrite: bool = False,
    exporters: Sequence[str] | None = None,
    progress: Progress | None = None,
    jobs: int | None = None,
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
    jobs : int, optional
        Processes and threads to use (default every core, :func:`default_jobs`): levels,
        then exporters, side by side (:func:`process`, :func:`write_outputs`); 1 runs
        everything one after another.  The outputs are the same with any number.

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
                           progress=progress, started=started, jobs=jobs)


def _run_locked(site: str | Path | SiteConfig, out: Path, *, overwrite: bool,
                exporters: Sequence[str] | None, progress: Progress | None,
                started: float, jobs: int | None = None) -> RunResult:
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
        result = process(s, flags, progress=progress, jobs=jobs)
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
        write_outputs(result, tmp, exporters=exporters, progress=progress, started=started,
                      jobs=jobs)
        swap_in(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    if progress:  # notes of the exporters (e.g. a PDF that could not be made)
        for n in result.warnings[before:]:
            progress(f"note: {n}")
    return result


def reprice(run_dir: str | Path, *, source: str | Path | None = None,
            site: str | Path | None = None, progress: Progress | None = None,
            jobs: int | None = None) -> RunResult:
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
    jobs : int, optional
        Processes and threads to use, as in :func:`run`.

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
            result = process(s, flags, progress=progress, edits=edits, jobs=jobs)
        notes = sorted({f"{w.category.__name__}: {w.message}" for w in caught
                        if issubclass(w.category, GeoCorrosionWarning)})
        result.warnings.extend(notes)
        if progress:
            for n in notes:
                progress(f"note: {n}")
        tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.partial-", dir=out.parent))
        try:
            write_outputs(result, tmp, progress=progress, started=started, jobs=jobs)
            swap_in(tmp, out)
        except BaseException:
            shutil.rmtree(tmp, ignore_errors=True)
            raise
        return result

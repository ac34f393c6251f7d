"""A portfolio: many sites run as tasks on Dask distributed, then summarised together.

:func:`run_portfolio` finds the site files (:func:`find_sites`), gives each site an id of
its own (:func:`plan_sites`), runs :func:`geo_corrosion.pipeline.run` on each site as one
task (:func:`run_site_task`) into ``OUT/sites/<site-id>/``, on a local cluster of worker
processes (one thread each) or an existing cluster by its scheduler address, and writes the
portfolio summary (:mod:`geo_corrosion.exporters.portfolio`) once every site has finished.
One site's failure is recorded with its message and does not stop the others.  This module
computes nothing about a site itself: it chains and schedules.

Hook for other exporters (a database, say): :attr:`PortfolioResult.run_folders` lists the
run folders of the sites that completed, each an ordinary output folder of
``geo-corrosion run``; :func:`geo_corrosion.exporters.portfolio.run_folders` lists them
again from a finished portfolio folder.
"""

from __future__ import annotations

import csv
import os
import re
import time
import unicodedata
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

from geo_corrosion.errors import ExportError, GeoCorrosionError, SiteFileError

if TYPE_CHECKING:
    from geo_corrosion.config import SiteConfig

__all__ = ["SITES_DIR", "SITE_FILE", "PortfolioSite", "SiteOutcome", "PortfolioResult",
           "find_sites", "plan_sites", "site_slug", "run_site_task", "run_portfolio",
           "WORKER_ENV"]

#: Folder of the portfolio output holding one run folder per site.
SITES_DIR = "sites"
#: Name of the site file inside a site folder.
SITE_FILE = "site.toml"
#: Environment of each worker process: one thread for BLAS, OpenMP and numba, so that two
#: workers on two cores do not fight over them (common practice for process-based pools).
WORKER_ENV: dict[str, str] = {"OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1",
                              "MKL_NUM_THREADS": "1", "NUMBA_NUM_THREADS": "1"}

Progress = Callable[[str], None]


@dataclass(frozen=True)
class PortfolioSite:
    """One site of a portfolio.

    Attributes
    ----------
    id : str
        Unique, file-system-safe id (the run folder's name under ``sites/``).
    site_file : Path
        The site file (``site.toml``).
    name : str
        The site's name from its site file (the folder's name when it cannot be read).
    run_dir : Path
        ``OUT/sites/<id>``.
    error : str or None
        Why the site file could not be read (the site then fails without running).
    lonlat : tuple of float or None
        Where the site is (WGS84 longitude, latitude, degrees): the mean of the control
        points' (or grid origins') site coordinates of its levels; None when unknown.
    """

    id: str
    site_file: Path
    name: str
    run_dir: Path
    error: str | None = None
    lonlat: tuple[float, float] | None = None


@dataclass(frozen=True)
class SiteOutcome:
    """What became of one site: ``status`` is ``done`` or ``failed`` (with ``message``)."""

    site: PortfolioSite
    status: str
    message: str = ""
    elapsed_s: float = 0.0

    @property
    def ok(self) -> bool:
        """Whether the site's run completed."""
        return self.status == "done"


@dataclass
class PortfolioResult:
    """The outcome of a portfolio run.

    Attributes
    ----------
    out_dir : Path
        The portfolio folder.
    outcomes : list of SiteOutcome
        One per site, in the order the sites were given.
    files : list of str
        Summary files written, relative to ``out_dir``.
    """

    out_dir: Path
    outcomes: list[SiteOutcome]
    files: list[str] = field(default_factory=list)

    @property
    def run_folders(self) -> list[Path]:
        """Return the run folders of the sites that completed (hook for other exporters)."""
        return [o.site.run_dir for o in self.outcomes if o.ok]

    @property
    def failed(self) -> list[SiteOutcome]:
        """Return the outcomes of the sites that failed."""
        return [o for o in self.outcomes if not o.ok]


# ----------------------------------------------------------------------------- finding sites


def _site_file(path: Path) -> Path | None:
    if path.is_file() and path.suffix.lower() == ".toml":
        return path
    if path.is_dir() and (path / SITE_FILE).is_file():
        return path / SITE_FILE
    return None


def _list_file(path: Path) -> list[Path]:
    """Read a text list (one path a line, ``#`` comments) or a CSV list (column site/path)."""
    try:
        text = path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as err:
        raise SiteFileError(f"{path}: cannot be read as a list of sites ({err})") from err
    base = path.parent
    entries: list[tuple[int, str]] = []
    if path.suffix.lower() == ".csv":
        rows = list(csv.reader(text.splitlines()))
        if not rows:
            return []
        head = [c.strip().lower() for c in rows[0]]
        col = next((head.index(k) for k in ("site", "path", "folder") if k in head), None)
        if col is None:
            raise SiteFileError(f"{path}: a CSV list of sites needs a column named 'site', 'path' "
                             f"or 'folder' (found: {', '.join(rows[0]) or 'no header'})")
        entries = [(i + 1, r[col].strip()) for i, r in enumerate(rows[1:], start=1)
                   if len(r) > col and r[col].strip()]
    else:
        entries = [(i + 1, ln.strip()) for i, ln in enumerate(text.splitlines())
                   if ln.strip() and not ln.strip().startswith("#")]
    out: list[Path] = []
    for row, entry in entries:
        p = Path(entry).expanduser()
        p = p if p.is_absolute() else base / p
        found = _site_file(p)
        if found is None:
            raise SiteFileError(f"{path}, line {row}: {entry!r} is neither a site folder holding "
                             f"{SITE_FILE} nor a site file; correct the line or remove it")
        out.append(found)
    return out


def find_sites(sources: Iterable[str | Path]) -> list[Path]:
    """Return the site files named by ``sources``, in order, each once.

    Each source is a site folder (holding ``site.toml``), a site file, a folder of site
    folders (each sub-folder holding ``site.toml``, in name order), or a list of sites: a
    ``.txt`` file with one path a line (``#`` starts a comment) or a ``.csv`` file with a
    column ``site`` (or ``path``, ``folder``); relative paths are taken from the list's folder.

    Raises
    ------
    SiteFileError
        A source that is none of these (named), or no site at all.
    """
    found: list[Path] = []
    for src in sources:
        p = Path(src).expanduser()
        if (f := _site_file(p)) is not None:
            found.append(f)
        elif p.is_file() and p.suffix.lower() in (".txt", ".csv", ".lst"):
            found.extend(_list_file(p))
        elif p.is_dir():
            subs = sorted(f for d in p.iterdir() if d.is_dir() and not d.name.startswith(".")
                          if (f := _site_file(d)) is not None)
            if not subs:
                raise SiteFileError(f"{p}: holds neither {SITE_FILE} nor site folders with one; "
                                 "give site folders, a folder of them, or a .txt/.csv list")
            found.extend(subs)
        else:
            raise SiteFileError(f"{p}: not found, or not a site folder, site file or .txt/.csv "
                             "list of sites")
    seen: set[Path] = set()
    out = []
    for f in found:
        r = f.resolve()
        if r not in seen:
            seen.add(r)
            out.append(r)
    if not out:
        raise SiteFileError("no site given: name site folders, a folder of them, or a list")
    return out


def site_slug(text: str) -> str:
    """Return a file-system-safe id of a name: ASCII letters, digits and ``-``, lower case."""
    ascii_text = unicodedata.normalize("NFKD", text).encode("ascii", "ignore").decode()
    slug = re.sub(r"[^a-z0-9]+", "-", ascii_text.lower()).strip("-")
    return slug[:60].strip("-") or "site"


def plan_sites(site_files: Sequence[Path], out_dir: Path) -> list[PortfolioSite]:
    """Read each site's name and give it a unique id and run folder ``OUT/sites/<id>``.

    The id is the slug of the project number and site name of the site file (the folder's
    name when the file cannot be read); a repeated id gets ``-2``, ``-3``, ...
    """
    from geo_corrosion.stages.read_site import read_site

    sites: list[PortfolioSite] = []
    used: set[str] = set()
    for f in site_files:
        error, lonlat = None, None
        try:
            cfg = read_site(f)
            name = cfg.name
            base = site_slug(" ".join(x for x in (cfg.project.number, cfg.name) if x))
            lonlat = _site_lonlat(cfg)
        except GeoCorrosionError as err:
            name, base, error = f.parent.name, site_slug(f.parent.name), str(err)
        sid, k = base, 2
        while sid in used:
            sid, k = f"{base}-{k}", k + 1
        used.add(sid)
        sites.append(PortfolioSite(sid, f, name, out_dir / SITES_DIR / sid, error, lonlat))
    return sites


def _site_lonlat(cfg: SiteConfig) -> tuple[float, float] | None:
    """Return the mean tie point of a site's levels in WGS84 (lon, lat), or None."""
    import pyproj

    pts = [cp.site for lv in cfg.levels for cp in lv.grid.control_points]
    pts += [lv.grid.origin for lv in cfg.levels
            if not lv.grid.control_points and lv.grid.origin is not None]
    if not pts:
        return None
    x = sum(p[0] for p in pts) / len(pts)
    y = sum(p[1] for p in pts) / len(pts)
    try:
        tr = pyproj.Transformer.from_crs(cfg.crs, "EPSG:4326", always_xy=True)
        lon, lat = tr.transform(x, y)
    except pyproj.exceptions.ProjError:
        return None
    if not (abs(lon) <= 180 and abs(lat) <= 90):  # inf where the CRS cannot reach
        return None
    return float(lon), float(lat)


# ----------------------------------------------------------------------------- the task


def run_site_task(site_file: str, run_dir: str, overwrite: bool = False) -> dict[str, Any]:
    """Run one site into its run folder; the task a worker runs.

    Returns a small picklable record, never raises for bad input: ``status`` ``done`` or
    ``failed``, ``message`` (our error's text, or the internal error's type and text),
    ``elapsed_s``.
    """
    import warnings

    from geo_corrosion import pipeline

    t0 = time.perf_counter()
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # the run records its own notes in run.json
            # one core per site: the portfolio's parallelism is its sites
            pipeline.run(site_file, run_dir, overwrite=overwrite, jobs=1)
    except GeoCorrosionError as err:
        return {"status": "failed", "message": str(err),
                "elapsed_s": time.perf_counter() - t0}
    except Exception as err:  # noqa: BLE001 - one site's bug must not stop the portfolio
        return {"status": "failed", "elapsed_s": time.perf_counter() - t0,
                "message": f"internal error: {type(err).__name__}: {err} (run this site alone "
                           "with `geo-corrosion --debug run` for the details and report it)"}
    return {"status": "done", "message": "", "elapsed_s": time.perf_counter() - t0}


def _outcome(site: PortfolioSite, rec: dict[str, Any]) -> SiteOutcome:
    return SiteOutcome(site, str(rec["status"]), str(rec.get("message", "")),
                       float(rec.get("elapsed_s", 0.0)))


def _say_done(say: Progress, n: int, total: int, o: SiteOutcome) -> None:
    if o.ok:
        say(f"[{n}/{total}] {o.site.id}: done in {o.elapsed_s:.1f} s")
    else:
        say(f"[{n}/{total}] {o.site.id}: FAILED: {o.message}")


def _run_serial(todo: list[PortfolioSite], overwrite: bool, say: Progress, done: int,
                total: int, outcomes: dict[str, SiteOutcome]) -> None:
    for s in todo:
        o = _outcome(s, run_site_task(str(s.site_file), str(s.run_dir), overwrite))
        outcomes[s.id] = o
        done += 1
        _say_done(say, done, total, o)


def _run_dask(todo: list[PortfolioSite], overwrite: bool, say: Progress, done: int,
              total: int, outcomes: dict[str, SiteOutcome], *, workers: int | None,
              scheduler: str | None) -> None:
    try:
        from distributed import Client, LocalCluster, as_completed
    except ImportError as err:
        raise ExportError("the portfolio needs Dask distributed: install geo_corrosion's "
                          "'scale' extra (pip install 'geo_corrosion[scale]')") from err
    import contextlib

    with contextlib.ExitStack() as stack:
        if scheduler:
            try:
                client = stack.enter_context(Client(scheduler, timeout="30s"))  # type: ignore[no-untyped-call]
            except (OSError, TimeoutError) as err:
                raise ExportError(f"cannot reach the Dask scheduler at {scheduler} ({err}); "
                                  "check the address or leave out --scheduler to run "
                                  "on this machine") from err
            say(f"running {len(todo)} site(s) on the cluster at {scheduler}")
        else:
            n = workers or os.cpu_count() or 1
            cluster = stack.enter_context(LocalCluster(  # type: ignore[no-untyped-call]
                n_workers=n, threads_per_worker=1, processes=True, dashboard_address=None,
                env=dict(WORKER_ENV), silence_logs=50))
            client = stack.enter_context(Client(cluster))  # type: ignore[no-untyped-call]
            say(f"running {len(todo)} site(s) on {n} local worker process(es)")
        futures = {client.submit(run_site_task, str(s.site_file), str(s.run_dir), overwrite,
                                 key=f"site-{s.id}", pure=False): s for s in todo}
        for fut in as_completed(futures):  # type: ignore[no-untyped-call]
            s = futures[fut]
            try:
                rec = fut.result()
            except Exception as err:  # noqa: BLE001 - a worker lost, a task killed
                rec = {"status": "failed", "message": f"the task did not finish: "
                       f"{type(err).__name__}: {err}"}
            o = _outcome(s, rec)
            outcomes[s.id] = o
            done += 1
            _say_done(say, done, total, o)


def run_portfolio(
    sources: Iterable[str | Path],
    out_dir: str | Path,
    *,
    workers: int | None = None,
    scheduler: str | None = None,
    serial: bool = False,
    overwrite: bool = False,
    progress: Progress | None = None,
) -> PortfolioResult:
    """Run every site of a portfolio and write the portfolio summary.

    Parameters
    ----------
    sources : iterable of str or Path
        Site folders, site files, folders of site folders, or ``.txt``/``.csv`` lists
        (:func:`find_sites`).
    out_dir : str or Path
        The portfolio folder: ``sites/<site-id>/`` (each a run folder) and the summary.
    workers : int, optional
        Worker processes of the local cluster (default: all cores), one thread each.
    scheduler : str, optional
        Address of an existing Dask scheduler (``tcp://host:8786``) instead of a local
        cluster; the workers must see the site folders and ``out_dir`` at the same paths.
    serial : bool
        Run the sites one after another in this process, without Dask.
    overwrite : bool
        Replace existing run folders of the same sites and the summary.
    progress : callable, optional
        Receives one line per step and per finished site (``[n/N] id: done in 12.3 s``).

    Raises
    ------
    GeoCorrosionError
        No site, a bad list, an output folder in the way or an unreachable scheduler.
        A site's own failure is not raised: it is in the result's outcomes.
    """
    from geo_corrosion.exporters.portfolio import SiteStatus, write_summary

    say = progress or (lambda _m: None)
    out = Path(out_dir).resolve()
    files = find_sites(sources)
    sites = plan_sites(files, out)
    for s in sites:
        if s.site_file.parent == out or s.site_file.parent.is_relative_to(out):
            raise ExportError(f"{out}: the portfolio folder cannot hold the site folder "
                              f"{s.site_file.parent}; choose another output folder")
    if not overwrite:
        taken = [s.run_dir for s in sites if s.run_dir.exists()]
        if taken:
            raise ExportError(f"{taken[0]} already exists ({len(taken)} site folder(s) in the "
                              "way); choose another output folder or pass --overwrite")
    (out / SITES_DIR).mkdir(parents=True, exist_ok=True)
    outcomes: dict[str, SiteOutcome] = {}
    total, done = len(sites), 0
    for s in sites:  # a site file that cannot be read fails at once, without a task
        if s.error is not None:
            o = SiteOutcome(s, "failed", s.error)
            outcomes[s.id] = o
            done += 1
            _say_done(say, done, total, o)
    todo = [s for s in sites if s.error is None]
    if todo and serial:
        _run_serial(todo, overwrite, say, done, total, outcomes)
    elif todo:
        _run_dask(todo, overwrite, say, done, total, outcomes, workers=workers,
                  scheduler=scheduler)
    result = PortfolioResult(out, [outcomes[s.id] for s in sites])
    say("writing the portfolio summary")
    result.files = write_summary(out, [
        SiteStatus(o.site.id, o.site.name, o.site.site_file, o.site.run_dir, o.status,
                   o.message, o.site.lonlat, round(o.elapsed_s, 2)) for o in result.outcomes])
    return result

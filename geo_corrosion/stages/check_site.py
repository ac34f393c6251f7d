"""The QA stage: every survey, every level, and what the kinds derived, checked by rule.

:func:`check_site` runs the rules of :mod:`geo_corrosion.qa` on an opened site and returns
the flag table; :func:`refuse_unrunnable` stops a run when a finding is an error.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from geo_corrosion import qa
from geo_corrosion.config import SiteConfig
from geo_corrosion.errors import KrigingError, QAError, SiteFileError
from geo_corrosion.measurements import MEASUREMENTS, MeasurementKind
from geo_corrosion.model.site import Site
from geo_corrosion.qa.derived import derived_flags
from geo_corrosion.stages.map_surfaces import check_kind_interval
from geo_corrosion.units import LENGTH_TO_M

__all__ = ["check_parameters", "check_site", "check_work", "refuse_unrunnable",
           "MAX_GRID_CELLS", "MAX_CONTOUR_LEVELS"]

#: Most cells of one level's kriging grid (memory and time grow with it; about 20 s and
#: 1 GB per kind at this size on a 2-core machine).
MAX_GRID_CELLS = 20_000_000
#: Most contour levels drawn over one kind's readings (a map with more is unreadable).
MAX_CONTOUR_LEVELS = 200


def check_parameters(cfg: SiteConfig) -> None:
    """Refuse run parameters that the standards do not allow, before any work.

    Raises
    ------
    KrigingError
        A contour interval coarser than a kind's ``max_contour_interval`` (potentials: the
        site file's ``[run].contour_interval_mv`` above 100 mV [ASTM-C876-91 §6.2, from memory]).
    SiteFileError
        Two kinds surveyed on one level play the same role (two potential kinds, say).

    The layout parameters are checked when the site file is read (``SiteConfig.layout``).
    """
    _check_roles(cfg)
    for kind in _registered_kinds():
        try:
            check_kind_interval(kind, kind.contour_interval_for(cfg.run))
        except KrigingError as err:
            key = kind.contour_interval_setting or f"the {kind.name} contour interval"
            raise KrigingError(f"{cfg.path}: {key}: {err}") from err


def _check_roles(cfg: SiteConfig) -> None:
    """Refuse two kinds on one level that play the same role (which surface would stand for it?)."""
    for lv in cfg.levels:
        players: dict[str, list[str]] = {}
        for name in dict.fromkeys(sv.kind for sv in cfg.surveys if sv.level == lv.id):
            for role in MEASUREMENTS.get(name).roles:
                players.setdefault(str(role), []).append(name)
        for played, names in players.items():
            if len(names) > 1:
                raise SiteFileError(
                    f"{cfg.path}: level {lv.id!r}: the kinds {', '.join(map(repr, names))} all "
                    f"play the role {played!r} (their surfaces would both stand for it); survey "
                    "one of them on this level, or give the plugin kind another role")


def _registered_kinds() -> list[MeasurementKind]:
    """Every usable registered kind (a broken plugin is reported where a survey uses it)."""
    return [k() for k in MEASUREMENTS.load().values()
            if isinstance(k, type) and issubclass(k, MeasurementKind)]


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
            spacing=lv.config.grid.spacing if s.kind.grid_rules else None,
            potential_rules=s.kind.grid_rules,
        ))
    for lid in site.levels:
        kinds = {s.kind.name: s.kind for s in site.surveys_of(lid)}
        for name, kind in kinds.items():
            frames = [s.frame for s in site.surveys_of(lid, name)]
            if len(frames) > 1:
                parts.append(qa.check_level(
                    frames, kind=name, value_column=kind.value_column,
                    spacing=site.levels[lid].config.grid.spacing if kind.grid_rules else None,
                    potential_rules=kind.grid_rules))
    for s in site.surveys:
        if s.kind.needs_continuity:
            lv = site.levels[s.config.level]
            parts.append(qa.ground_connection_flags(
                s.frame, lv.continuity_regions(),
                [(g.label, g.x, g.y) for g in s.config.ground_connections],
                value_column=s.kind.value_column, survey=s.config.id, level=lv.id))
    for s in site.surveys:
        parts.append(derived_flags(
            s.frame, survey_id=s.config.id, level_id=s.config.level, file_name=s.config.path.name,
            electrode_temperature=s.kind.electrode_temperature))
    parts = [p for p in parts if len(p)]
    if not parts:
        return pd.DataFrame(columns=qa.FLAG_COLUMNS)
    return pd.concat(parts, ignore_index=True)


#: Most QA errors listed in the message that stops a run (``geo-corrosion check`` lists all).
MAX_LISTED_ERRORS = 20


def _error_line(r: object) -> str:
    """One QA error as a line: its file and row (or survey), its message and its rule.

    The flags' messages mostly start with their ``where`` already; it is not repeated.
    """
    where, message = str(getattr(r, "where", "") or ""), str(getattr(r, "message", ""))
    if not where:
        sid, lid = getattr(r, "survey_id", ""), getattr(r, "level_id", "")
        where = f"survey {sid}" if sid else f"level {lid}" if lid else "the site"
    text = message if message.startswith(where) else f"{where}: {message}"
    return f"{text} ({getattr(r, 'rule', '')})"


def refuse_unrunnable(flags: pd.DataFrame) -> None:
    """Raise :class:`~geo_corrosion.errors.QAError` listing the errors when the site cannot run.

    Each error is one line naming its file and row (or its survey), what was found and the
    QA rule; a single error is said on one line.
    """
    if len(flags) and not qa.runnable(flags):
        errs = flags[flags["severity"] == "error"]
        lines = [_error_line(r) for r in errs.itertuples()]
        if len(lines) == 1:
            raise QAError(f"the site cannot be run: {lines[0]}. Fix it and run again "
                          "(geo-corrosion check lists every QA finding)")
        more = len(lines) - MAX_LISTED_ERRORS
        listed = "\n".join(f"  - {ln}" for ln in lines[:MAX_LISTED_ERRORS])
        tail = f"\n  ... and {more} more (geo-corrosion check lists them all)" if more > 0 else ""
        raise QAError(f"the site cannot be run; QA found {len(lines)} errors. Fix them and run "
                      f"again:\n{listed}{tail}")


def check_work(site: Site) -> None:
    """Refuse a run whose work would run away, before any of it: grid cells and contour levels.

    Raises
    ------
    KrigingError
        A level whose grid would hold more than :data:`MAX_GRID_CELLS` cells at the site
        file's ``[run].cell_size``, or a kind whose contour interval would draw more than
        :data:`MAX_CONTOUR_LEVELS` levels over its readings; the message names the key and the
        least value that fits.
    """
    cfg = site.config
    cell_m = cfg.run.cell_size_m
    for lid, lv in site.levels.items():
        per_m = LENGTH_TO_M[lv.unit]
        x0, y0, x1, y1 = lv.deck.bounds
        n = math.ceil((x1 - x0) * per_m / cell_m + 1) * math.ceil((y1 - y0) * per_m / cell_m + 1)
        if n > MAX_GRID_CELLS:
            least = math.sqrt((x1 - x0) * (y1 - y0) * per_m**2 / MAX_GRID_CELLS)
            raise KrigingError(
                f"{cfg.path}: [run].cell_size: a {cell_m:g} m cell makes about {n:,} cells on "
                f"level {lid!r} (at most {MAX_GRID_CELLS:,}); give a cell size of at least "
                f"{math.ceil(least * 1000) / 1000:g} m")
        for kind in {s.kind.name: s.kind for s in site.surveys_of(lid)}.values():
            interval = kind.contour_interval_for(cfg.run)
            values = np.concatenate([s.frame[kind.value_column].to_numpy(float)
                                     for s in site.surveys_of(lid, kind.name)])
            values = values[np.isfinite(values)]
            lo, hi = kind.plausible_range
            # readings beyond the kind's plausible range are flagged by QA and left out of
            # the surface: they draw no contour, so they do not count here
            values = values[(values >= lo) & (values <= hi)]
            if not values.size or not interval or interval <= 0:
                continue
            levels = (float(values.max()) - float(values.min())) / interval
            if levels > MAX_CONTOUR_LEVELS:
                key = kind.contour_interval_setting or f"the {kind.name} contour interval"
                least = (float(values.max()) - float(values.min())) / MAX_CONTOUR_LEVELS
                raise KrigingError(
                    f"{cfg.path}: {key}: an interval of {interval:g} {kind.canonical_unit} draws "
                    f"about {levels:,.0f} contour levels over the {kind.name} readings of level "
                    f"{lid!r} (at most {MAX_CONTOUR_LEVELS}); give at least "
                    f"{least:.3g} {kind.canonical_unit}")

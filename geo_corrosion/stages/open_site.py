"""Opening a site: read the site file, the plans and every survey, then correct.

:func:`open_site` is the ingest and corrections stage in one call; each part is
also usable alone (:func:`read_level`, :func:`read_survey`, :func:`correct`).
"""

from __future__ import annotations

import warnings
from collections.abc import Callable
from pathlib import Path

import shapely
from shapely.geometry import MultiPolygon, Polygon

from geo_corrosion.config import LevelConfig, RunParams, SiteConfig, SurveyConfig
from geo_corrosion.crs import LocalGrid
from geo_corrosion.errors import GeometryWarning, IngestError, SiteFileError
from geo_corrosion.io.plans import (
    Feature,
    dxf_documents_kept,
    read_grid_lines,
    read_lines,
    read_polygons,
)
from geo_corrosion.io.readings import read_readings
from geo_corrosion.measurements import get_kind
from geo_corrosion.model.site import Joint, Level, Site, Survey
from geo_corrosion.pricing import read_price_list
from geo_corrosion.stages.plan_repairs import site_bid_items
from geo_corrosion.stages.read_site import read_site
from geo_corrosion.surfaces import dangling_lines
from geo_corrosion.units import report_units

__all__ = ["open_site", "read_level", "read_joints", "read_survey", "correct"]

Progress = Callable[[str], None]


def _multipart_message(cfg: LevelConfig, slab: MultiPolygon, unit: str) -> str:
    """Say why a slab of separate parts is refused and what to draw instead."""
    parts = sorted(slab.geoms, key=lambda g: -g.area)
    listed = "; ".join(
        f"part {i + 1}: {g.area:,.0f} {unit}2 around ({g.centroid.x:,.1f}, {g.centroid.y:,.1f})"
        for i, g in enumerate(parts[:5]))
    more = f"; and {len(parts) - 5} more" if len(parts) > 5 else ""
    return (f"{cfg.slab.where}: the slab outline of level {cfg.id!r} has {len(parts)} separate "
            f"parts ({listed}{more}, local grid). A level is zoned and laid out as one "
            "continuous slab: if the parts are separate decks, give each its own level "
            "([[levels]] with its own slab outline); if they are one deck, close the gaps so "
            "the outline is one polygon (drawing slivers between parts often cause this)")


def read_level(cfg: LevelConfig, site: SiteConfig) -> Level:
    """Read a level's grid tie, slab, exclusions, joints and overlays.

    Raises
    ------
    IngestError
        Missing files or layers, an invalid slab outline, a slab of separate parts, a DXF
        with no closed shapes.
    GeoreferenceError
        Fewer control points than needed, or inconsistent ones.
    """
    where = f"level {cfg.id!r}"
    grid = LocalGrid.from_config(cfg.grid, site.crs_unit, where=f"{site.path.name}: {where} grid")
    slab_feats = read_polygons(cfg.slab, grid, site_crs=site.crs, what="slab outline",
                               repair=False)
    slab = shapely.union_all([f.geometry for f in slab_feats])
    if not isinstance(slab, Polygon | MultiPolygon) or slab.area <= 0 or not slab.is_valid:
        raise IngestError(f"{cfg.slab.where}: the slab outline is not a valid polygon")
    if isinstance(slab, MultiPolygon):
        raise IngestError(_multipart_message(cfg, slab, grid.unit))
    exclusions = tuple(
        f for ref in cfg.exclusions for f in read_polygons(ref, grid, site_crs=site.crs,
                                                           what="exclusions")
    )
    joints = read_joints(cfg, grid, site, slab)
    overlays: dict[str, list[Feature]] = {}
    for ov in cfg.overlays:
        if ov.kind == "crack":
            feats = read_lines(ov.ref, grid, site_crs=site.crs)
        else:
            feats = read_polygons(ov.ref, grid, site_crs=site.crs, what=f"{ov.kind} outlines")
        overlays.setdefault(ov.kind, []).extend(feats)
    col = (tuple(read_grid_lines(cfg.column_grid, grid, site_crs=site.crs))
           if cfg.column_grid else ())
    level = Level(cfg, grid, slab, exclusions, joints, {k: tuple(v) for k, v in overlays.items()},
                  column_grid=col)
    _check_breaking_joints(level, joints)
    return level


def read_joints(cfg: LevelConfig, grid: LocalGrid, site: SiteConfig, slab: Polygon
                ) -> tuple[Joint, ...]:
    """Read the joint layers of a level, each line with its layer's joint type.

    Raises
    ------
    IngestError
        A joint line that does not touch the slab (naming the file, layer and feature).
    """
    out = []
    for ref in cfg.joints:
        for f in read_lines(ref.ref, grid, site_crs=site.crs):
            if not f.geometry.intersects(slab):
                raise IngestError(
                    f"{f.where}: this {ref.joint_type} joint does not cross the slab of level "
                    f"{cfg.id!r} (it lies wholly outside the outline); check the layer's "
                    "coordinates (`coords`, the grid tie) or remove the line")
            out.append(Joint(f.geometry, f.where, f.label, f.depth_mm,
                             joint_type=ref.joint_type, breaks_continuity=ref.breaks))
    return tuple(out)


def _check_breaking_joints(level: Level, joints: tuple[Joint, ...]) -> None:
    """Warn of a breaking joint that separates nothing (it stops short of an edge or opening)."""
    brk = [j for j in joints if j.breaks_continuity]
    if not brk:
        return
    for i in dangling_lines(level.deck, [j.geometry for j in brk], level.slab.area * 1e-6):
        j = brk[i]
        warnings.warn(
            f"{j.where}: this {j.joint_type} joint breaks the continuity of the mat but does "
            f"not cut the deck of level {level.id!r} through (it stops short of the slab edge, "
            "an opening or another breaking joint), so its two sides stay one region and the "
            "surfaces are kriged across it; extend the line to the edge or opening",
            GeometryWarning, stacklevel=3)


def read_survey(cfg: SurveyConfig, level: Level, site: SiteConfig) -> Survey:
    """Read one survey file into canonical units (no corrections yet).

    Raises
    ------
    SiteFileError
        A ground connection outside the slab (naming the site file and the key).
    """
    for i, g in enumerate(cfg.ground_connections):
        if not level.slab.covers(shapely.Point(g.x, g.y)):
            raise SiteFileError(
                f"{cfg.where}.ground_connections[{i}]: ground connection {g.label!r} at "
                f"({g.x:g}, {g.y:g}) lies outside the slab of level {level.id!r}; give its "
                f"survey-grid coordinates ({level.unit}) on the deck where the voltmeter was "
                "connected to the bars")
    kind = get_kind(cfg.kind, where=f"{cfg.where}.kind: ")
    kind.check_survey(cfg)
    frame = read_readings(cfg, kind, level.grid, site.crs, root=site.root)
    return Survey(cfg, kind, frame)


def correct(survey: Survey, params: RunParams) -> Survey:
    """Derive values from raw instrument columns, then apply the kind's corrections.

    Both steps record what they did (``Survey.corrections``); readings whose value
    could not be derived carry the reason in ``derive_message``.
    """
    frame, derived = survey.kind.derive(survey.frame.copy(), survey.config, params)
    frame, records = survey.kind.correct(frame, survey.config, params)
    return Survey(survey.config, survey.kind, frame, tuple(derived) + tuple(records))


def open_site(path: str | Path | SiteConfig, *, progress: Progress | None = None) -> Site:
    """Read a site file and everything it names; convert units and apply corrections.

    Parameters
    ----------
    path : str, Path or SiteConfig
        Site file or folder.
    progress : callable, optional
        Called with a line of text as each file is read.
    """
    cfg = path if isinstance(path, SiteConfig) else read_site(path)
    say = progress or (lambda _msg: None)
    levels = {}
    with dxf_documents_kept():  # a plan file named by several layers is parsed once
        for lv in cfg.levels:
            say(f"level {lv.id}: reading plans")
            levels[lv.id] = read_level(lv, cfg)
    surveys = []
    for s in cfg.surveys:
        say(f"survey {s.id}: reading {s.path.name}")
        surveys.append(correct(read_survey(s, levels[s.level], cfg), cfg.run))
    if not surveys:
        raise SiteFileError(f"{cfg.path}: no [[surveys]] declared; nothing to map")
    prices = None
    if cfg.quantities.price_list is not None:
        say(f"price list: reading {cfg.quantities.price_list.name}")
        prices = read_price_list(cfg.quantities.price_list, items=site_bid_items(cfg),
                                 units=report_units(cfg.units))
    return Site(cfg, levels, tuple(surveys), prices)

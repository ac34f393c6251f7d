"""The QA stage: every survey, every level, and what the kinds derived, checked by rule.

:func:`check_site` runs the rules of :mod:`geo_corrosion.qa` on an opened site and returns
the flag table; :func:`refuse_unrunnable` stops a run when a finding is an error.
"""

from __future__ import annotations

import pandas as pd

from geo_corrosion import qa
from geo_corrosion.config import SiteConfig
from geo_corrosion.errors import KrigingError, QAError
from geo_corrosion.model.site import Site
from geo_corrosion.qa.derived import derived_flags
from geo_corrosion.surfaces import check_contour_interval

__all__ = ["check_parameters", "check_site", "refuse_unrunnable"]


def check_parameters(cfg: SiteConfig) -> None:
    """Refuse run parameters that the standards do not allow, before any work.

    Raises
    ------
    KrigingError
        A potential contour interval above 100 mV [ASTM-C876-91 §6.2, from memory].

    The layout parameters are checked when the site file is read (``SiteConfig.layout``).
    """
    try:
        check_contour_interval(cfg.run.contour_interval_mv, "potential")
    except KrigingError as err:
        raise KrigingError(f"{cfg.path}: [run].contour_interval_mv: {err}") from err


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
        parts.append(derived_flags(
            s.frame, survey_id=s.config.id, level_id=s.config.level, file_name=s.config.path.name,
            electrode_temperature=s.kind.name == "potential"))
    parts = [p for p in parts if len(p)]
    if not parts:
        return pd.DataFrame(columns=qa.FLAG_COLUMNS)
    return pd.concat(parts, ignore_index=True)


def refuse_unrunnable(flags: pd.DataFrame) -> None:
    """Raise :class:`~geo_corrosion.errors.QAError` listing the errors when the site cannot run."""
    if len(flags) and not qa.runnable(flags):
        errs = flags[flags["severity"] == "error"]
        lines = "\n".join(f"  - {r.where or r.survey_id}: {r.message}"
                          for r in errs.itertuples())
        raise QAError(f"the site cannot be run; QA found {len(errs)} error(s):\n{lines}")

"""The condition stage: probability maps, area intervals, site threshold, combined classes.

For each level, from the kriged surfaces of :mod:`geo_corrosion.stages.map_surfaces`:

* the probability per cell that the potential is more negative than -350 mV CSE
  (ASTM C876's "high" bound), that the corrosion rate exceeds 1 uA/cm2 (RILEM
  "high") and that the resistivity is below 10 kOhm.cm (RILEM "high"), assuming
  Gaussian errors in the kriged variable (log space for resistivity and rate);
* the area beyond each threshold as an expected value with a 90 % interval
  (:func:`geo_corrosion.condition.probability.area_interval`, correlated errors
  with the variogram's range as correlation length);
* the site-specific passive/active threshold from a two-component mixture fit
  [Gulikers-Elsener-2008], with the share of readings and of
  area on each side;
* the combined condition class per cell from the available kinds (the rule
  table of :mod:`geo_corrosion.condition.combined`).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from typing import Any

import numpy as np
import pandas as pd
import rasterio.features
import shapely
from numpy.typing import NDArray
from shapely.geometry import shape

from geo_corrosion.condition.combined import DEFAULT_RULES, RuleTable, combine
from geo_corrosion.condition.potential import fit_mixture_threshold
from geo_corrosion.condition.probability import area_interval, exceedance_probability
from geo_corrosion.errors import ConditionError
from geo_corrosion.model.site import Level, Survey
from geo_corrosion.model.surface import KindSurface, LevelCondition, LevelSurfaces
from geo_corrosion.units import LENGTH_TO_M

__all__ = ["THRESHOLDS", "assess_condition", "assess_level", "log_space_moments", "life_estimates",
           "SERVICE_HORIZON_YEARS"]

#: Horizon of the section-loss estimate at today's rate, years (common practice, no source).
SERVICE_HORIZON_YEARS = 10.0

#: kind -> (threshold in canonical unit, direction, what it means, source)
THRESHOLDS: dict[str, tuple[float, str, str, str]] = {
    "potential": (-350.0, "below", "more negative than -350 mV CSE",
                  "ASTM C876 numeric criteria [ASTM-C876-91 App. X1, from memory]"),
    "corrosion_rate": (1.0, "above", "corrosion rate above 1 uA/cm2 (high)",
                       "RILEM TC 154 [Andrade-Alonso-2004, from memory]"),
    "resistivity": (10.0, "below", "resistivity below 10 kOhm.cm (high risk)",
                    "RILEM TC 154 [RILEM-TC154-2000; Polder-2001, from memory]"),
}
INTERVAL_LEVEL = 0.90


def log_space_moments(
    mean: NDArray[np.float64], variance: NDArray[np.float64]
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Approximate log-space mean and variance from back-transformed lognormal moments.

    The engine back-transforms a lognormal kind as ``est = exp(m + v/2 - nu)``
    with variance ``est^2 (exp(v) - 1)``; this recovers ``v`` exactly and ``m``
    up to the Lagrange term ``nu``, which is neglected (documented in
    docs/methods.md).
    """
    with np.errstate(invalid="ignore", divide="ignore"):
        v = np.log1p(variance / (mean * mean))
        m = np.log(mean) - 0.5 * v
    return m, v


def life_estimates(frame: pd.DataFrame, cover: KindSurface | None, *,
                   bar_diameter_mm: float) -> tuple[pd.DataFrame, dict[str, Any]]:
    """Section loss and time to cover cracking at each corrosion-rate reading.

    Returns a new frame with the columns added, and the summary for ``run.json``.

    * Section loss of the bar after :data:`SERVICE_HORIZON_YEARS` at the measured
      rate (uniform attack, Faraday's law, derived), with the 25 %
      engineer-review trigger [UFGS-03931 §3.3.1.4].
    * Propagation time to the first visible crack (0.05 mm) after Alonso et al.
      (1998), x_crit = 7.53 + 9.32 c/phi um [Alonso-Andrade-1998, from memory], with
      the cover c read off the kriged cover surface at the reading.  It is counted
      from corrosion initiation at the measured rate; it is **not** the time left from
      today (the corrosion that already took place is unknown), so it is an upper
      bound of the time left.
    """
    from geo_corrosion.condition.life import section_loss, time_to_cracking_years

    frame = frame.copy()  # the caller's frame is never changed
    col = "icorr_ua_cm2"
    i = frame[col].to_numpy(float)
    loss = np.full(i.shape, np.nan)
    review = np.zeros(i.shape, bool)
    for k, v in enumerate(i):
        if np.isfinite(v) and v >= 0:
            r = section_loss(bar_diameter_mm, float(v), SERVICE_HORIZON_YEARS)
            loss[k], review[k] = 100.0 * r.loss_fraction, r.review_required
    frame[f"section_loss_{int(SERVICE_HORIZON_YEARS)}yr_pct"] = loss
    frame["bar_review"] = review
    c = np.full(i.shape, np.nan)
    if cover is not None:
        g = cover.grid
        col_i = np.clip(((frame["x_local"] - g.x0) / g.cell).astype(int), 0, g.nx - 1).to_numpy()
        row_i = np.clip(((g.y0 + g.ny * g.cell - frame["y_local"]) / g.cell).astype(int), 0,
                        g.ny - 1).to_numpy()
        c = cover.mean[row_i, col_i]
    frame["cover_at_reading_mm"] = c
    with np.errstate(invalid="ignore", divide="ignore"):
        ok = np.isfinite(c) & np.isfinite(i) & (i > 0)
        t = np.full(i.shape, np.nan)
        if ok.any():
            t[ok] = time_to_cracking_years(c[ok], bar_diameter_mm, i[ok])
    frame["time_to_cracking_yr"] = t
    return frame, {
        "bar_diameter_mm": bar_diameter_mm, "horizon_years": SERVICE_HORIZON_YEARS,
        "readings_needing_bar_review": int(review.sum()),
        "readings": int(len(i)),
        "median_time_to_cracking_yr": float(np.nanmedian(t)) if np.isfinite(t).any() else None,
        "time_to_cracking_meaning": "propagation time from corrosion initiation to the first "
                                    "visible crack at the measured rate; not the time left from "
                                    "today (an upper bound of it)",
        "sources": ["Faraday's law, derived", "25 % section loss [UFGS-03931 §3.3.1.4]",
                    "time to cracking [Alonso-Andrade-1998, from memory]"],
    }


def _polygons(codes: NDArray[np.int64], surface: KindSurface, labels: list[tuple[str, str, str]],
              deck: Any) -> pd.DataFrame:
    rows = []
    for code, (key, label, color) in enumerate(labels):
        m = codes == code
        if not m.any():
            continue
        polys = [shape(g) for g, v in rasterio.features.shapes(
            m.astype(np.uint8), mask=m, transform=surface.grid.affine()) if v == 1]
        geom = shapely.intersection(shapely.union_all(polys), deck)
        if not geom.is_empty:
            rows.append({"class_key": key, "class": label, "color": color,
                         "area_local": geom.area, "geometry": geom})
    return pd.DataFrame(rows)


def assess_level(surfaces: dict[str, KindSurface], readings: dict[str, NDArray[np.float64]],
                 *, deck: Any, unit: str, seed: int = 0,
                 rules: dict[str, Any] | None = None,
                 low_cover: NDArray[np.bool_] | None = None) -> LevelCondition:
    """Probability maps, area intervals, mixture threshold and combined classes of a level.

    Parameters
    ----------
    surfaces : dict of str to KindSurface
        Kriged surfaces by kind (all on the same grid).
    readings : dict of str to ndarray
        Mapped readings by kind, canonical units (for the mixture fit).
    deck : shapely geometry
        Slab minus exclusions, local grid units.
    unit : str
        Local grid unit.
    low_cover : ndarray of bool, optional
        Low cover per cell of the surfaces' grid (kriged cover below the level's
        low-cover threshold); cells without a cover value must be ``False``.  ``None``
        when the level has no cover surface: rules on low cover then never match.
    """
    out = LevelCondition()
    a2 = LENGTH_TO_M[unit] ** 2
    for name, (thr, direction, meaning, source) in THRESHOLDS.items():
        s = surfaces.get(name)
        if s is None:
            continue
        log = s.kind.krige_transform == "log"
        mean, var = (log_space_moments(s.mean, s.variance) if log else (s.mean, s.variance))
        p = exceedance_probability(mean, var, thr, direction=direction, log_space=log)
        out.probability[name] = p
        corr_len = float(s.fit.model.range)
        est = area_interval(mean, var, thr, cell_size=s.grid.cell, correlation_length=corr_len,
                            direction=direction, log_space=log, level=INTERVAL_LEVEL,
                            n_draws=400, seed=seed)
        out.stats[f"{name}_area_beyond_threshold"] = {
            "meaning": meaning, "threshold": thr, "unit": s.kind.canonical_unit,
            "source": source, "expected_m2": est.expected * a2,
            "interval_level": INTERVAL_LEVEL, "lower_m2": est.lower * a2,
            "upper_m2": est.upper * a2, "mapped_area_m2": est.total_area * a2,
            "correlation_length": corr_len, "correlation_length_unit": unit,
            "assumption": "Gaussian errors in the kriged variable (log space for lognormal kinds)",
        }
    if "potential" in surfaces and len(readings.get("potential", ())) >= 20:
        s = surfaces["potential"]
        try:
            mix = fit_mixture_threshold(readings["potential"], cell_potential_mv=s.mean,
                                        cell_area=(s.grid.cell**2) * a2)
            out.mixture = mix
            out.stats["site_threshold"] = {
                k: v for k, v in dataclasses.asdict(mix).items()
                if np.ndim(v) == 0 and not isinstance(v, dict)}
            out.stats["site_threshold"]["method"] = (
                "two-component Gaussian mixture, crossing of the weighted densities "
                "(RILEM TC 154 statistical evaluation [Gulikers-Elsener-2008])")
        except ConditionError as err:
            out.stats["site_threshold"] = {"not_available": str(err)}
    table = RuleTable.from_dict(rules) if rules else DEFAULT_RULES
    given = {k: surfaces[k].mean for k in ("potential", "resistivity", "corrosion_rate")
             if k in surfaces}
    if given:
        res = combine(table, potential_mv=given.get("potential"),
                      resistivity_kohm_cm=given.get("resistivity"),
                      icorr_ua_cm2=given.get("corrosion_rate"), low_cover=low_cover)
        first = next(iter(surfaces.values()))
        codes = np.where(np.isfinite(next(iter(given.values()))), res.codes, -1)
        labels = [(c.key, c.label, c.color) for c in table.classes]
        out.combined_codes = codes
        out.combined_polygons = _polygons(codes, first, labels, deck)
        out.stats["combined_classes"] = [
            {"class": r["class"], "area_m2": r["area_local"] * a2}
            for r in out.combined_polygons.to_dict("records")] if len(out.combined_polygons) else []
        out.stats["combined_rules"] = table.to_dict()
    return out


def assess_condition(level: Level, mapped: LevelSurfaces, rate_surveys: Sequence[Survey], *,
                     rules: dict[str, Any] | None, bar_diameter_mm: float,
                     low_cover: NDArray[np.bool_] | None
                     ) -> tuple[LevelCondition, dict[str, pd.DataFrame]]:
    """Assess the condition of one level that has at least one surface.

    Returns
    -------
    condition : LevelCondition
        Probability maps, area intervals, site threshold, combined classes; its ``stats``
        carry the life summary per corrosion-rate survey under ``"life"``.
    frames : dict of str to DataFrame
        By survey id, the corrosion-rate surveys' frames with the section-loss and
        time-to-cracking columns added (new frames; the surveys are not changed).
    """
    condition = assess_level(
        mapped.surfaces, {k: r[mapped.surfaces[k].kind.value_column].to_numpy(float)
                          for k, r in mapped.readings.items()},
        deck=level.deck, unit=level.unit, rules=rules, low_cover=low_cover)
    frames: dict[str, pd.DataFrame] = {}
    life: dict[str, Any] = {}
    for sv in rate_surveys:
        frames[sv.id], life[sv.id] = life_estimates(sv.frame, mapped.surfaces.get("cover"),
                                                    bar_diameter_mm=bar_diameter_mm)
    if life:
        condition.stats["life"] = life
    return condition, frames

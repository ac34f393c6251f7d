"""The condition stage: probability maps, area intervals, site threshold, combined classes.

For each level, from the kriged surfaces of :mod:`geo_corrosion.stages.map_surfaces`:

* for each kind with a ``threshold`` (a :class:`~geo_corrosion.measurements.Threshold`),
  the probability per cell of being beyond it: for the built-ins, that the potential is
  more negative than -350 mV CSE (ASTM C876's "high" bound), that the corrosion rate
  exceeds 1 uA/cm2 (RILEM "high") and that the resistivity is below 10 kOhm.cm (RILEM
  "high"), assuming Gaussian errors in the kriged variable (log space for lognormal kinds);
* the area beyond each threshold as an expected value with a 90 % interval, and the
  probability maps, from conditional simulations of the field (``[run].interval_method =
  "simulation"``, :func:`geo_corrosion.condition.probability.simulated_area_intervals`;
  conditioning by kriging [Journel-Huijbregts-1978 ch. VII, from memory]) or from the fast
  separable approximation (:func:`geo_corrosion.condition.probability.area_interval`,
  correlated errors with the variogram's range as correlation length);
* the site-specific passive/active threshold from a two-component mixture fit
  [RILEM-TC154-2003; Gulikers-Elsener-2008] of the kind with ``mixture_threshold``, with the
  share of readings and of area on each side;
* the combined condition class per cell from the kinds playing the rule table's roles
  (:class:`~geo_corrosion.measurements.Role`; :mod:`geo_corrosion.condition.combined`);
* the life estimates of the kinds that give them (``MeasurementKind.life_estimates``).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
import pandas as pd
import rasterio.features
import shapely
from numpy.typing import NDArray
from shapely.geometry import shape

from geo_corrosion.condition.combined import DEFAULT_RULES, RuleTable, combine
from geo_corrosion.condition.combined import KINDS as COMBINED_COLUMNS
from geo_corrosion.condition.potential import fit_mixture_threshold
from geo_corrosion.condition.probability import (
    INTERVAL_METHODS,
    area_interval,
    exceedance_probability,
    simulated_area_intervals,
)
from geo_corrosion.errors import ConditionError
from geo_corrosion.measurements import MeasurementKind, Role, Threshold
from geo_corrosion.model.site import Level, Survey
from geo_corrosion.model.surface import (
    KindSurface,
    LevelCondition,
    LevelSurfaces,
    grid_values_at,
    with_role,
)
from geo_corrosion.stages.map_points import combined_kinds
from geo_corrosion.stages.map_surfaces import merge_repeats
from geo_corrosion.surfaces.simulation import ConditionalSimulator
from geo_corrosion.units import LENGTH_TO_M

__all__ = ["assess_condition", "assess_level", "log_space_moments", "life_estimates",
           "threshold_overrides",
           "value_at_readings", "MIXTURE_MIN_READINGS"]

INTERVAL_LEVEL = 0.90
#: Fewest mapped readings for the site-specific mixture threshold (our choice).
MIXTURE_MIN_READINGS = 20


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


def value_at_readings(surface: KindSurface, frame: pd.DataFrame) -> NDArray[np.float64]:
    """Return the surface's value in the cell under each reading (``x_local``, ``y_local``).

    Readings off the grid take the nearest edge cell; cells outside the mask give NaN.
    """
    return grid_values_at(surface.grid, surface.mean, frame["x_local"].to_numpy(float),
                          frame["y_local"].to_numpy(float))


def life_estimates(frame: pd.DataFrame, cover: KindSurface | None, *, kind: MeasurementKind,
                   bar_diameter_mm: float, deck_area: float | None = None,
                   ) -> tuple[pd.DataFrame, dict[str, Any]] | None:
    """Life estimates of one survey of ``kind`` (its ``life_estimates`` hook), or None.

    ``cover`` is the level's surface of the :attr:`Role.COVER` kind (None without one); its
    value at each reading is handed to the hook.  For the corrosion-rate kind: section loss
    after the service horizon and the time to cover cracking
    (:meth:`geo_corrosion.measurements.CorrosionRate.life_estimates`).  Returns a new
    frame (``frame`` is never changed) and the summary for ``run.json``.
    """
    cover_mm = value_at_readings(cover, frame) if cover is not None else None
    return kind.life_estimates(frame, cover_mm, bar_diameter_mm=bar_diameter_mm,
                               deck_area=deck_area)


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


def threshold_overrides(kinds: Mapping[str, Mapping[str, Any]],
                        surfaces: Mapping[str, KindSurface]) -> dict[str, Threshold]:
    """Return the thresholds the site file sets (``[run.kinds.<kind>] threshold``), by kind.

    Each replaces the kind's own value, keeps its direction and names the key as its
    source; the site reader has checked it lies in the kind's plausible range.

    Examples
    --------
    >>> from geo_corrosion.measurements import MEASUREMENTS
    >>> from types import SimpleNamespace
    >>> s = {"potential": SimpleNamespace(kind=MEASUREMENTS.get("potential")())}
    >>> t = threshold_overrides({"potential": {"threshold": -300.0}}, s)["potential"]
    >>> t.value, t.direction, t.meaning
    (-300.0, 'below', 'potential below -300 mV CSE (site file)')
    """
    out = {}
    for name, t in kinds.items():
        s = surfaces.get(name)
        if s is None or s.kind.threshold is None or t.get("threshold") is None:
            continue
        own = s.kind.threshold
        v = float(t["threshold"])
        unit = s.kind.canonical_unit + (" CSE" if s.kind.canonical_unit == "mV" else "")
        out[name] = dataclasses.replace(
            own, value=v, meaning=f"{name.replace('_', ' ')} {own.direction} {v:g} {unit} "
                                  "(site file)",
            source=f"site file [run.kinds.{name}].threshold, in place of {own.source}",
            statement="")
    return out


def assess_level(surfaces: dict[str, KindSurface], readings: dict[str, NDArray[np.float64]],
                 *, deck: Any, unit: str, seed: int = 0,
                 rules: dict[str, Any] | None = None,
                 low_cover: NDArray[np.bool_] | None = None,
                 reading_points: dict[str, tuple[NDArray[np.float64], NDArray[np.float64],
                                                 NDArray[np.float64]]] | None = None,
                 interval_method: str = "separable-approximation", realisations: int = 200,
                 n_neighbors: int = 16,
                 thresholds: Mapping[str, Threshold] | None = None) -> LevelCondition:
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
    reading_points : dict of str to (x, y, z), optional
        By kind, the readings each surface was kriged from (repeats merged; local grid
        units, canonical units).  A kind without them gets the separable approximation.
    interval_method : {"simulation", "separable-approximation"}
        How the probability maps, expected areas and intervals are found: conditional
        simulation of the field (:mod:`geo_corrosion.surfaces.simulation`), or the fast
        approximation of :func:`geo_corrosion.condition.probability.area_interval`.
    realisations : int
        Conditional simulations (``[run].realisations``).
    n_neighbors : int
        The kriging neighbourhood of the surfaces (``[run].n_neighbors``).
    thresholds : mapping of str to Threshold, optional
        By kind, a threshold that replaces the kind's own (``[run.kinds.<kind>] threshold``,
        :func:`threshold_overrides`).
    """
    out = LevelCondition()
    a2 = LENGTH_TO_M[unit] ** 2
    if interval_method not in INTERVAL_METHODS:
        raise ConditionError(f"interval_method must be one of {', '.join(INTERVAL_METHODS)}, "
                             f"got {interval_method!r}")
    with_threshold = sorted((s for s in surfaces.values() if s.kind.threshold is not None),
                            key=lambda s: (s.kind.condition_order, s.kind.name))
    for s in with_threshold:
        name, t = s.kind.name, (thresholds or {}).get(s.kind.name, s.kind.threshold)
        assert t is not None
        thr, direction = t.value, t.direction
        log = s.kind.krige_transform == "log"
        corr_len = float(s.fit.model.range)
        pts = (reading_points or {}).get(name)
        if interval_method == "simulation" and pts is not None:
            x, y, z = pts
            sim = ConditionalSimulator(x, y, np.log(z) if log else z, s.fit.model, s.grid,
                                       np.isfinite(s.mean) & np.isfinite(s.variance),
                                       n_neighbors=n_neighbors)
            est, p = simulated_area_intervals(sim, [(thr, direction)], log_space=log,
                                              level=INTERVAL_LEVEL, n_realisations=realisations,
                                              seed=seed)[0]
            assumption = ("Gaussian field with the fitted variogram, the nugget as measurement "
                          "error (log space for lognormal kinds)")
            used = "simulation"
        else:
            mean, var = (log_space_moments(s.mean, s.variance) if log else (s.mean, s.variance))
            p = exceedance_probability(mean, var, thr, direction=direction, log_space=log)
            est = area_interval(mean, var, thr, cell_size=s.grid.cell,
                                correlation_length=corr_len, direction=direction,
                                log_space=log, level=INTERVAL_LEVEL, n_draws=400, seed=seed)
            assumption = ("Gaussian errors in the kriged variable (log space for lognormal "
                          "kinds)")
            used = "separable-approximation"
        out.probability[name] = p
        out.stats[f"{name}_area_beyond_threshold"] = {
            "meaning": t.meaning, "threshold": thr, "unit": s.kind.canonical_unit,
            "source": t.source, "expected_m2": est.expected * a2,
            "interval_level": INTERVAL_LEVEL, "lower_m2": est.lower * a2,
            "upper_m2": est.upper * a2, "mapped_area_m2": est.total_area * a2,
            "correlation_length": corr_len, "correlation_length_unit": unit,
            "assumption": assumption, "interval_method": used, "realisations": est.n_draws,
            "method": est.method,
        }
    mixed = [s for s in surfaces.values() if s.kind.mixture_threshold]
    if mixed and len(readings.get(mixed[0].kind.name, ())) >= MIXTURE_MIN_READINGS:
        s = mixed[0]
        try:
            mix = fit_mixture_threshold(readings[s.kind.name], cell_potential_mv=s.mean,
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
    # the rule table's columns are roles: each takes the surface of the kind playing it
    given = {col: sf.mean for col in COMBINED_COLUMNS
             if (sf := with_role(surfaces, col)) is not None}
    if given:
        res = combine(table, values=given, low_cover=low_cover)
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


def _reading_points(mapped: LevelSurfaces) -> dict[str, tuple[NDArray[np.float64],
                                                                NDArray[np.float64],
                                                                NDArray[np.float64]]]:
    """Return the readings each surface was kriged from, repeats merged as when kriged."""
    out = {}
    for name, frame in mapped.readings.items():
        if name not in mapped.surfaces:
            continue
        col = mapped.surfaces[name].kind.value_column
        r = merge_repeats(frame, col)
        out[name] = (r["x_local"].to_numpy(float), r["y_local"].to_numpy(float),
                     r[col].to_numpy(float))
    return out


def assess_condition(level: Level, mapped: LevelSurfaces, surveys: Sequence[Survey], *,
                     rules: dict[str, Any] | None, bar_diameter_mm: float,
                     low_cover: NDArray[np.bool_] | None,
                     interval_method: str = "separable-approximation", realisations: int = 200,
                     n_neighbors: int = 16,
                     kinds: Mapping[str, Mapping[str, Any]] | None = None,
                     ) -> tuple[LevelCondition, dict[str, pd.DataFrame]]:
    """Assess the condition of one level that has at least one surface.

    Parameters
    ----------
    surveys : sequence of Survey
        The level's surveys; those whose kind gives life estimates get them.
    interval_method, realisations, n_neighbors
        As in :func:`assess_level` (``[run]`` keys).

    Returns
    -------
    condition : LevelCondition
        Probability maps, area intervals, site threshold, combined classes; its ``stats``
        carry the life summary per survey with life estimates under ``"life"``.
    frames : dict of str to DataFrame
        By survey id, the frames of the surveys with life estimates, their columns added
        (new frames; the surveys are not changed).
    """
    condition = assess_level(
        mapped.surfaces, {k: r[mapped.surfaces[k].kind.value_column].to_numpy(float)
                          for k, r in mapped.readings.items()},
        deck=level.deck, unit=level.unit, rules=rules, low_cover=low_cover,
        reading_points=_reading_points(mapped), interval_method=interval_method,
        realisations=realisations, n_neighbors=n_neighbors,
        thresholds=threshold_overrides(kinds or {}, mapped.surfaces))
    if "combined_rules" in condition.stats:  # which kinds the combined classes used, and why
        condition.stats["combined_kinds"] = combined_kinds(mapped, COMBINED_COLUMNS)
    frames: dict[str, pd.DataFrame] = {}
    life: dict[str, Any] = {}
    cover = with_role(mapped.surfaces, Role.COVER)
    for sv in surveys:
        est = life_estimates(sv.frame, cover, kind=sv.kind, bar_diameter_mm=bar_diameter_mm,
                             deck_area=float(level.deck.area))
        if est is not None:
            frames[sv.id], life[sv.id] = est
    if life:
        condition.stats["life"] = life
    return condition, frames

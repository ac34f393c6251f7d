"""Quality checks of survey readings: every suspicious reading is flagged, none is dropped.

:func:`check_survey` checks the readings of one survey, :func:`check_level`
compares the surveys of one level and kind, :func:`summarize` counts the flags
and :func:`runnable` says whether the site can be run (no flag of severity
``"error"``).  :func:`flag_points` turns reading-level flags into a point layer
for the map and the GeoPackage.

Each flag is one row of a table with the columns :data:`FLAG_COLUMNS`; its
``rule`` is a code of the catalogue :data:`QA_RULES`, which names the source of
every check (keys of :mod:`geo_corrosion.bibliography`).  Survey-level flags have
``reading_id == ""``.

Rules (codes of :data:`QA_RULES`, which holds each rule's severity, description
and source): missing value or location; value outside the kind's plausible range
(common practice, bounds plausible); duplicate or near-duplicate location
with a different point_id (tolerance 0.1 x spacing, or 1e-6); outside the slab
(outline counts as inside) or strictly inside an exclusion; for potentials,
adjacent grid readings (within 1.5 x spacing along a grid axis, lateral offset
<= 0.25 x spacing) differing by more than 150 mV [ASTM-C876-91 §5.1, from memory]
-- info, or a warning when the reading differs from all of its
two or more axis neighbours (a local spike); repeat readings of one point_id in
one survey against the 10 mV repeatability and, across the surveys of a level,
against the 20 mV reproducibility [ASTM-C876-15 precision section, from memory],
the difference reported in either case; and the survey-level errors:
more than 90 % of the potentials within +-5 mV of 0 with an interquartile range of
at most 5 mV (open lead), more than 90 % of them above +100 mV CSE (leads
reversed), every reading outside the slab, no usable reading; fewer than
``min_readings`` readings is a warning.
Thresholds marked common practice in :data:`QA_RULES` are our own choices.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any, Literal

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely
from numpy.typing import NDArray
from scipy.spatial import cKDTree

from geo_corrosion.errors import QAError
from geo_corrosion.surfaces.regions import region_labels

__all__ = [
    "QARule",
    "QA_RULES",
    "FLAG_COLUMNS",
    "ground_connection_flags",
    "CONTRACT_COLUMNS",
    "check_survey",
    "check_level",
    "summarize",
    "runnable",
    "flag_points",
    "format_flags",
    "count_line",
]

Severity = Literal["info", "warning", "error"]


@dataclass(frozen=True)
class QARule:
    """One QA rule of the catalogue.

    Attributes
    ----------
    code : str
        Rule code written in the ``rule`` column of the flags (``"QA-ADJ-150"``).
    severity : {"info", "warning", "error"}
        ``"error"`` means the survey cannot be used and the site cannot be run.
    description : str
        What the rule checks, in words for a report.
    source : str
        Where the rule or its threshold comes from.
    """

    code: str
    severity: Severity
    description: str
    source: str


_C876_PREC = "ASTM C876 precision [ASTM-C876-15 precision section, from memory]"
_P = "common practice, no source"

#: A potential that changes by more than this while it settles (about 5 min) needs pre-wetting
#: [ASTM-C876-15 procedure, from memory].
STABILITY_LIMIT_MV = 20.0

QA_RULES: dict[str, QARule] = {
    r.code: r
    for r in (
        QARule("QA-NAN-VALUE", "warning", "reading has no value", _P),
        QARule("QA-NAN-XY", "warning", "reading has no location", _P),
        QARule("QA-RANGE-LOW", "warning", "value below the plausible range",
               "common practice, after the ranges of "
               "[RILEM-TC154-2003 Table 1, from memory]"),
        QARule("QA-RANGE-HIGH", "warning", "value above the plausible range",
               "common practice, after the ranges of "
               "[RILEM-TC154-2003 Table 1, from memory]"),
        QARule("QA-DUPLICATE", "warning",
               "duplicate or near-duplicate location with a different point_id", _P),
        QARule("QA-OUTSIDE-SLAB", "warning", "reading outside the slab outline", _P),
        QARule("QA-IN-EXCLUSION", "warning", "reading inside an exclusion area", _P),
        QARule("QA-ADJ-150", "info",
               "adjacent grid readings differ by more than the limit (150 mV): grid too "
               "coarse here", "[ASTM-C876-91 §5.1, from memory]"),
        QARule("QA-ADJ-SPIKE", "warning",
               "reading differs by more than the limit from all its grid neighbours: "
               "local spike", "[ASTM-C876-91 §5.1, from memory]; spike "
               "criterion common practice"),
        QARule("QA-REPEAT", "info", "repeat readings of a point within the repeatability "
               "tolerance (or kind without tolerance); difference reported", _C876_PREC),
        QARule("QA-REPEATABILITY", "warning",
               "repeat readings of a point in one survey differ by more than 10 mV", _C876_PREC),
        QARule("QA-DRIFT", "warning",
               "a point read at the start and the end of the survey drifted by more than "
               "20 mV: the reference electrode or its contact changed during the shift",
               "common practice; 20 mV after the C876 stability and reproducibility limits "
               "[ASTM-C876-15 precision section, from memory]"),
        QARule("QA-UNSTABLE", "warning",
               "potentials: the reading's stability series spans more than 20 mV: the "
               "concrete was not pre-wetted enough; pre-wet and read again",
               "ASTM C876 procedure [ASTM-C876-15 procedure, from memory]"),
        QARule("QA-POINT-MOVED", "warning",
               "one point_id at locations more than half a grid spacing apart", _P),
        QARule("QA-REPRO", "info", "a point read in several surveys of a level, within the "
               "reproducibility tolerance (or kind without tolerance)", _C876_PREC),
        QARule("QA-REPRODUCIBILITY", "warning",
               "a point read in several surveys of a level differs by more than 20 mV",
               _C876_PREC),
        QARule("QA-DUP-SURVEYS", "warning",
               "two surveys of one level read the same location", _P),
        QARule("QA-OPEN-LEAD", "error",
               "more than 90 % of the potentials within +-5 mV of 0 and an interquartile "
               "range of 5 mV or less: open circuit (broken lead, no contact) or a "
               "disconnected reinforcement connection",
               "common practice, thresholds chosen here; a potential map of steel in concrete "
               "has spread [ASTM-C876-22a]"),
        QARule("QA-REVERSED-LEADS", "error",
               "more than 90 % of the potentials above +100 mV CSE: the leads are reversed",
               "common practice, thresholds chosen here; sign convention: the steel is on the "
               "voltmeter's positive terminal, so its potentials vs CSE read negative "
               "[ASTM-C876-22a]"),
        QARule("QA-ALL-OUTSIDE", "error", "every reading is outside the slab", _P),
        QARule("QA-NO-VALUES", "error", "no reading has both a value and a location", _P),
        QARule("QA-FEW-READINGS", "warning", "fewer usable readings than needed", _P),
        QARule("QA-GROUND-CONNECTION", "warning",
               "a potential survey has readings in a continuity region (the deck split by "
               "expansion or isolation joints) where it names no ground connection: a half-cell "
               "reading needs a connection to the mat it is on",
               "common practice [ACI-222R-19, from memory; ASTM-C876-22a]"),
    )
}

#: Columns of every flag table, in order.
FLAG_COLUMNS: list[str] = [
    "reading_id", "survey_id", "level_id", "where", "rule", "severity", "message", "value",
]
#: Columns a readings frame must hold (besides the value column).
CONTRACT_COLUMNS: list[str] = [
    "reading_id", "survey_id", "level_id", "row", "where", "point_id", "x_local", "y_local",
]
_SEVERITY_RANK = {"error": 0, "warning": 1, "info": 2}
_UNIT_SUFFIXES = (("_kohm_cm", "kOhm.cm"), ("_ua_cm2", "uA/cm2"), ("_mv", "mV"), ("_mm", "mm"))
_MIN_FOR_SURVEY_STATS = 3  # fewest readings for the open-lead / reversed-lead tests (our choice)


def _unit_of(value_column: str) -> str:
    for suffix, unit in _UNIT_SUFFIXES:
        if value_column.endswith(suffix):
            return unit
    return ""


def _is_potential(potential_rules: bool | None, value_column: str) -> bool:
    """Whether the potential rules apply: as the caller says, else for a value column in mV."""
    return value_column.endswith("_mv") if potential_rules is None else bool(potential_rules)


def _empty_flags() -> pd.DataFrame:
    cols: dict[str, pd.Series[Any]] = {c: pd.Series([], dtype=object) for c in FLAG_COLUMNS}
    cols["value"] = pd.Series([], dtype=float)
    return pd.DataFrame(cols)


@dataclass(frozen=True)
class _Readings:
    """Arrays of one or more surveys, checked against the contract."""

    rid: NDArray[np.object_]
    sid: NDArray[np.object_]
    lid: NDArray[np.object_]
    where: NDArray[np.object_]
    pid: NDArray[np.object_]
    x: NDArray[np.float64]
    y: NDArray[np.float64]
    v: NDArray[np.float64]

    @property
    def ok_xy(self) -> NDArray[np.bool_]:
        return np.isfinite(self.x) & np.isfinite(self.y)

    @property
    def ok_v(self) -> NDArray[np.bool_]:
        return np.isfinite(self.v)

    def flags(self, idx: NDArray[np.intp], rule: str, messages: Sequence[str]) -> pd.DataFrame:
        """Reading-level flags of the readings at positions ``idx``."""
        idx = np.asarray(idx, dtype=np.intp)
        return pd.DataFrame({
            "reading_id": self.rid[idx], "survey_id": self.sid[idx], "level_id": self.lid[idx],
            "where": self.where[idx], "rule": rule, "severity": QA_RULES[rule].severity,
            "message": list(messages), "value": self.v[idx],
        }, columns=FLAG_COLUMNS)

    def survey_flag(self, rule: str, message: str, value: float = np.nan) -> pd.DataFrame:
        """One survey-level flag (reading_id "")."""
        where = re.sub(r"\s+line\s+\d+\s*$", "", str(self.where[0])) if len(self.where) else ""
        return pd.DataFrame([{
            "reading_id": "", "survey_id": self.sid[0] if len(self.sid) else "",
            "level_id": self.lid[0] if len(self.lid) else "", "where": where, "rule": rule,
            "severity": QA_RULES[rule].severity, "message": f"{where}: {message}",
            "value": float(value),
        }], columns=FLAG_COLUMNS)


def _readings(frame: pd.DataFrame, value_column: str) -> _Readings:
    if not isinstance(frame, pd.DataFrame):
        raise QAError(f"QA expects a (Geo)DataFrame of readings, got {type(frame).__name__}")
    missing = [c for c in [*CONTRACT_COLUMNS, value_column] if c not in frame.columns]
    if missing:
        raise QAError(
            f"readings frame lacks column(s) {missing} needed by QA; it has "
            f"{list(frame.columns)}. Build it with geo_corrosion's ingest."
        )
    arrays: dict[str, NDArray[np.float64]] = {}
    for col in ("x_local", "y_local", value_column):
        try:
            arrays[col] = np.asarray(pd.to_numeric(frame[col], errors="raise"), dtype=float)
        except (TypeError, ValueError) as err:
            raise QAError(
                f"column {col!r} of the readings frame holds non-numeric values ({err}); "
                "convert it to numbers at ingest"
            ) from err

    def text(col: str) -> NDArray[np.object_]:
        return np.asarray(frame[col].fillna("").astype(str), dtype=object)

    return _Readings(text("reading_id"), text("survey_id"), text("level_id"), text("where"),
                     text("point_id"), arrays["x_local"], arrays["y_local"], arrays[value_column])


def _estimate_spacing(xy: NDArray[np.float64]) -> float | None:
    """Median distance to the nearest distinct neighbour, in local grid units."""
    if len(xy) < 2:
        return None
    d, _ = cKDTree(xy).query(xy, k=min(4, len(xy)))
    d = d[:, 1:].ravel()
    d = d[np.isfinite(d) & (d > 1e-9)]
    return float(np.median(d)) if len(d) else None


def _first_partner(i: NDArray[np.intp], j: NDArray[np.intp], key: NDArray[np.float64],
                   ) -> tuple[NDArray[np.intp], NDArray[np.intp], NDArray[np.intp]]:
    """For pairs (i, j), both directions: each reading, its partner of largest key, count."""
    a = np.concatenate([i, j])
    b = np.concatenate([j, i])
    k = np.concatenate([key, key])
    order = np.lexsort((-k, a))
    a, b = a[order], b[order]
    first = np.ones(len(a), dtype=bool)
    first[1:] = a[1:] != a[:-1]
    counts = np.diff(np.append(np.flatnonzero(first), len(a)))
    return a[first], b[first], counts


def _fmt(v: float) -> str:
    return f"{v:.1f}"


def _duplicate_pairs(r: _Readings, tol: float, sel: NDArray[np.bool_],
                     ) -> tuple[NDArray[np.intp], NDArray[np.intp]]:
    """Pairs of readings within ``tol`` of each other among ``sel``, not repeats of one point."""
    pos = np.flatnonzero(sel)
    if len(pos) < 2:
        e = np.empty(0, dtype=np.intp)
        return e, e
    xy = np.column_stack([r.x[pos], r.y[pos]])
    pairs = cKDTree(xy).query_pairs(r=tol, output_type="ndarray")
    i, j = pos[pairs[:, 0]], pos[pairs[:, 1]]
    same_point = (r.pid[i] == r.pid[j]) & (r.pid[i] != "")
    return i[~same_point], j[~same_point]


def _duplicate_flags(r: _Readings, i: NDArray[np.intp], j: NDArray[np.intp], tol: float,
                     rule: str) -> pd.DataFrame:
    """Flag both readings of each pair, naming the nearest other reading's where."""
    if not len(i):
        return _empty_flags()
    a, b, n = _first_partner(i, j, -np.hypot(r.x[i] - r.x[j], r.y[i] - r.y[j]))
    return r.flags(a, rule, [
        f"{r.where[p]}: same location as {r.where[q]}"
        + (f" of survey {r.sid[q]!r}" if r.sid[q] != r.sid[p] else "")
        + f" (within {tol:g} local units, point_id {r.pid[p]!r} vs {r.pid[q]!r})"
        + (f" and {c - 1} other reading(s)" if c > 1 else "")
        for p, q, c in zip(a, b, n, strict=True)])


def check_survey(
    frame: pd.DataFrame,
    *,
    kind: str,
    value_column: str,
    plausible_range: tuple[float, float],
    slab_local: shapely.Geometry | None,
    exclusions_local: Sequence[shapely.Geometry] = (),
    exclusion_names: Sequence[str] | None = None,
    spacing: float | None = None,
    potential_rules: bool | None = None,
    duplicate_tolerance: float | None = None,
    adjacent_limit_mv: float = 150.0,
    repeatability_mv: float = 10.0,
    reproducibility_mv: float = 20.0,
    min_readings: int = 10,
    open_lead_mv: float = 5.0,
    reversed_above_mv: float = 100.0,
    survey_share: float = 0.9,
) -> pd.DataFrame:
    """Check the readings of one survey; return one row per finding.

    Parameters
    ----------
    frame : geopandas.GeoDataFrame
        Readings of one survey with the contract columns :data:`CONTRACT_COLUMNS`
        and ``value_column``.  Potentials are already in mV vs CSE and corrected.
    kind : str
        Measurement kind name (the rules do not depend on it; see ``potential_rules``).
    value_column : str
        Column holding the canonical value, e.g. ``"potential_mv"``.
    plausible_range : (float, float)
        Lowest and highest plausible value, canonical unit of the kind (mV vs
        CSE for potentials: ``(-1000, 200)``, common practice).  Bounds are plausible.
    slab_local : shapely Polygon or MultiPolygon or None
        Slab outline in local grid coordinates; ``None`` skips the slab checks.
    exclusions_local : sequence of Polygon
        Exclusion areas (columns, cores, ramps, openings), local grid coordinates.
    exclusion_names : sequence of str, optional
        Names of the exclusions for messages; default ``"exclusion #<index>"``.
    spacing : float, optional
        Grid spacing, local grid units.  Estimated from the median nearest
        neighbour distance for the adjacency and moved-point checks when ``None``.
    potential_rules : bool, optional
        Apply the half-cell potential rules (adjacent readings, repeatability in mV, drift,
        stability, open lead, reversed leads): the pipeline passes the kind's ``grid_rules``.
        ``None``: apply them when ``value_column`` is in mV (ends in ``_mv``).
    duplicate_tolerance : float, optional
        Distance, local grid units, under which two readings share a location;
        default 0.1 x ``spacing``, or 1e-6 without a spacing.
    adjacent_limit_mv : float, mV
        Largest difference of adjacent grid readings, 150 mV [ASTM-C876-91 §5.1, from memory].
    repeatability_mv : float, mV
        Largest range of repeat readings of one point in one survey (10 mV).
    reproducibility_mv : float, mV
        Quoted in repeatability messages; the check itself is :func:`check_level`.
    min_readings : int
        Fewer usable readings than this gives a ``QA-FEW-READINGS`` warning.
    open_lead_mv : float, mV
        Half-width of the band around 0 mV of the open-lead test, and the largest
        interquartile range of an open lead (5 mV, common practice).
    reversed_above_mv : float, mV
        Potential vs CSE above which a reading counts towards reversed leads
        (+100 mV, common practice).
    survey_share : float
        Share (0-1) of the readings that must be in the open-lead band, or above
        ``reversed_above_mv``, for the survey flag: more than 0.9 (common practice).

    Returns
    -------
    pandas.DataFrame
        Flags with the columns :data:`FLAG_COLUMNS`; survey-level rows have
        ``reading_id == ""``.  No reading is removed from ``frame``.

    Raises
    ------
    QAError
        If the frame lacks contract columns, holds text in numeric columns, mixes
        surveys, or a parameter is out of range.
    """
    r = _readings(frame, value_column)
    if len(set(r.sid)) > 1:
        raise QAError(f"check_survey got readings of several surveys {sorted(set(r.sid))}; "
                      "pass one survey at a time (use check_level to compare surveys)")
    lo, hi = (float(plausible_range[0]), float(plausible_range[1]))
    if not lo < hi:
        raise QAError(f"plausible_range must be (low, high) with low < high, got {plausible_range}")
    if spacing is not None and not (np.isfinite(spacing) and spacing > 0):
        raise QAError(f"spacing must be a positive length in local grid units, got {spacing}")
    for name, val in (("adjacent_limit_mv", adjacent_limit_mv),
                      ("repeatability_mv", repeatability_mv),
                      ("reproducibility_mv", reproducibility_mv)):
        if not (np.isfinite(val) and val > 0):
            raise QAError(f"{name} must be a positive number of mV, got {val}")
    tol = _tolerance(duplicate_tolerance, spacing)
    unit = _unit_of(value_column)
    potential = _is_potential(potential_rules, value_column)
    ok_v, ok_xy = r.ok_v, r.ok_xy
    out: list[pd.DataFrame] = []

    # -- missing values / locations (common practice)
    idx = np.flatnonzero(~ok_v)
    why = ["infinite" if np.isinf(v) else "empty or NaN" for v in r.v[idx]]
    out.append(r.flags(idx, "QA-NAN-VALUE", [f"{w}: no usable {value_column} value ({y})"
                                             for w, y in zip(r.where[idx], why, strict=True)]))
    idx = np.flatnonzero(~ok_xy)
    out.append(r.flags(idx, "QA-NAN-XY", [f"{w}: no local x/y location" for w in r.where[idx]]))

    # -- plausible range (common practice)
    rng = f"[{lo:g}, {hi:g}] {unit}".rstrip()
    idx = np.flatnonzero(ok_v & (r.v < lo))
    extra = ("; more negative than the range: possible cathodic protection or stray current"
             if potential else "")
    out.append(r.flags(idx, "QA-RANGE-LOW", [
        f"{w}: {value_column} = {_fmt(v)} {unit} is below the plausible range {rng}: "
        f"implausible, check connection, electrode or units{extra}"
        for w, v in zip(r.where[idx], r.v[idx], strict=True)]))
    idx = np.flatnonzero(ok_v & (r.v > hi))
    out.append(r.flags(idx, "QA-RANGE-HIGH", [
        f"{w}: {value_column} = {_fmt(v)} {unit} is above the plausible range {rng}: "
        f"implausible, check connection, electrode or units"
        for w, v in zip(r.where[idx], r.v[idx], strict=True)]))

    # -- stability during the reading [ASTM-C876-15 procedure, from memory]
    if potential and "stability_range" in frame.columns:
        span = frame["stability_range"].to_numpy(dtype=float)
        idx = np.flatnonzero(np.isfinite(span) & (span > STABILITY_LIMIT_MV))
        out.append(r.flags(idx, "QA-UNSTABLE", [
            f"{w}: the reading changed by {_fmt(d)} mV while it settled (more than "
            f"{STABILITY_LIMIT_MV:g} mV): unstable, pre-wet required; pre-wet and read again"
            for w, d in zip(r.where[idx], span[idx], strict=True)]))

    # -- slab and exclusions (common practice)
    all_outside = False
    if slab_local is not None:
        inside = np.zeros(len(r.x), dtype=bool)
        inside[ok_xy] = shapely.intersects_xy(slab_local, r.x[ok_xy], r.y[ok_xy])
        idx = np.flatnonzero(ok_xy & ~inside)
        out.append(r.flags(idx, "QA-OUTSIDE-SLAB", [
            f"{w}: reading at local ({x:.3f}, {y:.3f}) is outside the slab outline"
            for w, x, y in zip(r.where[idx], r.x[idx], r.y[idx], strict=True)]))
        all_outside = bool(ok_xy.any()) and not bool(inside.any())
    out.append(_exclusion_flags(r, ok_xy, exclusions_local, exclusion_names))

    # -- duplicate locations with different point_id (common practice)
    out.append(_duplicate_flags(r, *_duplicate_pairs(r, tol, ok_xy), tol, "QA-DUPLICATE"))

    est = spacing if spacing is not None else _estimate_spacing(
        np.column_stack([r.x[ok_xy], r.y[ok_xy]]))
    out.append(_repeat_flags(r, potential, unit, repeatability_mv, reproducibility_mv, est))
    if potential and est is not None:
        out.append(_adjacent_flags(r, ok_v & ok_xy, est, tol, adjacent_limit_mv))

    # -- survey-level checks
    usable = ok_v & ok_xy
    n_ok = int(usable.sum())
    if n_ok == 0:
        out.append(r.survey_flag("QA-NO-VALUES", f"none of the {len(r.v)} readings has both a "
                                 "value and a location: the survey cannot be used"))
    elif n_ok < min_readings:
        out.append(r.survey_flag("QA-FEW-READINGS", f"only {n_ok} usable readings (fewer than "
                                 f"{min_readings}); the surface will be unreliable", n_ok))
    if potential:
        out.append(_lead_flags(r, open_lead_mv, reversed_above_mv, survey_share))
    if all_outside:
        out.append(r.survey_flag("QA-ALL-OUTSIDE", "every reading is outside the slab outline: "
                                 "check the local grid origin, rotation and units of the survey"))
    return _concat(out)


def _lead_flags(r: _Readings, band_mv: float, above_mv: float, share: float) -> pd.DataFrame:
    """Survey flags for an open lead or reversed leads (common practice, thresholds ours).

    A potential map of steel in concrete spreads over tens to hundreds of mV and reads
    negative vs CSE [ASTM-C876-22a]: more than ``share`` of the readings within
    ``+-band_mv`` of 0 with an interquartile range of at most ``band_mv`` is an open
    circuit; more than ``share`` above ``+above_mv`` is the leads swapped.
    """
    vals = r.v[r.ok_v]
    if len(vals) < _MIN_FOR_SURVEY_STATS:
        return _empty_flags()
    med = float(np.median(vals))
    q1, q3 = (float(q) for q in np.percentile(vals, [25, 75]))
    iqr = q3 - q1
    positive = float(np.mean(vals > 0))
    in_band = float(np.mean(np.abs(vals) <= band_mv))
    above = float(np.mean(vals > above_mv))
    figures = (f"{positive:.0%} of the {len(vals)} readings positive, median {_fmt(med)} mV, "
               f"interquartile range {_fmt(iqr)} mV ({_fmt(q1)} to {_fmt(q3)} mV), "
               f"range {_fmt(float(vals.min()))} to {_fmt(float(vals.max()))} mV")
    out = []
    if in_band > share and iqr <= band_mv:
        out.append(r.survey_flag(
            "QA-OPEN-LEAD", f"open lead: {in_band:.0%} of the readings are within "
            f"+-{band_mv:g} mV of 0 (more than {share:.0%}) with no spread; {figures}. "
            "A potential map of steel in concrete is not flat at 0 mV: the circuit is open "
            "(broken lead, dry or lifted electrode, no contact) or the connection to the "
            "reinforcement is lost. Check the lead, the clamp on the steel and its continuity "
            "(resistance between two far bars), then read the survey again; it cannot be used",
            med))
    if above > share:
        out.append(r.survey_flag(
            "QA-REVERSED-LEADS", f"leads reversed: {above:.0%} of the readings are above "
            f"+{above_mv:g} mV CSE (more than {share:.0%}); {figures}. Corrosion potentials of "
            "steel in concrete read negative vs CSE: the probable cause is the leads swapped at "
            "the voltmeter. Check that the reinforcement connection is on the positive terminal "
            "and the reference electrode on the negative (common) one, and the reading of a "
            "known point; read the survey again rather than flip the signs, unless the field "
            "notes confirm the swap", med))
    return _concat(out)


def _tolerance(duplicate_tolerance: float | None, spacing: float | None) -> float:
    if duplicate_tolerance is not None:
        if not (np.isfinite(duplicate_tolerance) and duplicate_tolerance >= 0):
            raise QAError(f"duplicate_tolerance must be a length >= 0, got {duplicate_tolerance}")
        return float(duplicate_tolerance)
    return 0.1 * float(spacing) if spacing is not None else 1e-6


def _exclusion_flags(r: _Readings, ok_xy: NDArray[np.bool_], exclusions: Sequence[Any],
                     names: Sequence[str] | None) -> pd.DataFrame:
    excl = list(exclusions)
    if not excl or not ok_xy.any():
        return _empty_flags()
    if names is not None and len(names) != len(excl):
        raise QAError(f"exclusion_names has {len(names)} names for {len(excl)} exclusions")
    labels = list(names) if names is not None else [f"exclusion #{k}" for k in range(len(excl))]
    pos = np.flatnonzero(ok_xy)
    hit_pt: list[NDArray[np.intp]] = []
    hit_ex: list[NDArray[np.intp]] = []
    for k, poly in enumerate(excl):
        m = shapely.contains_xy(poly, r.x[pos], r.y[pos])  # boundary is not inside
        hit_pt.append(pos[m])
        hit_ex.append(np.full(int(m.sum()), k, dtype=np.intp))
    pts, exs = np.concatenate(hit_pt), np.concatenate(hit_ex)
    if not len(pts):
        return _empty_flags()
    df = pd.DataFrame({"p": pts, "k": exs}).sort_values(["p", "k"])
    grouped = df.groupby("p", sort=True)["k"].agg(list)
    idx = grouped.index.to_numpy(dtype=np.intp)
    return r.flags(idx, "QA-IN-EXCLUSION", [
        f"{r.where[p]}: reading is inside {', '.join(labels[k] for k in ks)} "
        f"(0-based index {', '.join(str(k) for k in ks)} of the level's exclusions)"
        for p, ks in zip(idx, grouped.to_numpy(), strict=True)])


def _diff_flags(r: _Readings, df: pd.DataFrame, d: NDArray[np.float64], heads: list[str],
                rules: tuple[str, str], potential: bool, limit: float, what: str,
                note: Callable[[float], str] | None = None) -> pd.DataFrame:
    """Flag point differences ``d`` against ``limit`` (warning rule, info rule)."""
    fail = (d > limit) if potential else np.zeros(len(d), dtype=bool)
    msgs = np.asarray([
        f"{h} (no {what} tolerance for this kind)" if not potential
        else f"{h} > {limit:g} mV {what}{note(dd) if note else ''}" if bad
        else f"{h} <= {limit:g} mV {what}: pass"
        for h, bad, dd in zip(heads, fail, d, strict=True)], dtype=object)
    pos = df["pos"].to_numpy(dtype=np.intp)
    return _concat([r.flags(pos[fail], rules[0], msgs[fail].tolist()),
                    r.flags(pos[~fail], rules[1], msgs[~fail].tolist())])


def _repeat_flags(r: _Readings, potential: bool, unit: str, repeat_mv: float, repro_mv: float,
                  spacing: float | None) -> pd.DataFrame:
    """Repeats of one point_id in one survey [ASTM-C876-15 precision section, from memory]."""
    pos = np.flatnonzero((r.pid != "") & r.ok_v)
    df = pd.DataFrame({"pos": pos, "pid": r.pid[pos], "v": r.v[pos], "x": r.x[pos],
                       "y": r.y[pos]})
    df = df[df.groupby("pid")["pid"].transform("size") > 1]
    if df.empty:
        return _empty_flags()
    g = df.groupby("pid", sort=False)
    d = (g["v"].transform("max") - g["v"].transform("min")).to_numpy(dtype=float)
    spread = np.hypot((g["x"].transform("max") - g["x"].transform("min")).to_numpy(dtype=float),
                      (g["y"].transform("max") - g["y"].transform("min")).to_numpy(dtype=float))
    members = g["pos"].agg(list)
    heads = [f"{r.where[p]}: point_id {pid!r} read {len(members[pid])} times in this survey "
             f"(also {', '.join(str(r.where[q]) for q in members[pid] if q != p)}); "
             f"difference {_fmt(dd)} {unit}".rstrip()
             for p, pid, dd in zip(df["pos"], df["pid"], d, strict=True)]
    out = [_diff_flags(
        r, df, d, heads, ("QA-REPEATABILITY", "QA-REPEAT"), potential, repeat_mv,
        "repeatability", lambda dd: f" ({'within' if dd <= repro_mv else 'also beyond'} the "
                                    f"{repro_mv:g} mV reproducibility)")]
    if potential:
        out.append(_drift_flag(r, df, repro_mv))
    if spacing is not None:
        moved = np.isfinite(spread) & (spread > 0.5 * spacing)
        sub = df[moved]
        out.append(r.flags(sub["pos"].to_numpy(dtype=np.intp), "QA-POINT-MOVED", [
            f"{r.where[p]}: point_id {pid!r} is read at locations up to {sp:.3f} local units "
            f"apart (more than half the {spacing:g} spacing); check the point_id"
            for p, pid, sp in zip(sub["pos"], sub["pid"], spread[moved], strict=True)]))
    return _concat(out)


def _drift_flag(r: _Readings, df: pd.DataFrame, limit_mv: float) -> pd.DataFrame:
    """One survey flag when a point's first and last readings (file order) differ > limit.

    Control points are read at the start and the end of a shift; a change beyond the
    limit means the electrode or its contact changed, so the whole survey may be shifted
    (common practice).  Reported once per survey, listing the points.
    """
    g = df.sort_values("pos").groupby("pid", sort=False)
    first, last = g.first(), g.last()
    drift = (last["v"] - first["v"]).to_numpy(dtype=float)
    bad = np.abs(drift) > limit_mv
    if not bad.any():
        return _empty_flags()
    items = [f"{pid!r} {_fmt(dv)} mV ({r.where[a]} to {r.where[b]})"
             for pid, dv, a, b in zip(first.index[bad], drift[bad], first["pos"][bad],
                                      last["pos"][bad], strict=True)]
    worst = float(drift[bad][np.argmax(np.abs(drift[bad]))])
    return r.survey_flag(
        "QA-DRIFT", f"{len(items)} point(s) read at the start and the end drifted by more "
        f"than {limit_mv:g} mV: {'; '.join(items)}. Check the reference electrode (against a "
        "master electrode) and its contact; the survey's potentials may be offset", worst)


def _adjacent_flags(r: _Readings, sel: NDArray[np.bool_], spacing: float, tol: float,
                    limit_mv: float) -> pd.DataFrame:
    """Adjacent grid readings differing by more than the limit [ASTM-C876-91 §5.1, from memory]."""
    pos = np.flatnonzero(sel)
    if len(pos) < 2:
        return _empty_flags()
    xy = np.column_stack([r.x[pos], r.y[pos]])
    pairs = cKDTree(xy).query_pairs(r=1.5 * spacing, output_type="ndarray")
    i, j = pos[pairs[:, 0]], pos[pairs[:, 1]]
    dx, dy = np.abs(r.x[i] - r.x[j]), np.abs(r.y[i] - r.y[j])
    axis = (np.minimum(dx, dy) <= 0.25 * spacing) & (np.hypot(dx, dy) > max(tol, 1e-9))
    i, j = i[axis], j[axis]
    dv = np.abs(r.v[i] - r.v[j])
    n = len(r.v)
    n_nb = np.bincount(np.concatenate([i, j]), minlength=n)
    big = dv > limit_mv
    if not big.any():
        return _empty_flags()
    bi, bj, dvb = i[big], j[big], dv[big]
    n_big = np.bincount(np.concatenate([bi, bj]), minlength=n)
    a, b, _ = _first_partner(bi, bj, dvb)
    dmax = np.abs(r.v[a] - r.v[b])
    spike = (n_nb[a] >= 2) & (n_big[a] == n_nb[a])
    out = []
    for rule, m, tail in (("QA-ADJ-SPIKE", spike, "local spike (check the reading)"),
                          ("QA-ADJ-150", ~spike, "grid too coarse here or local spike")):
        aa, bb, dd = a[m], b[m], dmax[m]
        out.append(r.flags(aa, rule, [
            f"{r.where[p]}: differs by {_fmt(d)} mV (> {limit_mv:g} mV) from grid neighbour "
            f"{r.where[q]}; {n_big[p]} of {n_nb[p]} axis neighbour(s) beyond the limit: {tail}"
            for p, q, d in zip(aa, bb, dd, strict=True)]))
    return _concat(out)


def _concat(parts: Sequence[pd.DataFrame]) -> pd.DataFrame:
    parts = [p for p in parts if len(p)]
    if not parts:
        return _empty_flags()
    out = pd.concat(parts, ignore_index=True)
    out["value"] = out["value"].astype(float)
    return out[FLAG_COLUMNS]


def check_level(
    frames: Sequence[pd.DataFrame],
    *,
    kind: str,
    value_column: str,
    spacing: float | None = None,
    potential_rules: bool | None = None,
    duplicate_tolerance: float | None = None,
    reproducibility_mv: float = 20.0,
) -> pd.DataFrame:
    """Compare the surveys of one level and kind.

    Parameters
    ----------
    frames : sequence of geopandas.GeoDataFrame
        One contract frame per survey, all of one level and one kind.
    kind, value_column : str
        As in :func:`check_survey`.
    spacing : float, optional
        Grid spacing, local grid units (for the default duplicate tolerance).
    potential_rules : bool, optional
        As in :func:`check_survey` (the reproducibility tolerance in mV).
    duplicate_tolerance : float, optional
        Distance, local grid units, under which readings of two surveys share a
        location; default 0.1 x ``spacing``, or 1e-6 without a spacing.
    reproducibility_mv : float, mV
        Largest difference between the survey means of one point_id (20 mV,
        [ASTM-C876-15 precision section, from memory]).

    Returns
    -------
    pandas.DataFrame
        Flags (:data:`FLAG_COLUMNS`): ``QA-REPRO`` / ``QA-REPRODUCIBILITY`` for
        each reading of a point read in several surveys, ``QA-DUP-SURVEYS`` for
        readings of two surveys at one location under different point_ids.

    Raises
    ------
    QAError
        If the frames are of different levels, repeat a survey, or break the contract.
    """
    if isinstance(frames, pd.DataFrame):  # type: ignore[unreachable]  # a caller's slip, typed away
        raise QAError("check_level expects a sequence of survey frames, not one frame")
    frames = [f for f in frames if len(f)]
    if len(frames) < 2:
        return _empty_flags()
    if not (np.isfinite(reproducibility_mv) and reproducibility_mv > 0):
        raise QAError(f"reproducibility_mv must be a positive number of mV, got "
                      f"{reproducibility_mv}")
    parts = [_readings(f, value_column) for f in frames]
    r = _Readings(*(np.concatenate([getattr(p, k) for p in parts]) for k in
                    ("rid", "sid", "lid", "where", "pid", "x", "y", "v")))
    if len(set(r.lid)) > 1:
        raise QAError(f"check_level got surveys of several levels {sorted(set(r.lid))}; "
                      "pass the surveys of one level at a time")
    sids = [p.sid[0] for p in parts]
    if len(set(sids)) < len(sids) or any(len(set(p.sid)) > 1 for p in parts):
        raise QAError(f"check_level needs one frame per survey, got survey ids {sids}")
    tol = _tolerance(duplicate_tolerance, spacing)
    potential = _is_potential(potential_rules, value_column)
    unit = _unit_of(value_column)
    out: list[pd.DataFrame] = [_repro_flags(r, potential, unit, reproducibility_mv)]

    i, j = _duplicate_pairs(r, tol, r.ok_xy)
    cross = r.sid[i] != r.sid[j]
    out.append(_duplicate_flags(r, i[cross], j[cross], tol, "QA-DUP-SURVEYS"))
    return _concat(out)


def _repro_flags(r: _Readings, potential: bool, unit: str, repro_mv: float) -> pd.DataFrame:
    """One point_id in several surveys: difference of survey means [ASTM-C876-15, from memory]."""
    pos = np.flatnonzero((r.pid != "") & r.ok_v)
    df = pd.DataFrame({"pos": pos, "pid": r.pid[pos], "sid": r.sid[pos], "v": r.v[pos]})
    df = df[df.groupby("pid")["sid"].transform("nunique") > 1]
    if df.empty:
        return _empty_flags()
    means = df.groupby(["pid", "sid"], sort=False)["v"].mean().groupby(level="pid")
    d = df["pid"].map(means.max() - means.min()).to_numpy(dtype=float)
    surveys = df.groupby("pid", sort=False)["sid"].agg(lambda s: sorted(set(s)))
    heads = [f"{r.where[p]}: point_id {pid!r} also read in survey(s) "
             f"{', '.join(repr(s) for s in surveys[pid] if s != sid)}; difference between "
             f"survey means {_fmt(dd)} {unit}".rstrip()
             for p, pid, sid, dd in zip(df["pos"], df["pid"], df["sid"], d, strict=True)]
    return _diff_flags(r, df, d, heads, ("QA-REPRODUCIBILITY", "QA-REPRO"), potential,
                       repro_mv, "reproducibility")


def summarize(flags: pd.DataFrame) -> pd.DataFrame:
    """Count flags by level, survey, rule and severity.

    Returns
    -------
    pandas.DataFrame
        Columns ``level_id, survey_id, rule, severity, count``, errors first.
    """
    cols = ["level_id", "survey_id", "rule", "severity"]
    _require(flags, cols)
    if flags.empty:
        return pd.DataFrame({**{c: pd.Series([], dtype=object) for c in cols},
                             "count": pd.Series([], dtype=np.int64)})
    out = flags.groupby(cols, sort=False).size().reset_index(name="count")
    out["_rank"] = out["severity"].map(_SEVERITY_RANK).fillna(9)
    out = out.sort_values(["level_id", "survey_id", "_rank", "rule"], kind="stable")
    return out.drop(columns="_rank").reset_index(drop=True)


def count_line(flags: pd.DataFrame) -> str:
    """Return the flags counted by severity in one line, most severe first.

    Examples
    --------
    >>> import pandas as pd
    >>> count_line(pd.DataFrame({"severity": ["info", "warning", "warning"]}))
    '3 QA flags: 0 errors, 2 warnings, 1 note'
    >>> count_line(pd.DataFrame({"severity": []}))
    'no QA flags'
    """
    _require(flags, ["severity"])
    if flags.empty:
        return "no QA flags"
    sev = flags["severity"]

    def n(count: int, word: str) -> str:
        return f"{count} {word}{'' if count == 1 else 's'}"

    return (f"{n(len(flags), 'QA flag')}: {n(int((sev == 'error').sum()), 'error')}, "
            f"{n(int((sev == 'warning').sum()), 'warning')}, "
            f"{n(int((sev == 'info').sum()), 'note')}")


def runnable(flags: pd.DataFrame) -> bool:
    """Tell whether the site can be run: ``False`` if any flag has severity ``"error"``.

    Examples
    --------
    >>> import pandas as pd
    >>> runnable(pd.DataFrame({"severity": ["info", "warning"]}))
    True
    >>> runnable(pd.DataFrame({"severity": ["warning", "error"]}))
    False
    """
    _require(flags, ["severity"])
    return not bool((flags["severity"] == "error").any())


def _require(flags: pd.DataFrame, cols: Sequence[str]) -> None:
    if not isinstance(flags, pd.DataFrame) or any(c not in flags.columns for c in cols):
        raise QAError(f"expected a flag table with columns {list(cols)} (from check_survey)")


def flag_points(flags: pd.DataFrame, frames: Sequence[gpd.GeoDataFrame]) -> gpd.GeoDataFrame:
    """Reading-level flags as a point layer in the readings' CRS (survey-level rows left out).

    Parameters
    ----------
    flags : pandas.DataFrame
        Flags from :func:`check_survey` / :func:`check_level`.
    frames : sequence of geopandas.GeoDataFrame
        The contract frames the flags came from.

    Returns
    -------
    geopandas.GeoDataFrame
        :data:`FLAG_COLUMNS` plus ``geometry``, one point per flag.
    """
    _require(flags, FLAG_COLUMNS)
    frames = list(frames)
    crs = next((f.crs for f in frames if getattr(f, "crs", None) is not None), None)
    if frames:
        geo = pd.concat([pd.DataFrame({"reading_id": f["reading_id"].astype(str).to_numpy(),
                                       "geometry": np.asarray(f.geometry.values)})
                         for f in frames], ignore_index=True)
        geo = geo.drop_duplicates("reading_id")
    else:
        geo = pd.DataFrame({"reading_id": pd.Series([], dtype=object),
                            "geometry": pd.Series([], dtype=object)})
    sub = flags[flags["reading_id"] != ""]
    merged = sub.merge(geo, on="reading_id", how="left")
    return gpd.GeoDataFrame(merged[[*FLAG_COLUMNS, "geometry"]], geometry="geometry", crs=crs)


def format_flags(flags: pd.DataFrame, *, max_rows: int = 50, min_severity: Severity = "info",
                 ) -> str:
    """Plain-text listing of the flags, errors first, for the command line.

    Parameters
    ----------
    flags : pandas.DataFrame
        Flags from :func:`check_survey` / :func:`check_level`.
    max_rows : int
        At most this many flags are listed; the rest are counted.
    min_severity : {"info", "warning", "error"}
        Least severe flag listed.
    """
    _require(flags, FLAG_COLUMNS)
    limit = _SEVERITY_RANK[min_severity]
    rank = flags["severity"].map(_SEVERITY_RANK).fillna(9)
    shown = flags[rank <= limit].assign(_r=rank).sort_values("_r", kind="stable")
    lines = [f"{s.upper():7s} {rule:18s} {m}" for s, rule, m in
             zip(shown["severity"][:max_rows], shown["rule"][:max_rows],
                 shown["message"][:max_rows], strict=True)]
    if len(shown) > max_rows:
        lines.append(f"... and {len(shown) - max_rows} more")
    n_err = int((flags["severity"] == "error").sum())
    lines.append(f"{len(flags)} flag(s), {n_err} error(s): site "
                 + ("can be run" if n_err == 0 else "cannot be run"))
    return "\n".join(lines)


def ground_connection_flags(
    frame: pd.DataFrame,
    regions: Sequence[Any],
    connections: Sequence[tuple[str, float, float]],
    *,
    value_column: str,
    survey: str,
    level: str,
) -> pd.DataFrame:
    """Flag each continuity region that holds readings of a survey but none of its connections.

    Only a survey whose readings lie in two or more regions is checked: on one region the
    voltmeter's connection is to that mat, wherever it is recorded.

    Parameters
    ----------
    frame : DataFrame
        The survey's readings (reading-frame contract).
    regions : sequence of shapely geometries
        The level's continuity regions (:meth:`geo_corrosion.model.site.Level.continuity_regions`).
    connections : sequence of (label, x, y)
        The survey's ground connections, local grid.
    value_column : str
        The kind's value column (readings without value or location are not counted).
    survey, level : str
        Ids, for the flag rows.

    Returns
    -------
    DataFrame
        One survey-level ``QA-GROUND-CONNECTION`` flag per region without a connection.
    """
    r = _readings(frame, value_column)
    ok = r.ok_xy & r.ok_v
    if len(regions) < 2 or not ok.any():
        return _empty_flags()
    lab = region_labels(regions, r.x[ok], r.y[ok])
    used = sorted(set(lab.tolist()))
    if len(used) < 2:
        return _empty_flags()
    gl = (region_labels(regions, [c[1] for c in connections], [c[2] for c in connections])
          if connections else np.array([], dtype=np.intp))
    out = []
    for k in used:
        if (gl == k).any():
            continue
        at = regions[k].representative_point()
        n = int((lab == k).sum())
        named = (", ".join(f"{gc[0]!r} in region {int(g) + 1}" for gc, g in
                           zip(connections, gl, strict=True)) or "none")
        out.append(r.survey_flag(
            "QA-GROUND-CONNECTION",
            f"survey {survey!r} has {n} reading(s) in continuity region {k + 1} of "
            f"{len(regions)} of level {level!r} (around ({at.x:.1f}, {at.y:.1f}), bounded by "
            "expansion or isolation joints) but names no ground connection there (its "
            f"ground_connections: {named}); a half-cell reading needs a connection to the mat "
            "it is on: connect the voltmeter to the bars of each region and record it in "
            "ground_connections, or check the joint type", float(n)))
    return _concat(out) if out else _empty_flags()

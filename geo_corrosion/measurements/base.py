"""The measurement-kind plugin interface.

A measurement kind declares its canonical unit and the input units it accepts (with their
factors), a plausibility range, the corrections applied at ingest, how it is kriged and
classified, and what is particular to it in QA, contouring, the condition assessment,
zoning and the maps (class attributes and hooks below).  Generic code never tests a kind's
name: it reads these attributes, or asks for the kind that plays a :class:`Role` (the
potential surface, the cover surface, ...).  Built-ins: ``potential``, ``resistivity``,
``corrosion_rate``, ``cover``.  A firm adds its own (say, chloride content at bar depth) by
subclassing :class:`MeasurementKind` and registering the class under the entry-point group
``geo_corrosion.measurements``.
"""

from __future__ import annotations

import math
from collections.abc import Collection, Mapping
from dataclasses import dataclass
from enum import StrEnum
from pathlib import Path
from typing import TYPE_CHECKING, Any, ClassVar, Literal

import numpy as np
import pandas as pd
from numpy.typing import ArrayLike, NDArray

from geo_corrosion.errors import PluginError, UnitError
from geo_corrosion.units import conversion_factors, convert_with

if TYPE_CHECKING:
    from geo_corrosion.condition.classes import ClassSet
    from geo_corrosion.config import RunParams, SurveyConfig

__all__ = ["MeasurementKind", "Role", "Threshold", "raw_mask", "numeric_column",
           "location_label"]


class Role(StrEnum):
    """What a kind's surface stands for in the generic stages (a kind may play several).

    The first three are the columns of the combined-condition rule table
    (:mod:`geo_corrosion.condition.combined`); ``cover`` gives the low-cover areas.
    """

    #: half-cell potential: probability of corrosion (C876 classes, the zoning's classes,
    #: the cumulative-frequency plot, the surface shown when the web map opens)
    POTENTIAL = "potential"
    #: concrete resistivity: corrosion risk
    RESISTIVITY = "resistivity"
    #: corrosion rate
    RATE = "rate"
    #: concrete cover over the bars, mm: low cover, depth classes of repairs, life estimates
    COVER = "cover"


@dataclass(frozen=True)
class Threshold:
    """The threshold of a kind's "area beyond threshold" statement and probability map.

    Attributes
    ----------
    value : float
        In the kind's canonical unit.
    direction : {"below", "above"}
        Beyond the threshold means below it (potential, resistivity) or above it (rate).
    meaning : str
        What being beyond it means, for run.json, the maps and the report
        (``"more negative than -350 mV CSE"``).
    source : str
        Where the value comes from.
    statement : str
        Optional lead of the report's statement (``"The area likely to be corroding"``);
        empty: ``"The area with <meaning>"``.
    """

    value: float
    direction: Literal["below", "above"]
    meaning: str
    source: str
    statement: str = ""

    def __post_init__(self) -> None:
        if self.direction not in ("below", "above"):
            raise PluginError(f"threshold direction must be 'below' or 'above', "
                              f"got {self.direction!r}")
        if not math.isfinite(float(self.value)):
            raise PluginError(f"threshold value must be a finite number, got {self.value!r}")


class MeasurementKind:
    """Base class of measurement kinds.

    Class attributes
    ----------------
    name : str
        Registry name used in site files (``kind = "potential"``).
    label : str
        Human label with unit, for maps and plots.
    value_column : str
        Canonical column name, carrying the unit (``potential_mv``).
    canonical_unit : str
        The unit of ``value_column``: every value is converted to it at ingest.
    units : mapping of str to float
        Input units this kind accepts, each with the factor that converts a value in it to
        ``canonical_unit`` (``{"%": 1.0, "ppm": 1e-4}``).  Spellings are matched without
        white space and in any case; the canonical unit is always accepted (factor 1).
    accepted_units : tuple of str
        Input units known to :mod:`geo_corrosion.units` (``"ohm.m"``): their factors come from
        that module's table, and its aliases (``"Ω·m"``) are accepted.  The built-ins use
        this; :attr:`units` wins for a unit given in both.
    plausible_range : (float, float)
        Values outside are flagged by QA (in the canonical unit).
    krige_transform : {None, "log"}
        ``"log"`` for lognormal kinds, kriged in log space.
    contour_interval : float
        Default contour interval in the canonical unit (see :meth:`contour_interval_for`).
    max_contour_interval : float or None
        Largest contour interval allowed (canonical unit), with its source in
        ``max_contour_interval_source``; a coarser one is refused before any work.
    contour_interval_setting : str
        The site-file key that sets the interval, for messages (``"[run].contour_interval_mv"``);
        empty when the interval is the class default.
    class_set : str or ClassSet or None
        The kind's class set: a name of :mod:`geo_corrosion.condition.classes` or a
        :class:`~geo_corrosion.condition.classes.ClassSet` object (a plugin's own classes).
    roles : frozenset of Role
        What the kind's surface stands for in the generic stages (:class:`Role`).
    threshold : Threshold or None
        Threshold of the probability map and of the "area beyond threshold" statement.
    condition_order : int
        Place of the kind's statements in the condition assessment (run.json, report):
        lower first, then by name.
    mixture_threshold : bool
        Fit the site-specific two-population threshold of potentials (RILEM TC 154
        statistical evaluation) to the kind's readings (the first such kind of a level).
    grid_rules : bool
        The kind is a half-cell potential survey read on the level's grid (mV): QA takes the
        grid spacing and applies the potential rules (adjacent readings, repeatability and
        reproducibility, drift, stability during the reading, open lead, reversed leads).
    electrode_temperature : bool
        QA checks the reading temperatures against the reference electrode's range
        (``QA-TEMP-RANGE``).
    severity_direction : int
        +1: larger values are more severe; -1: smaller ones are (colour ramps of the maps).
    class_map_contours : bool
        Draw the contour lines on the kind's class map (the C876 equipotential map).
    needs_continuity : bool
        A reading is taken against the reinforcing mat through a connection to it, and its
        value is the mat's potential there: the surface is kriged in each continuity region
        (the deck split by joints that break the mat's electrical continuity) from that
        region's readings only, and a survey spanning regions names a ground connection in
        each (``QA-GROUND-CONNECTION``) [ACI-222R-19, from memory; ASTM-C876-22a].
    class_layer_titles : (str, str) or None
        Layer-control label and legend title of the kind's class layer in the web map;
        None: ``"<name> classes"``.
    raw_columns : tuple of str
        Raw instrument columns (numbers, their unit in the name) read at ingest
        when the file has them; from them :meth:`derive` computes the value
        when the file has no value column (see ``docs/raw-readings.md``).
    option_keys : tuple of str
        Keys accepted in the survey's ``[surveys.options]`` table.

    Hooks: :meth:`parse_options`, :meth:`check_survey`, :meth:`can_derive`, :meth:`derive`,
    :meth:`correct`, :meth:`contour_interval_for` and :meth:`life_estimates`.
    """

    name: ClassVar[str] = ""
    label: ClassVar[str] = ""
    value_column: ClassVar[str] = "value"
    canonical_unit: ClassVar[str] = ""
    units: ClassVar[Mapping[str, float]] = {}
    accepted_units: ClassVar[tuple[str, ...]] = ()
    plausible_range: ClassVar[tuple[float, float]] = (-np.inf, np.inf)
    krige_transform: ClassVar[str | None] = None
    contour_interval: ClassVar[float] = 1.0
    max_contour_interval: ClassVar[float | None] = None
    max_contour_interval_source: ClassVar[str] = ""
    contour_interval_setting: ClassVar[str] = ""
    class_set: ClassVar[str | ClassSet | None] = None
    roles: ClassVar[frozenset[Role]] = frozenset()
    threshold: ClassVar[Threshold | None] = None
    condition_order: ClassVar[int] = 100
    mixture_threshold: ClassVar[bool] = False
    grid_rules: ClassVar[bool] = False
    electrode_temperature: ClassVar[bool] = False
    severity_direction: ClassVar[int] = 1
    class_map_contours: ClassVar[bool] = False
    needs_continuity: ClassVar[bool] = False
    class_layer_titles: ClassVar[tuple[str, str] | None] = None
    raw_columns: ClassVar[tuple[str, ...]] = ()
    option_keys: ClassVar[tuple[str, ...]] = ()

    @classmethod
    def unit_factors(cls) -> dict[str, float]:
        """Return every accepted input unit with the factor that converts it to the canonical one.

        Raises
        ------
        PluginError
            A factor that is not a positive finite number, or an ``accepted_units`` entry
            unknown to :mod:`geo_corrosion.units` (the kind is then unusable as written).
        """
        try:
            out = conversion_factors(cls.canonical_unit, cls.accepted_units)
        except UnitError as err:
            raise PluginError(f"measurement kind {cls.name!r}: accepted_units: {err}; declare "
                              "the unit with its factor in `units` instead") from err
        for u, f in cls.units.items():
            try:
                ok = math.isfinite(float(f)) and float(f) > 0
            except (TypeError, ValueError):
                ok = False
            if not ok:
                raise PluginError(f"measurement kind {cls.name!r}: units[{u!r}] = {f!r}; a "
                                  f"factor to {cls.canonical_unit!r} must be a positive number")
            out[str(u)] = float(f)
        if cls.canonical_unit and cls.canonical_unit not in out:
            out[cls.canonical_unit] = 1.0
        return out

    def contour_interval_for(self, params: RunParams) -> float:
        """Return this kind's contour interval in a run (canonical unit).

        The base kind takes :attr:`contour_interval`; the potential kind takes the site
        file's ``[run].contour_interval_mv``.
        """
        return float(self.contour_interval)

    def class_set_object(self) -> ClassSet | None:
        """Return the kind's :class:`~geo_corrosion.condition.classes.ClassSet` (None if none)."""
        from geo_corrosion.condition.classes import get_class_set

        return None if self.class_set is None else get_class_set(self.class_set)

    def life_estimates(
        self, frame: pd.DataFrame, cover_mm: NDArray[np.float64] | None, *,
        bar_diameter_mm: float, deck_area: float | None = None,
    ) -> tuple[pd.DataFrame, dict[str, Any]] | None:
        """Return the survey's frame with life estimates added, and their summary; or None.

        Called for every survey of a level that has a surface.  ``cover_mm`` is the kriged
        cover at each reading (NaN off the cover surface), or None when the level has no
        surface of the :attr:`Role.COVER` kind.  ``deck_area`` is the level's deck area in
        the plan length unit squared (None when unknown).  The frame given must not be
        changed.  The
        base kind estimates nothing (None); the corrosion-rate kind gives section loss and
        time to cover cracking.
        """
        return None

    def to_canonical(self, values: ArrayLike, unit: str, *, where: str = "") -> NDArray[np.float64]:
        """Convert raw values from ``unit`` to the canonical unit (:meth:`unit_factors`).

        Raises
        ------
        UnitError
            If the unit is not accepted for this kind; the message lists the accepted ones.
        """
        try:
            return convert_with(values, unit, self.unit_factors())
        except UnitError as err:
            raise UnitError(f"{where}{err} (for {self.name} readings)") from err

    def parse_options(
        self, options: Mapping[str, Any], *, where: str, root: Path
    ) -> dict[str, Any]:
        """Validate a survey's ``[surveys.options]`` table and return it parsed.

        The base kind takes no options: any key is refused.  Kinds with options
        override this; returned keys carry their unit (``probe_spacing_mm``).

        Parameters
        ----------
        options : mapping
            The table as read from TOML.
        where : str
            Where the table is in the site file, for messages.
        root : Path
            Site folder, against which relative paths are resolved.

        Raises
        ------
        SiteFileError
            An unknown key (the message lists the allowed ones) or a bad value.
        """
        from geo_corrosion._toml import OptionsTable
        from geo_corrosion.errors import SiteFileError

        if options and not self.option_keys:
            raise SiteFileError(
                f"{where}: {self.name} surveys take no options "
                f"(got {', '.join(map(repr, options))}); "
                "remove the [surveys.options] table"
            )
        OptionsTable(dict(options), where, self.option_keys)
        return {}

    def can_derive(self, columns: Collection[str], survey: SurveyConfig) -> bool:
        """Whether readings without a value column can be derived from ``columns`` (raw ones)."""
        return False

    def derive(
        self, frame: pd.DataFrame, survey: SurveyConfig, params: RunParams
    ) -> tuple[pd.DataFrame, list[dict[str, Any]]]:
        """Derive the value column from raw instrument columns (before :meth:`correct`).

        Called for every survey.  Readings whose ``value_source`` is ``"raw"``
        have no value yet; a kind computes it here.  A problem with one reading
        never raises: its value becomes NaN and the column ``derive_message``
        says why, naming the location; readings without a problem get ``""``.
        Only survey-wide impossibilities raise (SiteFileError).  The base kind
        derives nothing.

        Returns
        -------
        frame : DataFrame
        records : list of dict
            What was derived and checked, with sources (for run.json).
        """
        return frame, []

    def check_survey(self, survey: SurveyConfig) -> None:
        """Validate kind-specific survey settings (electrode, temperature); raise on error."""

    def correct(
        self, frame: pd.DataFrame, survey: SurveyConfig, params: RunParams
    ) -> tuple[pd.DataFrame, list[dict[str, Any]]]:
        """Apply this kind's corrections in place of the value column.

        Every correction is recorded per reading in its own column so the raw
        value is never lost.  Returns the frame and a list of records of the
        corrections applied (for run.json).
        """
        return frame, []

    def classify(self, values: ArrayLike) -> NDArray[np.object_]:
        """Class labels of values in the canonical unit ('' where there is no class set)."""
        cs = self.class_set_object()
        if cs is None:
            return np.full(np.shape(values), "", dtype=object)
        return cs.classify(values)

    def describe(self) -> dict[str, Any]:
        """JSON-ready description (``geo-corrosion plugins``, run.json)."""
        cs = self.class_set
        return {
            "name": self.name,
            "label": self.label,
            "value_column": self.value_column,
            "canonical_unit": self.canonical_unit,
            "accepted_units": list(self.unit_factors()),
            "plausible_range": list(self.plausible_range),
            "krige_transform": self.krige_transform,
            "class_set": cs if cs is None or isinstance(cs, str) else cs.name,
            "roles": sorted(str(r) for r in self.roles),
        }


# --------------------------------------------------------------------------- helpers for derive()


def raw_mask(frame: pd.DataFrame) -> NDArray[np.bool_]:
    """Return the readings to derive from raw columns (``value_source == "raw"``)."""
    if "value_source" not in frame:
        return np.zeros(len(frame), dtype=bool)
    return np.asarray(frame["value_source"].to_numpy(object) == "raw", dtype=bool)


def numeric_column(frame: pd.DataFrame, name: str) -> NDArray[np.float64]:
    """Return a column as float (text gives NaN); all NaN when the frame lacks it."""
    if name not in frame:
        return np.full(len(frame), np.nan)
    return pd.to_numeric(frame[name], errors="coerce").to_numpy(float)


def location_label(frame: pd.DataFrame, i: int | np.integer[Any]) -> str:
    """Return reading ``i`` for messages: ``"readings/x.csv line 5 (point P3)"``."""
    i = int(i)
    where = str(frame["where"].iat[i]) if "where" in frame else f"reading {i + 1}"
    pid = str(frame["point_id"].iat[i]) if "point_id" in frame else ""
    return f"{where} (point {pid})" if pid else where

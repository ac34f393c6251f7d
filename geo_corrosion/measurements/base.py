"""The measurement-kind plugin interface.

A measurement kind declares its canonical unit, the input units it accepts, a
plausibility range, the corrections applied at ingest, how it is kriged and how
it is classified.  Built-ins: ``potential``, ``resistivity``,
``corrosion_rate``, ``cover``.  A firm adds its own (say, chloride content at
bar depth) by subclassing :class:`MeasurementKind` and registering the class
under the entry-point group ``geo_corrosion.measurements``.
"""

from __future__ import annotations

from collections.abc import Collection, Mapping
from pathlib import Path
from typing import TYPE_CHECKING, Any, ClassVar

import numpy as np
import pandas as pd
from numpy.typing import ArrayLike, NDArray

from geo_corrosion.errors import UnitError
from geo_corrosion.units import convert, normalize_unit

if TYPE_CHECKING:
    from geo_corrosion.config import RunParams, SurveyConfig

__all__ = ["MeasurementKind", "raw_mask", "numeric_column", "location_label"]


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
    accepted_units : tuple of str
        Canonical spellings of the units accepted at ingest.
    plausible_range : (float, float)
        Values outside are flagged by QA (in the canonical unit).
    krige_transform : {None, "log"}
        ``"log"`` for lognormal kinds, kriged in log space.
    contour_interval : float
        Default contour interval in the canonical unit.
    class_set : str or None
        Name of the default class set in :mod:`geo_corrosion.condition.classes`.
    raw_columns : tuple of str
        Raw instrument columns (numbers, their unit in the name) read at ingest
        when the file has them; from them :meth:`derive` computes the value
        when the file has no value column (see ``docs/raw-readings.md``).
    option_keys : tuple of str
        Keys accepted in the survey's ``[surveys.options]`` table.
    """

    name: ClassVar[str] = ""
    label: ClassVar[str] = ""
    value_column: ClassVar[str] = "value"
    canonical_unit: ClassVar[str] = ""
    accepted_units: ClassVar[tuple[str, ...]] = ()
    plausible_range: ClassVar[tuple[float, float]] = (-np.inf, np.inf)
    krige_transform: ClassVar[str | None] = None
    contour_interval: ClassVar[float] = 1.0
    class_set: ClassVar[str | None] = None
    raw_columns: ClassVar[tuple[str, ...]] = ()
    option_keys: ClassVar[tuple[str, ...]] = ()

    def to_canonical(self, values: ArrayLike, unit: str, *, where: str = "") -> NDArray[np.float64]:
        """Convert raw values from ``unit`` to the canonical unit.

        Raises
        ------
        UnitError
            If the unit is not accepted for this kind.
        """
        try:
            u = normalize_unit(unit, accepted=self.accepted_units)
        except UnitError as err:
            raise UnitError(f"{where}{err} (for {self.name} readings)") from err
        return convert(values, u, self.canonical_unit)

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
        from geo_corrosion.condition.classes import get_class_set

        if self.class_set is None:
            return np.full(np.shape(values), "", dtype=object)
        return get_class_set(self.class_set).classify(values)

    def describe(self) -> dict[str, Any]:
        """JSON-ready description (``geo-corrosion plugins``, run.json)."""
        return {
            "name": self.name,
            "label": self.label,
            "value_column": self.value_column,
            "canonical_unit": self.canonical_unit,
            "accepted_units": list(self.accepted_units),
            "plausible_range": list(self.plausible_range),
            "krige_transform": self.krige_transform,
            "class_set": self.class_set,
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
    where = str(frame["where"].iat[i]) if "where" in frame else f"reading {i + 1}"
    pid = str(frame["point_id"].iat[i]) if "point_id" in frame else ""
    return f"{where} (point {pid})" if pid else where

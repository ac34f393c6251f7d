"""The measurement-kind plugin interface.

A measurement kind declares its canonical unit, the input units it accepts, a
plausibility range, the corrections applied at ingest, how it is kriged and how
it is classified.  Built-ins: ``potential``, ``resistivity``,
``corrosion_rate``, ``cover``.  A firm adds its own (say, chloride content at
bar depth) by subclassing :class:`MeasurementKind` and registering the class
under the entry-point group ``geo_corrosion.measurements``.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any, ClassVar

import numpy as np
import pandas as pd
from numpy.typing import ArrayLike, NDArray

from geo_corrosion.errors import UnitError
from geo_corrosion.units import convert, normalize_unit

if TYPE_CHECKING:
    from geo_corrosion.config import RunParams, SurveyConfig

__all__ = ["MeasurementKind"]


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
    api_version : int
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
    api_version: ClassVar[int] = 1

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

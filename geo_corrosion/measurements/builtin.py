"""Built-in measurement kinds: half-cell potential, resistivity, corrosion rate, cover."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any, ClassVar

import numpy as np
import pandas as pd

from geo_corrosion.corrections import (
    CSE_K_MV_PER_C,
    CSE_VALID_C,
    arrhenius_factor,
    cse_temperature_correction_mv,
    electrode,
    electrode_offset_mv,
)
from geo_corrosion.errors import SiteFileError
from geo_corrosion.measurements.base import MeasurementKind

if TYPE_CHECKING:
    from geo_corrosion.config import RunParams, SurveyConfig

__all__ = ["HalfCellPotential", "Resistivity", "CorrosionRate", "CoverDepth"]


class HalfCellPotential(MeasurementKind):
    """Half-cell (corrosion) potential, mV vs CSE (ASTM C876; RILEM TC 154-EMC 2003)."""

    name: ClassVar[str] = "potential"
    label: ClassVar[str] = "Half-cell potential (mV vs CSE)"
    value_column: ClassVar[str] = "potential_mv"
    canonical_unit: ClassVar[str] = "mV"
    accepted_units: ClassVar[tuple[str, ...]] = ("mV", "V")
    # REFERENCE.md §1.9 [P]: outside [-1000, +200] mV CSE is implausible
    plausible_range: ClassVar[tuple[float, float]] = (-1000.0, 200.0)
    contour_interval: ClassVar[float] = 50.0
    class_set: ClassVar[str | None] = "c876"

    def check_survey(self, survey: SurveyConfig) -> None:
        """Require the reference electrode, and check the temperature range."""
        if survey.electrode is None:
            raise SiteFileError(
                f"{survey.where}: potential surveys must name their reference electrode, "
                "e.g. electrode = \"cse\" (or ag_agcl_sat_kcl, ag_agcl_3m_kcl, sce, she)"
            )
        try:
            electrode(survey.electrode)
        except Exception as err:
            raise SiteFileError(f"{survey.where}.electrode: {err}") from err

    def correct(
        self, frame: pd.DataFrame, survey: SurveyConfig, params: RunParams
    ) -> tuple[pd.DataFrame, list[dict[str, Any]]]:
        """Convert to CSE and correct the CSE temperature effect (ASTM C876)."""
        assert survey.electrode is not None
        el = electrode(survey.electrode)
        records: list[dict[str, Any]] = []
        off = electrode_offset_mv(el.code, "cse")
        frame["electrode"] = el.code
        frame["electrode_offset_mv"] = off
        records.append({
            "correction": "reference electrode to CSE",
            "electrode": el.name,
            "offset_mv": off,
            "source": el.source,
        })
        t = survey.temperature_c if survey.temperature_c is not None else np.nan
        frame["temperature_c"] = frame["temperature_c"].fillna(t) if "temperature_c" in frame else t
        k = survey.temperature_coefficient_mv_per_c
        if k is None:
            # ASTM C876 gives a coefficient for the CSE only; other electrodes are not
            # corrected unless the site file gives their coefficient (REFERENCE.md §1.4)
            k = CSE_K_MV_PER_C if el.code == "cse" else 0.0
        temps = frame["temperature_c"].to_numpy(float)
        # a survey temperature given in degF is corrected on C876's own degF figures
        in_f = survey.temperature_f is not None and "temperature_c" not in survey.columns
        corr = np.array([
            0.0 if np.isnan(tc) else cse_temperature_correction_mv(
                tc * 1.8 + 32.0 if in_f else tc,
                k_mv_per_c=k, t_ref_c=params.cse_reference_c,
                only_outside_band=params.correct_only_outside_band, unit="F" if in_f else "C",
            )
            for tc in temps
        ])
        frame["temperature_correction_mv"] = corr
        frame[self.value_column] = frame[self.value_column] + off + corr
        if np.isfinite(temps).any():
            out = (temps < CSE_VALID_C[0]) | (temps > CSE_VALID_C[1])
            records.append({
                "correction": "electrode temperature to reference",
                "k_mv_per_c": k,
                "t_ref_c": params.cse_reference_c,
                "only_outside_band": params.correct_only_outside_band,
                "readings_outside_0_49_c": int(np.sum(out)),
                "source": "ASTM C876-22a §5.1.1.2 and §4.7 (REFERENCE.md §1.3)",
            })
        return frame, records


class Resistivity(MeasurementKind):
    """Concrete surface resistivity (Wenner four-point), kOhm.cm (RILEM TC 154-EMC)."""

    name: ClassVar[str] = "resistivity"
    label: ClassVar[str] = "Resistivity (kOhm.cm)"
    value_column: ClassVar[str] = "resistivity_kohm_cm"
    canonical_unit: ClassVar[str] = "kohm.cm"
    accepted_units: ClassVar[tuple[str, ...]] = ("kohm.cm", "ohm.m", "ohm.cm")
    plausible_range: ClassVar[tuple[float, float]] = (0.5, 2000.0)  # common practice, no source
    krige_transform: ClassVar[str | None] = "log"
    contour_interval: ClassVar[float] = 10.0
    class_set: ClassVar[str | None] = "rilem_resistivity"

    def correct(
        self, frame: pd.DataFrame, survey: SurveyConfig, params: RunParams
    ) -> tuple[pd.DataFrame, list[dict[str, Any]]]:
        """Arrhenius correction to the reference temperature (REFERENCE.md §2.3)."""
        t = survey.temperature_c if survey.temperature_c is not None else np.nan
        frame["temperature_c"] = frame["temperature_c"].fillna(t) if "temperature_c" in frame else t
        temps = frame["temperature_c"].to_numpy(float)
        fac = np.where(
            np.isnan(temps),
            1.0,
            arrhenius_factor(
                np.nan_to_num(temps, nan=params.resistivity_reference_c),
                t_ref_c=params.resistivity_reference_c,
                ea_kj_mol=params.activation_energy_kj_mol,
            ),
        )
        frame["temperature_factor"] = fac
        frame[self.value_column] = frame[self.value_column] * fac
        if not np.isfinite(temps).any():
            return frame, []
        return frame, [{
            "correction": "Arrhenius temperature correction",
            "t_ref_c": params.resistivity_reference_c,
            "activation_energy_kj_mol": params.activation_energy_kj_mol,
            "source": "Coyle et al., activation energy of conduction (REFERENCE.md §2.3)",
        }]


class CorrosionRate(MeasurementKind):
    """Corrosion current density from polarization resistance, uA/cm2 (RILEM TC 154, 2004)."""

    name: ClassVar[str] = "corrosion_rate"
    label: ClassVar[str] = "Corrosion rate (uA/cm2)"
    value_column: ClassVar[str] = "icorr_ua_cm2"
    canonical_unit: ClassVar[str] = "uA/cm2"
    accepted_units: ClassVar[tuple[str, ...]] = ("uA/cm2", "mA/m2", "A/m2", "nA/cm2")
    plausible_range: ClassVar[tuple[float, float]] = (0.001, 100.0)  # common practice, no source
    krige_transform: ClassVar[str | None] = "log"
    contour_interval: ClassVar[float] = 0.5
    class_set: ClassVar[str | None] = "rilem_rate"


class CoverDepth(MeasurementKind):
    """Concrete cover over the top bars, mm (covermeter or GPR)."""

    name: ClassVar[str] = "cover"
    label: ClassVar[str] = "Cover (mm)"
    value_column: ClassVar[str] = "cover_mm"
    canonical_unit: ClassVar[str] = "mm"
    accepted_units: ClassVar[tuple[str, ...]] = ("mm", "cm", "in")
    plausible_range: ClassVar[tuple[float, float]] = (3.0, 200.0)  # common practice, no source
    contour_interval: ClassVar[float] = 10.0

"""Built-in measurement kinds: half-cell potential, resistivity, corrosion rate, cover."""

from __future__ import annotations

import math
from collections.abc import Collection, Mapping
from pathlib import Path
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
from geo_corrosion.errors import ConditionError, IngestError, SiteFileError
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
    raw_columns: ClassVar[tuple[str, ...]] = ("voltage_v", "current_a")
    option_keys: ClassVar[tuple[str, ...]] = (
        "probe_spacing", "element_thickness", "edge_distance", "max_aggregate", "class_set",
    )

    def parse_options(
        self, options: Mapping[str, Any], *, where: str, root: Path
    ) -> dict[str, Any]:
        """Wenner geometry (lengths with units, held in mm) and the class set.

        Raises
        ------
        SiteFileError
            Unknown key, bad length, a geometry length without ``probe_spacing``,
            or an unknown or laboratory class set (refused for field readings).
        """
        from geo_corrosion.condition.classes import get_class_set
        from geo_corrosion.config import OptionsTable

        t = OptionsTable(dict(options), where, self.option_keys)
        out: dict[str, Any] = {}
        for key in ("probe_spacing", "element_thickness", "edge_distance", "max_aggregate"):
            v = t.length_mm(key)
            if v is not None:
                out[f"{key}_mm"] = v
        needs_a = [k for k in ("element_thickness", "edge_distance", "max_aggregate") if t.has(k)]
        if needs_a and "probe_spacing_mm" not in out:
            raise SiteFileError(
                f"{where}: {', '.join(needs_a)} given without probe_spacing; the Wenner geometry "
                "check and the thickness correction need the probe spacing a, e.g. "
                "probe_spacing = \"50 mm\""
            )
        if t.has("class_set"):
            try:
                cs = get_class_set(t.str("class_set"), field=True)
            except ConditionError as err:
                raise SiteFileError(f"{t.key('class_set')}: {err}") from err
            if cs.variable != self.value_column:
                raise SiteFileError(
                    f"{t.key('class_set')}: class set {cs.name!r} classifies {cs.variable}, not "
                    f"{self.value_column}; use 'rilem_resistivity' or 'langford_broomfield'"
                )
            out["class_set"] = cs.name
        return out

    def can_derive(self, columns: Collection[str], survey: SurveyConfig) -> bool:
        """Raw Wenner readings need ``voltage_v`` and ``current_a`` (and the probe spacing)."""
        return {"voltage_v", "current_a"} <= set(columns)

    def derive(
        self, frame: pd.DataFrame, survey: SurveyConfig, params: RunParams
    ) -> tuple[pd.DataFrame, list[dict[str, Any]]]:
        """Wenner ``rho = 2 pi a V / I`` for raw readings, geometry check, thickness correction.

        Adds ``wenner_spacing_cm``, ``apparent_resistivity_kohm_cm``,
        ``thickness_factor`` and ``derive_message``.  A reading with a zero,
        negative or missing current or voltage gets NaN and a message.

        Raises
        ------
        SiteFileError
            Raw readings without ``probe_spacing`` in ``[surveys.options]``.
        """
        from geo_corrosion.condition.resistivity import (
            check_wenner_geometry,
            correct_for_thickness,
            thickness_factor,
            wenner_resistivity_kohm_cm,
        )

        opts = survey.options
        records: list[dict[str, Any]] = []
        raw = _raw_mask(frame)
        n = len(frame)
        msgs = np.full(n, "", dtype=object)
        a_mm = opts.get("probe_spacing_mm")
        if raw.any() and a_mm is None:
            raise SiteFileError(
                f"{survey.where}: {survey.path.name} gives raw voltage_v and current_a but the "
                "probe spacing is unknown; add probe_spacing = \"50 mm\" (say) under "
                "[surveys.options]"
            )
        apparent = frame[self.value_column].to_numpy(float).copy()
        if raw.any():
            assert a_mm is not None
            volt = _col(frame, "voltage_v")
            cur = _col(frame, "current_a")
            for i in np.flatnonzero(raw):
                v, c = volt[i], cur[i]
                problem = ""
                if not np.isfinite(v) or not np.isfinite(c):
                    problem = "voltage_v or current_a is empty; the reading cannot be used"
                elif c == 0:
                    problem = ("current of zero: no current flowed; check the probe contact and "
                               "wetting, the reading cannot be used")
                elif c < 0 or v < 0:
                    problem = (f"negative {'current' if c < 0 else 'voltage'} ({c:g} A, {v:g} V); "
                               "give magnitudes in A and V (check lead polarity)")
                if problem:
                    msgs[i] = f"{_loc(frame, i)}: {problem}"
                    apparent[i] = np.nan
                    continue
                try:
                    apparent[i] = float(wenner_resistivity_kohm_cm(a_mm / 10.0, v, c))
                except ConditionError as err:
                    msgs[i] = f"{_loc(frame, i)}: {err}"
                    apparent[i] = np.nan
            records.append({
                "correction": "Wenner resistivity from raw voltage and current",
                "formula": "rho = 2 pi a V / I",
                "spacing_cm": a_mm / 10.0,
                "readings": int(raw.sum()),
                "readings_not_derived": int(sum(1 for i in np.flatnonzero(raw) if msgs[i])),
                "source": "REFERENCE.md §2.1 (RES-01)",
            })
        frame["wenner_spacing_cm"] = np.nan if a_mm is None else a_mm / 10.0
        frame["apparent_resistivity_kohm_cm"] = apparent
        h_mm = opts.get("element_thickness_mm")
        if a_mm is not None:
            for text in check_wenner_geometry(
                a_mm, thickness_mm=h_mm, edge_distance_mm=opts.get("edge_distance_mm"),
                max_aggregate_mm=opts.get("max_aggregate_mm"),
            ):
                records.append({
                    "correction": "Wenner geometry check",
                    "warning": text,
                    "source": "REFERENCE.md §2.2 (Gowers & Millard 1999; Polder; from memory)",
                })
        if h_mm is not None and a_mm is not None:
            f = float(thickness_factor(h_mm / a_mm))
            frame["thickness_factor"] = f
            frame[self.value_column] = correct_for_thickness(apparent, h_mm, a_mm)
            records.append({
                "correction": "finite-thickness correction rho_true = rho_apparent / F(h/a)",
                "thickness_mm": h_mm,
                "spacing_mm": a_mm,
                "thickness_factor": f,
                "source": "REFERENCE.md §2.2, method of images (RES-04)",
            })
        else:
            frame["thickness_factor"] = 1.0
            frame[self.value_column] = apparent
        if "class_set" in opts:
            records.append({"correction": "class set", "class_set": opts["class_set"],
                            "source": "[surveys.options] class_set"})
        frame["derive_message"] = msgs
        return frame, records

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

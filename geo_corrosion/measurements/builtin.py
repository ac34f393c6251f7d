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
from geo_corrosion.measurements.base import (
    MeasurementKind,
    Role,
    Threshold,
    location_label,
    numeric_column,
    raw_mask,
)

if TYPE_CHECKING:
    from geo_corrosion.config import RunParams, SurveyConfig

__all__ = ["HalfCellPotential", "Resistivity", "CorrosionRate", "CoverDepth",
           "SERVICE_HORIZON_YEARS"]

#: Horizon of the section-loss estimate at today's rate, years (common practice, no source).
SERVICE_HORIZON_YEARS = 10.0


class HalfCellPotential(MeasurementKind):
    """Half-cell (corrosion) potential, mV vs CSE [ASTM-C876-22a; RILEM-TC154-2003]."""

    name: ClassVar[str] = "potential"
    label: ClassVar[str] = "Half-cell potential (mV vs CSE)"
    value_column: ClassVar[str] = "potential_mv"
    canonical_unit: ClassVar[str] = "mV"
    accepted_units: ClassVar[tuple[str, ...]] = ("mV", "V")
    # common practice: outside [-1000, +200] mV CSE is implausible
    plausible_range: ClassVar[tuple[float, float]] = (-1000.0, 200.0)
    contour_interval: ClassVar[float] = 50.0
    #: ASTM C876 maximum equipotential contour interval [ASTM-C876-91 §6.2, from memory]
    max_contour_interval: ClassVar[float | None] = 100.0
    max_contour_interval_source: ClassVar[str] = "ASTM C876"
    contour_interval_setting: ClassVar[str] = "[run].contour_interval_mv"
    class_set: ClassVar[str | None] = "c876"
    roles: ClassVar[frozenset[Role]] = frozenset({Role.POTENTIAL})
    threshold: ClassVar[Threshold | None] = Threshold(
        -350.0, "below", "more negative than -350 mV CSE",
        "ASTM C876 numeric criteria [ASTM-C876-91 App. X1, from memory]",
        statement="The area likely to be corroding")
    condition_order: ClassVar[int] = 10
    mixture_threshold: ClassVar[bool] = True
    grid_rules: ClassVar[bool] = True
    electrode_temperature: ClassVar[bool] = True
    severity_direction: ClassVar[int] = -1
    class_map_contours: ClassVar[bool] = True
    # the potential of the mat the electrode sits over, read through a connection to that
    # mat: a mat cut off by an expansion or isolation joint is another circuit
    # [ACI-222R-19, from memory; ASTM-C876-22a]
    needs_continuity: ClassVar[bool] = True
    class_layer_titles: ClassVar[tuple[str, str] | None] = (
        "ASTM C876 classes", "ASTM C876 classes (probability of corrosion)")

    def contour_interval_for(self, params: RunParams) -> float:
        """Return the site file's ``[run].contour_interval_mv`` (default 50 mV)."""
        return float(params.contour_interval_mv)

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
            # corrected unless the site file gives their coefficient
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
                "source": "[ASTM-C876-22a §5.1.1.2, §4.7]",
            })
        return frame, records


class Resistivity(MeasurementKind):
    """Concrete surface resistivity (Wenner four-point), kOhm.cm [Polder-2001]."""

    name: ClassVar[str] = "resistivity"
    label: ClassVar[str] = "Resistivity (kOhm.cm)"
    value_column: ClassVar[str] = "resistivity_kohm_cm"
    canonical_unit: ClassVar[str] = "kohm.cm"
    accepted_units: ClassVar[tuple[str, ...]] = ("kohm.cm", "ohm.m", "ohm.cm")
    plausible_range: ClassVar[tuple[float, float]] = (0.5, 2000.0)  # common practice, no source
    krige_transform: ClassVar[str | None] = "log"
    contour_interval: ClassVar[float] = 10.0
    class_set: ClassVar[str | None] = "rilem_resistivity"
    roles: ClassVar[frozenset[Role]] = frozenset({Role.RESISTIVITY})
    threshold: ClassVar[Threshold | None] = Threshold(
        10.0, "below", "resistivity below 10 kOhm.cm (high risk)",
        "RILEM TC 154 [RILEM-TC154-2000; Polder-2001, from memory]")
    condition_order: ClassVar[int] = 30
    severity_direction: ClassVar[int] = -1
    class_layer_titles: ClassVar[tuple[str, str] | None] = (
        "resistivity classes", "resistivity classes (corrosion risk)")
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
        from geo_corrosion._toml import OptionsTable
        from geo_corrosion.condition.classes import get_class_set

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
                cs = get_class_set(t.string("class_set"), field=True)
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
        raw = raw_mask(frame)
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
            volt = numeric_column(frame, "voltage_v")
            cur = numeric_column(frame, "current_a")
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
                    msgs[i] = f"{location_label(frame, i)}: {problem}"
                    apparent[i] = np.nan
                    continue
                try:
                    apparent[i] = float(wenner_resistivity_kohm_cm(a_mm / 10.0, v, c))
                except ConditionError as err:
                    msgs[i] = f"{location_label(frame, i)}: {err}"
                    apparent[i] = np.nan
            records.append({
                "correction": "Wenner resistivity from raw voltage and current",
                "formula": "rho = 2 pi a V / I",
                "spacing_cm": a_mm / 10.0,
                "readings": int(raw.sum()),
                "readings_not_derived": int(sum(1 for i in np.flatnonzero(raw) if msgs[i])),
                "source": "[Wenner-1916; Polder-2001]",
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
                    "source": "[Gowers-Millard-1999; Polder-2001, from memory]",
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
                "source": "method of images, derived",
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
        """Arrhenius correction to the reference temperature [Coyle-Spragg-2019]."""
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
            "source": "activation energy of conduction [Coyle-Spragg-2019]",
        }]


class CorrosionRate(MeasurementKind):
    """Corrosion current density from polarization resistance, uA/cm2 [Andrade-Alonso-2004]."""

    name: ClassVar[str] = "corrosion_rate"
    label: ClassVar[str] = "Corrosion rate (uA/cm2)"
    value_column: ClassVar[str] = "icorr_ua_cm2"
    canonical_unit: ClassVar[str] = "uA/cm2"
    accepted_units: ClassVar[tuple[str, ...]] = ("uA/cm2", "mA/m2", "A/m2", "nA/cm2")
    plausible_range: ClassVar[tuple[float, float]] = (0.001, 100.0)  # common practice, no source
    krige_transform: ClassVar[str | None] = "log"
    contour_interval: ClassVar[float] = 0.5
    class_set: ClassVar[str | None] = "rilem_rate"
    roles: ClassVar[frozenset[Role]] = frozenset({Role.RATE})
    threshold: ClassVar[Threshold | None] = Threshold(
        1.0, "above", "corrosion rate above 1 uA/cm2 (high)",
        "RILEM TC 154 [Andrade-Alonso-2004, from memory]")
    condition_order: ClassVar[int] = 20
    severity_direction: ClassVar[int] = 1
    class_layer_titles: ClassVar[tuple[str, str] | None] = (
        "corrosion rate classes", "corrosion rate levels")
    # needs_continuity stays False: a rate is the polarization of the bar under the sensor's
    # guard ring, a property of that spot, and is kriged across joints (the instrument still
    # needs a connection to the bar under it); a firm's kind may set it True
    needs_continuity: ClassVar[bool] = False
    raw_columns: ClassVar[tuple[str, ...]] = (
        "rp_ohm", "r_ohm_ohm", "delta_e_mv", "delta_i_ua", "area_cm2", "b_mv",
        "tafel_anodic_mv_dec", "tafel_cathodic_mv_dec",
    )
    option_keys: ClassVar[tuple[str, ...]] = (
        "b_mv", "tafel_anodic_mv_dec", "tafel_cathodic_mv_dec", "polarized_area_cm2",
        "bar_diameter", "confinement_length", "transients", "sweeps", "strict_linearity",
    )

    def parse_options(
        self, options: Mapping[str, Any], *, where: str, root: Path
    ) -> dict[str, Any]:
        """Stern-Geary B, polarized area, transient file and linearity mode of a survey.

        Returns keys ``b_mv`` and ``b_source``, ``polarized_area_cm2`` and
        ``area_source``, ``transients_path`` (absolute) and ``strict_linearity``,
        each only when given.

        Raises
        ------
        SiteFileError
            Unknown key; B given twice or not positive; one Tafel slope without
            the other or slopes out of range; area given twice or not positive.
        """
        from geo_corrosion._toml import OptionsTable
        from geo_corrosion.condition.corrosion_rate import (
            polarized_area_cm2,
            resolve_b_mv,
            stern_geary_b_mv,
        )

        t = OptionsTable(dict(options), where, self.option_keys)
        out: dict[str, Any] = {}
        tafel = [t.has("tafel_anodic_mv_dec"), t.has("tafel_cathodic_mv_dec")]
        if t.has("b_mv") and any(tafel):
            raise SiteFileError(f"{where}: give b_mv or the Tafel slopes, not both")
        if t.has("b_mv"):
            b = t.data["b_mv"]
            if isinstance(b, bool) or not isinstance(b, int | float | str):
                raise SiteFileError(f"{t.key('b_mv')}: expected a number in mV or \"active\" / "
                                    f"\"passive\", got {b!r}")
            if not isinstance(b, str) and not math.isfinite(b):
                raise SiteFileError(f"{t.key('b_mv')}: expected a finite number in mV or "
                                    f"\"active\" / \"passive\", got {b!r}")
            try:
                out["b_mv"] = float(resolve_b_mv([b])[0])
            except ConditionError as err:
                raise SiteFileError(f"{t.key('b_mv')}: {err}") from err
            out["b_source"] = f"[surveys.options] b_mv = {b!r}"
        elif any(tafel):
            if not all(tafel):
                raise SiteFileError(
                    f"{where}: give both tafel_anodic_mv_dec and tafel_cathodic_mv_dec "
                    "(inf for a passive branch), or b_mv"
                )
            ba, bc = t.num("tafel_anodic_mv_dec"), t.num("tafel_cathodic_mv_dec")
            try:
                out["b_mv"] = float(stern_geary_b_mv(ba, bc))
            except ConditionError as err:
                raise SiteFileError(f"{where}: {err}") from err
            out["b_source"] = (f"Stern-Geary from Tafel slopes {ba:g} / {bc:g} mV/decade "
                               "[Roberge-2008 eqs. 5.22-5.23]")
        geometric = [t.has("bar_diameter"), t.has("confinement_length")]
        if t.has("polarized_area_cm2") and any(geometric):
            raise SiteFileError(
                f"{where}: give polarized_area_cm2, or bar_diameter with confinement_length; "
                "not both"
            )
        if t.has("polarized_area_cm2"):
            out["polarized_area_cm2"] = t.num("polarized_area_cm2", positive=True, finite=True)
            out["area_source"] = "[surveys.options] polarized_area_cm2"
        elif any(geometric):
            if not all(geometric):
                raise SiteFileError(
                    f"{where}: the polarized area A = pi d L needs both bar_diameter and "
                    "confinement_length (e.g. \"16 mm\" and \"105 mm\")"
                )
            d, length = t.length_mm("bar_diameter"), t.length_mm("confinement_length")
            assert d is not None and length is not None
            out["polarized_area_cm2"] = float(polarized_area_cm2(d, length))
            out["area_source"] = (f"pi x bar diameter {d:g} mm x confined length {length:g} mm "
                                  "[Andrade-Alonso-2004, from memory]")
        if t.has("transients"):
            out["transients_path"] = (root / t.string("transients")).resolve()
        if t.has("sweeps"):
            out["sweeps_path"] = (root / t.string("sweeps")).resolve()
        if t.has("strict_linearity"):
            out["strict_linearity"] = t.flag("strict_linearity")
        return out

    def can_derive(self, columns: Collection[str], survey: SurveyConfig) -> bool:
        """R_p from ``rp_ohm``, from ``delta_e_mv`` and ``delta_i_ua``, or from transients."""
        cols = set(columns)
        return ("rp_ohm" in cols or {"delta_e_mv", "delta_i_ua"} <= cols
                or "transients_path" in survey.options or "sweeps_path" in survey.options)

    def derive(
        self, frame: pd.DataFrame, survey: SurveyConfig, params: RunParams
    ) -> tuple[pd.DataFrame, list[dict[str, Any]]]:
        """Stern-Geary ``i_corr = B / (R_p A)`` for raw readings; Faraday and RILEM level for all.

        Per reading, B comes from its ``b_mv`` column, else its Tafel slope
        columns, else the survey option; the area from ``area_cm2``, else the
        option; R_p from a fitted transient (``location_id`` = ``point_id``),
        else ``delta_e_mv / delta_i_ua - r_ohm_ohm``, else ``rp_ohm - r_ohm_ohm``
        (``r_ohm_ohm`` optional).  Problems give NaN and ``derive_message``;
        non-fatal warnings (linearity, short pulse) go to ``derive_warning``.

        Raises
        ------
        IngestError
            The transient file is missing or lacks its columns.
        """
        from geo_corrosion.condition.classes import get_class_set
        from geo_corrosion.condition.corrosion_rate import faraday_um_per_year

        records: list[dict[str, Any]] = []
        raw = raw_mask(frame)
        n = len(frame)
        msgs = np.full(n, "", dtype=object)
        warns = np.full(n, "", dtype=object)
        if raw.any():
            records += _derive_rate(frame, survey, raw, msgs, warns)
        elif "transients_path" in survey.options:
            records.append({
                "correction": "transients not used",
                "reason": f"{survey.path.name} has a value column; its values are used as given",
            })
        value = frame[self.value_column].to_numpy(float)
        frame["penetration_um_yr"] = faraday_um_per_year(value)
        frame["rate_level"] = get_class_set(self.class_set or "rilem_rate").classify(value)
        frame["derive_message"] = msgs
        frame["derive_warning"] = warns
        return frame, records

    def life_estimates(
        self, frame: pd.DataFrame, cover_mm: np.ndarray | None, *, bar_diameter_mm: float,
        deck_area: float | None = None,
    ) -> tuple[pd.DataFrame, dict[str, Any]]:
        """Section loss and time to cover cracking at each corrosion-rate reading.

        Returns a new frame with the columns added, and the summary for ``run.json``.

        * Section loss of the bar after :data:`SERVICE_HORIZON_YEARS` at the measured
          rate (uniform attack, Faraday's law, derived), with the 25 %
          engineer-review trigger [UFGS-03931 §3.3.1.4].
        * Propagation time to the first visible crack (0.05 mm) after Alonso et al.
          (1998), x_crit = 7.53 + 9.32 c/phi um [Alonso-Andrade-1998, from memory], with
          the cover c read off the kriged cover surface at the reading (``cover_mm``).  It
          is counted from corrosion initiation at the measured rate; it is **not** the time
          left from today (the corrosion that already took place is unknown), so it is an
          upper bound of the time left.

        The summary never gives a single figure: where the readings support it
        (:func:`geo_corrosion.condition.life.life_support`) it gives the 10th to 90th
        percentile range over the readings, with its basis (readings, model, sources,
        assumptions to confirm); otherwise the reason there is no range.
        """
        from geo_corrosion.condition.life import (
            indicative_range,
            life_support,
            section_loss,
            time_to_cracking_years,
        )

        frame = frame.copy()  # the caller's frame is never changed
        i = frame[self.value_column].to_numpy(float)
        loss = np.full(i.shape, np.nan)
        review = np.zeros(i.shape, bool)
        for k, v in enumerate(i):
            if np.isfinite(v) and v >= 0:
                r = section_loss(bar_diameter_mm, float(v), SERVICE_HORIZON_YEARS)
                loss[k], review[k] = 100.0 * r.loss_fraction, r.review_required
        loss_col = f"section_loss_{int(SERVICE_HORIZON_YEARS)}yr_pct"
        frame[loss_col] = loss
        frame["bar_review"] = review
        c = np.full(i.shape, np.nan) if cover_mm is None else np.asarray(cover_mm, float)
        frame["cover_at_reading_mm"] = c
        with np.errstate(invalid="ignore", divide="ignore"):
            ok = np.isfinite(c) & np.isfinite(i) & (i > 0)
            t = np.full(i.shape, np.nan)
            if ok.any():
                t[ok] = time_to_cracking_years(c[ok], bar_diameter_mm, i[ok])
        frame["time_to_cracking_yr"] = t
        support = life_support(frame["x_local"].to_numpy(float),
                               frame["y_local"].to_numpy(float), ok, deck_area=deck_area)
        return frame, {
            "bar_diameter_mm": bar_diameter_mm, "horizon_years": SERVICE_HORIZON_YEARS,
            "readings_needing_bar_review": int(review.sum()),
            "readings": int(len(i)),
            "readings_used": support.readings,
            "supported": support.supported,
            "basis": support.reason,
            "time_to_cracking_yr": indicative_range(t[ok]) if support.supported else None,
            "section_loss_pct": indicative_range(loss[ok]) if support.supported else None,
            "time_to_cracking_meaning": "propagation time from corrosion initiation to the first "
                                        "visible crack at the measured rate; not the time left "
                                        "from today (an upper bound of it)",
            "model": "uniform section loss by Faraday's law over "
                     f"{SERVICE_HORIZON_YEARS:g} years at each reading's rate; time to the "
                     "first visible crack x_crit / (11.6 i_corr), x_crit = 7.53 + 9.32 c/phi "
                     "um with c the kriged cover at the reading",
            "sources": ["Faraday's law, derived", "25 % section loss [UFGS-03931 §3.3.1.4]",
                        "time to cracking [Alonso-Andrade-1998, from memory]"],
            "assumptions": ["the time-to-cracking coefficients 7.53 and 9.32 are from memory "
                            "[Alonso-Andrade-1998]: check against the paper",
                            "one survey's instantaneous rates stand for the yearly mean rate; "
                            "rates vary with season, temperature and moisture "
                            "[Andrade-Alonso-2004]"],
        }


class CoverDepth(MeasurementKind):
    """Concrete cover over the top bars, mm (covermeter or GPR)."""

    name: ClassVar[str] = "cover"
    label: ClassVar[str] = "Cover (mm)"
    value_column: ClassVar[str] = "cover_mm"
    canonical_unit: ClassVar[str] = "mm"
    accepted_units: ClassVar[tuple[str, ...]] = ("mm", "cm", "in")
    plausible_range: ClassVar[tuple[float, float]] = (3.0, 200.0)  # common practice, no source
    contour_interval: ClassVar[float] = 10.0
    roles: ClassVar[frozenset[Role]] = frozenset({Role.COVER})
    condition_order: ClassVar[int] = 40
    severity_direction: ClassVar[int] = -1


# --------------------------------------------------------------------------- raw-reading helpers


def _b_and_area(
    frame: pd.DataFrame, survey: SurveyConfig, raw: np.ndarray
) -> tuple[np.ndarray, np.ndarray, list[list[str]]]:
    """Per reading Stern-Geary B (mV), polarized area (cm2) and problems; NaN where unknown."""
    from geo_corrosion.condition.corrosion_rate import stern_geary_b_mv

    opts = survey.options
    n = len(frame)
    b = np.full(n, float(opts.get("b_mv", np.nan)))
    area = np.full(n, float(opts.get("polarized_area_cm2", np.nan)))
    problems: list[list[str]] = [[] for _ in range(n)]
    b_col, a_col = numeric_column(frame, "b_mv"), numeric_column(frame, "area_cm2")
    ta = numeric_column(frame, "tafel_anodic_mv_dec")
    tc = numeric_column(frame, "tafel_cathodic_mv_dec")
    for i in np.flatnonzero(raw):
        if np.isfinite(b_col[i]):
            b[i] = b_col[i] if b_col[i] > 0 else np.nan
            if not b_col[i] > 0:
                problems[i].append(f"Stern-Geary B of {b_col[i]:g} mV is not positive")
        elif np.isfinite(ta[i]) or np.isfinite(tc[i]):
            try:
                b[i] = float(stern_geary_b_mv(ta[i], tc[i]))
            except ConditionError as err:
                b[i] = np.nan
                problems[i].append(f"Tafel slopes {ta[i]:g} / {tc[i]:g} mV/decade: {err}")
        elif not np.isfinite(b[i]):
            problems[i].append(
                "no Stern-Geary B: give a b_mv column, or b_mv (26 active, 52 passive) or Tafel "
                "slopes under [surveys.options]"
            )
        if np.isfinite(a_col[i]):
            area[i] = a_col[i] if a_col[i] > 0 else np.nan
            if not a_col[i] > 0:
                problems[i].append(f"polarized area of {a_col[i]:g} cm2 is not positive")
        elif not np.isfinite(area[i]):
            problems[i].append(
                "no polarized area: give an area_cm2 column, or polarized_area_cm2 or "
                "bar_diameter with confinement_length under [surveys.options]; i_corr is never "
                "computed without it (common practice)"
            )
    return b, area, problems


def _fit_survey_transients(
    frame: pd.DataFrame, survey: SurveyConfig, raw: np.ndarray, b: np.ndarray, area: np.ndarray
) -> tuple[dict[str, dict[str, Any]], dict[str, Any]]:
    """Fit the survey's transient file; results by location id, and a record."""
    from geo_corrosion.condition.transient import fit_transients, read_transients_csv

    path: Path = survey.options["transients_path"]
    if not path.is_file():
        raise IngestError(f"{survey.where}.options.transients: transient file not found: {path}")
    tr = read_transients_csv(path)
    tr["location_id"] = tr["location_id"].astype(str).str.strip()
    pids = frame["point_id"].astype(str).to_numpy(object)
    wanted = {str(pids[i]) for i in np.flatnonzero(raw)} & set(tr["location_id"])
    locs = pd.DataFrame({
        "location_id": [str(pids[i]) for i in np.flatnonzero(raw) if pids[i] in wanted],
        "area_cm2": [area[i] for i in np.flatnonzero(raw) if pids[i] in wanted],
        "b_mv": [b[i] for i in np.flatnonzero(raw) if pids[i] in wanted],
    }).drop_duplicates("location_id", keep="first")
    strict = bool(survey.options.get("strict_linearity", False))
    fits = fit_transients(tr[tr["location_id"].isin(wanted)], locations=locs, strict=strict)
    by_loc: dict[str, dict[str, Any]] = {
        str(r["location_id"]): {str(k): v for k, v in r.items()}
        for r in fits.to_dict("records")}
    record: dict[str, Any] = {
        "correction": "R_p from galvanostatic pulse transients (Randles fit)",
        "file": path.name,
        "locations_fitted": int((fits["flag"] != "error").sum()),
        "locations_failed": int((fits["flag"] == "error").sum()),
        "locations_in_file_not_in_survey": int(len(set(tr["location_id"]) - wanted)),
        "linear_limit_mv": 20.0 if strict else 30.0,
        "source": "[Newton-Sykes-1988; Andrade-Alonso-2004, from memory]",
    }
    return by_loc, record


def _read_survey_sweeps(survey: SurveyConfig) -> tuple[dict[str, pd.DataFrame], dict[str, Any]]:
    """Read the survey's potentiostatic sweeps: CSV ``location_id,e_mv,i_ua`` (long format)."""
    path: Path = survey.options["sweeps_path"]
    if not path.is_file():
        raise IngestError(f"{survey.where}.options.sweeps: sweep file not found: {path}")
    try:
        df = pd.read_csv(path, dtype={"location_id": str})
    except (pd.errors.ParserError, UnicodeDecodeError, pd.errors.EmptyDataError) as err:
        raise IngestError(f"{path.name}: cannot read sweeps: {err}") from err
    missing = {"location_id", "e_mv", "i_ua"} - set(df.columns)
    if missing:
        raise IngestError(f"{path.name}: sweep file lacks column(s) {sorted(missing)}; expected "
                          "location_id,e_mv,i_ua")
    df["location_id"] = df["location_id"].astype(str).str.strip()
    groups = {str(k): g for k, g in df.groupby("location_id", sort=False)}
    return groups, {
        "correction": "R_p from potentiostatic sweeps "
                      "(slope of E(I) near the open-circuit potential)",
        "file": path.name, "locations": len(groups),
        "source": "slope at E_corr [ASTM-G59]; linearity [Andrade-Alonso-2004, from memory]",
    }


def _derive_rate(
    frame: pd.DataFrame, survey: SurveyConfig, raw: np.ndarray, msgs: np.ndarray,
    warns: np.ndarray,
) -> list[dict[str, Any]]:
    """Fill ``icorr_ua_cm2`` and the raw-value columns of the raw readings of ``frame``."""
    from geo_corrosion.condition.corrosion_rate import (
        check_linearity,
        icorr_ua_cm2,
        ohmic_corrected_rp_ohm,
    )

    n = len(frame)
    b, area, setup_problems = _b_and_area(frame, survey, raw)
    records: list[dict[str, Any]] = []
    fits: dict[str, dict[str, Any]] = {}
    if "transients_path" in survey.options:
        fits, rec = _fit_survey_transients(frame, survey, raw, b, area)
        records.append(rec)
    sweeps: dict[str, pd.DataFrame] = {}
    if "sweeps_path" in survey.options:
        sweeps, rec = _read_survey_sweeps(survey)
        records.append(rec)
    rp_in, r_ohm_in = numeric_column(frame, "rp_ohm"), numeric_column(frame, "r_ohm_ohm")
    de, di = numeric_column(frame, "delta_e_mv"), numeric_column(frame, "delta_i_ua")
    rp = np.full(n, np.nan)
    r_ohm = r_ohm_in.copy()
    cdl = np.full(n, np.nan)
    rms = np.full(n, np.nan)
    source = np.full(n, "", dtype=object)
    icorr = frame[CorrosionRate.value_column].to_numpy(float).copy()
    pids = frame["point_id"].astype(str).to_numpy(object)
    for i in np.flatnonzero(raw):
        # a transient fit checks B and area itself (they may come from the transient file)
        problems = [] if pids[i] in fits else list(setup_problems[i])
        notes: list[str] = []
        ro = r_ohm_in[i] if np.isfinite(r_ohm_in[i]) else 0.0
        try:
            if pids[i] in fits:
                fit = fits[pids[i]]
                source[i] = "transient"
                if fit["flag"] == "error":
                    raise ConditionError(f"transient not fitted: {fit['message']}")
                rp[i], r_ohm[i], cdl[i], rms[i] = (fit["rp_ohm"], fit["r_ohm_ohm"], fit["cdl_uf"],
                                                   fit["residual_rms_mv"])
                b[i], area[i] = fit["b_mv"], fit["area_cm2"]
                if fit["message"]:
                    notes.append(str(fit["message"]))
            elif pids[i] in sweeps:
                from geo_corrosion.condition.corrosion_rate import rp_from_sweep

                source[i] = "potentiostatic sweep"
                sw = sweeps[pids[i]]
                res = rp_from_sweep(sw["e_mv"].to_numpy(float), sw["i_ua"].to_numpy(float))
                rp[i] = (float(ohmic_corrected_rp_ohm(res.rp_ohm, 1000.0, ro))
                         if np.isfinite(r_ohm_in[i]) else res.rp_ohm)
                notes.extend(str(w) for w in getattr(res, "warnings", ()))
            elif np.isfinite(de[i]) and np.isfinite(di[i]):
                source[i] = "delta_e/delta_i"
                if di[i] == 0:
                    raise ConditionError("current step delta_i_ua of zero: no polarization applied")
                rp[i] = float(ohmic_corrected_rp_ohm(de[i], di[i], ro))
                lin = check_linearity(float(de[i]))
                if lin:
                    notes.append(lin)
            elif np.isfinite(rp_in[i]):
                source[i] = "rp_ohm"
                if not rp_in[i] > 0:
                    raise ConditionError(
                        f"polarization resistance rp_ohm = {rp_in[i]:g} ohm is not positive: a bad "
                        "connection or a sign error; repeat the measurement"
                    )
                # R_p = dE/dI - R_ohm with dE/dI given directly in ohm (1000 mV / 1000 uA)
                rp[i] = (float(ohmic_corrected_rp_ohm(rp_in[i], 1000.0, ro))
                         if np.isfinite(r_ohm_in[i]) else rp_in[i])
            else:
                where_tr = (f", nor a transient for it in {survey.options['transients_path'].name}"
                            if "transients_path" in survey.options else "")
                if "sweeps_path" in survey.options:
                    where_tr += f", nor a sweep in {survey.options['sweeps_path'].name}"
                raise ConditionError(
                    "no polarization resistance: the reading has no rp_ohm, no delta_e_mv and "
                    f"delta_i_ua{where_tr}"
                )
        except ConditionError as err:
            problems.append(str(err))
        if not problems:
            try:
                icorr[i] = float(icorr_ua_cm2(rp[i], area[i], b[i]))
            except ConditionError as err:
                problems.append(str(err))
        if problems:
            icorr[i] = np.nan
            msgs[i] = f"{location_label(frame, i)}: " + "; ".join(problems)
        if notes:
            warns[i] = f"{location_label(frame, i)}: " + "; ".join(notes)
    if np.isfinite(r_ohm_in[raw]).any() and "rp_ohm" in frame:
        frame["rp_measured_ohm"] = rp_in
    frame[CorrosionRate.value_column] = icorr
    frame["b_mv"] = np.where(raw, b, np.nan)
    frame["rp_ohm"] = rp
    frame["polarized_area_cm2"] = np.where(raw, area, np.nan)
    frame["r_ohm_ohm"] = r_ohm
    frame["cdl_uf"] = cdl
    frame["fit_rms_mv"] = rms
    frame["rp_source"] = source
    opts = survey.options
    records.insert(0, {
        "correction": "corrosion rate from polarization resistance (Stern-Geary)",
        "formula": "i_corr = B / (R_p A), R_p = dE/dI - R_ohm",
        "readings": int(raw.sum()),
        "readings_not_derived": int(sum(1 for i in np.flatnonzero(raw) if msgs[i])),
        "b_mv": opts.get("b_mv"),
        "b_source": opts.get("b_source", "per reading"),
        "polarized_area_cm2": opts.get("polarized_area_cm2"),
        "area_source": opts.get("area_source", "per reading"),
        "source": "[Stern-Geary-1957; Andrade-Alonso-2004, from memory]",
    })
    return records

"""Corrections applied once, at ingest, and recorded per reading.

* Reference electrode conversion to CSE from the electrodes' potentials vs SHE
  [IJCorros-2010 Table 2; Ives-Janz-1961]: ``E_vs_B = E_vs_A + (E_A/SHE - E_B/SHE)``.
* CSE temperature correction [ASTM-C876-22a §5.1.1.2]: the CSE
  reads about 0.5 mV/°F = 0.9 mV/°C more negative per degree of warming, valid
  0 to 49 °C; corrected to the reference temperature 22.2 °C (72 °F):
  ``E(T_ref) = E + k (T - T_ref)``.
* Arrhenius correction of resistivity to a reference temperature
  [Coyle-Spragg-2019]: ``rho(T_ref) = rho(T) exp[(Ea/R)(1/T_ref - 1/T)]``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from geo_corrosion.condition.resistivity import arrhenius_factor
from geo_corrosion.errors import UnitError

__all__ = [
    "Electrode",
    "ELECTRODES",
    "electrode",
    "electrode_offset_mv",
    "convert_potential",
    "CSE_K_MV_PER_C",
    "CSE_T_REF_C",
    "CSE_BAND_C",
    "cse_temperature_correction_mv",
    "arrhenius_factor",
]


@dataclass(frozen=True)
class Electrode:
    """A reference electrode with its potential vs SHE at 25 °C."""

    code: str
    name: str
    e_vs_she_mv: float
    source: str


#: Reference electrodes accepted in a site file (codes are ours, case-insensitive).
ELECTRODES: dict[str, Electrode] = {
    e.code: e
    for e in (
        Electrode("cse", "Cu/CuSO4, saturated (CSE)", 316.0,
                  "[IJCorros-2010 Table 2]"),
        Electrode("ag_agcl_sat_kcl", "Ag/AgCl in saturated KCl", 197.0,
                  "[IJCorros-2010 Table 2]"),
        Electrode("ag_agcl_3m_kcl", "Ag/AgCl in 3 M KCl", 210.0,
                  "[Ives-Janz-1961], value to confirm"),
        Electrode("sce", "Saturated calomel (SCE)", 241.0,
                  "[IJCorros-2010 Table 2]"),
        Electrode("she", "Standard hydrogen electrode (SHE)", 0.0, "definition"),
    )
}

CSE_K_MV_PER_C = 0.9  # [ASTM-C876-22a §5.1.1.2]: 0.0005 V/°F = 0.9 mV/°C
CSE_T_REF_C = 22.2  # [ASTM-C876-22a §4.7]: 72 °F
CSE_BAND_C = 5.5  # [ASTM-C876-22a §4.7]: ±10 °F within which temperature may be neglected
CSE_VALID_C = (0.0, 49.0)  # [ASTM-C876-22a §5.1.1.2]: 32 °F to 120 °F


def electrode(code: str, *, where: str = "") -> Electrode:
    """Return the electrode for a code; unknown codes raise (never a silent default).

    Raises
    ------
    UnitError
        If the code is unknown (common practice: never a silent default).
    """
    key = str(code).strip().lower().replace("-", "_").replace("/", "_")
    if key not in ELECTRODES:
        raise UnitError(
            f"{where}unknown reference electrode {code!r}; expected one of: "
            f"{', '.join(ELECTRODES)}"
        )
    return ELECTRODES[key]


def electrode_offset_mv(from_code: str, to_code: str = "cse") -> float:
    """Return the offset (mV) to add to a potential vs ``from_code`` to express it vs ``to_code``.

    Examples
    --------
    >>> electrode_offset_mv("ag_agcl_sat_kcl")  # 197 - 316 [IJCorros-2010 Table 2]
    -119.0
    """
    return electrode(from_code).e_vs_she_mv - electrode(to_code).e_vs_she_mv


def convert_potential(values_mv: ArrayLike, from_code: str, to_code: str = "cse"
                      ) -> NDArray[np.float64]:
    """Convert potentials (mV) from one reference electrode to another."""
    return np.asarray(values_mv, dtype=float) + electrode_offset_mv(from_code, to_code)


def cse_temperature_correction_mv(
    temperature_c: float,
    *,
    k_mv_per_c: float = CSE_K_MV_PER_C,
    t_ref_c: float = CSE_T_REF_C,
    only_outside_band: bool = False,
    band_c: float = CSE_BAND_C,
    unit: str = "C",
) -> float:
    """Return the correction (mV) to add to a CSE reading taken at an electrode temperature.

    Parameters
    ----------
    temperature_c : float, °C
        Electrode temperature during the readings.
    k_mv_per_c : float, mV/°C
        Temperature coefficient of the CSE (0.9 [ASTM-C876-22a §5.1.1.2]).
    t_ref_c : float, °C
        Reference temperature (22.2 [ASTM-C876-22a §4.7]).
    only_outside_band : bool
        If true, no correction within ``t_ref_c ± band_c`` ([ASTM-C876-22a §4.7] allows it).
    unit : {"C", "F"}
        Unit of ``temperature_c``.  With ``"F"`` the temperature is in °F and the
        correction uses C876's own figures, 0.5 mV/°F about 72 °F (± 10 °F), so that
        the °F path reproduces the standard exactly [ASTM-C876-22a §5.1.1.2].

    Examples
    --------
    >>> round(-350 + cse_temperature_correction_mv(32.2), 6)  # [ASTM-C876-22a §5.1.1.2]
    -341.0
    """
    if unit == "F":
        k_mv_per_c, t_ref_c, band_c = k_mv_per_c / 1.8, t_ref_c * 1.8 + 32.0, band_c * 1.8
        if abs(t_ref_c - 71.96) < 1e-9:  # the default 22.2 degC is C876's 72 degF
            t_ref_c = 72.0
    elif unit != "C":
        raise UnitError(f"temperature unit must be 'C' or 'F', got {unit!r}")
    dt = float(temperature_c) - t_ref_c
    if only_outside_band and abs(dt) <= band_c:
        return 0.0
    return k_mv_per_c * dt

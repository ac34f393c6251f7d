"""Concrete resistivity: Wenner formula, finite-thickness factor, geometry check, temperature.

Methods
-------
Wenner four-point formula
    ``rho = 2 pi a V / I`` for four equally spaced collinear surface electrodes on
    a semi-infinite homogeneous medium [Wenner-1916; Polder-2001]: with a in cm,
    V in V and I in A it gives ohm.cm.  Returned in kOhm.cm.

Finite-thickness factor
    For a homogeneous layer of thickness ``h`` over an insulating base, infinite
    in plan, the method of images gives (derived; cf. [Robles-Yee-2021])
    ``rho_apparent / rho_true = F(h/a) = 1 + 4 sum_{n>=1} [(1 + (2nh/a)^2)^-1/2
    - (4 + (2nh/a)^2)^-1/2]``.  The series converges like ``n^-3``; we sum
    ``n_terms`` terms exactly and add the tail as the integral of the summand
    from ``N + 1/2`` to infinity (midpoint rule), which has the closed form
    ``(1/k) [ln 2 - asinh(k M) + asinh(k M / 2)]`` with ``k = 2h/a``,
    ``M = N + 1/2``.  The remaining error is far below 1e-6 for 2000 terms.
    A thin element makes the apparent resistivity too high:
    ``rho_true = rho_apparent / F``.

Geometry check
    Keep the array at least about 2a from free edges and the element thickness
    at least about 4a; spacing at least 1.5 x the maximum aggregate size
    [Gowers-Millard-1999; Polder-2001, from memory].
    All three factors are parameters.

Temperature correction (Arrhenius)
    ``rho(T_ref) = rho(T) exp[(E_a / R)(1/T_ref - 1/T)]``, T in K,
    R = 8.314 J/(mol K); E_a 9 to 39 kJ/mol reported
    [Coyle-Spragg-2019].  Defaults T_ref = 20 °C, E_a = 25 kJ/mol
    (common practice).  :func:`arrhenius_factor` here is meant
    to be the single implementation in the package.

Resistivity-rate estimator
    ``i_corr ~ k / rho`` with k about 26-30 uA/cm2 kOhm.cm
    [Alonso-Andrade-1988, from memory] (low confidence); offered
    only as a clearly labelled, optional estimate.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from geo_corrosion.errors import ConditionError

__all__ = [
    "GAS_CONSTANT_J_MOL_K",
    "wenner_resistivity_kohm_cm",
    "thickness_factor",
    "correct_for_thickness",
    "check_wenner_geometry",
    "arrhenius_factor",
    "correct_to_reference_temperature",
    "icorr_estimate_from_resistivity",
]

GAS_CONSTANT_J_MOL_K = 8.314  # J/(mol K), as in [Coyle-Spragg-2019]


def _as_float(x: ArrayLike, what: str) -> NDArray[np.float64]:
    try:
        return np.asarray(x, dtype=float)
    except (TypeError, ValueError) as err:
        raise ConditionError(f"{what} must be numeric ({err})") from err


def _first_bad(mask: NDArray[np.bool_]) -> str:
    idx = np.argwhere(np.atleast_1d(mask))
    n = len(idx)
    first = tuple(int(i) for i in idx[0]) if n else ()
    where = f" at index {first[0] if len(first) == 1 else first}" if first else ""
    return f"{n} value(s){where}"


def wenner_resistivity_kohm_cm(
    spacing_cm: ArrayLike, voltage_v: ArrayLike, current_a: ArrayLike
) -> NDArray[np.float64]:
    """Return the apparent resistivity ``2 pi a V / I`` in kOhm.cm.

    Parameters
    ----------
    spacing_cm : array_like
        Electrode spacing ``a``, cm (positive).
    voltage_v : array_like
        Voltage across the inner electrodes, V (not negative).
    current_a : array_like
        Current through the outer electrodes, A (positive).

    Raises
    ------
    ConditionError
        If a current is zero or negative, a voltage negative, or a spacing not
        positive (common practice).  NaN inputs give NaN.

    Examples
    --------
    >>> round(float(wenner_resistivity_kohm_cm(5.0, 0.100, 100e-6)), 2)  # [Wenner-1916]
    31.42
    """
    a = _as_float(spacing_cm, "electrode spacing")
    v = _as_float(voltage_v, "voltage")
    i = _as_float(current_a, "current")
    with np.errstate(invalid="ignore"):
        if np.any(i == 0):
            raise ConditionError(
                f"Wenner current of zero ({_first_bad(i == 0)}): no current flowed, check the "
                "probe contact and wetting; the reading cannot be used"
            )
        if np.any(i < 0):
            raise ConditionError(f"negative Wenner current ({_first_bad(i < 0)}); give the "
                                 "magnitude of the current in A")
        if np.any(v < 0):
            raise ConditionError(f"negative Wenner voltage ({_first_bad(v < 0)}); check lead "
                                 "polarity, the voltage magnitude in V is expected")
        if np.any(a <= 0):
            raise ConditionError(
                f"electrode spacing must be positive, in cm ({_first_bad(a <= 0)})"
            )
    return 2.0 * np.pi * a * v / i / 1000.0


def thickness_factor(h_over_a: ArrayLike, *, n_terms: int = 2000) -> NDArray[np.float64]:
    """Return ``F(h/a) = rho_apparent / rho_true`` for a layer over an insulating base.

    Parameters
    ----------
    h_over_a : array_like
        Element thickness divided by electrode spacing (dimensionless, > 0);
        ``inf`` gives 1.
    n_terms : int
        Image terms summed exactly before the analytic tail.

    Raises
    ------
    ConditionError
        If a ratio is not positive.

    Examples
    --------
    >>> [round(float(thickness_factor(r)), 4) for r in (1.0, 2.0, 4.0)]  # derived
    [1.5045, 1.0939, 1.0134]
    """
    r = _as_float(h_over_a, "h/a")
    with np.errstate(invalid="ignore"):
        if np.any(r <= 0):
            raise ConditionError(f"h/a must be positive ({_first_bad(r <= 0)})")
    if n_terms < 1:
        raise ConditionError("n_terms must be at least 1")
    flat = r.ravel()
    out = np.full(flat.shape, np.nan)
    n = np.arange(1, n_terms + 1, dtype=float)
    m = n_terms + 0.5
    for j, rj in enumerate(flat):
        if np.isnan(rj):
            continue
        if np.isinf(rj):
            out[j] = 1.0
            continue
        k = 2.0 * rj
        u = k * n
        s = np.sum(1.0 / np.sqrt(1.0 + u * u) - 1.0 / np.sqrt(4.0 + u * u))
        tail = (np.log(2.0) - np.arcsinh(k * m) + np.arcsinh(k * m / 2.0)) / k
        out[j] = 1.0 + 4.0 * (s + tail)
    return out.reshape(r.shape)


def correct_for_thickness(
    rho_apparent_kohm_cm: ArrayLike, thickness_mm: ArrayLike, spacing_mm: ArrayLike
) -> NDArray[np.float64]:
    """Return ``rho_true = rho_apparent / F(h/a)``, kOhm.cm.

    Parameters
    ----------
    rho_apparent_kohm_cm : array_like
        Apparent resistivity, kOhm.cm.
    thickness_mm : array_like
        Element thickness over an insulating base, mm.
    spacing_mm : array_like
        Electrode spacing, mm.
    """
    h = _as_float(thickness_mm, "thickness")
    a = _as_float(spacing_mm, "spacing")
    with np.errstate(invalid="ignore"):
        if np.any(a <= 0):
            raise ConditionError("electrode spacing must be positive, in mm")
    return _as_float(rho_apparent_kohm_cm, "resistivity") / thickness_factor(h / a)


def check_wenner_geometry(
    spacing_mm: float,
    *,
    thickness_mm: float | None = None,
    edge_distance_mm: float | None = None,
    max_aggregate_mm: float | None = None,
    min_edge_factor: float = 2.0,
    min_thickness_factor: float = 4.0,
    min_aggregate_factor: float = 1.5,
) -> list[str]:
    """Return geometry warnings for a Wenner setup (empty list if none).

    Parameters
    ----------
    spacing_mm : float
        Electrode spacing ``a``, mm.
    thickness_mm : float, optional
        Element thickness, mm; warned when ``< min_thickness_factor * a``.
    edge_distance_mm : float, optional
        Distance from the array to the nearest free edge, mm; warned when
        ``< min_edge_factor * a``.
    max_aggregate_mm : float, optional
        Maximum aggregate size, mm; warned when ``a < min_aggregate_factor * D_max``.
    min_edge_factor, min_thickness_factor, min_aggregate_factor : float
        Rules of [Gowers-Millard-1999; Polder-2001, from memory].

    Raises
    ------
    ConditionError
        If the spacing is not positive.

    Examples
    --------
    >>> check_wenner_geometry(50.0, thickness_mm=250.0, edge_distance_mm=120.0)
    []
    """
    if not (np.isfinite(spacing_mm) and spacing_mm > 0):
        raise ConditionError(f"electrode spacing must be a positive length in mm, got {spacing_mm}")
    a = float(spacing_mm)
    out: list[str] = []
    if edge_distance_mm is not None and edge_distance_mm < min_edge_factor * a:
        out.append(
            f"array {edge_distance_mm:g} mm from a free edge, less than {min_edge_factor:g} x "
            f"spacing ({min_edge_factor * a:g} mm): apparent resistivity reads high"
        )
    if thickness_mm is not None:
        if thickness_mm <= 0:
            raise ConditionError(f"element thickness must be positive, in mm, got {thickness_mm}")
        if thickness_mm < min_thickness_factor * a:
            f = float(thickness_factor(thickness_mm / a))
            out.append(
                f"element {thickness_mm:g} mm thick, less than {min_thickness_factor:g} x spacing "
                f"({min_thickness_factor * a:g} mm): thickness factor F = {f:.3f}; correct with "
                "correct_for_thickness()"
            )
    if max_aggregate_mm is not None and a < min_aggregate_factor * max_aggregate_mm:
        out.append(
            f"spacing {a:g} mm below {min_aggregate_factor:g} x maximum aggregate size "
            f"({min_aggregate_factor * max_aggregate_mm:g} mm): readings scatter"
        )
    return out


def arrhenius_factor(
    temperature_c: ArrayLike, *, t_ref_c: float = 20.0, ea_kj_mol: float = 25.0
) -> NDArray[np.float64]:
    """Return the factor bringing a resistivity measured at ``temperature_c`` to ``t_ref_c``.

    ``rho(T_ref) = rho(T) * arrhenius_factor(T)``.

    Parameters
    ----------
    temperature_c : array_like
        Concrete temperature at the reading, °C.
    t_ref_c : float
        Reference temperature, °C (default 20, common practice).
    ea_kj_mol : float
        Activation energy of conduction, kJ/mol (default 25; published 9-39).

    Raises
    ------
    ConditionError
        If a temperature is below absolute zero or ``ea_kj_mol`` is not in (0, 100].

    Examples
    --------
    >>> round(10.0 * float(arrhenius_factor(10.0)), 3)  # Arrhenius, derived
    6.961
    """
    if not (np.isfinite(ea_kj_mol) and 0.0 < ea_kj_mol <= 100.0):
        raise ConditionError(
            f"activation energy {ea_kj_mol} kJ/mol is outside (0, 100]; published values are "
            "9 to 39 kJ/mol [Coyle-Spragg-2019]"
        )
    t = _as_float(temperature_c, "temperature") + 273.15
    t_ref = float(t_ref_c) + 273.15
    with np.errstate(invalid="ignore"):
        if np.any(t <= 0) or t_ref <= 0:
            raise ConditionError("temperature below absolute zero; temperatures are in °C")
    return np.exp(ea_kj_mol * 1000.0 / GAS_CONSTANT_J_MOL_K * (1.0 / t_ref - 1.0 / t))


def correct_to_reference_temperature(
    rho_kohm_cm: ArrayLike,
    temperature_c: ArrayLike,
    *,
    t_ref_c: float = 20.0,
    ea_kj_mol: float = 25.0,
) -> NDArray[np.float64]:
    """Return resistivity corrected to ``t_ref_c`` by :func:`arrhenius_factor`, kOhm.cm."""
    return _as_float(rho_kohm_cm, "resistivity") * arrhenius_factor(
        temperature_c, t_ref_c=t_ref_c, ea_kj_mol=ea_kj_mol
    )


def icorr_estimate_from_resistivity(
    rho_kohm_cm: ArrayLike, *, k_ua_cm2_kohm_cm: float = 26.0
) -> NDArray[np.float64]:
    """Return an indicative ``i_corr ~ k / rho`` in uA/cm2 (low confidence; label it so).

    After [Alonso-Andrade-1988, from memory].
    Valid only for depassivated steel.
    """
    r = _as_float(rho_kohm_cm, "resistivity")
    with np.errstate(invalid="ignore"):
        if np.any(r <= 0):
            raise ConditionError(f"resistivity must be positive ({_first_bad(r <= 0)})")
    return k_ua_cm2_kohm_cm / r

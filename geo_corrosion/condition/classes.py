"""Published class sets over one variable, held as data, with vectorised classifiers.

Each :class:`ClassSet` is an ordered set of classes over one variable (potential,
resistivity or corrosion current density).  The classes are ordered by
*increasing value of the variable*; ``edges`` holds the ``n - 1`` inner class
limits in ascending order, and ``on_edge`` says, for every edge, whether a value
exactly on it goes to the class ``"above"`` or ``"below"`` the edge.  The prose
field ``inclusive`` states the same convention for reports.

Class sets and their sources (keys of :mod:`geo_corrosion.bibliography`):

* ``c876`` -- ASTM C876 numeric-magnitude criteria, mV vs CSE
  [ASTM-C876-91 App. X1, from memory]: E > -200 "low (>90 % no corrosion)"; -350 <= E <= -200
  "uncertain"; E < -350 "high (>90 % corrosion)".  The sources do not say how a
  value on a bound is classed; here **both bounds are "uncertain"** (common
  practice).
* ``c876_severe`` -- the same with an extra class E < -500 mV "severe" (common
  practice, not an ASTM class).
* ``rilem_resistivity`` -- RILEM TC 154 / Polder (2000, 2001) corrosion risk of
  depassivated steel, kOhm.cm, OPC at 20 °C [RILEM-TC154-2000; Polder-2001, from memory]:
  < 10 high, 10-50 moderate, 50-100 low, > 100 negligible.  The lower bound is
  inclusive in the higher-resistivity class (common practice).
* ``langford_broomfield`` -- Langford & Broomfield (1987) after Broomfield,
  *Corrosion of Steel in Concrete* [Broomfield-2007, from memory]: < 5 very
  high, 5-10 high, 10-20 low to moderate, > 20 low; same boundary convention.
* ``aashto_t358`` / ``aashto_t358_150x300`` -- AASHTO T 358 surface resistivity
  as an indication of chloride-ion penetration of *water-saturated laboratory
  cylinders* [AASHTO-T358-15 Table 1, from memory].  Scope
  ``"laboratory"``: :func:`get_class_set` refuses it for field readings.
* ``rilem_rate`` -- RILEM TC 154 (Andrade, Alonso et al. 2004) corrosion-rate
  levels, uA/cm2 [Andrade-Alonso-2004, from memory] (high confidence): < 0.1
  negligible, 0.1-0.5 low, 0.5-1.0 moderate, > 1.0 high.  Boundary convention
  (common practice): 0.1 -> low, 0.5 -> moderate, 1.0 ->
  moderate.
* ``clear_rate`` -- Clear (1989) three-electrode (3LP) levels
  [Clear-1989, from memory], offered as an option only; lower bound inclusive in the higher
  class (our choice).

Colours are the project's own colour-blind-safe palette, built from the
"Color Universal Design" set [Okabe-Ito-2008]: blue / sky blue / bluish green
for the benign end, yellow / orange / vermillion for the severe end.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from geo_corrosion.errors import ConditionError

__all__ = [
    "ClassSet",
    "POTENTIAL_C876",
    "POTENTIAL_C876_SEVERE",
    "RESISTIVITY_RILEM",
    "RESISTIVITY_LANGFORD_BROOMFIELD",
    "RESISTIVITY_AASHTO_T358",
    "RESISTIVITY_AASHTO_T358_150X300",
    "RATE_RILEM",
    "RATE_CLEAR",
    "CLASS_SETS",
    "get_class_set",
    "class_set_names",
    "class_set_from_dict",
]

# Okabe-Ito based palette (our choice of order, not any product's scheme)
_BLUE = "#0072B2"
_SKY = "#56B4E9"
_GREEN = "#009E73"
_YELLOW = "#F0E442"
_ORANGE = "#E69F00"
_VERMILLION = "#D55E00"
_PURPLE = "#CC79A7"


@dataclass(frozen=True)
class ClassSet:
    """An ordered set of classes over one variable, with its source and edge convention.

    Attributes
    ----------
    name : str
        Registry name (``"c876"``, ``"rilem_resistivity"``, ...).
    variable : str
        Column the classes apply to, carrying its unit (``"potential_mv"``).
    unit : str
        Unit of the edges (``"mV vs CSE"``, ``"kohm.cm"``, ``"uA/cm2"``).
    source : str
        Published source and provenance tag.
    scope : {"field", "laboratory"}
        Laboratory class sets are refused for field readings.
    edges : tuple of float
        The ``n - 1`` inner class limits, strictly ascending, in ``unit``.
    labels : tuple of str
        The ``n`` class labels, ordered by increasing value of the variable.
    colors : tuple of str
        One hex colour per class (Okabe-Ito based, colour-blind safe).
    inclusive : str
        Prose statement of how a value exactly on an edge is classed.
    on_edge : tuple of {"above", "below"}
        Per edge: a value equal to the edge goes to the class above or below it.
    keys : tuple of str
        Short machine keys of the classes (used by combined-condition rules).
    higher_is_worse : bool
        True if a higher value means a worse condition (corrosion rate), False
        if lower is worse (potential, resistivity).
    caveat : str
        Validity note printed beside the classes in reports.
    """

    name: str
    variable: str
    unit: str
    source: str
    scope: str
    edges: tuple[float, ...]
    labels: tuple[str, ...]
    colors: tuple[str, ...]
    inclusive: str
    on_edge: tuple[str, ...]
    keys: tuple[str, ...] = field(default=())
    higher_is_worse: bool = False
    caveat: str = ""

    def __post_init__(self) -> None:
        n = len(self.labels)
        where = f"class set {self.name!r}: "
        if self.scope not in ("field", "laboratory"):
            raise ConditionError(
                f"{where}scope must be 'field' or 'laboratory', got {self.scope!r}"
            )
        if n < 2:
            raise ConditionError(f"{where}needs at least two classes")
        if len(self.edges) != n - 1:
            raise ConditionError(
                f"{where}{n} labels need {n - 1} edges, got {len(self.edges)}"
            )
        e = np.asarray(self.edges, dtype=float)
        if not np.all(np.isfinite(e)) or np.any(np.diff(e) <= 0):
            raise ConditionError(
                f"{where}edges must be finite and strictly ascending: {self.edges}"
            )
        if len(self.colors) != n:
            raise ConditionError(f"{where}{n} labels need {n} colours, got {len(self.colors)}")
        if len(self.on_edge) != n - 1 or any(s not in ("above", "below") for s in self.on_edge):
            raise ConditionError(
                f"{where}on_edge needs one of 'above'/'below' per edge ({n - 1}), "
                f"got {self.on_edge}"
            )
        if not self.keys:
            object.__setattr__(self, "keys", tuple(_key(lab) for lab in self.labels))
        elif len(self.keys) != n or len(set(self.keys)) != n:
            raise ConditionError(f"{where}needs {n} distinct keys, got {self.keys}")

    @property
    def n_classes(self) -> int:
        """Number of classes."""
        return len(self.labels)

    def codes(self, values: ArrayLike) -> NDArray[np.int64]:
        """Return class codes ``0 .. n-1`` (ordered by increasing value), ``-1`` for NaN.

        Parameters
        ----------
        values : array_like of float
            Values in :attr:`unit`.

        Raises
        ------
        ConditionError
            If the values are not numeric.

        Examples
        --------
        >>> POTENTIAL_C876.codes([-400.0, -350.0, -200.0, -150.0]).tolist()
        [0, 1, 1, 2]
        """
        try:
            v = np.asarray(values, dtype=float)
        except (TypeError, ValueError) as err:
            raise ConditionError(
                f"class set {self.name!r}: values must be numbers in {self.unit}; "
                f"convert text or missing markers to NaN first ({err})"
            ) from err
        e = np.asarray(self.edges, dtype=float)
        above = np.asarray([s == "above" for s in self.on_edge])
        vv = np.atleast_1d(v)[..., None]
        code = np.sum(vv > e, axis=-1) + np.sum((vv == e) & above, axis=-1)
        code = np.asarray(code, dtype=np.int64)
        code[np.isnan(np.atleast_1d(v))] = -1
        return code.reshape(v.shape)

    def classify(self, values: ArrayLike) -> NDArray[np.object_]:
        """Return class labels (object array of str); NaN gives ``""``.

        Examples
        --------
        >>> RESISTIVITY_RILEM.classify([5.0, 10.0, 150.0]).tolist()
        ['high', 'moderate', 'negligible']
        """
        return self._lookup(self.codes(values), self.labels)

    def classify_keys(self, values: ArrayLike) -> NDArray[np.object_]:
        """Return short class keys (object array of str); NaN gives ``""``."""
        return self._lookup(self.codes(values), self.keys)

    def color_of(self, values: ArrayLike) -> NDArray[np.object_]:
        """Return class colours (hex str); NaN gives ``""``."""
        return self._lookup(self.codes(values), self.colors)

    def severity(self, values: ArrayLike) -> NDArray[np.int64]:
        """Return a severity rank, 0 = most benign class, ``n-1`` = worst; -1 for NaN."""
        c = self.codes(values)
        if self.higher_is_worse:
            return c
        return np.where(c < 0, -1, self.n_classes - 1 - c).astype(np.int64)

    @staticmethod
    def _lookup(codes: NDArray[np.int64], table: tuple[str, ...]) -> NDArray[np.object_]:
        arr = np.asarray(("",) + tuple(table), dtype=object)
        return np.asarray(arr[codes + 1], dtype=object)

    def describe(self) -> dict[str, Any]:
        """JSON-ready description (for run.json and reports)."""
        return {
            "name": self.name,
            "variable": self.variable,
            "unit": self.unit,
            "source": self.source,
            "scope": self.scope,
            "edges": list(self.edges),
            "labels": list(self.labels),
            "keys": list(self.keys),
            "colors": list(self.colors),
            "inclusive": self.inclusive,
            "on_edge": list(self.on_edge),
            "higher_is_worse": self.higher_is_worse,
            "caveat": self.caveat,
        }


def _key(label: str) -> str:
    out = "".join(ch if ch.isalnum() else "_" for ch in label.lower().split("(")[0].strip())
    return "_".join(p for p in out.split("_") if p)


POTENTIAL_C876 = ClassSet(
    name="c876",
    variable="potential_mv",
    unit="mV vs CSE",
    source="ASTM C876 numeric-magnitude criteria [ASTM-C876-91 App. X1, from memory]",
    scope="field",
    edges=(-350.0, -200.0),
    labels=("high (>90 % corrosion)", "uncertain", "low (>90 % no corrosion)"),
    keys=("high", "uncertain", "low"),
    colors=(_VERMILLION, _YELLOW, _GREEN),
    inclusive="both bounds are 'uncertain': -350 and -200 mV are classed uncertain; only values "
    "strictly beyond a bound change class (common practice)",
    on_edge=("above", "below"),
    higher_is_worse=False,
    caveat="Probability of corrosion at the time of measurement, not its rate; criteria developed "
    "from US bridge-deck data; unreliable for cover > 75 mm, dry, sealed or coated surfaces.",
)

POTENTIAL_C876_SEVERE = ClassSet(
    name="c876_severe",
    variable="potential_mv",
    unit="mV vs CSE",
    source="ASTM C876 criteria [ASTM-C876-91 App. X1, from memory] plus a 'severe' class "
    "below -500 mV (common practice, not an ASTM class)",
    scope="field",
    edges=(-500.0, -350.0, -200.0),
    labels=(
        "severe (< -500 mV)", "high (>90 % corrosion)", "uncertain", "low (>90 % no corrosion)"
    ),
    keys=("severe", "high", "uncertain", "low"),
    colors=(_PURPLE, _VERMILLION, _YELLOW, _GREEN),
    inclusive="-500 is 'high'; -350 and -200 are 'uncertain' (common practice)",
    on_edge=("above", "above", "below"),
    higher_is_worse=False,
    caveat=POTENTIAL_C876.caveat,
)

_LOWER_IN_HIGHER = (
    "the lower bound is inclusive in the higher-resistivity class: a value equal to an edge "
    "takes the class above it (common practice)"
)

RESISTIVITY_RILEM = ClassSet(
    name="rilem_resistivity",
    variable="resistivity_kohm_cm",
    unit="kohm.cm",
    source="RILEM TC 154-EMC: corrosion risk of depassivated steel "
    "[RILEM-TC154-2000; Polder-2001, from memory]",
    scope="field",
    edges=(10.0, 50.0, 100.0),
    labels=("high", "moderate", "low", "negligible"),
    colors=(_VERMILLION, _ORANGE, _GREEN, _BLUE),
    inclusive=_LOWER_IN_HIGHER,
    on_edge=("above", "above", "above"),
    higher_is_worse=False,
    caveat="Valid for OPC concrete at 20 °C; blended cements need other limits; not a measure "
    "of chloride contamination.",
)

RESISTIVITY_LANGFORD_BROOMFIELD = ClassSet(
    name="langford_broomfield",
    variable="resistivity_kohm_cm",
    unit="kohm.cm",
    source="Langford & Broomfield (1987), Wenner four-probe, depassivated steel "
    "[Broomfield-2007, from memory]",
    scope="field",
    edges=(5.0, 10.0, 20.0),
    labels=("very high", "high", "low to moderate", "low"),
    colors=(_VERMILLION, _ORANGE, _YELLOW, _GREEN),
    inclusive=_LOWER_IN_HIGHER,
    on_edge=("above", "above", "above"),
    higher_is_worse=False,
    caveat="Indicative corrosion rate of depassivated steel; temperature and cement dependent.",
)

_T358_CAVEAT = (
    "Laboratory test on water-saturated cylinders: an indication of resistance to chloride-ion "
    "penetration, not a field corrosion-risk class."
)

RESISTIVITY_AASHTO_T358 = ClassSet(
    name="aashto_t358",
    variable="resistivity_kohm_cm",
    unit="kohm.cm",
    source="AASHTO T 358, 100 x 200 mm (4 x 8 in) cylinders, a = 38 mm "
    "[AASHTO-T358-15 Table 1, from memory]",
    scope="laboratory",
    edges=(12.0, 21.0, 37.0, 254.0),
    labels=("High", "Moderate", "Low", "Very low", "Negligible"),
    keys=("high", "moderate", "low", "very_low", "negligible"),
    colors=(_VERMILLION, _ORANGE, _GREEN, _SKY, _BLUE),
    inclusive=_LOWER_IN_HIGHER,
    on_edge=("above",) * 4,
    higher_is_worse=False,
    caveat=_T358_CAVEAT,
)

RESISTIVITY_AASHTO_T358_150X300 = ClassSet(
    name="aashto_t358_150x300",
    variable="resistivity_kohm_cm",
    unit="kohm.cm",
    source="AASHTO T 358, 150 x 300 mm (6 x 12 in) cylinders, a = 38 mm "
    "[AASHTO-T358-15 Table 1, from memory]",
    scope="laboratory",
    edges=(9.5, 16.5, 29.0, 199.0),
    labels=("High", "Moderate", "Low", "Very low", "Negligible"),
    keys=("high", "moderate", "low", "very_low", "negligible"),
    colors=(_VERMILLION, _ORANGE, _GREEN, _SKY, _BLUE),
    inclusive=_LOWER_IN_HIGHER,
    on_edge=("above",) * 4,
    higher_is_worse=False,
    caveat=_T358_CAVEAT,
)

RATE_RILEM = ClassSet(
    name="rilem_rate",
    variable="icorr_ua_cm2",
    unit="uA/cm2",
    source="RILEM TC 154-EMC corrosion-rate levels [Andrade-Alonso-2004, from memory] "
    "(high confidence)",
    scope="field",
    edges=(0.1, 0.5, 1.0),
    labels=("negligible", "low", "moderate", "high"),
    colors=(_BLUE, _GREEN, _ORANGE, _VERMILLION),
    inclusive="0.1 -> low, 0.5 -> moderate, 1.0 -> moderate (only > 1.0 is high) "
    "(common practice)",
    on_edge=("above", "above", "below"),
    higher_is_worse=True,
    caveat="Instantaneous rate at the time of measurement; depends on moisture and temperature; "
    "unconfined readings are semi-quantitative.",
)

RATE_CLEAR = ClassSet(
    name="clear_rate",
    variable="icorr_ua_cm2",
    unit="uA/cm2",
    source="Clear (1989), three-electrode (3LP) interpretation [Clear-1989, from memory]; "
    "optional alternative",
    scope="field",
    edges=(0.2, 1.0, 10.0),
    labels=(
        "no damage expected",
        "damage possible in 10-15 yr",
        "damage in 2-10 yr",
        "damage in < 2 yr",
    ),
    keys=("none_expected", "possible_10_15_yr", "within_2_10_yr", "within_2_yr"),
    colors=(_BLUE, _GREEN, _ORANGE, _VERMILLION),
    inclusive="a value equal to an edge takes the class above it (our choice; not stated by the "
    "source)",
    on_edge=("above", "above", "above"),
    higher_is_worse=True,
    caveat="Levels calibrated for one instrument type; indicative only.",
)

#: Registry of the built-in class sets, by name.
CLASS_SETS: dict[str, ClassSet] = {
    cs.name: cs
    for cs in (
        POTENTIAL_C876,
        POTENTIAL_C876_SEVERE,
        RESISTIVITY_RILEM,
        RESISTIVITY_LANGFORD_BROOMFIELD,
        RESISTIVITY_AASHTO_T358,
        RESISTIVITY_AASHTO_T358_150X300,
        RATE_RILEM,
        RATE_CLEAR,
    )
}

_ALIASES: dict[str, str] = {
    "potential_c876": "c876",
    "astm_c876": "c876",
    "potential_c876_severe": "c876_severe",
    "resistivity_rilem": "rilem_resistivity",
    "rilem_tc154_resistivity": "rilem_resistivity",
    "resistivity_langford_broomfield": "langford_broomfield",
    "resistivity_aashto_t358": "aashto_t358",
    "t358": "aashto_t358",
    "resistivity_aashto_t358_150x300": "aashto_t358_150x300",
    "rate_rilem": "rilem_rate",
    "rilem_tc154_rate": "rilem_rate",
    "rate_clear": "clear_rate",
}


def class_set_names() -> list[str]:
    """Names of the built-in class sets."""
    return sorted(CLASS_SETS)


def get_class_set(name: str | ClassSet, *, field: bool = True) -> ClassSet:
    """Return a class set by name (case-insensitive; constant names also accepted).

    Parameters
    ----------
    name : str or ClassSet
        Registry name such as ``"c876"`` or ``"rilem_resistivity"``, or the
        constant name (``"RESISTIVITY_RILEM"``), or a :class:`ClassSet`.
    field : bool
        True when the values are field readings: laboratory class sets are then
        refused.

    Raises
    ------
    ConditionError
        If the name is unknown, or a laboratory class set is asked for field readings.

    Examples
    --------
    >>> get_class_set("c876").unit
    'mV vs CSE'
    """
    if isinstance(name, ClassSet):
        cs = name
    else:
        key = str(name).strip().lower().replace("-", "_").replace(" ", "_")
        key = _ALIASES.get(key, key)
        if key not in CLASS_SETS:
            raise ConditionError(
                f"unknown class set {name!r}; choose one of: {', '.join(class_set_names())}"
            )
        cs = CLASS_SETS[key]
    if field and cs.scope == "laboratory":
        raise ConditionError(
            f"class set {cs.name!r} is a laboratory classification ({cs.source}) and does not "
            f"apply to field readings; use 'rilem_resistivity' or 'langford_broomfield' for a "
            f"field survey, or pass field=False for laboratory specimens"
        )
    return cs


def class_set_from_dict(spec: dict[str, Any], *, where: str = "") -> ClassSet:
    """Build a user class set from a dict (as parsed from a site-file TOML table).

    Required keys: ``name``, ``variable``, ``unit``, ``edges``, ``labels``.
    Optional: ``source`` (default "user-defined"), ``scope`` ("field"),
    ``colors`` (taken from the Okabe-Ito palette), ``on_edge`` (all "above"),
    ``inclusive``, ``keys``, ``higher_is_worse`` (False), ``caveat``.

    Raises
    ------
    ConditionError
        Naming the missing or bad key.
    """
    w = f"{where}class set {spec.get('name', '?')!r}: " if where or spec else ""
    for k in ("name", "variable", "unit", "edges", "labels"):
        if k not in spec:
            raise ConditionError(f"{w}missing key {k!r}")
    known = {"name", "variable", "unit", "edges", "labels", "source", "scope", "colors",
             "on_edge", "inclusive", "keys", "higher_is_worse", "caveat"}
    extra = sorted(set(spec) - known)
    if extra:
        raise ConditionError(f"{w}unknown key(s) {extra}; allowed: {sorted(known)}")
    labels = tuple(str(s) for s in spec["labels"])
    try:
        edges = tuple(float(x) for x in spec["edges"])
    except (TypeError, ValueError) as err:
        raise ConditionError(f"{w}edges must be numbers: {spec['edges']!r}") from err
    palette = (_BLUE, _SKY, _GREEN, _YELLOW, _ORANGE, _VERMILLION, _PURPLE)
    n = len(labels)
    if "colors" in spec:
        colors = tuple(str(c) for c in spec["colors"])
    elif n <= len(palette):
        colors = tuple(palette[round(i * (len(palette) - 1) / max(n - 1, 1))] for i in range(n))
    else:
        raise ConditionError(f"{w}more than {len(palette)} classes need explicit 'colors'")
    on_edge = tuple(spec.get("on_edge", ("above",) * len(edges)))
    return ClassSet(
        name=str(spec["name"]),
        variable=str(spec["variable"]),
        unit=str(spec["unit"]),
        source=str(spec.get("source", "user-defined")),
        scope=str(spec.get("scope", "field")),
        edges=edges,
        labels=labels,
        colors=colors,
        inclusive=str(spec.get("inclusive", "per on_edge: " + ", ".join(on_edge))),
        on_edge=on_edge,
        keys=tuple(str(s) for s in spec.get("keys", ())),
        higher_is_worse=bool(spec.get("higher_is_worse", False)),
        caveat=str(spec.get("caveat", "")),
    )

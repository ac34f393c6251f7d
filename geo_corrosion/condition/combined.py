"""Combined condition class per cell from the available measurement kinds.

Rule table
----------
A :class:`RuleTable` holds an ordered list of output classes and an ordered
list of rules.  Each rule names a combined class and conditions on some of:

* ``potential`` -- keys of the potential class set (default ``c876``:
  ``high``, ``uncertain``, ``low``),
* ``resistivity`` -- keys of the resistivity class set (default
  ``rilem_resistivity``: ``high``, ``moderate``, ``low``, ``negligible``),
* ``rate`` -- keys of the corrosion-rate class set (default ``rilem_rate``:
  ``negligible``, ``low``, ``moderate``, ``high``),
* ``low_cover`` -- ``true`` or ``false``.

A rule matches a cell when *all* its conditions hold; a condition on a kind
with no value at that cell does not hold.  The **first** matching rule wins;
cells matched by no rule get ``default`` (``no_data`` when the cell has no value
of any kind, else ``unclassified``).

The default table (common practice, built on the class sets:
low cover with E < -350 mV CSE or rho < 10 kOhm.cm is "high priority") is
:data:`DEFAULT_RULES`; print it with :meth:`RuleTable.to_dict`.  A site file
overrides it with the same structure::

    [condition.combined]
    default = "unclassified"
    classes = [
      { key = "high_priority", label = "High priority", color = "#D55E00" },
      { key = "low_risk", label = "Low risk", color = "#009E73" },
    ]
    [[condition.combined.rules]]
    name = "low cover and high corrosion probability"
    potential = ["high"]
    low_cover = true
    class = "high_priority"

These classes combine indicators; they are not a structural assessment, and a
licensed engineer decides on repairs.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from geo_corrosion.condition.classes import ClassSet, get_class_set
from geo_corrosion.errors import ConditionError

__all__ = [
    "KINDS",
    "CombinedClass",
    "Rule",
    "RuleTable",
    "DEFAULT_RULES",
    "CombinedResult",
    "combine",
]

#: Kinds a rule may condition on, with their default class sets.
KINDS: dict[str, str] = {
    "potential": "c876",
    "resistivity": "rilem_resistivity",
    "rate": "rilem_rate",
}

_NO_DATA = "no_data"
_UNCLASSIFIED = "unclassified"


@dataclass(frozen=True)
class CombinedClass:
    """One output class of the combined condition."""

    key: str
    label: str
    color: str


@dataclass(frozen=True)
class Rule:
    """A rule: conditions on class keys per kind and on low cover, giving a class.

    Attributes
    ----------
    name : str
    result : str
        Key of the combined class.
    potential, resistivity, rate : tuple of str or None
        Accepted class keys of that kind; None means "no condition".
    low_cover : bool or None
    """

    name: str
    result: str
    potential: tuple[str, ...] | None = None
    resistivity: tuple[str, ...] | None = None
    rate: tuple[str, ...] | None = None
    low_cover: bool | None = None

    def to_dict(self) -> dict[str, Any]:
        """Site-file form of the rule."""
        d: dict[str, Any] = {"name": self.name}
        for k in KINDS:
            v = getattr(self, k)
            if v is not None:
                d[k] = list(v)
        if self.low_cover is not None:
            d["low_cover"] = self.low_cover
        d["class"] = self.result
        return d


@dataclass(frozen=True)
class RuleTable:
    """Ordered rules and output classes (see module docstring)."""

    classes: tuple[CombinedClass, ...]
    rules: tuple[Rule, ...]
    default: str = _UNCLASSIFIED
    class_sets: dict[str, str] = field(default_factory=lambda: dict(KINDS))

    def __post_init__(self) -> None:
        keys = [c.key for c in self.classes]
        if len(set(keys)) != len(keys):
            raise ConditionError(f"combined classes have duplicate keys: {keys}")
        for k in (_NO_DATA, _UNCLASSIFIED):
            if k not in keys:
                raise ConditionError(f"combined classes must include {k!r}")
        if self.default not in keys:
            raise ConditionError(f"default class {self.default!r} is not one of {keys}")
        unknown = sorted(set(self.class_sets) - set(KINDS))
        if unknown:
            raise ConditionError(
                f"class_sets names unknown kind(s) {unknown}; allowed {list(KINDS)}"
            )
        sets = self.resolved_class_sets()
        for i, r in enumerate(self.rules):
            where = f"combined rule {i + 1} ({r.name!r}): "
            if r.result not in keys:
                raise ConditionError(f"{where}class {r.result!r} is not one of {keys}")
            if all(getattr(r, k) is None for k in KINDS) and r.low_cover is None:
                raise ConditionError(f"{where}has no condition; give potential, resistivity, "
                                     "rate or low_cover")
            for kind, cs in sets.items():
                v = getattr(r, kind)
                if v is None:
                    continue
                if len(v) == 0:
                    raise ConditionError(f"{where}{kind} lists no class")
                bad = [x for x in v if x not in cs.keys]
                if bad:
                    raise ConditionError(
                        f"{where}{kind} class(es) {bad} unknown in class set {cs.name!r}; "
                        f"allowed: {list(cs.keys)}"
                    )

    def resolved_class_sets(self) -> dict[str, ClassSet]:
        """Return the class set used for each kind."""
        merged = dict(KINDS)
        merged.update(self.class_sets)
        return {k: get_class_set(v) for k, v in merged.items()}

    @classmethod
    def from_dict(cls, spec: dict[str, Any], *, where: str = "") -> RuleTable:
        """Build a table from a dict parsed from TOML (keys ``classes``, ``rules``, ...).

        Missing ``classes`` keep the default classes; ``rules`` replace the
        default rules when given.

        Raises
        ------
        ConditionError
            Naming the offending rule (1-based index and name) or key.
        """
        allowed = {"classes", "rules", "default", "class_sets"}
        extra = sorted(set(spec) - allowed)
        if extra:
            raise ConditionError(f"{where}unknown key(s) {extra} in combined rules; allowed "
                                 f"{sorted(allowed)}")
        classes = DEFAULT_RULES.classes
        if "classes" in spec:
            out = []
            for j, c in enumerate(spec["classes"]):
                if not isinstance(c, dict) or "key" not in c:
                    raise ConditionError(f"{where}combined class {j + 1} needs a 'key'")
                out.append(CombinedClass(str(c["key"]), str(c.get("label", c["key"])),
                                         str(c.get("color", "#999999"))))
            keys = {c.key for c in out}
            for k, lab in ((_NO_DATA, "No data"), (_UNCLASSIFIED, "Unclassified")):
                if k not in keys:
                    out.append(CombinedClass(k, lab, "#BBBBBB" if k == _NO_DATA else "#999999"))
            classes = tuple(out)
        rules = DEFAULT_RULES.rules
        if "rules" in spec:
            parsed = []
            for i, r in enumerate(spec["rules"]):
                name = r.get("name", f"rule {i + 1}") if isinstance(r, dict) else f"rule {i + 1}"
                w = f"{where}combined rule {i + 1} ({name!r}): "
                if not isinstance(r, dict):
                    raise ConditionError(f"{w}must be a table, got {type(r).__name__}")
                known = {"name", "class", "low_cover", *KINDS}
                bad = sorted(set(r) - known)
                if bad:
                    raise ConditionError(f"{w}unknown key(s) {bad}; allowed {sorted(known)}")
                if "class" not in r:
                    raise ConditionError(f"{w}missing 'class'")
                conds: dict[str, tuple[str, ...] | None] = {}
                for k in KINDS:
                    v = r.get(k)
                    if v is None:
                        conds[k] = None
                    elif isinstance(v, str):
                        conds[k] = (v,)
                    elif isinstance(v, list | tuple) and all(isinstance(x, str) for x in v):
                        conds[k] = tuple(v)
                    else:
                        raise ConditionError(f"{w}{k} must be a class key or a list of keys")
                lc = r.get("low_cover")
                if lc is not None and not isinstance(lc, bool):
                    raise ConditionError(f"{w}low_cover must be true or false, got {lc!r}")
                parsed.append(Rule(str(name), str(r["class"]), low_cover=lc, **conds))
            rules = tuple(parsed)
        class_sets = dict(KINDS)
        if "class_sets" in spec:
            if not isinstance(spec["class_sets"], dict):
                raise ConditionError(f"{where}class_sets must be a table of kind = class set name")
            class_sets.update({str(k): str(v) for k, v in spec["class_sets"].items()})
        try:
            return cls(classes=classes, rules=rules,
                       default=str(spec.get("default", _UNCLASSIFIED)), class_sets=class_sets)
        except ConditionError as err:
            raise ConditionError(f"{where}{err}") from err

    def to_dict(self) -> dict[str, Any]:
        """Site-file (TOML-ready) form of the table."""
        return {
            "default": self.default,
            "class_sets": dict(self.class_sets),
            "classes": [{"key": c.key, "label": c.label, "color": c.color} for c in self.classes],
            "rules": [r.to_dict() for r in self.rules],
        }


DEFAULT_RULES = RuleTable(
    classes=(
        CombinedClass("high_priority", "High priority", "#D55E00"),
        CombinedClass("corrosion_likely", "Corrosion likely", "#E69F00"),
        CombinedClass("watch", "Watch", "#F0E442"),
        CombinedClass("low_risk", "Low risk", "#009E73"),
        CombinedClass(_UNCLASSIFIED, "Unclassified", "#999999"),
        CombinedClass(_NO_DATA, "No data", "#BBBBBB"),
    ),
    rules=(
        Rule("low cover and high corrosion probability (common practice)", "high_priority",
             potential=("high",), low_cover=True),
        Rule("low cover and low resistivity (common practice)", "high_priority",
             resistivity=("high",), low_cover=True),
        Rule("high corrosion rate", "high_priority", rate=("high",)),
        Rule("high corrosion probability", "corrosion_likely", potential=("high",)),
        Rule("moderate corrosion rate", "corrosion_likely", rate=("moderate",)),
        Rule("uncertain potential and low resistivity", "watch",
             potential=("uncertain",), resistivity=("high", "moderate")),
        Rule("uncertain potential", "watch", potential=("uncertain",)),
        Rule("low corrosion rate", "watch", rate=("low",)),
        Rule("low cover", "watch", low_cover=True),
        Rule("low corrosion probability", "low_risk", potential=("low",)),
        Rule("negligible corrosion rate", "low_risk", rate=("negligible",)),
        Rule("low or negligible resistivity risk", "low_risk",
             resistivity=("low", "negligible")),
    ),
)


@dataclass(frozen=True)
class CombinedResult:
    """Combined class per cell.

    Attributes
    ----------
    keys : ndarray of str
        Combined class key per cell.
    labels : ndarray of str
    codes : ndarray of int
        Index into ``table.classes``.
    rule_index : ndarray of int
        1-based index of the rule that fired, 0 where none did.
    table : RuleTable
    """

    keys: NDArray[np.object_]
    labels: NDArray[np.object_]
    codes: NDArray[np.int64]
    rule_index: NDArray[np.int64]
    table: RuleTable


def _low_cover(values: ArrayLike, shape: tuple[int, ...]) -> tuple[NDArray[np.bool_],
                                                                    NDArray[np.bool_]]:
    a = np.asarray(values)
    if a.shape != shape:
        raise ConditionError(f"low_cover has shape {a.shape}, expected {shape}")
    if a.dtype == bool:
        return a, np.ones(shape, dtype=bool)
    try:
        f = a.astype(float)
    except (TypeError, ValueError) as err:
        raise ConditionError("low_cover must be booleans, or 0/1 with NaN for unknown") from err
    return f > 0.5, np.isfinite(f)


def combine(
    table: RuleTable = DEFAULT_RULES,
    *,
    potential_mv: ArrayLike | None = None,
    resistivity_kohm_cm: ArrayLike | None = None,
    icorr_ua_cm2: ArrayLike | None = None,
    low_cover: ArrayLike | None = None,
    values: Mapping[str, ArrayLike] | None = None,
) -> CombinedResult:
    """Return the combined condition class per cell.

    Parameters
    ----------
    table : RuleTable
        Rules and classes (default :data:`DEFAULT_RULES`).
    potential_mv, resistivity_kohm_cm, icorr_ua_cm2 : array_like, optional
        Values per cell in the canonical units (NaN = no value); all the same shape.
    low_cover : array_like of bool or float, optional
        Low-cover flag per cell (NaN = unknown).
    values : mapping of str to array_like, optional
        The same values keyed by the rule table's columns (:data:`KINDS`: ``"potential"``,
        ``"resistivity"``, ``"rate"``), as the pipeline gives them (by the role of each
        measurement kind); a column may not be given both ways.

    Raises
    ------
    ConditionError
        No kind given, an unknown or doubly given column, or shapes differ.
    """
    given = {"potential": potential_mv, "resistivity": resistivity_kohm_cm, "rate": icorr_ua_cm2}
    for k, v in (values or {}).items():
        key = str(k)
        if key not in KINDS:
            raise ConditionError(f"combine(): unknown rule-table column {key!r}; expected one "
                                 f"of: {', '.join(KINDS)}")
        if given[key] is not None:
            raise ConditionError(f"combine(): {key!r} is given twice")
        given[key] = v
    arrays = {k: np.asarray(v, dtype=float) for k, v in given.items() if v is not None}
    if not arrays and low_cover is None:
        raise ConditionError("combine() needs at least one of potential_mv, resistivity_kohm_cm, "
                             "icorr_ua_cm2, low_cover")
    shapes = {k: a.shape for k, a in arrays.items()}
    shape = next(iter(shapes.values())) if shapes else np.asarray(low_cover).shape
    if any(s != shape for s in shapes.values()):
        raise ConditionError(f"input grids differ in shape: {shapes}")
    sets = table.resolved_class_sets()
    keys_by_kind = {k: sets[k].classify_keys(a) for k, a in arrays.items()}
    any_data = np.zeros(shape, dtype=bool)
    for a in arrays.values():
        any_data |= np.isfinite(a)
    lc_val = lc_known = None
    if low_cover is not None:
        lc_val, lc_known = _low_cover(low_cover, shape)
        any_data |= lc_known
    out = np.full(shape, "", dtype=object)
    fired = np.zeros(shape, dtype=np.int64)
    todo = np.ones(shape, dtype=bool)
    for i, rule in enumerate(table.rules, start=1):
        m = todo.copy()
        for kind in KINDS:
            accepted = getattr(rule, kind)
            if accepted is None:
                continue
            if kind not in keys_by_kind:
                m[:] = False
                break
            m &= np.isin(keys_by_kind[kind], list(accepted))
        if rule.low_cover is not None:
            if lc_val is None or lc_known is None:
                m[:] = False
            else:
                m &= lc_known & (lc_val == rule.low_cover)
        out[m] = rule.result
        fired[m] = i
        todo &= ~m
    out[todo & any_data] = table.default
    out[todo & ~any_data] = _NO_DATA
    keys_list = [c.key for c in table.classes]
    code_of = {k: j for j, k in enumerate(keys_list)}
    label_of = {c.key: c.label for c in table.classes}
    codes = np.vectorize(code_of.__getitem__, otypes=[np.int64])(out) if out.size else \
        np.zeros(shape, dtype=np.int64)
    labels = np.vectorize(label_of.__getitem__, otypes=[object])(out) if out.size else \
        np.full(shape, "", dtype=object)
    return CombinedResult(out, labels, codes, fired, table)

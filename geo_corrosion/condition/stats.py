"""Statistics per measurement kind: summary figures and shares of readings and area per class.

Percentiles use numpy's default (linear interpolation between order statistics,
Hyndman & Fan type 7), common practice.  Shares of area count grid cells with a
finite value, each of area ``cell_area`` (in the unit the caller reports).
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd
from numpy.typing import ArrayLike

from geo_corrosion.condition.classes import ClassSet
from geo_corrosion.errors import ConditionError

__all__ = ["summary_statistics", "class_table"]

_PERCENTILES = (5, 10, 25, 50, 75, 90, 95)


def summary_statistics(values: ArrayLike) -> dict[str, Any]:
    """Return count, missing, mean, std (ddof=1), min, percentiles and max of finite values.

    Examples
    --------
    >>> s = summary_statistics([-100.0, -200.0, -300.0, float("nan")])
    >>> s["count"], s["missing"], s["mean"], s["p50"]
    (3, 1, -200.0, -200.0)
    """
    try:
        v = np.asarray(values, dtype=float).ravel()
    except (TypeError, ValueError) as err:
        raise ConditionError(f"values must be numeric ({err})") from err
    f = v[np.isfinite(v)]
    out: dict[str, Any] = {"count": int(f.size), "missing": int(v.size - f.size)}
    if f.size == 0:
        out.update({k: None for k in ("mean", "std", "min", "max")})
        out.update({f"p{p}": None for p in _PERCENTILES})
        return out
    out["mean"] = float(f.mean())
    out["std"] = float(f.std(ddof=1)) if f.size > 1 else None
    out["min"] = float(f.min())
    for p, q in zip(_PERCENTILES, np.percentile(f, _PERCENTILES), strict=True):
        out[f"p{p}"] = float(q)
    out["max"] = float(f.max())
    return out


def class_table(
    values: ArrayLike,
    class_set: ClassSet,
    *,
    cell_values: ArrayLike | None = None,
    cell_area: float | None = None,
) -> pd.DataFrame:
    """Return one row per class: count and share of readings, and area and share of area.

    Parameters
    ----------
    values : array_like
        Readings in the class set's unit.
    class_set : ClassSet
    cell_values : array_like, optional
        Gridded surface in the same unit, for the area columns.
    cell_area : float, optional
        Area of one cell (required with ``cell_values``), in the reporting unit.

    Returns
    -------
    DataFrame
        Columns ``class_key, class_label, lower, upper, count, share_readings``
        and, with cells, ``area, share_area``.  Shares are fractions (0..1).
    """
    codes = class_set.codes(values).ravel()
    n = int(np.sum(codes >= 0))
    lows = (-np.inf,) + tuple(class_set.edges)
    highs = tuple(class_set.edges) + (np.inf,)
    rows = []
    cc = None
    if cell_values is not None:
        if cell_area is None or not (np.isfinite(cell_area) and cell_area > 0):
            raise ConditionError("cell_area (positive) is required with cell_values")
        cc = class_set.codes(cell_values).ravel()
    for k in range(class_set.n_classes):
        cnt = int(np.sum(codes == k))
        row: dict[str, Any] = {
            "class_key": class_set.keys[k], "class_label": class_set.labels[k],
            "lower": lows[k], "upper": highs[k], "count": cnt,
            "share_readings": cnt / n if n else np.nan,
        }
        if cc is not None and cell_area is not None:
            nc = int(np.sum(cc >= 0))
            kc = int(np.sum(cc == k))
            row["area"] = kc * float(cell_area)
            row["share_area"] = kc / nc if nc else np.nan
        rows.append(row)
    return pd.DataFrame(rows)

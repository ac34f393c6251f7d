"""QA rules on what the measurement kinds derived and corrected.

These read the columns a kind's ``derive`` and ``correct`` steps leave on a survey's
frame (``derive_message``, ``derive_warning``, ``temperature_c``) and return rows of
:data:`~geo_corrosion.qa.checks.FLAG_COLUMNS`.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from geo_corrosion.corrections import CSE_VALID_C
from geo_corrosion.qa.checks import FLAG_COLUMNS

__all__ = ["derived_flags"]


def derived_flags(f: pd.DataFrame, *, survey_id: str, level_id: str, file_name: str,
                  electrode_temperature: bool) -> pd.DataFrame:
    """QA rows on what a survey's kind derived and corrected.

    ``QA-DERIVE`` (warning): a reading whose value could not be derived from raw instrument
    values (its ``derive_message``); ``QA-DERIVE-NOTE`` (info): a derivation note
    (``derive_warning``); ``QA-TEMP-RANGE`` (warning): a CSE electrode temperature outside
    0-49 degC, where ASTM C876's temperature coefficient holds, checked when
    ``electrode_temperature`` (a half-cell survey).  One survey temperature outside the range
    gives one survey flag instead of a flag per reading.
    """
    rows = []
    for col, rule, sev in (("derive_message", "QA-DERIVE", "warning"),
                           ("derive_warning", "QA-DERIVE-NOTE", "info")):
        if col not in f:
            continue
        sel = f[col].fillna("").astype(str) != ""
        for r in f.loc[sel].itertuples():
            rows.append({"reading_id": r.reading_id, "survey_id": r.survey_id,
                         "level_id": r.level_id, "where": r.where, "rule": rule, "severity": sev,
                         "message": getattr(r, col), "value": float("nan")})
    if electrode_temperature and "temperature_c" in f:
        t = f["temperature_c"].to_numpy(float)
        out = np.isfinite(t) & ((t < CSE_VALID_C[0]) | (t > CSE_VALID_C[1]))
        if out.all() and len(out) and np.unique(t).size == 1:  # one survey temperature
            out = np.zeros_like(out)
            rows.append({"reading_id": "", "survey_id": survey_id, "level_id": level_id,
                         "where": file_name, "rule": "QA-TEMP-RANGE",
                         "severity": "warning", "value": float(t[0]),
                         "message": f"{file_name}: electrode temperature {t[0]:.1f} "
                                    "degC is outside 0-49 degC, where ASTM C876's CSE "
                                    "coefficient holds; the temperature correction is uncertain"})
        for r, tc in zip(f.loc[out].itertuples(), t[out], strict=True):
            rows.append({"reading_id": r.reading_id, "survey_id": r.survey_id,
                         "level_id": r.level_id, "where": r.where, "rule": "QA-TEMP-RANGE",
                         "severity": "warning", "value": float(tc),
                         "message": f"{r.where}: electrode temperature {tc:.1f} degC is outside "
                                    "0-49 degC, where ASTM C876's CSE coefficient holds; the "
                                    "temperature correction is uncertain"})
    return pd.DataFrame(rows, columns=FLAG_COLUMNS)

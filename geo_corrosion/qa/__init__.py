"""Quality assurance of survey readings: rules with their sources, and the flag table.

:mod:`~geo_corrosion.qa.checks` holds the rule catalogue (:data:`QA_RULES`) and the checks
of one survey and of one level; :mod:`~geo_corrosion.qa.derived` the rules on what the
kinds derived and corrected (raw instrument values, electrode temperature).  Every check
returns rows of :data:`FLAG_COLUMNS`; a check never changes a reading.
"""

from geo_corrosion.qa.checks import (
    CONTRACT_COLUMNS,
    FLAG_COLUMNS,
    QA_RULES,
    QARule,
    check_level,
    check_survey,
    count_line,
    flag_points,
    format_flags,
    ground_connection_flags,
    runnable,
    summarize,
)

__all__ = [
    "QARule",
    "QA_RULES",
    "FLAG_COLUMNS",
    "CONTRACT_COLUMNS",
    "check_survey",
    "check_level",
    "summarize",
    "runnable",
    "flag_points",
    "format_flags",
    "count_line",
    "ground_connection_flags",
]

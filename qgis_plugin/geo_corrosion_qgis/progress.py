"""Turn the command line's progress lines into a percentage for the Processing dialog.

Pure Python (no QGIS import). The command line prints one line per step on standard error
(``  level L2: reading plans``, ``  survey S1: reading x.csv``, ``  level L2: kriging 412
potential readings``, ``  level L2: condition assessment``, ``  level L2: laying out repairs
and zones``, ``  writing <exporter>``, ``  note: ...``) and no fraction, so the fraction is
estimated from the phase: reading 0-10 %, the levels 10-70 % (each level an equal share,
the number of levels counted from the plan readings that come first), writing 70-99 %.
"""

from __future__ import annotations

import re

__all__ = ["ProgressTracker"]

_LEVEL_PLANS = re.compile(r"^level (?P<lid>\S+): reading plans")
_LEVEL_STEP = re.compile(r"^level (?P<lid>\S+): (?P<step>kriging|condition assessment|"
                         r"laying out|.*points, no surface)")
_STEP_SHARE = {"kriging": 0.1, "condition assessment": 0.6, "laying out": 0.8}
#: exporters written by a default run (geopackage, geotiff, quantities, drawings, plots,
#: webmap, report and the ones that came after); only an estimate of how many there are
_EXPECTED_WRITES = 9


class ProgressTracker:
    """Follow the progress lines of one command and estimate its percentage done."""

    def __init__(self) -> None:
        self.levels: list[str] = []
        self.done_levels: set[str] = set()
        self.current: tuple[str, float] | None = None
        self.writes = 0
        self.percent = 0.0

    def feed(self, line: str) -> float | None:
        """Read one line of standard error; return the new percentage, or None if unchanged."""
        text = line.strip()
        before = self.percent
        if m := _LEVEL_PLANS.match(text):
            if m["lid"] not in self.levels:
                self.levels.append(m["lid"])
            self.percent = max(self.percent, 2.0)
        elif text.startswith("survey ") and ": reading " in text:
            self.percent = max(self.percent, min(9.0, self.percent + 1.0))
        elif m := _LEVEL_STEP.match(text):
            lid = m["lid"]
            if lid not in self.levels:
                self.levels.append(lid)
            step = m["step"]
            share = _STEP_SHARE.get(step.split(" repairs")[0], 0.1)
            if self.current and self.current[0] != lid:
                self.done_levels.add(self.current[0])
            self.current = (lid, share)
            n = max(len(self.levels), 1)
            self.percent = max(self.percent,
                               10.0 + 60.0 * (len(self.done_levels) + share) / n)
        elif text.startswith("writing "):
            self.writes += 1
            self.percent = max(self.percent,
                               70.0 + 29.0 * min(self.writes, _EXPECTED_WRITES) / _EXPECTED_WRITES)
        return self.percent if self.percent != before else None

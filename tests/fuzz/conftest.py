"""Fixtures of the fuzz suite and its summary line at the end of the pytest run.

The summary counts the broken site folders tried and handled cleanly per group (each group is
one module ``test_<group>.py``; a hypothesis test tries several folders), the cases marked
``xfail`` pending another branch, and the kill soak of ``tests/core/test_run_safety.py`` that
covers interrupted runs.
"""

from __future__ import annotations

import shutil
from collections.abc import Iterator
from pathlib import Path

import pytest

from geo_corrosion.testing import make_synthetic_site
from tests.fuzz.contract import TALLY

#: xfailed cases per group: pending another branch, and defects found here and unfixed.
_XFAILED: dict[str, int] = {}
_FOUND: dict[str, int] = {}
_SOAK = "tests/core/test_run_safety.py::test_soak_sigkill_never_loses_output"
_SOAK_KILLS = 6  # the soak's kill plans (see that test)
_soak_outcome: list[str] = []


@pytest.fixture(scope="session")
def fuzz_template(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The synthetic site of ``geo_corrosion.testing`` (60 x 40 ft, 800 readings), written once."""
    root = tmp_path_factory.mktemp("fuzz_template") / "site"
    make_synthetic_site(root)
    return root


def fresh_site(template: Path, parent: Path) -> Path:
    """Copy the template site into a new folder ``parent/site`` (``parent`` is made)."""
    parent.mkdir(parents=True, exist_ok=True)
    dst = parent / "site"
    shutil.copytree(template, dst)
    return dst


@pytest.fixture
def site(fuzz_template: Path, tmp_path: Path) -> Path:
    """A fresh copy of the synthetic site that a case may break."""
    return fresh_site(fuzz_template, tmp_path / "case")


def _group(nodeid: str) -> str | None:
    path = nodeid.split("::")[0]
    if "tests/fuzz/test_" not in path:
        return None
    return path.rsplit("test_", 1)[1].removesuffix(".py")


def pytest_runtest_logreport(report: pytest.TestReport) -> None:
    """Count xfailed fuzz cases per group; note the outcome of the referenced kill soak."""
    if report.nodeid == _SOAK and report.when == "call":
        _soak_outcome.append(report.outcome)
    group = _group(report.nodeid)
    if group and hasattr(report, "wasxfail") and report.skipped:
        into = _FOUND if "found by tests/fuzz" in report.wasxfail else _XFAILED
        into[group] = into.get(group, 0) + 1


@pytest.hookimpl(hookwrapper=True, tryfirst=True)
def pytest_terminal_summary(terminalreporter: pytest.TerminalReporter) -> Iterator[None]:
    """Print how many broken site folders were tried and handled cleanly, per group.

    The outermost wrapper: printed after the short test summary, at the end of the run.
    """
    yield
    if not TALLY and not _XFAILED and not _FOUND:
        return
    groups = sorted(set(TALLY) | set(_XFAILED) | set(_FOUND))
    tried = sum(t for t, _ in TALLY.values())
    clean = sum(c for _, c in TALLY.values())
    xfail, found = sum(_XFAILED.values()), sum(_FOUND.values())
    parts = []
    for g in groups:
        t, c = TALLY.get(g, [0, 0])
        x, f = _XFAILED.get(g, 0), _FOUND.get(g, 0)
        parts.append(f"{g} {c}/{t}" + (f" +{x} pending" if x else "")
                     + (f" +{f} found" if f else ""))
    soak = (f"interrupted runs: {_SOAK} {_soak_outcome[0]} ({_SOAK_KILLS} SIGKILLs)"
            if _soak_outcome else f"interrupted runs: {_SOAK} not run in this session")
    terminalreporter.write_line(
        f"fuzz: {tried} broken site folders tried, {clean} handled cleanly; xfailed: {xfail} "
        f"pending a fix, {found} found here and unfixed (groups: {', '.join(parts)}); "
        f"{soak}")

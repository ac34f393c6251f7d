"""Load ``.ci/compare_runs.py`` (a script, not a module of the package) for the tests."""

from __future__ import annotations

import importlib.util
import sys
from pathlib import Path
from types import ModuleType

SCRIPT = Path(__file__).resolve().parents[1] / ".ci" / "compare_runs.py"


def load_compare_runs() -> ModuleType:
    """Execute ``.ci/compare_runs.py`` and return it as the module ``compare_runs``."""
    spec = importlib.util.spec_from_file_location("compare_runs", SCRIPT)
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    sys.modules["compare_runs"] = module  # dataclasses look their module up there
    spec.loader.exec_module(module)
    return module

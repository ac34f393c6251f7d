"""The benchmark's synthetic garage (benchmarks/synthetic_garage.py) is a valid site."""

from __future__ import annotations

import importlib.util
import sys
from pathlib import Path
from types import ModuleType

SCRIPT = Path(__file__).resolve().parents[2] / "benchmarks" / "synthetic_garage.py"


def _generator() -> ModuleType:
    spec = importlib.util.spec_from_file_location("synthetic_garage", SCRIPT)
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    sys.modules["synthetic_garage"] = module
    spec.loader.exec_module(module)
    return module


def test_garage_is_read_and_checked_and_repeatable(tmp_path: Path) -> None:
    """Two levels of 600 stations: read, opened and checked runnable; same seed, same bytes."""
    from geo_corrosion.pipeline import check
    from geo_corrosion.qa import runnable

    gen = _generator()
    # hand computation: nx = ceil(sqrt(1.5 * 600)) = 30, ny = ceil(600 / 30) = 20
    assert gen.level_size(600, 2.0) == (30, 20)
    site_file = gen.make_garage(tmp_path / "a", levels=2, readings_per_level=600, seed=3)
    site, flags = check(site_file)
    assert list(site.levels) == ["P1", "P2"]
    kinds = sorted({s.kind.name for s in site.surveys})
    assert kinds == ["corrosion_rate", "cover", "potential", "resistivity"]
    pot = [len(s.frame) for s in site.surveys if s.kind.name == "potential"]
    # 600 stations less those on a 2 ft column (a 60 x 40 ft level: one column, at (30, 20) ft)
    assert all(590 <= n <= 600 for n in pot)
    assert not len(flags) or runnable(flags)
    gen.make_garage(tmp_path / "b", levels=2, readings_per_level=600, seed=3)
    for f in sorted(p for p in (tmp_path / "a").rglob("*") if p.is_file()):
        assert f.read_bytes() == (tmp_path / "b" / f.relative_to(tmp_path / "a")).read_bytes()

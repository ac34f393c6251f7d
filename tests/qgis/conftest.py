"""Fixtures of the GIS-output tests: runs made once per session, PyQGIS observations.

Two runs: the synthetic site of :func:`geo_corrosion.testing.make_synthetic_site` (one
level, fast; only the exporters the GIS outputs need) and the sample site
(``sample_sites/millbrook_garage``, two levels; slow; ``GC_QGIS_SAMPLE_RUN=<a finished run
folder of it>`` reuses a run).  PyQGIS runs in Debian's ``/usr/bin/python3`` (QGIS's own
Python cannot import our stack) on ``pyqgis_check.py``, headless (``QT_QPA_PLATFORM=
offscreen``) with a throwaway profile; tests that need it skip where it is missing.
"""

from __future__ import annotations

import json
import os
import subprocess
from pathlib import Path
from typing import Any

import pytest

REPO = Path(__file__).resolve().parents[2]
SAMPLE = REPO / "sample_sites" / "millbrook_garage"
SYSTEM_PYTHON = "/usr/bin/python3"
CHECK = Path(__file__).with_name("pyqgis_check.py")
NO_QGIS = "Debian's QGIS (python3-qgis) is not installed"
#: the exporters the GIS outputs are made of
GIS_EXPORTERS = ["geopackage", "geotiff", "qgis-project"]


def qgis_available() -> bool:
    """Return whether Debian's Python can import PyQGIS."""
    if not Path(SYSTEM_PYTHON).is_file():
        return False
    try:
        r = subprocess.run([SYSTEM_PYTHON, "-c", "import qgis.core"], capture_output=True,
                           timeout=120, env=_qgis_env(Path("/tmp")))
    except (OSError, subprocess.TimeoutExpired):
        return False
    return r.returncode == 0


def _qgis_env(home: Path) -> dict[str, str]:
    env = {k: v for k, v in os.environ.items() if not k.startswith(("PYTHON", "VIRTUAL_ENV"))}
    env.update({"QT_QPA_PLATFORM": "offscreen", "HOME": str(home),
                "XDG_DATA_HOME": str(home / "data"), "XDG_CONFIG_HOME": str(home / "config"),
                "XDG_RUNTIME_DIR": str(home / "run")})
    (home / "run").mkdir(exist_ok=True, mode=0o700)
    return env


def observe(run: Path, tmp: Path, png: Path | None = None, level: str = "") -> dict[str, Any]:
    """Run ``pyqgis_check.py`` on a run folder and return its JSON report."""
    out = tmp / "qgis_report.json"
    args = [SYSTEM_PYTHON, str(CHECK), str(run), str(out)]
    if png is not None:
        args += [str(png), level]
    r = subprocess.run(args, capture_output=True, text=True, timeout=900, env=_qgis_env(tmp))
    assert r.returncode == 0, r.stderr[-3000:]
    rep: dict[str, Any] = json.loads(out.read_text(encoding="utf-8"))
    return rep


@pytest.fixture(scope="session")
def has_qgis() -> bool:
    """Whether PyQGIS is there (checked once)."""
    return qgis_available()


@pytest.fixture(scope="session")
def synthetic_run(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The synthetic site run with the GIS exporters."""
    from geo_corrosion import pipeline
    from geo_corrosion.testing import make_synthetic_site

    root = tmp_path_factory.mktemp("qgis_synthetic")
    site = make_synthetic_site(root / "site")
    out = root / "run"
    pipeline.run(site, out, exporters=GIS_EXPORTERS)
    return out


@pytest.fixture(scope="session")
def sample_run(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The sample site run with the GIS exporters (or ``GC_QGIS_SAMPLE_RUN``)."""
    given = os.environ.get("GC_QGIS_SAMPLE_RUN")
    if given:
        return Path(given)
    from geo_corrosion import pipeline

    out = tmp_path_factory.mktemp("qgis_sample") / "run"
    pipeline.run(SAMPLE, out, exporters=GIS_EXPORTERS)
    return out


@pytest.fixture(scope="session")
def synthetic_qgis(synthetic_run: Path, has_qgis: bool,
                   tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    """What PyQGIS sees of the synthetic run (with a render of its level)."""
    if not has_qgis:
        pytest.skip(NO_QGIS)
    tmp = tmp_path_factory.mktemp("qgis_profile")
    return observe(synthetic_run, tmp, tmp / "level.png", "D1")


@pytest.fixture(scope="session")
def sparse_run(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The synthetic site with a sparse corrosion-rate survey and an expansion joint."""
    from geo_corrosion import pipeline
    from geo_corrosion.testing import make_synthetic_site

    root = tmp_path_factory.mktemp("qgis_sparse")
    site = make_synthetic_site(root / "site", sparse_readings=18, joint_type="expansion")
    out = root / "run"
    pipeline.run(site, out, exporters=GIS_EXPORTERS)
    return out

"""Fixtures of the QGIS plugin tests: Debian's QGIS run headless, a throwaway profile.

The plugin is built with our own command (``geo-corrosion qgis-plugin build``), unzipped into
a profile under a temporary ``XDG_DATA_HOME``, enabled with ``qgis_process.bin plugins
enable``, and its algorithms run with ``qgis_process.bin --json run`` and
``QT_QPA_PLATFORM=offscreen`` (the ``qgis_process`` wrapper passes an option the tool rejects,
so the binary is called directly). The plugin calls geo_corrosion with this interpreter
(``GEO_CORROSION_PYTHON``) and this checkout (``GEO_CORROSION_PYTHONPATH``). Nothing is
downloaded; without QGIS the tests skip with the reason.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
import zipfile
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pytest

REPO = Path(__file__).resolve().parents[2]
PLUGIN_SRC = REPO / "qgis_plugin"
PLUGIN_NAME = "geo_corrosion_qgis"
PROVIDER = "geocorrosion"
QGIS_PROCESS = shutil.which("qgis_process.bin") or "/usr/bin/qgis_process.bin"
SYSTEM_PYTHON = "/usr/bin/python3"


def _pyqgis_missing() -> str | None:
    if not Path(SYSTEM_PYTHON).is_file():
        return f"{SYSTEM_PYTHON} is missing"
    r = subprocess.run([SYSTEM_PYTHON, "-c", "import qgis.core"], capture_output=True,
                       text=True, env={**system_env(), "QT_QPA_PLATFORM": "offscreen"})
    return None if r.returncode == 0 else f"Debian's PyQGIS is missing ({SYSTEM_PYTHON} -c " \
        "'import qgis.core' failed; apt-get install python3-qgis)"


def qgis_missing() -> str | None:
    """Return why QGIS cannot be used here, or None."""
    if not Path(QGIS_PROCESS).is_file():
        return ("QGIS test: qgis_process.bin is missing (apt-get install "
                "--no-install-recommends qgis python3-qgis qgis-providers)")
    return _pyqgis_missing()


def pyqgis_missing() -> str | None:
    """Return why Debian's PyQGIS cannot be used here, or None."""
    why = _pyqgis_missing()
    return f"QGIS test: {why}" if why else None


def system_env(env: dict[str, str] | None = None) -> dict[str, str]:
    """Return an environment in which QGIS's own (Debian's) Python finds itself.

    QGIS embeds Python and looks for ``python3`` on PATH to find its prefix: run from an
    activated virtual environment (as .ci/run does), it took the venv's interpreter, read its
    ``pyvenv.cfg`` and lost its own modules ("Couldn't load SIP module ... No module named
    'qgis'"). So the venv leaves PATH and the PYTHON* variables are dropped; the package's
    own Python is handed to the plugin by GEO_CORROSION_PYTHON.
    """
    e = {k: v for k, v in (env or os.environ).items()
         if not k.startswith(("PYTHON", "VIRTUAL_ENV"))}
    venv = os.environ.get("VIRTUAL_ENV")
    parts = [p for p in e.get("PATH", "").split(os.pathsep)
             if p and not (venv and p.startswith(venv))]
    e["PATH"] = os.pathsep.join(["/usr/bin", *[p for p in parts if p != "/usr/bin"]])
    return e


def base_env(xdg: Path) -> dict[str, str]:
    """Return the environment of QGIS runs: offscreen, a throwaway profile, our Python."""
    env = system_env()
    env.update(QT_QPA_PLATFORM="offscreen", XDG_DATA_HOME=str(xdg),
               XDG_RUNTIME_DIR=str(xdg / "runtime"), GEO_CORROSION_PYTHON=sys.executable,
               GEO_CORROSION_PYTHONPATH=str(REPO))
    env.pop("PYTHONPATH", None)  # QGIS's own Python must not see our checkout
    (xdg / "runtime").mkdir(parents=True, exist_ok=True, mode=0o700)
    return env


def cli(*args: str, check: bool = True, **kw: Any) -> subprocess.CompletedProcess[str]:
    """Run ``geo-corrosion ARGS`` with this checkout."""
    env = {**os.environ, "PYTHONPATH": str(REPO)}
    r = subprocess.run([sys.executable, "-m", "geo_corrosion.cli.main", *args],
                       capture_output=True, text=True, env=env, **kw)
    if check and r.returncode != 0:
        raise AssertionError(f"geo-corrosion {' '.join(args)} failed:\n{r.stderr}")
    return r


@dataclass
class QgisProfile:
    """A throwaway QGIS profile with the plugin installed and enabled."""

    xdg: Path
    env: dict[str, str]
    zip_path: Path

    @property
    def plugins_dir(self) -> Path:
        """Return the profile's plugin folder."""
        return self.xdg / "QGIS" / "QGIS3" / "profiles" / "default" / "python" / "plugins"

    def process(self, *args: str) -> subprocess.CompletedProcess[str]:
        """Run ``qgis_process.bin ARGS``."""
        return subprocess.run([QGIS_PROCESS, *args], capture_output=True, text=True,
                              env=self.env, timeout=1800)

    def run(self, alg: str, project: Path | None = None,
            **params: object) -> tuple[subprocess.CompletedProcess[str], dict[str, Any]]:
        """Run ``provider:alg`` with ``PARAM=value``; return the process and its JSON."""
        args = ["--json", "run", f"{PROVIDER}:{alg}"]
        if project is not None:
            args.append(f"--PROJECT_PATH={project}")
        args += ["--", *(f"{k}={v}" for k, v in params.items())]
        r = self.process(*args)
        try:
            out = json.loads(r.stdout) if r.stdout.strip() else {}
        except json.JSONDecodeError:
            out = {}
        return r, out


@pytest.fixture(scope="session")
def plugin_zip(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """Build the plugin zip with our own command."""
    out = tmp_path_factory.mktemp("plugin_zip")
    r = cli("qgis-plugin", "build", "--out", str(out))
    return Path(r.stdout.split("wrote ", 1)[1].splitlines()[0].strip())


@pytest.fixture(scope="session")
def qgis_profile(tmp_path_factory: pytest.TempPathFactory,
                 plugin_zip: Path) -> Iterator[QgisProfile]:
    """Install the built zip into a throwaway profile and enable the plugin."""
    if why := qgis_missing():
        pytest.skip(why)
    xdg = tmp_path_factory.mktemp("xdg")
    prof = QgisProfile(xdg, base_env(xdg), plugin_zip)
    prof.plugins_dir.mkdir(parents=True)
    with zipfile.ZipFile(plugin_zip) as zf:
        zf.extractall(prof.plugins_dir)
    r = prof.process("plugins", "enable", PLUGIN_NAME)
    assert r.returncode == 0, r.stderr
    yield prof


@pytest.fixture(scope="session")
def empty_project(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """Return an empty QGIS project file, the project the run's layers are loaded into."""
    p = tmp_path_factory.mktemp("project") / "empty.qgs"
    p.write_text('<!DOCTYPE qgis PUBLIC \'http://mrcc.com/qgis.dtd\' \'SYSTEM\'>\n'
                 '<qgis projectname="" version="3.22.0"></qgis>\n', encoding="utf-8")
    return p


def pyqgis(script: str, *args: str, env: dict[str, str] | None = None
           ) -> subprocess.CompletedProcess[str]:
    """Run ``script`` with Debian's Python and PyQGIS initialised (``app`` in scope)."""
    head = ("import sys\nfrom qgis.core import QgsApplication\n"
            "QgsApplication.setPrefixPath('/usr', True)\n"
            "app = QgsApplication([], False)\napp.initQgis()\n"
            f"sys.path.insert(0, {str(PLUGIN_SRC)!r})\n")
    e = system_env(env)
    e["QT_QPA_PLATFORM"] = "offscreen"
    return subprocess.run([SYSTEM_PYTHON, "-c", head + script, *args], capture_output=True,
                          text=True, env=e, timeout=600)

"""The plugin's parts that need no QGIS: the zip, the Python finder, messages, progress.

The plugin's modules ``runner`` and ``progress`` are plain Python (they must run in QGIS's
own Python), so they are imported here directly from ``qgis_plugin/``.
"""

from __future__ import annotations

import ast
import os
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

from tests.qgis_plugin.conftest import PLUGIN_NAME, PLUGIN_SRC, cli

sys.path.insert(0, str(PLUGIN_SRC))
from geo_corrosion_qgis.progress import ProgressTracker  # noqa: E402
from geo_corrosion_qgis.runner import (  # noqa: E402
    CliError,
    cli_env,
    error_message,
    find_python,
    python_from_script,
    run_cli,
)


def test_zip_has_the_plugin_folder_at_its_root_with_our_version(plugin_zip: Path) -> None:
    """QGIS's "Install from ZIP" expects one folder at the root holding metadata.txt."""
    import geo_corrosion

    with zipfile.ZipFile(plugin_zip) as zf:
        names = zf.namelist()
        meta = zf.read(f"{PLUGIN_NAME}/metadata.txt").decode()
    # QGIS's plugin installer: the zip's top folder is the plugin's name (common practice)
    assert {n.split("/")[0] for n in names} == {PLUGIN_NAME}
    assert f"{PLUGIN_NAME}/__init__.py" in names
    assert not [n for n in names if "__pycache__" in n or n.endswith(".pyc")]
    # the plugin's version follows the package's version (issue 15)
    assert f"\nversion={geo_corrosion.__version__}\n" in meta
    assert "hasProcessingProvider=yes" in meta  # qgis_process loads only such plugins


def test_zip_bytes_are_reproducible(plugin_zip: Path, tmp_path: Path) -> None:
    """The same sources give the same zip (fixed entry times, name order): common practice."""
    again = Path(cli("qgis-plugin", "build", "--out", str(tmp_path)).stdout
                 .split("wrote ", 1)[1].splitlines()[0])
    assert again.read_bytes() == plugin_zip.read_bytes()


def test_build_refuses_a_folder_without_a_plugin(tmp_path: Path) -> None:
    """A wrong --source is one clear message naming the folder, no traceback."""
    r = cli("qgis-plugin", "build", "--out", str(tmp_path), "--source", str(tmp_path),
            check=False)
    assert r.returncode != 0
    assert str(tmp_path) in r.stderr and "metadata.txt" in r.stderr
    assert "Traceback" not in r.stderr


def test_plugin_imports_nothing_of_our_stack() -> None:
    """QGIS's Python cannot import our stack (issue 15): stdlib, qgis and itself only."""
    allowed = set(sys.stdlib_module_names) | {"qgis", PLUGIN_NAME}
    for py in (PLUGIN_SRC / PLUGIN_NAME).glob("*.py"):
        for node in ast.walk(ast.parse(py.read_text())):
            if isinstance(node, ast.Import):
                roots = [a.name.split(".")[0] for a in node.names]
            elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
                roots = [node.module.split(".")[0]]
            else:
                continue
            assert set(roots) <= allowed, f"{py.name} imports {roots}"


def test_find_python_order(tmp_path: Path) -> None:
    """Setting first, then GEO_CORROSION_PYTHON, then a script's #!, then a .venv."""
    venv_py = tmp_path / "job" / ".venv" / "bin" / "python"
    venv_py.parent.mkdir(parents=True)
    venv_py.write_text("")
    site = tmp_path / "job" / "site"
    site.mkdir()
    bindir = tmp_path / "bin"
    bindir.mkdir()
    script = bindir / "geo-corrosion"
    script.write_text(f"#!{sys.executable}\nimport sys\n")
    script.chmod(0o755)
    env_py = tmp_path / "envpython"
    env_py.write_text("")
    # hand-made cases of the documented order (algorithms.SetPython help)
    assert find_python(str(env_py), site, {"PATH": ""}) == env_py
    assert find_python(None, site, {"PATH": "", "GEO_CORROSION_PYTHON": str(env_py)}) == env_py
    assert find_python(None, site, {"PATH": str(bindir)}) == Path(sys.executable)
    assert find_python(None, site, {"PATH": ""}) == venv_py
    with pytest.raises(CliError, match="no Python with geo_corrosion was found"):
        find_python(None, tmp_path, {"PATH": ""})
    with pytest.raises(CliError, match="does not exist"):
        find_python(str(tmp_path / "nope"), site, {"PATH": ""})
    assert python_from_script(script) == Path(sys.executable)


def test_subprocess_environment_drops_qgis_libraries_data() -> None:
    """QGIS's PROJ/GDAL data and Python home would mislead the package's own wheels."""
    env = cli_env({"PROJ_LIB": "/usr/share/proj", "PYTHONHOME": "/x", "PYTHONPATH": "/q",
                   "GEO_CORROSION_PYTHONPATH": "/repo", "PATH": "/bin"})
    assert "PROJ_LIB" not in env and "PYTHONHOME" not in env
    assert env["PYTHONPATH"] == "/repo" and env["PATH"] == "/bin"


def test_error_message_is_the_package_message() -> None:
    """Click prints ``Error: <message>`` (click's ClickException); the plugin shows it only."""
    lines = ["  level D1: reading plans", "note: something", "Error: site.toml: bad key x.y",
             "  fix it"]
    assert error_message(Path("py"), 1, lines) == "site.toml: bad key x.y\n  fix it"
    tb = ["Traceback (most recent call last):", '  File "x.py", line 1', "ValueError: boom"]
    msg = error_message(Path("py"), 1, tb)
    assert "Traceback" not in msg and "ValueError: boom" in msg
    missing = ["/p/python: Error while finding module specification for "
               "'geo_corrosion.cli.main' (ModuleNotFoundError: No module named 'geo_corrosion')"]
    assert "not installed for the Python" in error_message(Path("/p/python"), 1, missing)


def test_run_cli_streams_lines_and_raises_the_message(tmp_path: Path) -> None:
    """A real call of our command line: a broken site gives our message, no traceback."""
    site = tmp_path / "site"
    site.mkdir()
    (site / "site.toml").write_text("[site\n")
    out: list[str] = []
    err: list[str] = []
    env = {**os.environ, "GEO_CORROSION_PYTHONPATH": str(PLUGIN_SRC.parent)}
    with pytest.raises(CliError) as info:
        run_cli(Path(sys.executable), ["check", str(site)], on_stdout=out.append,
                on_stderr=err.append, environ=env)
    assert "site.toml" in str(info.value) and "Traceback" not in str(info.value)
    assert any(ln.startswith("Error: ") for ln in err)  # it came from the stream


def test_run_cli_can_be_cancelled(tmp_path: Path) -> None:
    """Cancelling stops the subprocess (common practice of Processing: isCanceled)."""
    calls = iter(range(1000))
    with pytest.raises(CliError, match="cancelled"):
        run_cli(Path(sys.executable), ["--help"], on_stdout=lambda _l: None,
                on_stderr=lambda _l: None, is_canceled=lambda: next(calls) >= 0)


def test_progress_follows_the_command_lines() -> None:
    """The progress lines of a two-level run (pipeline.py, open_site.py, map_surfaces.py)."""
    lines = ["level L2: reading plans", "level RF: reading plans", "survey S1: reading a.csv",
             "level L2: kriging 400 potential readings", "level L2: condition assessment",
             "level L2: laying out repairs and zones", "level RF: kriging 300 potential "
             "readings", "level RF: laying out repairs and zones", "writing geopackage",
             "writing report", "note: something"]
    t = ProgressTracker()
    seen = [t.feed(f"  {ln}") for ln in lines]
    values = [v for v in seen if v is not None]
    assert values == sorted(values) and 0 < values[0] and values[-1] < 100  # monotone
    # derived: levels share 10-70 %; L2 laid out = 10 + 60 * 0.8 / 2, RF kriging = 10+60*1.1/2
    assert seen[5] == pytest.approx(10 + 60 * 0.8 / 2)
    assert seen[6] == pytest.approx(10 + 60 * 1.1 / 2)
    assert seen[-1] is None  # a note does not move the bar


def test_plugin_modules_compile_with_qgis_python() -> None:
    """The plugin's sources are valid for the Python that runs QGIS (if present)."""
    if not Path("/usr/bin/python3").is_file():
        pytest.skip("/usr/bin/python3 is missing")
    files = [str(p) for p in (PLUGIN_SRC / PLUGIN_NAME).glob("*.py")]
    code = "import sys\nfor f in sys.argv[1:]: compile(open(f).read(), f, 'exec')"
    r = subprocess.run(["/usr/bin/python3", "-c", code, *files], capture_output=True,
                       text=True)
    assert r.returncode == 0, r.stderr

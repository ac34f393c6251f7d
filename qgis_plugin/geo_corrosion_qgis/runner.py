"""Find the Python of geo_corrosion's environment and run its command line by subprocess.

Pure Python (no QGIS import): QGIS's own Python cannot import geo_corrosion's stack, so the
plugin calls ``<python> -m geo_corrosion.cli.main ...`` in the package's own environment and
reads its output line by line. The tests import this module with any Python.
"""

from __future__ import annotations

import os
import queue
import shutil
import subprocess
import sys
import threading
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path

__all__ = ["ENV_PYTHON", "ENV_PYTHONPATH", "CliError", "CliResult", "find_python",
           "python_from_script", "candidate_pythons", "run_cli", "cli_env", "error_message"]

#: environment variable naming the Python of geo_corrosion's environment
ENV_PYTHON = "GEO_CORROSION_PYTHON"
#: environment variable giving the PYTHONPATH of that Python (e.g. a source checkout)
ENV_PYTHONPATH = "GEO_CORROSION_PYTHONPATH"
#: the console script of the package
SCRIPT = "geo-corrosion"
#: variables of QGIS's own environment that would mislead the package's libraries
#: (its PROJ and GDAL data are those of QGIS's PROJ and GDAL, not of the package's wheels)
DROPPED_VARIABLES = ("PYTHONHOME", "PYTHONPATH", "PROJ_LIB", "PROJ_DATA", "GDAL_DATA",
                     "GDAL_DRIVER_PATH", "PYTHONSTARTUP")


class CliError(Exception):
    """The command line of geo_corrosion failed; ``str(err)`` is its own message."""


@dataclass
class CliResult:
    """What a finished command printed: standard output and the progress lines."""

    returncode: int
    stdout: list[str] = field(default_factory=list)
    stderr: list[str] = field(default_factory=list)


def python_from_script(script: Path) -> Path | None:
    """Return the Python named by a console script's ``#!`` line, or None.

    A ``geo-corrosion`` script installed by pip starts with ``#!/path/to/venv/bin/python``;
    on Windows the script is an .exe beside ``python.exe``.
    """
    try:
        with open(script, "rb") as f:
            first = f.readline(4096).decode("utf-8", "replace").strip()
    except OSError:
        return None
    if first.startswith("#!"):
        words = first[2:].split()
        if words and Path(words[0]).name == "env" and len(words) > 1:
            found = shutil.which(words[1])
            return Path(found) if found else None
        return Path(words[0]) if words else None
    exe = script.parent / ("python.exe" if os.name == "nt" else "python")
    return exe if exe.is_file() else None


def _venv_pythons(folder: Path) -> list[Path]:
    """Return the Pythons of ``.venv`` / ``venv`` folders in ``folder`` and its parents."""
    out: list[Path] = []
    for d in [folder, *folder.parents]:
        for name in (".venv", "venv"):
            for exe in (d / name / "bin" / "python", d / name / "Scripts" / "python.exe"):
                if exe.is_file():
                    out.append(exe)
    return out


def candidate_pythons(setting: str | None, near: Path | None = None,
                      environ: Mapping[str, str] | None = None) -> list[tuple[Path, str]]:
    """Return the Pythons to try, in order, each with where it was found.

    The plugin setting first, then ``GEO_CORROSION_PYTHON``, then the Python of a
    ``geo-corrosion`` script on PATH, then a ``.venv`` in ``near`` (the site or run folder)
    or one of its parents.
    """
    env = os.environ if environ is None else environ
    out: list[tuple[Path, str]] = []
    if setting:
        out.append((Path(setting), "the plugin setting"))
    if env.get(ENV_PYTHON):
        out.append((Path(env[ENV_PYTHON]), f"the environment variable {ENV_PYTHON}"))
    script = shutil.which(SCRIPT, path=env.get("PATH"))
    if script:
        exe = python_from_script(Path(script))
        if exe:
            out.append((exe, f"the {SCRIPT} command on PATH ({script})"))
    if near is not None:
        for exe in _venv_pythons(Path(near).resolve()):
            out.append((exe, f"the environment {exe.parent.parent}"))
    return out


def find_python(setting: str | None, near: Path | None = None,
                environ: Mapping[str, str] | None = None) -> Path:
    """Return the first usable Python of :func:`candidate_pythons`.

    Raises
    ------
    CliError
        The setting names a missing file, or no Python was found; the message says how to
        set it.
    """
    how = (f"Set it with the algorithm 'Set the Python of geo_corrosion' (or the environment "
           f"variable {ENV_PYTHON}) to the python of the environment where geo_corrosion is "
           "installed (e.g. .venv/bin/python).")
    for exe, where in candidate_pythons(setting, near, environ):
        if exe.is_file():
            return exe
        if where == "the plugin setting" or where.startswith("the environment variable"):
            raise CliError(f"the Python named by {where}, {exe}, does not exist. {how}")
    raise CliError(f"no Python with geo_corrosion was found. {how}")


def cli_env(environ: Mapping[str, str] | None = None) -> dict[str, str]:
    """Return the environment of the subprocess: QGIS's, less what would mislead our stack."""
    env = dict(os.environ if environ is None else environ)
    for name in DROPPED_VARIABLES:
        env.pop(name, None)
    if env.get(ENV_PYTHONPATH):
        env["PYTHONPATH"] = env[ENV_PYTHONPATH]
    env["PYTHONIOENCODING"] = "utf-8"
    env["PYTHONUNBUFFERED"] = "1"
    return env


def error_message(python: Path, returncode: int, stderr: Sequence[str]) -> str:
    """Return the package's own message from a failed command's standard error.

    Click prints ``Error: <message>`` last; progress lines (indented) and notes before it
    are left out. A Python that cannot run the package at all gets a message saying so,
    never a traceback.
    """
    lines = [ln.rstrip() for ln in stderr]
    text = "\n".join(lines)
    if "No module named" in text and "geo_corrosion" in text:
        return (f"geo_corrosion is not installed for the Python {python}; choose the Python "
                f"of its environment (setting or {ENV_PYTHON}).")
    for i, ln in enumerate(lines):
        if ln.startswith("Error: "):
            return "\n".join([ln[len("Error: "):], *lines[i + 1:]]).strip()
    if "Traceback (most recent call last)" in text:
        last = next((ln for ln in reversed(lines) if ln.strip()), "")
        return (f"geo_corrosion stopped with an internal error ({last.strip()}); run the "
                "same command with --debug in a terminal for the details and report it.")
    rest = [ln for ln in lines if ln.strip() and not ln.startswith("  ")]
    if rest:
        return "\n".join(rest)
    return f"geo_corrosion stopped with exit status {returncode} and no message."


def _reader(stream: object, name: str, q: queue.Queue[tuple[str, str | None]]) -> None:
    for line in iter(stream.readline, ""):  # type: ignore[attr-defined]
        q.put((name, line.rstrip("\r\n")))
    q.put((name, None))


def run_cli(python: Path, args: Sequence[str], *, on_stdout: Callable[[str], None],
            on_stderr: Callable[[str], None], is_canceled: Callable[[], bool] = lambda: False,
            cwd: Path | None = None, environ: Mapping[str, str] | None = None,
            ok_codes: Sequence[int] = (0,)) -> CliResult:
    """Run ``python -m geo_corrosion.cli.main ARGS``, streaming each line as it comes.

    Cancelling (``is_canceled()`` true) terminates the process, then kills it after 10 s.

    Raises
    ------
    CliError
        The command exited with a status outside ``ok_codes`` (its message), was
        cancelled, or could not be started.
    """
    cmd = [str(python), "-m", "geo_corrosion.cli.main", *args]
    flags = getattr(subprocess, "CREATE_NO_WINDOW", 0) if sys.platform == "win32" else 0
    try:
        proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                                stdin=subprocess.DEVNULL, text=True, encoding="utf-8",
                                errors="replace", cwd=str(cwd) if cwd else None,
                                env=cli_env(environ), creationflags=flags)
    except OSError as err:
        raise CliError(f"cannot start {python}: {err}") from None
    q: queue.Queue[tuple[str, str | None]] = queue.Queue()
    threads = [threading.Thread(target=_reader, args=(proc.stdout, "out", q), daemon=True),
               threading.Thread(target=_reader, args=(proc.stderr, "err", q), daemon=True)]
    for t in threads:
        t.start()
    result = CliResult(returncode=-1)
    open_streams, canceled = 2, False
    while open_streams:
        if not canceled and is_canceled():
            canceled = True
            proc.terminate()
            try:
                proc.wait(10)
            except subprocess.TimeoutExpired:
                proc.kill()
        try:
            name, line = q.get(timeout=0.2)
        except queue.Empty:
            continue
        if line is None:
            open_streams -= 1
        elif name == "out":
            result.stdout.append(line)
            on_stdout(line)
        else:
            result.stderr.append(line)
            on_stderr(line)
    result.returncode = proc.wait()
    for stream in (proc.stdout, proc.stderr):
        if stream is not None:
            stream.close()
    if canceled:
        raise CliError("cancelled; geo_corrosion was stopped (a run writes nothing until it "
                       "completes, so the output folder is as it was)")
    if result.returncode not in ok_codes:
        raise CliError(error_message(python, result.returncode, result.stderr))
    return result

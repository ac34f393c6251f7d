"""Atomic file writes, spreadsheet-safe text, and the output folder's lock and swap.

A file is written to a temporary name in its target folder and moved onto the
target with :func:`os.replace`, so a reader never sees a half-written file and
a failed write leaves the previous file (or nothing) in place.

:func:`safe_cell` keeps a text taken from the input (a site name, a level name,
a treatment, a bid item, a repair's source ids) from becoming a formula when a
CSV or XLSX file is opened in a spreadsheet program.

A run's output folder is written as ``.<out>.partial-*`` beside the target under
:func:`output_lock`, then put in place with :func:`swap_in`; :func:`recover_output`
(called under the lock before anything else) moves back a previous output that an
interrupted swap left as ``.<out>.old-*`` and removes the leftovers of killed runs.
"""

from __future__ import annotations

import os
import re
import shutil
import sys
import tempfile
from collections.abc import Callable, Iterator
from contextlib import contextmanager, suppress
from pathlib import Path
from typing import TYPE_CHECKING

from geo_corrosion.errors import ExportError

if sys.platform != "win32":
    import fcntl

if TYPE_CHECKING:
    import pandas as pd

__all__ = ["atomic_write", "formula_like", "safe_cell", "safe_frame", "output_lock",
           "recover_output", "swap_in", "held_lock_fds"]

#: File descriptors of the output locks this process holds (a forked worker closes its
#: copies, so that the lock ends with the run that took it: see ``pipeline``).
_HELD: set[int] = set()


def held_lock_fds() -> frozenset[int]:
    """Return the file descriptors of the output locks held now (see :func:`output_lock`)."""
    return frozenset(_HELD)

# OWASP, "CSV Injection" (owasp.org/www-community/attacks/CSV_Injection): a spreadsheet
# program reads a cell starting with one of these characters as a formula.
_FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
# A plain decimal number such as "-1.25" or "+3e-2": a spreadsheet reads it as a number, which
# is what it is, so it is left alone (a negative quantity stays a number).
_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")


def formula_like(text: str) -> bool:
    """Return whether a spreadsheet program would read ``text`` as a formula.

    True when ``text`` starts with ``=``, ``+``, ``-``, ``@``, a tab or a carriage
    return (OWASP's CSV injection guidance) and is not a plain decimal number.
    """
    return text.startswith(_FORMULA_STARTS) and _NUMBER.fullmatch(text) is None


def safe_cell(value: object) -> object:
    """Return ``value`` fit for a CSV or XLSX cell: a formula-like text gets a leading ``'``.

    Only text is changed, and only when :func:`formula_like` says so (OWASP's remedy
    for CSV injection: prefix the cell with a single quote, so the program shows it
    as text).  Numbers, None and every other value are returned unchanged.

    Examples
    --------
    >>> safe_cell("=1+1")
    "'=1+1"
    >>> safe_cell("-1.50"), safe_cell(-2.0), safe_cell("D1")
    ('-1.50', -2.0, 'D1')
    """
    if isinstance(value, str) and formula_like(value):
        return "'" + value
    return value


def safe_frame(frame: pd.DataFrame) -> pd.DataFrame:
    """Return a copy of ``frame`` for a CSV: :func:`safe_cell` on its headers and text cells.

    Columns of numbers keep their numbers; only columns holding objects (text) are
    mapped, cell by cell, so a number in such a column stays as it is.
    """
    out = frame.rename(columns=safe_cell)
    for col in out.columns:
        if out[col].dtype.kind == "O":
            out[col] = out[col].map(safe_cell)
    return out


def atomic_write(path: str | os.PathLike[str], write: Callable[[Path], object], *,
                 what: str = "file") -> Path:
    """Call ``write(tmp_path)``, then move the temporary file onto ``path``.

    Raises
    ------
    ExportError
        If the folder cannot be written or ``write`` fails; no temporary file is left.
    """
    out = Path(path)
    try:
        out.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp_name = tempfile.mkstemp(dir=out.parent, prefix=f".{out.stem}.",
                                        suffix=f".tmp{out.suffix}")
        os.close(fd)
    except OSError as err:
        raise ExportError(f"cannot write {out}: {err}") from err
    tmp = Path(tmp_name)
    try:
        write(tmp)
        os.chmod(tmp, 0o644)  # mkstemp creates 0600; outputs are shared documents
        os.replace(tmp, out)
    except ExportError:
        tmp.unlink(missing_ok=True)
        raise
    except BaseException as err:
        tmp.unlink(missing_ok=True)
        if isinstance(err, Exception):
            raise ExportError(f"{out}: {what} could not be written: {err}") from err
        raise
    return out


@contextmanager
def output_lock(out: str | os.PathLike[str]) -> Iterator[Path]:
    """Hold an exclusive lock on the output folder ``out`` for the ``with`` block.

    The lock is ``fcntl.flock`` on ``.<out>.lock`` beside the target (the parent folder is
    made if missing); the holder's pid is written into it.  The kernel releases the lock of a
    killed process, so a stale lock file never blocks a later run.  On exit the lock file is
    removed while still locked; a run that locked a removed file retries on the new one.
    Without ``fcntl`` (Windows) no lock is taken.

    Yields
    ------
    Path
        The lock file.

    Raises
    ------
    ExportError
        If another process holds the lock (its pid named when known), or the folder cannot
        be written.
    """
    target = Path(out)
    lock = target.with_name(f".{target.name}.lock")
    made_parent = not target.parent.exists()
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise ExportError(f"cannot write {target}: {err}") from err
    if sys.platform == "win32":  # pragma: no cover - no flock there
        yield lock
        return
    while True:
        try:
            fd = os.open(lock, os.O_RDWR | os.O_CREAT, 0o644)
        except OSError as err:
            raise ExportError(f"cannot write {target}: {err}") from err
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            holder = os.read(fd, 32).decode("ascii", "replace").strip()
            os.close(fd)
            who = f"another run (pid {holder})" if holder.isdigit() else "another run"
            raise ExportError(
                f"{target}: {who} is writing there now; wait until it has finished, or "
                "choose another --out") from None
        try:
            same = os.fstat(fd).st_ino == os.stat(lock).st_ino
        except FileNotFoundError:
            same = False
        if same:
            break
        os.close(fd)  # the holder removed this file as we locked it; lock the new one
    try:
        os.ftruncate(fd, 0)
        os.write(fd, f"{os.getpid()}\n".encode("ascii"))
        _HELD.add(fd)
        yield lock
    finally:
        _HELD.discard(fd)
        lock.unlink(missing_ok=True)
        os.close(fd)
        if made_parent:
            with suppress(OSError):  # a run that wrote nothing leaves no empty folder
                target.parent.rmdir()


def _leftovers(out: Path, kind: str) -> list[Path]:
    return sorted(p for p in out.parent.glob(f".{out.name}.{kind}-*") if p.is_dir())


def recover_output(out: str | os.PathLike[str]) -> list[str]:
    """Repair what an interrupted run left beside the output folder ``out``; hold its lock.

    A run killed between the two renames of :func:`swap_in` leaves the previous output only
    as ``.<out>.old-<pid>``: if ``out`` is missing it is moved back (the newest one if there
    are several).  Then the leftovers of killed runs are removed: ``.<out>.partial-*``
    (unfinished new outputs), ``.<out>.old-*`` once ``out`` exists and ``.<out>.trash-*``
    (old outputs being deleted).

    Returns
    -------
    list of str
        One line per action taken, to show as progress.
    """
    target = Path(out)
    notes: list[str] = []
    olds = _leftovers(target, "old")
    if olds and not target.exists():
        newest = max(olds, key=lambda p: p.stat().st_mtime)
        os.replace(newest, target)
        notes.append(f"restored the previous output {target} from {newest.name}, left by a run "
                     "interrupted while swapping its output in")
    for kind, what in (("partial", "unfinished output of an interrupted run"),
                       ("old", "previous output of an interrupted run"),
                       ("trash", "previous output being deleted by an interrupted run")):
        for p in _leftovers(target, kind):
            shutil.rmtree(p, ignore_errors=True)
            notes.append(f"removed {p.name} beside {target.name} ({what})")
    return notes


def swap_in(new: str | os.PathLike[str], out: str | os.PathLike[str]) -> None:
    """Move the complete folder ``new`` onto ``out``, replacing a previous ``out``.

    Hold :func:`output_lock` on ``out``.  The previous folder is renamed to
    ``.<out>.old-<pid>``, then ``new`` to ``out``, then the old one to ``.<out>.trash-<pid>``
    and deleted.  At every moment either the previous or the new folder is in place, or
    (between the two renames) the previous one is ``.<out>.old-<pid>``, which
    :func:`recover_output` moves back; if the second rename fails, it is moved back at once.
    """
    src, target = Path(new), Path(out)
    if not target.exists():
        os.replace(src, target)
        return
    old = target.with_name(f".{target.name}.old-{os.getpid()}")
    os.replace(target, old)
    try:
        os.replace(src, target)
    except BaseException:
        with suppress(OSError):
            os.replace(old, target)
        raise
    trash = target.with_name(f".{target.name}.trash-{os.getpid()}")
    try:
        os.replace(old, trash)
    except OSError:
        trash = old
    shutil.rmtree(trash, ignore_errors=True)

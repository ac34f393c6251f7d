"""Atomic file writes and spreadsheet-safe text, shared by every exporter.

A file is written to a temporary name in its target folder and moved onto the
target with :func:`os.replace`, so a reader never sees a half-written file and
a failed write leaves the previous file (or nothing) in place.

:func:`safe_cell` keeps a text taken from the input (a site name, a level name,
a treatment, a bid item, a repair's source ids) from becoming a formula when a
CSV or XLSX file is opened in a spreadsheet program.
"""

from __future__ import annotations

import os
import re
import tempfile
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING

from geo_corrosion.errors import ExportError

if TYPE_CHECKING:
    import pandas as pd

__all__ = ["atomic_write", "formula_like", "safe_cell", "safe_frame"]

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

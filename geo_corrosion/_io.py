"""Atomic file writes, shared by every exporter.

A file is written to a temporary name in its target folder and moved onto the
target with :func:`os.replace`, so a reader never sees a half-written file and
a failed write leaves the previous file (or nothing) in place.
"""

from __future__ import annotations

import os
import tempfile
from collections.abc import Callable
from pathlib import Path

from geo_corrosion.errors import ExportError

__all__ = ["atomic_write"]


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

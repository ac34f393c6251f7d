"""The clean-handling contract that every broken site folder of the fuzz suite is held to.

Source: issue 11 ("Shown by" of item 7) and the house rule "bad input gets a clear error naming
the file, the row/feature/dotted key and what to do; never a traceback".  For each broken copy
of a small site:

- ``geo-corrosion check SITE`` and ``geo-corrosion run SITE --out OUT`` exit non-zero with a
  message naming the file and the row, feature or dotted key (the case's ``names``);
- neither prints a traceback nor an internal error, and no exception escapes the CLI's handler;
- nothing is written at OUT: the out folder is absent and its parent folder holds nothing new
  (no ``.out.partial-*``, ``.out.old-*``, ``.out.lock`` left over);
- every input file is byte-identical afterwards, and nothing is added to the site folder.

A case that is a warning rather than an error (``expect="warning"``) must be handled without an
error, and its warning must name the point or file: the run is not silent.  A case that the code
reads (``expect="ok"``) must pass ``check``.
"""

from __future__ import annotations

import hashlib
import os
import stat
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pytest
from click.testing import CliRunner, Result

from geo_corrosion.cli.main import cli

#: Files larger than this are compared by size and modification time, not read (a sparse file
#: of 2 GiB is one of the cases).
HASH_LIMIT = 64 * 1024 * 1024

#: Cases tried and cases handled cleanly, per group (the module's name without ``test_``).
TALLY: dict[str, list[int]] = {}

#: Fragments that must never reach the user (issue 11, item 7).
FORBIDDEN = ("Traceback", "internal error")


@dataclass(frozen=True)
class Case:
    """One way of breaking a site folder and what the contract expects of it.

    Attributes
    ----------
    id : str
        The pytest id.
    breaks : callable
        Breaks the site folder given (a fresh copy in the test's tmp_path).
    names : tuple of str
        Fragments the message must hold: the file and the row, feature or dotted key.
    expect : str
        ``"error"`` (non-zero exit), ``"warning"`` (exit 0, the warning named) or ``"ok"``
        (the site is read: ``check`` passes).
    pending : str
        Non-empty: the case fails today for a reason another branch is fixing; it is marked
        ``xfail(strict=True)`` with this reason, so it fails the suite once the fix lands.
    found : str
        Non-empty: a defect this suite found that no branch fixes yet; marked
        ``xfail(strict=True)`` with this reason and listed in the report, so that the fix turns
        it into a failure and the mark is removed with it.
    slow : bool
        Marked ``slow`` (still run in CI).
    """

    id: str
    breaks: Callable[[Path], Any]
    names: tuple[str, ...] = ()
    expect: str = "error"
    pending: str = ""
    found: str = ""
    slow: bool = False
    marks: tuple[Any, ...] = field(default=())

    def param(self) -> Any:
        """Return the case as a pytest parameter with its marks."""
        marks = list(self.marks)
        if self.pending:
            marks.append(pytest.mark.xfail(strict=True, reason=f"pending a fix: "
                                           f"{self.pending}"))
        if self.found:
            marks.append(pytest.mark.xfail(strict=True, reason=f"found by tests/fuzz, unfixed: "
                                           f"{self.found}"))
        if self.slow:
            marks.append(pytest.mark.slow)
        return pytest.param(self, id=self.id, marks=marks)


def edit(path: Path, old: str, new: str) -> None:
    """Replace text in a file once, failing loudly if the text is not there."""
    text = path.read_text()
    assert old in text, f"{old!r} not in {path}"
    path.write_text(text.replace(old, new, 1))


def snapshot(root: Path) -> dict[str, Any]:
    """Return what each entry under ``root`` is: file hash, link target, device, folder.

    Symbolic links are not followed (one points at /dev/zero); files above
    :data:`HASH_LIMIT` are compared by size and modification time.
    """
    out: dict[str, Any] = {}
    for dirpath, dirnames, filenames in os.walk(root):
        for name in sorted(dirnames + filenames):
            p = Path(dirpath) / name
            st = p.lstat()
            rel = str(p.relative_to(root))
            if stat.S_ISLNK(st.st_mode):
                out[rel] = ("link", os.readlink(p))
            elif stat.S_ISDIR(st.st_mode):
                out[rel] = ("dir",)
            elif not stat.S_ISREG(st.st_mode):
                out[rel] = ("special", st.st_mode, st.st_rdev)
            elif st.st_size > HASH_LIMIT:
                out[rel] = ("big", st.st_size, st.st_mtime_ns)
            else:
                out[rel] = ("file", hashlib.sha256(p.read_bytes()).hexdigest())
    return out


def _invoke(args: list[str]) -> Result:
    return CliRunner().invoke(cli, args, catch_exceptions=True)


def _clean(res: Result, what: str) -> str:
    out = res.output
    for bad in FORBIDDEN:
        assert bad not in out, f"{what}: {bad!r} in the output:\n{out}"
    # an exception that escaped the CLI's handler is a traceback the user would see
    assert res.exception is None or isinstance(res.exception, SystemExit), (
        f"{what}: {type(res.exception).__name__}: {res.exception} escaped the CLI\n{out}")
    return out


def holds(site: Path, case: Case, group: str, *, run: bool = True) -> str:
    """Assert the contract for a broken site folder (see the module); return the output.

    ``run`` False checks ``check`` only (the cases that ``run`` reaches through the same
    ``pipeline.check`` chain and that a few ``run`` cases cover).
    """
    tally = TALLY.setdefault(group, [0, 0])
    tally[0] += 1
    before = snapshot(site)
    outs = site.parent / "outs"
    outs.mkdir(exist_ok=True)
    out_dir = outs / "out"
    commands = [["check", str(site)]]
    if run and case.expect == "error":
        commands.append(["run", str(site), "--out", str(out_dir), "-q"])
    text = ""
    for args in commands:
        res = _invoke(args)
        out = _clean(res, args[0])
        text += out
        if case.expect == "error":
            assert res.exit_code != 0, f"{args[0]} accepted the broken site:\n{out}"
        else:
            assert res.exit_code == 0, f"{args[0]} refused a site it should read:\n{out}"
        for frag in case.names:  # case-insensitive: "Duplicate" at a sentence's start
            assert frag.lower() in out.lower(), f"{args[0]}: {frag!r} not in the message:\n{out}"
    # nothing written at OUT, nothing left beside it (issue 11 item 6 and 7)
    assert not out_dir.exists(), "run wrote an output folder for a broken site"
    assert sorted(os.listdir(outs)) == [], f"left beside OUT: {os.listdir(outs)}"
    # every input byte-identical, nothing added to the site folder
    assert snapshot(site) == before, "an input file changed or a file was added"
    tally[1] += 1
    return text


def runs(site: Path, case: Case, group: str) -> Path:
    """Assert that a site that must be read runs: exit 0, a complete output, names warned.

    For ``expect="warning"`` the case's ``names`` must be in the run's output (the run is not
    silent about it); for every case no traceback, nothing left beside the output folder, and
    every input byte-identical.  Returns the output folder.
    """
    tally = TALLY.setdefault(group, [0, 0])
    tally[0] += 1
    before = snapshot(site)
    outs = site.parent / "outs"
    outs.mkdir(exist_ok=True)
    out_dir = outs / "out"
    res = _invoke(["run", str(site), "--out", str(out_dir)])
    out = _clean(res, "run")
    assert res.exit_code == 0, f"run refused a site it should run:\n{out}"
    for frag in case.names:
        assert frag.lower() in out.lower(), f"run: {frag!r} not in the output:\n{out}"
    assert (out_dir / "run.json").is_file(), "run.json, written last, is missing"
    assert sorted(os.listdir(outs)) == ["out"], f"left beside OUT: {os.listdir(outs)}"
    assert snapshot(site) == before, "an input file changed or a file was added"
    tally[1] += 1
    return out_dir

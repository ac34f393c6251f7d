"""Runs that cannot lose output: the lock on the output folder, the swap and its recovery.

The promise checked here (issue 11, item 6): after any interruption of a run, and once the
next run into the same folder has repaired it, the folder holds the previous complete output
or the new complete one, never neither and never a part; two runs never write into one folder
at once.  Locking with ``flock`` and renaming a finished folder into place are common practice
for this (a rename within one file system is atomic; the kernel drops a killed process's lock).
"""

from __future__ import annotations

import fcntl
import json
import os
import signal
import subprocess
import sys
import time
from collections.abc import Callable
from pathlib import Path

import pytest
from click.testing import CliRunner

import geo_corrosion
from geo_corrosion.cli.main import cli
from geo_corrosion.errors import ExportError, GeoCorrosionError
from geo_corrosion.pipeline import run

FAST = ("quantities",)  # one small exporter keeps these runs short


def leftovers(out: Path) -> list[str]:
    """Name the ``.<out>.*`` entries beside ``out`` (lock, partial, old and trash folders)."""
    return sorted(p.name for p in out.parent.glob(f".{out.name}.*"))


def complete(out: Path) -> dict[str, object]:
    """Return the manifest of ``out`` after checking that every file it lists is there."""
    man = json.loads((out / "run.json").read_text(encoding="utf-8"))
    missing = [f for f in man["files"] if not (out / f).is_file()]
    assert not missing, f"{out} is partial: {missing} missing"
    return dict(man)


def test_second_run_refused_while_locked(site_dir: Path, tmp_path: Path) -> None:
    out = tmp_path / "out"
    lock = tmp_path / ".out.lock"
    with open(lock, "w") as f:  # another run holds the lock, as output_lock takes it
        fcntl.flock(f, fcntl.LOCK_EX | fcntl.LOCK_NB)
        f.write("4242\n")
        f.flush()
        with pytest.raises(ExportError, match=r"another run \(pid 4242\) is writing there") as e:
            run(site_dir, out, exporters=FAST)
        assert "choose another --out" in str(e.value)
        res = CliRunner().invoke(cli, ["run", str(site_dir), "--out", str(out), "-q"])
        assert res.exit_code != 0
        assert "pid 4242" in res.output and "Traceback" not in res.output
        assert not out.exists()
        assert leftovers(out) == [".out.lock"]  # the holder's file, nothing of ours
    # once released, a run goes ahead and removes its lock file when done
    run(site_dir, out, exporters=FAST)
    complete(out)
    assert leftovers(out) == []


def test_lock_released_after_failed_run(site_dir: Path, tmp_path: Path) -> None:
    out = tmp_path / "new" / "out"
    (site_dir / "site.toml").write_text("not = [valid toml", encoding="utf-8")
    with pytest.raises(GeoCorrosionError):
        run(site_dir, out, exporters=FAST)
    assert not (tmp_path / "new").exists()  # bad input: nothing written, not even the folder


def test_leftover_partial_removed_by_next_run(site_dir: Path, tmp_path: Path) -> None:
    out = tmp_path / "out"
    partial = tmp_path / ".out.partial-x1y2"  # as a SIGKILL while writing leaves it
    (partial / "rasters").mkdir(parents=True)
    (partial / "quantities.csv").write_text("half", encoding="utf-8")
    notes: list[str] = []
    run(site_dir, out, exporters=FAST, progress=notes.append)
    complete(out)
    assert leftovers(out) == []
    assert any("removed .out.partial-x1y2" in n for n in notes), notes


class Killed(BaseException):
    """Stands for a SIGKILL: nothing of the run happens after it."""


def interrupt_second_rename(monkeypatch: pytest.MonkeyPatch, out: Path, *,
                            killed: bool) -> None:
    """Make the rename of the new folder onto ``out`` fail (and, if ``killed``, all after it)."""
    real = os.replace
    state = {"dead": False}

    def fake(src: str | os.PathLike[str], dst: str | os.PathLike[str]) -> None:
        if state["dead"]:
            raise OSError("process is gone")
        if Path(dst) == out and Path(src).name.startswith(".out.partial-"):
            state["dead"] = killed
            raise Killed() if killed else OSError("disk said no")
        real(src, dst)

    monkeypatch.setattr(os, "replace", fake)  # _io calls os.replace through the os module


def test_interrupted_swap_restored_by_next_run(site_dir: Path, tmp_path: Path,
                                              monkeypatch: pytest.MonkeyPatch) -> None:
    out = tmp_path / "out"
    run(site_dir, out, exporters=FAST)
    previous = (out / "run.json").read_text(encoding="utf-8")
    with monkeypatch.context() as m:
        interrupt_second_rename(m, out, killed=True)
        with pytest.raises(Killed):
            run(site_dir, out, exporters=FAST, overwrite=True)
    # killed between the renames: the previous output is only beside the target ...
    assert not out.exists()
    olds = [tmp_path / n for n in leftovers(out) if n.startswith(".out.old-")]
    assert len(olds) == 1 and (olds[0] / "run.json").read_text(encoding="utf-8") == previous
    # ... and the next run into the target puts it back before anything else
    notes: list[str] = []
    with pytest.raises(ExportError, match="already exists"):
        run(site_dir, out, exporters=FAST, progress=notes.append)
    assert (out / "run.json").read_text(encoding="utf-8") == previous
    complete(out)
    assert any("restored the previous output" in n for n in notes), notes
    assert leftovers(out) == []
    run(site_dir, out, exporters=FAST, overwrite=True)
    complete(out)
    assert leftovers(out) == []


def test_failed_second_rename_rolled_back_at_once(site_dir: Path, tmp_path: Path,
                                                  monkeypatch: pytest.MonkeyPatch) -> None:
    out = tmp_path / "out"
    run(site_dir, out, exporters=FAST)
    previous = (out / "run.json").read_text(encoding="utf-8")
    with monkeypatch.context() as m:
        interrupt_second_rename(m, out, killed=False)
        with pytest.raises(OSError, match="disk said no"):
            run(site_dir, out, exporters=FAST, overwrite=True)
    assert (out / "run.json").read_text(encoding="utf-8") == previous
    assert leftovers(out) == []


def cli_run(site: Path, out: Path, log: Path) -> subprocess.Popen[bytes]:
    """Start ``geo-corrosion run SITE --out OUT --overwrite`` in a child process, output to log."""
    env = dict(os.environ, PYTHONPATH=str(Path(geo_corrosion.__file__).parents[1]))
    with open(log, "wb") as f:
        return subprocess.Popen(
            [sys.executable, "-m", "geo_corrosion.cli.main", "run", str(site), "--out", str(out),
             "--overwrite"], env=env, stdout=f, stderr=subprocess.STDOUT)


def kill_when(proc: subprocess.Popen[bytes], ready: Callable[[], bool], delay: float) -> bool:
    """SIGKILL ``proc`` ``delay`` seconds after ``ready()`` turns true; False if it ended first."""
    while proc.poll() is None:
        if ready():
            time.sleep(delay)
            proc.send_signal(signal.SIGKILL)
            return True
        time.sleep(0.0005)
    return False


@pytest.mark.slow
def test_soak_sigkill_never_loses_output(site_dir: Path, tmp_path: Path) -> None:
    out = tmp_path / "out"
    log = tmp_path / "run.log"
    t0 = time.monotonic()
    first = cli_run(site_dir, out, log)
    assert first.wait(timeout=300) == 0, log.read_text()
    duration = time.monotonic() - t0
    current = complete(out)["created_utc"]

    def manifest_written() -> bool:  # run.json is the last file written before the swap
        return any(tmp_path.glob(".out.partial-*/run.json"))

    def deleting_old() -> bool:
        return any(tmp_path.glob(".out.trash-*"))

    # 6 SIGKILLs: two while computing/writing, three just before or during the swap, one
    # while the previous output is being deleted
    clock = {"start": 0.0}

    def past(frac: float) -> Callable[[], bool]:
        return lambda: time.monotonic() - clock["start"] > frac * duration

    plans: list[tuple[str, Callable[[], bool], float]] = [
        (f"at {frac:.0%} of a run", past(frac), 0.0) for frac in (0.3, 0.7)]
    plans += [(f"{d * 1000:g} ms after run.json", manifest_written, d) for d in (0, 0.002, 0.02)]
    plans.append(("while deleting the old output", deleting_old, 0.0))
    seen: list[str] = []
    for what, ready, delay in plans:
        clock["start"] = time.monotonic()
        proc = cli_run(site_dir, out, log)
        killed = kill_when(proc, ready, delay)
        proc.wait(timeout=60)
        left = leftovers(out)
        if out.exists():
            man = complete(out)
            state = "previous" if man["created_utc"] == current else "new"
            current = man["created_utc"]
        else:  # killed between the renames: what the next run restores must be complete
            olds = [tmp_path / n for n in left if n.startswith(".out.old-")]
            assert len(olds) == 1, left
            assert complete(olds[0])["created_utc"] == current
            state = "missing, previous as .old (restorable)"
        seen.append(f"kill {what}: {'killed' if killed else 'ended first'} rc {proc.returncode}"
                    f"; out: {state}; beside: {[n.split('-')[0] for n in left]}")
    print("\n".join(seen))
    before = leftovers(out)
    final = cli_run(site_dir, out, log)
    assert final.wait(timeout=300) == 0, log.read_text()
    text = log.read_text()
    for name in before:  # each leftover of the killed runs is removed, with a note
        if ".partial-" in name or ".old-" in name or ".trash-" in name:
            assert f"removed {name}" in text or f"from {name}" in text, text
    assert complete(out)["created_utc"] != current
    assert leftovers(out) == [], text

"""No tracked text file carries a merge-conflict marker (project rule: main stays whole).

Branches are merged in parallel; a conflict resolved in generated tables but left in the prose
around them passes every other check (``python -m geo_corrosion.config --check`` compares
only the generated parts).
"""

from __future__ import annotations

import re
import subprocess
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[2]
MARKER = re.compile(r"^(<{7} |>{7} |={7}$)", re.M)


def test_no_tracked_file_has_a_conflict_marker() -> None:
    try:
        files = subprocess.run(["git", "ls-files", "-z"], cwd=REPO, capture_output=True,
                               check=True).stdout.decode().split("\0")
    except (OSError, subprocess.CalledProcessError):
        pytest.skip("not a git checkout")
    bad = []
    for f in filter(None, files):
        p = REPO / f
        if p.suffix in {".png", ".pdf", ".tif", ".gpkg", ".xlsx", ".zip"} or not p.is_file():
            continue
        text = p.read_text(encoding="utf-8", errors="ignore")
        m = MARKER.search(text)
        if m:
            bad.append(f"{f}:{text[:m.start()].count(chr(10)) + 1}")
    assert not bad, f"merge-conflict markers in: {bad}"

"""Fixtures: a small synthetic site written to tmp_path (invented data, for fixtures only)."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from geo_corrosion.testing import make_synthetic_site


@pytest.fixture(scope="session")
def _site_template(tmp_path_factory: pytest.TempPathFactory) -> Path:
    root = tmp_path_factory.mktemp("site_template")
    make_synthetic_site(root)
    return root


@pytest.fixture
def site_dir(_site_template: Path, tmp_path: Path) -> Path:
    """A fresh copy of the synthetic site that a test may break."""
    dst = tmp_path / "site"
    shutil.copytree(_site_template, dst)
    return dst


def edit(path: Path, old: str, new: str) -> None:
    """Replace text in a file, failing loudly if the text is not there."""
    text = path.read_text()
    assert old in text, f"{old!r} not in {path}"
    path.write_text(text.replace(old, new, 1))

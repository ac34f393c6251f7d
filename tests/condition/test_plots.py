"""Tests of geo_corrosion.condition.plots (files written, atomic, no pyplot state)."""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest

from geo_corrosion.condition import plots
from geo_corrosion.condition.classes import POTENTIAL_C876, RESISTIVITY_RILEM
from geo_corrosion.condition.potential import fit_mixture_threshold
from geo_corrosion.errors import ConditionError, ExportError

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"


def _potentials() -> np.ndarray:
    rng = np.random.default_rng(0)
    return np.r_[rng.normal(-450.0, 40.0, 60), rng.normal(-180.0, 30.0, 140)]


def _check_png(path: Path, folder: Path) -> None:
    assert path.read_bytes()[:8] == PNG_MAGIC
    assert [p.name for p in folder.iterdir()] == [path.name]  # no temp file left behind


def test_histogram(tmp_path: Path) -> None:
    """Check histogram."""
    # common practice, no source
    p = plots.plot_histogram(_potentials(), tmp_path / "hist.png", class_set=POTENTIAL_C876)
    _check_png(p, tmp_path)


def test_histogram_log(tmp_path: Path) -> None:
    """Check histogram log."""
    # common practice, no source
    rho = np.exp(np.random.default_rng(1).normal(3.0, 0.8, 100))
    p = plots.plot_histogram(rho, tmp_path / "rho.png", class_set=RESISTIVITY_RILEM,
                             quantity="Resistivity", log_x=True)
    _check_png(p, tmp_path)
    with pytest.raises(ConditionError, match="unit"):
        plots.plot_histogram(rho, tmp_path / "x.png")


def test_cfd(tmp_path: Path) -> None:
    """Check cfd."""
    # CFD on normal-probability axis [ASTM-C876-91 §6.3, from memory], mixture threshold
    v = _potentials()
    p = plots.plot_cumulative_frequency(v, tmp_path / "cfd.png", mixture=fit_mixture_threshold(v))
    _check_png(p, tmp_path)


def test_class_map(tmp_path: Path) -> None:
    """Check class map."""
    # common practice, no source; polygons as shapely geometry and as array
    from shapely.geometry import box

    y, x = np.mgrid[0:20, 0:40] * 0.5
    g = -100.0 - 20.0 * x
    g[:2, :3] = np.nan
    p = plots.plot_class_map(g, (0.0, 20.0, 0.0, 10.0), tmp_path / "map.png",
                             class_set=POTENTIAL_C876, contour_interval=50.0,
                             polygons=[box(12, 4, 15, 6), np.array([[1, 1], [2, 1], [2, 2]])])
    _check_png(p, tmp_path)
    with pytest.raises(ConditionError, match="extent"):
        plots.plot_class_map(g, (1.0, 0.0, 0.0, 1.0), tmp_path / "m2.png", class_set=POTENTIAL_C876)


def test_scatter(tmp_path: Path) -> None:
    """Check scatter."""
    # common practice, no source
    v = _potentials()
    rho = np.exp(np.random.default_rng(2).normal(3.0, 0.7, v.size))
    p = plots.plot_potential_vs_resistivity(v, rho, tmp_path / "scatter.png")
    _check_png(p, tmp_path)
    with pytest.raises(ConditionError, match="pair"):
        plots.plot_potential_vs_resistivity(v, rho[:5], tmp_path / "s2.png")


def test_overwrite_is_atomic_replace(tmp_path: Path) -> None:
    """Check overwrite is atomic replace."""
    # common practice: an existing file is replaced whole
    target = tmp_path / "h.png"
    target.write_bytes(b"old")
    plots.plot_histogram(_potentials(), target, class_set=POTENTIAL_C876)
    assert target.read_bytes()[:8] == PNG_MAGIC


def test_bad_paths(tmp_path: Path) -> None:
    """Check bad paths."""
    # common practice, no source
    with pytest.raises(ExportError, match="PNG"):
        plots.plot_histogram(_potentials(), tmp_path / "h.jpg", class_set=POTENTIAL_C876)
    with pytest.raises(ExportError, match="does not exist"):
        plots.plot_histogram(_potentials(), tmp_path / "no" / "h.png", class_set=POTENTIAL_C876)


def test_no_pyplot_state() -> None:
    """Check no pyplot state."""
    # brief: no pyplot global state; the module must not import pyplot
    src = Path(plots.__file__).read_text()
    assert "pyplot" not in src.replace("no ``pyplot``", "")
    if "matplotlib.pyplot" in sys.modules:
        import matplotlib.pyplot as plt

        assert plt.get_fignums() == []


def test_caution_footer() -> None:
    """Check caution footer."""
    # wording ours, after [ASTM-C876-22a §4.8]
    assert "licensed engineer" in plots.CAUTION

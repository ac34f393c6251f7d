"""The lean run (issue 16, item 2): cuts that must not change what a run writes.

Each test guards one cut: the heavy libraries stay out of ``check`` and ``--help``; the
eigendecomposition of the separable area interval is made once and gives the same draws; a
figure drawn once is the same picture as one laid out again by savefig; the GeoPackage is
written into a temporary file with SQLite sync off and moved into place whole.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pyogrio
import pytest

from geo_corrosion.condition import probability as PR

ROOT = Path(__file__).resolve().parents[2]

#: Libraries that only the kriging, the condition step or the exporters need.
HEAVY = ("numba", "scipy.stats", "matplotlib", "weasyprint", "ezdxf", "openpyxl", "folium")


def _loaded_after(code: str) -> list[str]:
    """Run ``code`` in a fresh interpreter; return which of HEAVY it loaded."""
    probe = (f"{code}\nimport json, sys\n"
             f"print(json.dumps([m for m in {HEAVY!r} if m in sys.modules]))")
    out = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True,
                         cwd=ROOT, env={"PYTHONPATH": str(ROOT), "PATH": "/usr/bin:/bin"},
                         check=True, timeout=300)
    loaded: list[str] = json.loads(out.stdout.strip().splitlines()[-1])
    return loaded


def test_check_and_help_load_no_heavy_library() -> None:
    """`geo-corrosion --help` and the `check` path import none of the heavy libraries."""
    # common practice (lazy imports, PEP 690's motivation): a command loads what it uses;
    # `check` reads and QA-checks a site, it neither kriges, plots nor writes documents
    assert _loaded_after("import geo_corrosion.cli.main") == []
    assert _loaded_after("import geo_corrosion.pipeline") == []


def test_sqrt_corr_cached_once_and_read_only() -> None:
    """The correlation square root is decomposed once per grid axis and cannot be changed."""
    # hand computation: A A^T = R for the 1-D Gaussian correlation exp(-(d/L)^2)
    PR._sqrt_corr.cache_clear()
    a = PR._sqrt_corr(40, 0.5, 3.0, "gaussian")
    b = PR._sqrt_corr(40, 0.5, 3.0, "gaussian")
    assert a is b
    assert PR._sqrt_corr.cache_info().hits == 1
    d = np.abs(np.arange(40)[:, None] - np.arange(40)[None, :]) * 0.5 / 3.0
    np.testing.assert_allclose(a @ a.T, np.exp(-(d**2)), atol=1e-10)
    with pytest.raises(ValueError):
        a[0, 0] = 1.0  # a shared cache entry: nobody may write into it


def _area_interval_uncached(mean: np.ndarray, var: np.ndarray, **kw: object) -> PR.AreaEstimate:
    PR._sqrt_corr.cache_clear()
    return PR.area_interval(mean, var, -350.0, **kw)  # type: ignore[arg-type]


def test_area_interval_same_draws_with_cached_decomposition() -> None:
    """The seeded interval is the same whether the decomposition was cached or fresh."""
    # reference: numpy's seeded Generator; the draws are made in the same order, batch by
    # batch, and each batch is A_y E A_x^T with the same A (the module's own definition)
    rng = np.random.default_rng(5)
    mean = -350.0 + 60.0 * rng.standard_normal((30, 45))
    var = np.full((30, 45), 900.0)
    kw = {"cell_size": 0.5, "correlation_length": 2.0, "n_draws": 300, "seed": 11, "batch": 70}
    first = _area_interval_uncached(mean, var, **kw)
    again = PR.area_interval(mean, var, -350.0, **kw)  # type: ignore[arg-type]
    assert PR._sqrt_corr.cache_info().hits > 0
    assert (first.lower, first.upper, first.simulated_mean) == (
        again.lower, again.upper, again.simulated_mean)
    # by hand, without the cache or the helper: the same draws in the same order
    d = np.abs(np.arange(45)[:, None] - np.arange(45)[None, :]) * 0.5 / 2.0
    w, q = np.linalg.eigh(np.exp(-(d**2)))
    ax = q * np.sqrt(np.clip(w, 0.0, None))[None, :]
    d = np.abs(np.arange(30)[:, None] - np.arange(30)[None, :]) * 0.5 / 2.0
    w, q = np.linalg.eigh(np.exp(-(d**2)))
    ay = q * np.sqrt(np.clip(w, 0.0, None))[None, :]
    g = np.random.default_rng(11)
    areas = []
    for k in (70, 70, 70, 70, 20):
        eps = np.einsum("ij,djk,lk->dil", ay, g.standard_normal((k, 30, 45)), ax,
                        optimize=True)
        areas += list(np.sum(mean[None] + 30.0 * eps < -350.0, axis=(1, 2)) * 0.25)
    np.testing.assert_allclose(first.simulated_mean, np.mean(areas), rtol=0, atol=1e-9)


def test_plot_drawn_once_is_the_same_picture(tmp_path: Path) -> None:
    """A figure saved without the second layout pass has the same pixels."""
    # reference: matplotlib itself, the figure saved with its placeholder layout engine left
    # in place (savefig then lays the texts out once more before drawing)
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure
    from PIL import Image

    from geo_corrosion.condition import plots

    vals = np.random.default_rng(2).normal(-300.0, 80.0, 500)
    ours = plots.plot_histogram(vals, tmp_path / "ours.png", unit="mV vs CSE")

    fig = Figure(figsize=(7.0, 5.0), dpi=100)
    FigureCanvasAgg(fig)
    ax = fig.add_subplot(1, 1, 1)
    edges = np.histogram_bin_edges(vals, bins="auto")
    ax.hist(vals, bins=list(edges), color="#0072B2", edgecolor="white")
    ax.set_xlabel("Half-cell potential (mV vs CSE)")
    ax.set_ylabel("Number of readings (count)")
    ax.set_title(f"Half-cell potential: {vals.size} readings")
    fig.text(0.01, 0.005, plots.CAUTION, fontsize=7, color="#444444", ha="left", va="bottom")
    fig.tight_layout(rect=(0.0, 0.03, 1.0, 1.0))
    assert fig.get_layout_engine() is not None  # the placeholder that costs the extra pass
    fig.savefig(tmp_path / "ref.png", format="png", dpi=150)
    a = np.asarray(Image.open(ours))
    b = np.asarray(Image.open(tmp_path / "ref.png"))
    # ours is written opaque RGB (figure_png); matplotlib's RGBA is opaque too
    assert (b[..., 3] == 255).all()
    assert a.shape == b[..., :3].shape
    assert np.array_equal(a, b[..., :3])


def test_geopackage_written_whole_with_sync_off(tmp_path: Path,
                                                monkeypatch: pytest.MonkeyPatch) -> None:
    """The GeoPackage is written into a temporary file, SQLite sync off, then moved."""
    # common practice (write-then-rename, as the project's atomic_write): a reader never
    # sees a half-written survey.gpkg, which is what makes SQLite's sync unnecessary
    import geopandas as gpd
    from shapely.geometry import Point

    from geo_corrosion.errors import ExportError
    from geo_corrosion.exporters import gpkg

    seen: list[tuple[str, object, bool]] = []
    real = pyogrio.write_dataframe

    def spy(df: gpd.GeoDataFrame, path: Path, **kw: object) -> None:
        seen.append((Path(path).name, pyogrio.get_gdal_config_option("OGR_SQLITE_SYNCHRONOUS"),
                     (tmp_path / gpkg.GPKG_NAME).exists()))
        real(df, path, **kw)

    monkeypatch.setattr(pyogrio, "write_dataframe", spy)
    frame = gpd.GeoDataFrame({"v": [1.0, 2.0]}, geometry=[Point(0, 0), Point(1, 1)],
                             crs="EPSG:32617")
    layers = {"a": frame, "b": frame.assign(v=[3.0, 4.0])}
    monkeypatch.setattr(gpkg, "site_layers", lambda _r: layers)
    # the layer styles (#15) are written into the same temporary file; not this test's part
    monkeypatch.setattr(gpkg, "write_layer_styles", lambda _p, _r: {})
    before = pyogrio.get_gdal_config_option("OGR_SQLITE_SYNCHRONOUS")
    [path] = gpkg.GeoPackageExporter().export(object(), tmp_path)  # type: ignore[arg-type]
    assert [s[1] for s in seen] == [False, False]  # pyogrio reads "OFF" back as False
    assert all(name != gpkg.GPKG_NAME and not there for name, _s, there in seen)
    assert pyogrio.get_gdal_config_option("OGR_SQLITE_SYNCHRONOUS") == before
    assert [n for n, _t in pyogrio.list_layers(path)] == ["a", "b"]
    assert gpd.read_file(path, layer="b")["v"].tolist() == [3.0, 4.0]
    assert sorted(p.name for p in tmp_path.iterdir()) == [gpkg.GPKG_NAME]

    # a layer that cannot be written: the error names it, the old file stays, no temp left
    layers["c"] = frame.assign(v=[object(), object()])
    monkeypatch.setattr(pyogrio, "write_dataframe", lambda *_a, **_k: 1 / 0)
    with pytest.raises(ExportError, match="layer 'a'"):
        gpkg.GeoPackageExporter().export(object(), tmp_path)  # type: ignore[arg-type]
    assert sorted(p.name for p in tmp_path.iterdir()) == [gpkg.GPKG_NAME]
    assert [n for n, _t in pyogrio.list_layers(path)] == ["a", "b"]

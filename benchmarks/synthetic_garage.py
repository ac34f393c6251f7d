"""Write a synthetic parking garage of a given size, for the whole-run benchmark.

Everything is invented and drawn from a fixed seed: two calls with the same arguments write
byte-identical folders.  Per level (``P1``, ``P2``, ...; a rectangle about 3:2 sized so that
the potential grid holds ``readings_per_level`` stations at ``spacing_ft``):

* half-cell potentials (mV vs CSE at 22.2 degC, so no correction applies) on the survey
  grid: ``-150 - 380 a`` with ``a`` a latent activity 0..1 made of a smooth correlated field
  (random Fourier modes, wavelengths 35-120 ft), Gaussian hot spots, bands along the joints,
  plus 5 mV noise;
* resistivity (lognormal, low where active) on every ``subset_step``-th grid line, corrosion
  rate (lognormal, high where active) on every ``2 * subset_step``-th, cover (normal about
  50 mm, lower in low-cover patches; i.i.d. with ``iid_cover``) on every
  ``subset_step``-th;
* delaminations drawn as irregular polygons around the highest activity, spalls inside some;
* a column grid every ``bay_ft`` (labelled lines A, B, ... and 1, 2, ...) with 2 ft square
  columns (the exclusions), construction joints at every other column line and one
  expansion joint across the middle;
* a ``site.toml`` in the layout of ``sample_sites/millbrook_garage`` (local grid feet tied
  to EPSG:26918 as :func:`geo_corrosion.testing.make_synthetic_site` ties it).

Module use::

    from benchmarks.synthetic_garage import make_garage
    make_garage("out/garage", levels=4, readings_per_level=25_000, seed=7)

Command line::

    python benchmarks/synthetic_garage.py OUT --readings 100000 --levels 4 [--seed 7]
"""

from __future__ import annotations

import argparse
import json
import math
import string
import sys
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np
import shapely
from numpy.typing import NDArray
from shapely import affinity
from shapely.geometry import LineString, Point, Polygon, box, mapping
from shapely.geometry.base import BaseGeometry

from geo_corrosion.testing import SYNTHETIC_TIE, _site_xy

__all__ = ["make_garage", "level_size", "main"]

Array = NDArray[Any]


def level_size(readings_per_level: int, spacing_ft: float) -> tuple[int, int]:
    """Return the stations along x and y of a level grid (about 3:2) of that many readings."""
    nx = max(4, math.ceil(math.sqrt(1.5 * readings_per_level)))
    ny = max(4, math.ceil(readings_per_level / nx))
    return nx, ny


def _features(geoms: Sequence[BaseGeometry], labels: Sequence[str] | None = None) -> str:
    feats = []
    for i, g in enumerate(geoms):
        props = {"label": labels[i]} if labels is not None else {"id": i + 1}
        feats.append({"type": "Feature", "properties": props, "geometry": mapping(g)})
    return json.dumps({"type": "FeatureCollection", "features": feats})


def _write_readings(path: Path, prefix: str, x: Array, y: Array, v: Array, fmt: str) -> None:
    ids = np.char.add(prefix, np.arange(x.size).astype(str))
    body = "\n".join(f"{i},{a:.2f},{b:.2f},{c:{fmt}}"
                     for i, a, b, c in zip(ids, x, y, v, strict=True))
    path.write_text("point_id,x,y,value\n" + body + "\n", encoding="utf-8")


class _Level:
    """The latent fields and plan of one synthetic level (local grid feet)."""

    def __init__(self, rng: np.random.Generator, width: float, depth: float, bay: float):
        self.width, self.depth = width, depth
        self.slab = box(0.0, 0.0, width, depth)
        # at least one column line each way and one construction joint, on a small level too
        cx = np.arange(bay, width - bay / 2, bay) if width > 2 * bay else np.array([width / 2])
        cy = np.arange(bay, depth - bay / 2, bay) if depth > 2 * bay else np.array([depth / 2])
        self.col_x, self.col_y = cx, cy
        self.columns = [box(a - 1, b - 1, a + 1, b + 1) for a in cx for b in cy]
        mid = float(cx[len(cx) // 2]) + bay / 2 if len(cx) else width / 2
        self.expansion = LineString([(mid, 0.0), (mid, depth)])
        self.construction = [LineString([(float(a), 0.0), (float(a), depth)])
                             for a in cx[1::2] if abs(a - mid) > 1.0
                             ] or [LineString([(mid / 2, 0.0), (mid / 2, depth)])]
        n = 40
        lam = rng.uniform(35.0, 120.0, n)
        th = rng.uniform(0.0, np.pi, n)
        k = 2 * np.pi / lam
        self.modes = (k * np.cos(th), k * np.sin(th), rng.uniform(0, 2 * np.pi, n),
                      np.full(n, 0.7 * math.sqrt(2.0 / n)))
        n_hot = max(2, round(width * depth / 4000.0))
        self.hot = np.c_[rng.uniform(0, width, n_hot), rng.uniform(0, depth, n_hot),
                         rng.uniform(1.2, 2.2, n_hot), rng.uniform(6.0, 14.0, n_hot)]
        n_low = max(1, round(width * depth / 8000.0))
        self.low = np.c_[rng.uniform(0, width, n_low), rng.uniform(0, depth, n_low),
                         rng.uniform(6.0, 15.0, n_low), rng.uniform(10.0, 20.0, n_low)]

    def activity(self, x: Array, y: Array) -> Array:
        """Latent corrosion activity, about -0.08 to 1.02."""
        kx, ky, ph, amp = self.modes
        z = np.full_like(x, -1.2)
        for a, b, p, m in zip(kx, ky, ph, amp, strict=True):
            z += m * np.cos(a * x + b * y + p)
        for hx, hy, a, s in self.hot:
            z += a * np.exp(-0.5 * ((x - hx) ** 2 + (y - hy) ** 2) / s**2)
        pts = shapely.points(x, y)
        for line in (self.expansion, *self.construction):
            z += 1.2 * np.exp(-0.5 * (shapely.distance(pts, line) / 3.5) ** 2)
        return 1.1 / (1.0 + np.exp(-z / 0.8)) - 0.08

    def cover_mean_mm(self, x: Array, y: Array) -> Array:
        """Mean cover, mm: 50 mm less the low-cover patches."""
        out = np.full_like(x, 50.0)
        for cx, cy, r, d in self.low:
            out -= d * np.exp(-0.5 * ((x - cx) ** 2 + (y - cy) ** 2) / r**2)
        return out


def _blob(rng: np.random.Generator, cx: float, cy: float, area: float) -> Polygon:
    """Return an irregular closed polygon (a jittered, stretched polygon) of about ``area``."""
    n = int(rng.integers(8, 14))
    t = np.linspace(0.0, 2 * np.pi, n, endpoint=False)
    r = 1.0 + rng.uniform(-0.2, 0.2, n)
    poly = Polygon(np.c_[np.cos(t) * r, np.sin(t) * r])
    poly = affinity.scale(poly, rng.uniform(1.0, 1.8), 1.0)
    poly = affinity.rotate(poly, rng.uniform(0, 180.0), origin=(0, 0))
    f = math.sqrt(area / poly.area)
    return affinity.translate(affinity.scale(poly, f, f, origin=(0, 0)), cx, cy)


def _sounding(rng: np.random.Generator, lv: _Level, x: Array, y: Array, act: Array,
              keep_out: BaseGeometry) -> tuple[list[Polygon], list[Polygon]]:
    """Delaminations around the highest activity (about 1 per 1,000 ft2), spalls in some."""
    target = max(3, round(lv.width * lv.depth / 1000.0))
    inner = lv.slab.buffer(-1.5)
    delams: list[Polygon] = []
    for i in np.argsort(-act, kind="stable")[: 40 * target]:
        if len(delams) >= target:
            break
        c = Point(float(x[i]), float(y[i]))
        if any(d.distance(c) < 4.0 for d in delams):
            continue
        poly = _blob(rng, c.x, c.y, float(rng.uniform(2.0, 40.0)))
        if (poly.is_valid and inner.contains(poly) and not poly.intersects(keep_out)
                and all(poly.distance(d) >= 1.5 for d in delams)):
            delams.append(poly)
    spalls = []
    for d in delams[::4]:
        s = _blob(rng, d.centroid.x, d.centroid.y, min(2.0, 0.2 * d.area))
        if s.is_valid and d.contains(s):
            spalls.append(s)
    return delams, spalls


def _site_toml(levels: Sequence[str], sizes: dict[str, tuple[float, float]],
               ground: dict[str, list[tuple[float, float, str]]], spacing: float,
               cell_size_ft: float, name: str) -> str:
    out = [f'''# Synthetic garage written by benchmarks/synthetic_garage.py; all data invented.
[site]
name = "{name}"
crs = "{SYNTHETIC_TIE["crs"]}"
units = "us"

[run]
cell_size = "{cell_size_ft:g} ft"
contour_interval_mv = 50
repair_margin = "6 in"
''']
    for lid in levels:
        w, d = sizes[lid]
        cps = [(0.0, 0.0), (w, 0.0), (w, d)]
        cp = ", ".join(
            f'{{ id = "CP{i + 1}", local = [{a:g}, {b:g}], '
            f'site = [{float(sx):.4f}, {float(sy):.4f}] }}'
            for i, (a, b) in enumerate(cps)
            for sx, sy in [_site_xy(np.array(a), np.array(b))])
        out.append(f'''
[[levels]]
id = "{lid}"
name = "Level {lid} (synthetic)"
slab = {{ path = "plans/{lid}_slab.geojson" }}
exclusions = [ {{ path = "plans/{lid}_columns.geojson" }} ]
joints = [ {{ path = "plans/{lid}_construction.geojson", type = "construction" }},
           {{ path = "plans/{lid}_expansion.geojson", type = "expansion" }} ]
column_grid = {{ path = "plans/{lid}_grid.geojson" }}
overlays = [ {{ kind = "delamination", path = "sounding/{lid}_delam.geojson" }},
             {{ kind = "spall", path = "sounding/{lid}_spall.geojson" }} ]
specified_cover = "2 in"
cover_tolerance = "0.5 in"
[levels.grid]
unit = "ft"
spacing = {spacing:g}
control_points = [ {cp} ]
''')
    for lid in levels:
        gc = ", ".join(f'{{ x = {gx:g}, y = {gy:g}, label = "{gl}" }}'
                       for gx, gy, gl in ground[lid])
        for sid, kind, unit, extra in (
                ("hcp", "potential", "mV",
                 f'electrode = "cse"\ntemperature_c = 22.2\nground_connections = [ {gc} ]\n'),
                ("res", "resistivity", "kohm.cm", "temperature_c = 20.0\n"),
                ("rate", "corrosion_rate", "uA/cm2", ""),
                ("cover", "cover", "mm", "")):
            out.append(f'''
[[surveys]]
id = "{lid}-{sid}"
level = "{lid}"
kind = "{kind}"
path = "readings/{lid}_{kind}.csv"
unit = "{unit}"
{extra}''')
    return "".join(out)


def make_garage(
    folder: str | Path,
    *,
    levels: int = 4,
    readings_per_level: int = 25_000,
    spacing_ft: float = 2.0,
    seed: int = 20261203,
    subset_step: int = 4,
    bay_ft: float = 30.0,
    cell_size_ft: float = 1.0,
    iid_cover: bool = False,
) -> Path:
    """Write a synthetic garage site folder and return its site file.

    Parameters
    ----------
    folder : str or Path
        Where to write (created; files in it are overwritten).
    levels : int
        Number of levels (``P1`` ... ``P<levels>``).
    readings_per_level : int
        Potential stations of a level's grid (columns take out a few).
    spacing_ft : float
        Potential grid spacing, ft.
    seed : int
        Seed of every random draw.
    subset_step : int
        Resistivity and cover on every ``subset_step``-th grid line each way, corrosion rate
        on every ``2 * subset_step``-th.
    bay_ft : float
        Column spacing, ft.
    cell_size_ft : float
        The run's kriging cell, ft.
    iid_cover : bool
        Draw the cover depths independently (no spatial correlation: a pure-nugget kind).

    Returns
    -------
    Path
        The site file, ``folder/site.toml``.
    """
    if levels < 1 or readings_per_level < 16 or spacing_ft <= 0 or subset_step < 1:
        raise ValueError("levels >= 1, readings_per_level >= 16, spacing_ft > 0 and "
                         "subset_step >= 1 are needed")
    root = Path(folder)
    for d in ("plans", "sounding", "readings"):
        (root / d).mkdir(parents=True, exist_ok=True)
    nx, ny = level_size(readings_per_level, spacing_ft)
    width, depth = nx * spacing_ft, ny * spacing_ft
    ids = [f"P{i + 1}" for i in range(levels)]
    sizes, ground = {}, {}
    for li, lid in enumerate(ids):
        rng = np.random.default_rng([seed, li])
        lv = _Level(rng, width, depth, bay_ft)
        sizes[lid] = (width, depth)
        keep_out = shapely.union_all(lv.columns).buffer(0.25) if lv.columns else Polygon()
        gx = (np.arange(nx) + 0.5) * spacing_ft
        gy = (np.arange(ny) + 0.5) * spacing_ft
        mx, my = np.meshgrid(np.arange(nx), np.arange(ny))
        ix, iy = mx.ravel(), my.ravel()
        x, y = gx[ix], gy[iy]
        ok = ~shapely.intersects_xy(keep_out, x, y)
        x, y, ix, iy = x[ok], y[ok], ix[ok], iy[ok]
        act = lv.activity(x, y)
        pot = -150.0 - 380.0 * act + rng.normal(0.0, 5.0, x.size)
        _write_readings(root / "readings" / f"{lid}_potential.csv", "P", x, y, pot, ".1f")
        sub = (ix % subset_step == 0) & (iy % subset_step == 0)
        rho = np.exp(np.log(40.0) - 1.5 * act[sub] + rng.normal(0.0, 0.15, int(sub.sum())))
        _write_readings(root / "readings" / f"{lid}_resistivity.csv", "R", x[sub], y[sub],
                        rho, ".2f")
        sub2 = (ix % (2 * subset_step) == 1) & (iy % (2 * subset_step) == 1)
        rate = np.exp(np.log(0.3) + 2.5 * act[sub2] + rng.normal(0.0, 0.2, int(sub2.sum())))
        _write_readings(root / "readings" / f"{lid}_corrosion_rate.csv", "C", x[sub2],
                        y[sub2], rate, ".3f")
        mean = np.full(int(sub.sum()), 50.0) if iid_cover else lv.cover_mean_mm(x[sub], y[sub])
        cover = np.clip(mean + rng.normal(0.0, 6.0, mean.size), 10.0, None)
        _write_readings(root / "readings" / f"{lid}_cover.csv", "V", x[sub], y[sub], cover,
                        ".1f")
        delams, spalls = _sounding(rng, lv, x, y, act, keep_out)
        letters = [string.ascii_uppercase[i % 26] * (1 + i // 26) for i in range(len(lv.col_x))]
        grid_lines = ([LineString([(float(a), 0.0), (float(a), depth)]) for a in lv.col_x]
                      + [LineString([(0.0, float(b)), (width, float(b))]) for b in lv.col_y])
        grid_labels = letters + [str(i + 1) for i in range(len(lv.col_y))]
        plans = {
            f"plans/{lid}_slab.geojson": _features([lv.slab]),
            f"plans/{lid}_columns.geojson": _features(lv.columns),
            f"plans/{lid}_construction.geojson": _features(lv.construction),
            f"plans/{lid}_expansion.geojson": _features([lv.expansion]),
            f"plans/{lid}_grid.geojson": _features(grid_lines, grid_labels),
            f"sounding/{lid}_delam.geojson": _features(delams),
            f"sounding/{lid}_spall.geojson": _features(spalls),
        }
        for rel, text in plans.items():
            (root / rel).write_text(text, encoding="utf-8")
        mid = lv.expansion.coords[0][0]
        ground[lid] = [(round(mid / 2, 1), 1.0, "G-W"), (round((mid + width) / 2, 1), 1.0, "G-E")]
    site = root / "site.toml"
    site.write_text(_site_toml(ids, sizes, ground, spacing_ft, cell_size_ft,
                               f"Synthetic garage ({levels} levels, seed {seed})"),
                    encoding="utf-8")
    return site


def main(argv: Sequence[str] | None = None) -> int:
    """Write a synthetic garage from the command line."""
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("out", type=Path, help="folder to write the site into")
    ap.add_argument("--readings", type=int, default=100_000,
                    help="potential readings in all (split over the levels; default 100000)")
    ap.add_argument("--levels", type=int, default=4, help="levels (default 4)")
    ap.add_argument("--spacing", type=float, default=2.0, help="grid spacing, ft (default 2)")
    ap.add_argument("--seed", type=int, default=20261203, help="seed (default 20261203)")
    ap.add_argument("--iid-cover", action="store_true",
                    help="cover depths without spatial correlation (a pure-nugget kind)")
    a = ap.parse_args(argv)
    site = make_garage(a.out, levels=a.levels, readings_per_level=a.readings // a.levels,
                       spacing_ft=a.spacing, seed=a.seed, iid_cover=a.iid_cover)
    print(site)
    return 0


if __name__ == "__main__":
    sys.exit(main())

"""Size and load time of the web map: the sample site, or a synthetic garage of N levels.

A benchmark, not a test: it prints a table and asserts nothing.  The synthetic garage is
:func:`geo_corrosion.testing.make_synthetic_site` (one level of ``width x depth`` ft with a
potential every ``spacing`` ft and a resistivity every third point) run once through
``geo_corrosion.pipeline.run``; its run folder is then copied into ``--levels`` levels
(every layer, raster and the manifest's level record renamed ``L1``, ``L2`` ...) and only
the web-map exporter is run on the copy.  That keeps the whole run of a 100,000-reading
garage (about five minutes on two loaded cores, issue 16) out of a benchmark of one
exporter; the map cannot tell the copies from surveyed levels.

Load time is measured in Debian's chromium (``/usr/bin/chromium``, headless, through
Playwright, every request that is not ``file:`` or ``data:`` aborted): the first paint and
the first contentful paint from the Paint Timing API, the page's load event from the
Navigation Timing API, the time the map's own script took until the first level was
drawn (``map_script``), the moment it was drawn (``map_drawn``) and the first frame painted
after it (``map_painted``, the time to first paint of the map), all from navigation start;
then the time to switch to the last level (parsed and built on first show) and to turn on
its first readings layer, each until the next frame.  Medians of ``--repeat`` fresh pages.

    python benchmarks/bench_webmap.py --run-dir RUN_FOLDER         # an existing run
    python benchmarks/bench_webmap.py --levels 4 --width-ft 400 --depth-ft 250   # 100,000
"""

from __future__ import annotations

import argparse
import json
import shutil
import statistics
import time
from pathlib import Path
from typing import Any


def synthetic_run(work: Path, width_ft: float, depth_ft: float, spacing_ft: float) -> Path:
    """Run the one-level synthetic site of the given size; return its output folder."""
    from geo_corrosion.pipeline import run
    from geo_corrosion.testing import make_synthetic_site

    out = work / "one_level"
    if (out / "run.json").is_file():
        return out
    site = make_synthetic_site(work / "site", width_ft=width_ft, depth_ft=depth_ft,
                               spacing_ft=spacing_ft)
    t = time.perf_counter()
    run(site, out)
    print(f"one-level run: {time.perf_counter() - t:.0f} s")
    return out


def copy_levels(src: Path, dst: Path, n: int) -> Path:
    """Copy a one-level run folder into an ``n``-level one (layers, rasters, manifest)."""
    import geopandas as gpd
    import pandas as pd
    import pyogrio

    if dst.exists():
        shutil.rmtree(dst)
    (dst / "rasters").mkdir(parents=True)
    man = json.loads((src / "run.json").read_text())
    (lid, rec), = man["levels"].items()
    man["levels"] = {f"L{i + 1}": {**rec, "name": f"Level {i + 1}"} for i in range(n)}
    (dst / "run.json").write_text(json.dumps(man))
    for tif in (src / "rasters").glob(f"{lid}_*.tif"):
        for i in range(n):
            shutil.copy(tif, dst / "rasters" / tif.name.replace(f"{lid}_", f"L{i + 1}_", 1))
    gpkg = dst / "survey.gpkg"
    for name, _t in pyogrio.list_layers(src / "survey.gpkg"):
        g = gpd.read_file(src / "survey.gpkg", layer=str(name))
        if str(name).startswith(f"{lid}_"):
            for i in range(n):
                h = g.copy()
                if "level_id" in h.columns:
                    h["level_id"] = f"L{i + 1}"
                h.to_file(gpkg, layer=str(name).replace(f"{lid}_", f"L{i + 1}_", 1),
                          driver="GPKG")
        else:  # readings_* and qa_flags: one copy per level
            parts = []
            for i in range(n):
                h = g.copy()
                h["level_id"] = f"L{i + 1}"
                if "reading_id" in h.columns:
                    h["reading_id"] = [f"L{i + 1}:{r}" for r in h["reading_id"]]
                parts.append(h)
            gpd.GeoDataFrame(pd.concat(parts, ignore_index=True), crs=g.crs).to_file(
                gpkg, layer=str(name), driver="GPKG")
    return dst


def load_times(html: Path, repeat: int) -> dict[str, float]:
    """Median load times (ms) of the page in headless chromium, network blocked."""
    from playwright.sync_api import sync_playwright

    rows: list[dict[str, float]] = []
    with sync_playwright() as p:
        b = p.chromium.launch(executable_path="/usr/bin/chromium",
                              args=["--headless", "--no-sandbox", "--disable-gpu"])
        for _ in range(repeat):
            ctx = b.new_context(viewport={"width": 1400, "height": 900})
            page = ctx.new_page()
            page.route("**/*", lambda r: r.continue_() if r.request.url.startswith(
                ("file:", "data:")) else r.abort())
            page.goto(html.resolve().as_uri(), timeout=600_000)
            page.wait_for_function("window.__geoCorrosion && window.__geoCorrosion.ready",
                                   timeout=600_000)
            page.wait_for_function("window.__geoCorrosion.paintedAt !== undefined",
                                   timeout=600_000)
            got: Any = page.evaluate("""() => {
              const p = {}; performance.getEntriesByType('paint').forEach(e =>
                p[e.name] = e.startTime);
              const n = performance.getEntriesByType('navigation')[0];
              return {first_paint: p['first-paint'], first_contentful_paint:
                      p['first-contentful-paint'], load_event: n.loadEventEnd,
                      map_script: window.__geoCorrosion.readyMs,
                      map_drawn: window.__geoCorrosion.readyAt,
                      map_painted: window.__geoCorrosion.paintedAt}; }""")
            got.update(page.evaluate("""async () => {
              const gc = window.__geoCorrosion, ids = gc.config.levels.map(l => l.id);
              const frame = () => new Promise(r => requestAnimationFrame(() => setTimeout(r, 0)));
              const t0 = performance.now();
              gc.show(ids[ids.length - 1]); await frame();
              const t1 = performance.now();
              const k = gc.layers(gc.current()).find(l => l.key.startsWith('readings_'));
              if (k) { gc.add(gc.current(), k.key); await frame(); }
              return {switch_to_last_level: t1 - t0, first_readings_layer_on:
                      performance.now() - t1}; }"""))
            rows.append(got)
            ctx.close()
        b.close()
    return {k: statistics.median(r[k] for r in rows) for k in rows[0]}


def main() -> None:
    """Build (or take) a run folder, write its web map, print size and load times."""
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--run-dir", type=Path, help="an existing run folder (its map is rebuilt)")
    ap.add_argument("--levels", type=int, default=4)
    ap.add_argument("--width-ft", type=float, default=400.0)
    ap.add_argument("--depth-ft", type=float, default=250.0)
    ap.add_argument("--spacing-ft", type=float, default=2.0)
    ap.add_argument("--work", type=Path, default=Path("bench_webmap_work"))
    ap.add_argument("--repeat", type=int, default=3)
    a = ap.parse_args()
    from geo_corrosion.exporters.webmap import write_webmap

    if a.run_dir is not None:
        run_dir = a.work / "run"
        if run_dir.exists():
            shutil.rmtree(run_dir)
        shutil.copytree(a.run_dir, run_dir)
    else:
        one = synthetic_run(a.work, a.width_ft, a.depth_ft, a.spacing_ft)
        run_dir = copy_levels(one, a.work / f"levels_{a.levels}", a.levels)
    import pyogrio

    n = sum(pyogrio.read_info(run_dir / "survey.gpkg", layer=k)["features"]
            for k, _t in pyogrio.list_layers(run_dir / "survey.gpkg")
            if str(k).startswith("readings_"))
    t = time.perf_counter()
    html = write_webmap(run_dir)
    build_s = time.perf_counter() - t
    times = load_times(html, a.repeat)
    print(f"readings (all kinds): {n:,}")
    print(f"web map: {html.stat().st_size / 1e6:.1f} MB, built in {build_s:.1f} s")
    for k, v in times.items():
        print(f"{k}: {v:,.0f} ms")


if __name__ == "__main__":
    main()

#!/usr/bin/env python3
"""Time each exporter alone on one computed run (a benchmark, not a test; it asserts nothing).

The site is checked and processed once and its ``RunResult`` pickled (``--result``); each
exporter named is then run on it into ``--out`` and timed (CPU and wall). Run it from two
trees (``PYTHONPATH=TREE``) on the same pickle to compare a change's exporters on the same
numbers::

    python benchmarks/bench_exporters.py compute --site sample_sites/millbrook_garage
    PYTHONPATH=. python benchmarks/bench_exporters.py export --out /tmp/exp \
        --exporters geopackage,plots,report,drawings,webmap

``report`` needs ``plots/`` and ``survey.gpkg`` in ``--out``: name those exporters first.
"""

from __future__ import annotations

import argparse
import pickle
import time
import warnings
from pathlib import Path


def main() -> None:
    """Compute and pickle a run, or time exporters on a pickled one."""
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("what", choices=("compute", "export"))
    ap.add_argument("--site", default="sample_sites/millbrook_garage")
    ap.add_argument("--result", default="/tmp/geo_corrosion_bench_result.pkl")
    ap.add_argument("--out", default="/tmp/geo_corrosion_bench_out")
    ap.add_argument("--exporters", default="geopackage,geotiff,quantities,drawings,plots,"
                                           "webmap,report")
    a = ap.parse_args()
    if a.what == "compute":
        from geo_corrosion.pipeline import check, process
        from geo_corrosion.stages.read_site import read_site

        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            site, flags = check(read_site(a.site))
            c0, w0 = time.process_time(), time.perf_counter()
            result = process(site, flags)
        print(f"process: {time.process_time() - c0:.2f} s CPU, "
              f"{time.perf_counter() - w0:.2f} s wall")
        Path(a.result).write_bytes(pickle.dumps(result))
        return
    from geo_corrosion.exporters import EXPORTERS

    result = pickle.loads(Path(a.result).read_bytes())
    out = Path(a.out)
    out.mkdir(parents=True, exist_ok=True)
    print(f"{'exporter':<12} {'CPU s':>8} {'wall s':>8}")
    for name in a.exporters.split(","):
        exp = EXPORTERS.get(name)
        inst = exp() if isinstance(exp, type) else exp
        c0, w0 = time.process_time(), time.perf_counter()
        inst.export(result, out)
        print(f"{name:<12} {time.process_time() - c0:8.2f} {time.perf_counter() - w0:8.2f}",
              flush=True)


if __name__ == "__main__":
    main()

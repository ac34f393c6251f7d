"""Where a portfolio's Dask workers lose time against one site after another.

Writes ``--sites`` synthetic sites (as ``bench_portfolio.py`` does), runs them one after
another in this process and then on a LocalCluster of ``--workers`` processes, and prints per
mode the wall time and each site's own elapsed time (median, sum, first site): the per-site
slowdown of sites running side by side, and the fixed costs (cluster start, each worker's
imports, the summary) are the difference.  A benchmark: it asserts nothing.

Usage (from the repository root)::

    PYTHONPATH=. python benchmarks/probe_portfolio_sites.py --sites 8
"""

from __future__ import annotations

import argparse
import statistics
import sys
import tempfile
import time
from pathlib import Path


def main() -> None:
    """Run the probe and print one line per mode."""
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sites", type=int, default=8)
    ap.add_argument("--workers", type=int, default=2)
    args = ap.parse_args()
    sys.path.insert(0, str(Path(__file__).resolve().parent))
    from bench_portfolio import make_sites

    from geo_corrosion.portfolio import run_portfolio

    root = Path(tempfile.mkdtemp(prefix="probe_portfolio_"))
    make_sites(root / "in", args.sites, 40, 30)
    for mode in ("serial", "dask"):
        t = time.perf_counter()
        r = run_portfolio([root / "in"], root / mode, serial=mode == "serial",
                          workers=args.workers)
        wall = time.perf_counter() - t
        el = [o.elapsed_s for o in r.outcomes]
        print(f"{mode}: wall {wall:.1f} s; a site's own elapsed: median "
              f"{statistics.median(el):.2f} s, sum {sum(el):.1f} s, first {el[0]:.1f} s",
              flush=True)
    print(f"sites and outputs in {root}")


if __name__ == "__main__":  # Dask's worker processes import this module again
    main()

"""Time the condition stage alone, in-process, on surfaces computed once.

``python benchmarks/bench_condition.py prep SITE OUT.pkl`` maps every level of ``SITE``
(check, surfaces, low cover) and pickles what :func:`assess_condition` needs;
``PYTHONPATH=TREE python benchmarks/bench_condition.py time OUT.pkl [REPEAT [SAVE.pkl]]``
then times ``assess_condition`` per level (``time.process_time``, one thread) with the code
of ``TREE``, so two trees can be compared on the same surfaces, alternately.  ``SAVE.pkl``
keeps each level's condition stats and probability maps for comparing results.
"""

from __future__ import annotations

import pickle
import sys
import time
from typing import Any


def prep(site_dir: str, out: str) -> None:
    """Map every level of ``site_dir`` and pickle the condition stage's inputs to ``out``."""
    from geo_corrosion import pipeline
    from geo_corrosion.measurements import Role
    from geo_corrosion.model.surface import with_role
    from geo_corrosion.stages.map_surfaces import map_level
    from geo_corrosion.stages.plan_repairs import low_cover_mask, planning_params

    site, flags = pipeline.check(site_dir)
    params = site.config.run
    units = pipeline.report_units(site.config.units)
    planning = planning_params(site.config)
    items = []
    for lid, lv in site.levels.items():
        mapped = map_level(lv, site.surveys_of(lid), flags, params, units=units)
        low = low_cover_mask(lv, with_role(mapped.surfaces, Role.COVER))
        kw = dict(rules=site.config.combined_rules,
                  bar_diameter_mm=planning.layout.bar_diameter_mm, low_cover=low,
                  interval_method=params.interval_method, realisations=params.realisations,
                  n_neighbors=params.n_neighbors, kinds=params.kinds)
        items.append((lid, lv, mapped, site.surveys_of(lid), kw))
    with open(out, "wb") as f:
        pickle.dump(items, f)


def run(pkl: str, repeat: int = 1, save: str | None = None) -> None:
    """Time ``assess_condition`` on the pickled inputs, ``repeat`` times."""
    from geo_corrosion.stages.assess_condition import assess_condition
    from geo_corrosion.surfaces import _threads

    _threads.set_threads(1)
    with open(pkl, "rb") as f:
        items = pickle.load(f)
    kept: list[Any] = []
    for r in range(repeat):
        tot = 0.0
        for lid, lv, mapped, surveys, kw in items:
            c0, w0 = time.process_time(), time.perf_counter()
            cond, _ = assess_condition(lv, mapped, surveys, **kw)
            c1, w1 = time.process_time(), time.perf_counter()
            tot += c1 - c0
            print(f"  {lid}: cpu {c1 - c0:.2f} wall {w1 - w0:.2f}", flush=True)
            if r == 0:
                kept.append((lid, cond.stats, cond.probability))
        print(f"total cpu {tot:.2f}", flush=True)
    if save:
        with open(save, "wb") as f:
            pickle.dump(kept, f)


if __name__ == "__main__":
    if sys.argv[1] == "prep":
        prep(sys.argv[2], sys.argv[3])
    else:
        run(sys.argv[2], int(sys.argv[3]) if len(sys.argv) > 3 else 1,
            sys.argv[4] if len(sys.argv) > 4 else None)

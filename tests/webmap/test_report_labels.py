"""The report's repair plan: repair numbers that never touch each other or sit on an outline.

Source of the rule: common drafting practice (a number printed on another, or on an outline,
is ambiguous); the extents are matplotlib's own measure of the drawn text.
"""

from __future__ import annotations

from typing import Any

import geopandas as gpd
import matplotlib
import pytest
from shapely.geometry import LineString, box

from geo_corrosion.exporters.report import build

matplotlib.use("Agg")


class _NoLayers:
    def get(self, name: str) -> Any:
        return None


@pytest.mark.parametrize("n", [2, 6])
def test_numbers_of_repairs_split_by_a_joint_do_not_touch(n: int) -> None:
    import matplotlib.pyplot as plt

    # n small repairs in a row, each 2 ft wide, the pairs split by joints at every 2 ft: the
    # case where numbers "1" and "2" side by side read as "12"
    repairs = gpd.GeoSeries([box(100 + 2 * i, 100, 102 + 2 * i, 102) for i in range(n)])
    rep = gpd.GeoDataFrame({"repair_id": [f"L2-R{i + 1:03d}" for i in range(n)]},
                           geometry=list(repairs))
    slab = gpd.GeoSeries([box(0, 0, 180, 120)])
    joints = gpd.GeoSeries([LineString([(102, 0), (102, 120)])])
    fig, ax = plt.subplots(figsize=(6.5, 4.8), dpi=150)
    repairs.boundary.plot(ax=ax)
    ax.set_aspect("equal")
    build._label_repairs(fig, ax, rep, repairs, slab, _NoLayers(), "L2", lambda g: None,
                         joints)
    fig.canvas.draw()
    r = fig.canvas.get_renderer()
    texts = [t for t in ax.texts]
    assert sorted(t.get_text() for t in texts) == sorted(str(i + 1) for i in range(n))
    boxes = [t.get_window_extent(r) for t in texts]
    for i in range(len(boxes)):
        for j in range(i + 1, len(boxes)):
            assert not boxes[i].overlaps(boxes[j]), (texts[i].get_text(), texts[j].get_text())
    # no number sits on a repair outline (in display units, the outline's own transform)
    inv = ax.transData.inverted()
    for t, bb in zip(texts, boxes, strict=True):
        (x0, y0), (x1, y1) = inv.transform([(bb.x0, bb.y0), (bb.x1, bb.y1)])
        tb = box(x0, y0, x1, y1)
        assert not any(tb.intersects(g.boundary) for g in repairs), t.get_text()
    plt.close(fig)

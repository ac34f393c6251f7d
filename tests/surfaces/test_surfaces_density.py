"""The density rule, the per-kind neighbourhood and the Thiessen cells (issue 12 items 2, 3)."""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pytest
import shapely

from geo_corrosion.surfaces.density import (
    DensityRule,
    count_reason,
    kind_neighbourhood,
    nearest_neighbour_spacing,
    neighbourhood,
    spacing_reason,
)
from geo_corrosion.surfaces.thiessen import thiessen_cells

DECK = shapely.box(0, 0, 60, 40).difference(shapely.box(39, 19, 41, 21))


def test_nearest_neighbour_spacing_by_hand() -> None:
    # hand computation: on a 2 x 3 grid with spacing 2 (x) and 5 (y), each point's nearest
    # neighbour is 2 away; a repeated location counts once
    x = [0, 2, 4, 0, 2, 4, 4]
    y = [0, 0, 0, 5, 5, 5, 5]
    assert nearest_neighbour_spacing(x, y) == 2.0
    # three points on a line at 0, 1, 4: nearest distances 1, 1, 3 -> median 1
    assert nearest_neighbour_spacing([0, 1, 4], [0, 0, 0]) == 1.0
    assert math.isnan(nearest_neighbour_spacing([3], [3]))  # one location: no spacing


def test_the_radius_rule_by_hand() -> None:
    # hand computation of mask = max(2.5 s, min(R, 5 s)), search = max(mask, R)
    # (docs/methods.md §3.4, our rule)
    h = neighbourhood(2.0, 37.0)  # dense potentials: 5 s caps the mask; search to the range
    assert (h.mask_distance, h.search_radius, h.basis) == (10.0, 37.0, "derived")
    h = neighbourhood(10.8, 48.9)  # sparse rate readings: the range
    assert (h.mask_distance, h.search_radius) == (pytest.approx(48.9), pytest.approx(48.9))
    h = neighbourhood(8.0, 12.0)  # short range: the 2.5 s floor
    assert (h.mask_distance, h.search_radius) == (20.0, 20.0)
    # an explicit max_distance sets the mask; the search radius is never less than it
    h = neighbourhood(8.0, 30.0, max_distance=6.0, basis="[run] max_distance")
    assert (h.search_radius, h.mask_distance, h.basis) == (30.0, 6.0, "[run] max_distance")
    h = neighbourhood(2.0, 37.0, max_distance=40.0, basis="x")
    assert (h.search_radius, h.mask_distance) == (40.0, 40.0)


def test_per_kind_max_distance_wins_over_the_site_wide_one() -> None:
    # common practice: the narrower table wins; metres converted to feet (1 ft = 0.3048 m)
    kinds = {"cover": {"max_distance_m": 3.048}}
    h = kind_neighbourhood(kinds, 1.8288, "cover", 8.0, 30.0, 0.3048)
    assert h.mask_distance == pytest.approx(10.0) and h.basis == "[run.kinds.cover] max_distance"
    h = kind_neighbourhood(kinds, 1.8288, "potential", 2.0, 37.0, 0.3048)
    assert h.mask_distance == pytest.approx(6.0) and h.basis == "[run] max_distance"
    assert kind_neighbourhood({}, None, "potential", 2.0, 37.0, 0.3048).basis == "derived"


def test_density_rule_on_both_sides() -> None:
    # our rule (surfaces/density.py): at least 30 readings, spacing at most 0.5 x range
    rule = DensityRule()
    assert count_reason(30, rule) is None
    assert "18 usable readings" in str(count_reason(18, rule))
    assert "1 usable reading," in str(count_reason(1, rule))
    assert spacing_reason(15.0, 30.0, rule, "ft") is None
    assert "more than 0.5 x" in str(spacing_reason(15.1, 30.0, rule, "ft"))
    assert spacing_reason(float("nan"), 30.0, rule, "ft") is not None


def test_thiessen_cells_are_shapelys_voronoi_polygons_clipped_to_the_deck() -> None:
    rng = np.random.default_rng(3)
    x, y = rng.uniform(0, 60, 18), rng.uniform(0, 40, 18)
    cells = thiessen_cells(x, y, DECK)
    # reference library: shapely's voronoi_polygons, each region intersected with the deck
    ref = shapely.get_parts(shapely.voronoi_polygons(
        shapely.multipoints(np.column_stack([x, y])), extend_to=shapely.box(-100, -100, 200, 200)))
    for cx, cy, c in zip(x, y, cells, strict=True):
        region = next(r for r in ref if r.contains(shapely.Point(cx, cy)))
        assert c.symmetric_difference(region.intersection(DECK)).area < 1e-9
    # shapely: the cells tile the deck, areas summing to its area, without overlap
    assert sum(c.area for c in cells) == pytest.approx(DECK.area, rel=1e-12)
    assert shapely.union_all(cells).symmetric_difference(DECK).area < 1e-9


def test_one_reading_gets_the_whole_deck_and_repeats_share_a_cell() -> None:
    # hand computation: one location is nearest to every point of the deck
    assert thiessen_cells([30.0], [20.0], DECK)[0].equals(DECK)
    a, b, c = thiessen_cells([10.0, 10.0, 50.0], [20.0, 20.0, 20.0], DECK)
    assert a.equals(b)
    # two locations at x = 10 and 50: the bisector x = 30 splits the deck (hand computation)
    assert a.area == pytest.approx(30 * 40) and c.area == pytest.approx(30 * 40 - 4)
    assert thiessen_cells([], [], DECK) == []


def test_the_search_radius_binds_only_where_it_leaves_out_a_nearest_reading() -> None:
    from geo_corrosion.surfaces.density import binding_radius

    # hand computation: readings at x = 0, 1, 2, 10 on a line; a cell at x = 0.5 has its
    # 3 nearest within 1.5 and its 4th at 9.5
    x, y = [0.0, 1.0, 2.0, 10.0], [0.0] * 4
    assert binding_radius(x, y, [0.5], [0.0], 3, 2.0) is None
    assert binding_radius(x, y, [0.5], [0.0], 4, 2.0) == 2.0
    assert binding_radius(x, y, [0.5], [0.0], 4, 9.5) is None
    # in the model's isotropic space: a stretch of y by 10 puts (0, 1) 10 away
    def stretch(a: Any, b: Any) -> tuple[Any, Any]:
        return a, 10 * np.asarray(b)

    assert binding_radius([0.0, 0.0], [0.0, 1.0], [0.0], [0.0], 2, 5.0, stretch) == 5.0
    assert binding_radius([0.0, 0.0], [0.0, 1.0], [0.0], [0.0], 2, 5.0) is None


def test_binding_radius_matches_the_kth_distance_by_hand():
    """The radius binds exactly when some cell's k-th nearest reading lies beyond it.

    Source: hand computation (the full cell-to-reading distance matrix, sorted), over radii
    on both sides of the largest k-th distance, where the quick bound does and does not hold.
    """
    from geo_corrosion.surfaces.density import binding_radius

    rng = np.random.default_rng(5)
    x, y = rng.uniform(0, 50, 400), rng.uniform(0, 30, 400)
    cx, cy = rng.uniform(-2, 52, 3000), rng.uniform(-2, 32, 3000)
    kth = np.sort(np.hypot(cx[:, None] - x[None], cy[:, None] - y[None]), axis=1)[:, 15]
    top = float(kth.max())
    for r in (0.5 * top, 0.999 * top, 1.001 * top, 1.5 * top, 3.0 * top, 50.0 * top):
        want = r if top > r else None
        assert binding_radius(x, y, cx, cy, 16, r) == want, r

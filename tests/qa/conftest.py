"""Builders of small synthetic readings frames in the ingest contract (geo_corrosion.qa tests)."""

from __future__ import annotations

from collections.abc import Callable, Sequence

import geopandas as gpd
import numpy as np
import pytest

FrameFactory = Callable[..., gpd.GeoDataFrame]


def build_frame(
    values: Sequence[float],
    xy: Sequence[tuple[float, float]] | None = None,
    *,
    point_ids: Sequence[str] | None = None,
    survey_id: str = "S1",
    level_id: str = "L1",
    value_column: str = "potential_mv",
    file: str = "readings/L1_east.csv",
) -> gpd.GeoDataFrame:
    """Contract frame: one reading per value, at ``xy`` (default 10 units apart along x)."""
    v = np.asarray(values, dtype=float)
    n = len(v)
    if xy is None:
        x, y = 10.0 * np.arange(n), np.zeros(n)
    else:
        arr = np.asarray(xy, dtype=float).reshape(n, 2)
        x, y = arr[:, 0], arr[:, 1]
    rows = np.arange(n)
    return gpd.GeoDataFrame(
        {
            "reading_id": [f"{survey_id}:{r}" for r in rows],
            "survey_id": survey_id,
            "level_id": level_id,
            "row": rows,
            "where": [f"{file} line {r + 2}" for r in rows],
            "point_id": list(point_ids) if point_ids is not None else [""] * n,
            "x_local": x,
            "y_local": y,
            value_column: v,
            "raw_value": v / 1000.0,
        },
        geometry=gpd.points_from_xy(1000.0 + x, 2000.0 + y),
        crs="EPSG:32618",
    )


@pytest.fixture
def make_frame() -> FrameFactory:
    """Return the :func:`build_frame` factory."""
    return build_frame

"""The parallel kriging kernel (``prange`` over blocks of points) equals the serial one.

Source of the expected values: the serial kernel ``_solve_points`` (itself checked against
the engine's numpy path in test_kernel.py, and that path against pykrige and gstools).
Each point's system is independent and solved by the same operations in the same order,
so the two must agree to the last bit (``np.array_equal``), whatever the thread count.
"""

from __future__ import annotations

import numpy as np
import pytest

from geo_corrosion.surfaces import _kernel
from geo_corrosion.surfaces.kriging import KrigingEngine
from geo_corrosion.surfaces.variogram import VariogramModel

numba = pytest.importorskip("numba")

MODELS = [
    VariogramModel("spherical", nugget=30.0, psill=900.0, range=9.0),
    VariogramModel("exponential", nugget=10.0, psill=800.0, range=12.0),
    VariogramModel("stable", nugget=5.0, psill=700.0, range=8.0, shape=1.5),
]


def _random_case(seed: int) -> tuple[KrigingEngine, np.ndarray, np.ndarray]:
    rng = np.random.default_rng(seed)
    n = 2000
    x, y = rng.uniform(0, 60, n), rng.uniform(0, 40, n)
    z = -250 + 60 * np.sin(x / 6) * np.cos(y / 5) + rng.normal(0, 8, n)
    qx = np.concatenate([rng.uniform(-5, 65, 9000), x[:40]])  # includes exact points
    qy = np.concatenate([rng.uniform(-5, 45, 9000), y[:40]])
    return KrigingEngine(x, y, z, MODELS[seed % len(MODELS)], n_neighbors=16,
                         radius=4.0 if seed % 2 else None), qx, qy


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_parallel_kernel_equals_serial_kernel(seed: int) -> None:
    eng, qx, qy = _random_case(seed)
    assert eng._kernel is not None
    d, i = eng.query(*eng.model.transform_coords(qx, qy))
    args = dict(n=eng.n, code=eng._kernel, model=eng.model, eps=1e-10)
    serial = _kernel.solve_points(eng.px, eng.py, eng.z, i, d, threads=1, **args)
    assert i.shape[0] > 4 * _kernel.BLOCK  # several blocks, a partial last one
    for t in (2, 3):
        par = _kernel.solve_points(eng.px, eng.py, eng.z, i, d, threads=t, **args)
        for a, b in zip(serial, par, strict=True):
            assert np.array_equal(a, b, equal_nan=a.dtype.kind == "f")


def test_predict_is_the_same_with_any_thread_count() -> None:
    eng, qx, qy = _random_case(1)
    try:
        _kernel.set_threads(1)
        one = eng.predict(qx, qy, chunk_size=3000)
        _kernel.set_threads(2)
        eng._prange = True  # chunks one after another, prange inside the kernel
        two = eng.predict(qx, qy, chunk_size=3000)
        eng._prange = False  # a thread pool over chunks of the serial kernel (the default)
        pool = eng.predict(qx, qy, chunk_size=3000)
    finally:
        _kernel.set_threads(None)
    for a, b, c in zip(one, two, pool, strict=True):
        assert np.array_equal(a, b, equal_nan=True)
        assert np.array_equal(a, c, equal_nan=True)

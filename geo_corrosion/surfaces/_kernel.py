"""Compiled kernel of the local kriging engine (numba), one system per prediction point.

:class:`geo_corrosion.surfaces.kriging.KrigingEngine` solves its local systems here when
numba is importable and the variogram model is one of :data:`KERNEL_MODELS`; otherwise
(Matérn, or ``GEO_CORROSION_NO_JIT=1``) it uses its numpy path, which stays the reference.
Both write the same ordinary kriging system (variogram form, as pykrige)::

    [Γ  1] [w]   [γ0]
    [1ᵀ 0] [ν] = [1 ]

and agree to round-off (tests/surfaces/test_kernel.py).  Here each point's system is
built and solved by LU with partial pivoting in compiled loops, with no temporaries:
about twice as fast as the batched numpy path on the 20,000-reading benchmark.  A point
whose system is singular (an exactly zero pivot) or gives a non-finite result is marked
``bad`` and left to the numpy path, which falls back to a pseudo-inverse.

The functions are compiled on first use and cached on disk by numba (``cache=True``).
"""

from __future__ import annotations

import os
from typing import Any

import numpy as np
from numpy.typing import NDArray

# the thread count lives apart from numba, so that the pipeline sets it without loading it
from geo_corrosion.surfaces._threads import set_threads, threads

__all__ = ["KERNEL_MODELS", "BLOCK", "kernel_for", "solve_points", "set_threads", "threads"]

#: Points per block of the parallel kernel (one block per ``prange`` iteration).
BLOCK = 256

#: Models the kernel evaluates (codes used inside the kernel).
KERNEL_MODELS = {"spherical": 0, "exponential": 1, "gaussian": 2, "stable": 3}

try:  # numba is a dependency; the numpy path still works without it
    import numba as _nb
except ImportError:  # pragma: no cover - exercised only on installs without numba
    # the optional-import idiom: mypy types _nb as the module; every use checks for None
    # first (declaring it ``Any`` instead would make the numba decorators "untyped")
    _nb = None  # type: ignore[assignment]


def kernel_for(model: Any) -> int | None:
    """Return the kernel's code of a variogram model, or None when the numpy path is used."""
    off = os.environ.get("GEO_CORROSION_NO_JIT", "").strip().lower()
    if _nb is None or off not in ("", "0", "false", "no"):
        return None
    return KERNEL_MODELS.get(model.name)


if _nb is not None:

    @_nb.njit(cache=True, nogil=True, inline="always")
    def _gamma(h: float, code: int, nug: float, psill: float, rng: float,
               shape: float) -> float:  # pragma: no cover - compiled
        u = h / rng
        if code == 0:
            if u > 1.0:
                u = 1.0
            f = u * (1.5 - 0.5 * u * u)
        elif code == 1:
            f = -np.expm1(-3.0 * u)
        elif code == 2:
            f = -np.expm1(-3.0 * u * u)
        else:
            f = -np.expm1(-3.0 * u ** shape)
        return nug + psill * f

    @_nb.njit(cache=True, nogil=True, inline="always")
    def _lu_solve(A: Any, b: Any, q: int) -> bool:  # pragma: no cover - compiled
        """Solve ``A[:q, :q] x = b[:q]`` in place (``x`` in ``b``); True if singular.

        LU with partial pivoting, forward elimination on ``b`` and back substitution, in
        compiled loops with no temporaries; ``A`` is overwritten.  A pivot of exactly zero
        stops it (True, ``b`` then partly eliminated).  Shared by the kriging kernel and the
        simulation's weights (:mod:`geo_corrosion.surfaces._simkernel`).
        """
        for c in range(q):
            piv = c
            best = abs(A[c, c])
            for r in range(c + 1, q):
                v = abs(A[r, c])
                if v > best:
                    best = v
                    piv = r
            if best == 0.0:
                return True
            if piv != c:
                for t in range(q):
                    tmp = A[c, t]
                    A[c, t] = A[piv, t]
                    A[piv, t] = tmp
                tmp = b[c]
                b[c] = b[piv]
                b[piv] = tmp
            inv = 1.0 / A[c, c]
            for r in range(c + 1, q):
                f = A[r, c] * inv
                if f != 0.0:
                    for t in range(c + 1, q):
                        A[r, t] -= f * A[c, t]
                    b[r] -= f * b[c]
        for r in range(q - 1, -1, -1):  # back substitution
            s = b[r]
            for t in range(r + 1, q):
                s -= A[r, t] * b[t]
            b[r] = s / A[r, r]
        return False

    @_nb.njit(cache=True, nogil=True, inline="always")
    def _ordinary_matrix(A: Any, sel: Any, kv: int, px: NDArray[np.float64],
                         py: NDArray[np.float64], code: int, nug: float, psill: float,
                         rng: float, shape: float) -> None:  # pragma: no cover - compiled
        """Fill ``A[:kv+1, :kv+1]`` with the ordinary kriging matrix of readings ``sel[:kv]``.

        Semivariances between the readings (0 on the diagonal), the unbiasedness row and
        column of ones and 0 in the corner; shared by the kriging pass and the simulation's
        weights (:mod:`geo_corrosion.surfaces._simkernel`), which differ only in the
        right-hand side.
        """
        for i in range(kv):
            ii = sel[i]
            A[i, i] = 0.0
            for j in range(i + 1, kv):
                jj = sel[j]
                dx = px[ii] - px[jj]
                dy = py[ii] - py[jj]
                g = _gamma(np.sqrt(dx * dx + dy * dy), code, nug, psill, rng, shape)
                A[i, j] = g
                A[j, i] = g
            A[i, kv] = 1.0
            A[kv, i] = 1.0
        A[kv, kv] = 0.0

    @_nb.njit(cache=True, nogil=True, inline="always")
    def _solve_one(p: int, px: NDArray[np.float64], py: NDArray[np.float64],
                   z: NDArray[np.float64], idx: NDArray[np.intp], dist: NDArray[np.float64],
                   n: int, code: int, nug: float, psill: float, rng: float, shape: float,
                   eps: float, A: Any, b: Any, b0: Any, sel: Any, dsel: Any, mean: Any,
                   var: Any, nu: Any, bad: Any) -> None:  # pragma: no cover - compiled
        """Build and solve point ``p``'s system in the scratch arrays; write its results."""
        k = idx.shape[1]
        kv = 0
        for i in range(k):
            if idx[p, i] < n:
                sel[kv] = idx[p, i]
                dsel[kv] = dist[p, i]
                kv += 1
        if kv == 0:
            return
        q = kv + 1
        _ordinary_matrix(A, sel, kv, px, py, code, nug, psill, rng, shape)
        for i in range(kv):
            d = dsel[i]
            b[i] = 0.0 if d <= eps else _gamma(d, code, nug, psill, rng, shape)
            b0[i] = b[i]
        b[kv] = 1.0
        b0[kv] = 1.0
        if _lu_solve(A, b, q):
            bad[p] = True
            return
        mu = 0.0
        vv = b[kv]
        for i in range(kv):
            mu += b[i] * z[sel[i]]
            vv += b[i] * b0[i]
        if not (np.isfinite(mu) and np.isfinite(vv)):
            bad[p] = True
            return
        mean[p] = mu
        var[p] = vv if vv > 0.0 else 0.0
        nu[p] = b[kv]

    @_nb.njit(cache=True, nogil=True)
    def _solve_points(px: NDArray[np.float64], py: NDArray[np.float64],
                      z: NDArray[np.float64], idx: NDArray[np.intp],
                      dist: NDArray[np.float64], n: int, code: int, nug: float,
                      psill: float, rng: float, shape: float,
                      eps: float) -> tuple[Any, Any, Any, Any]:  # pragma: no cover - compiled
        m, k = idx.shape
        mean = np.full(m, np.nan)
        var = np.full(m, np.nan)
        nu = np.full(m, np.nan)
        bad = np.zeros(m, dtype=np.bool_)
        kk = k + 1
        A = np.empty((kk, kk))
        b = np.empty(kk)
        b0 = np.empty(kk)
        sel = np.empty(k, dtype=np.intp)
        dsel = np.empty(k)
        for p in range(m):
            _solve_one(p, px, py, z, idx, dist, n, code, nug, psill, rng, shape, eps,
                       A, b, b0, sel, dsel, mean, var, nu, bad)
        return mean, var, nu, bad

    @_nb.njit(cache=True, nogil=True, parallel=True)
    def _solve_points_par(px: NDArray[np.float64], py: NDArray[np.float64],
                          z: NDArray[np.float64], idx: NDArray[np.intp],
                          dist: NDArray[np.float64], n: int, code: int, nug: float,
                          psill: float, rng: float, shape: float, eps: float,
                          block: int) -> tuple[Any, Any, Any, Any]:  # pragma: no cover
        # blocks of points over the threads (prange), each with its own scratch arrays;
        # every point is solved by the same operations, in the same order, as in
        # _solve_points, so the results are identical to the last bit
        m, k = idx.shape
        mean = np.empty(m)
        var = np.empty(m)
        nu = np.empty(m)
        bad = np.empty(m, dtype=np.bool_)
        kk = k + 1
        nblocks = (m + block - 1) // block
        for blk in _nb.prange(nblocks):
            A = np.empty((kk, kk))
            b = np.empty(kk)
            b0 = np.empty(kk)
            sel = np.empty(k, dtype=np.intp)
            dsel = np.empty(k)
            hi = min(m, (blk + 1) * block)
            for p in range(blk * block, hi):
                mean[p] = np.nan
                var[p] = np.nan
                nu[p] = np.nan
                bad[p] = False
                _solve_one(p, px, py, z, idx, dist, n, code, nug, psill, rng, shape, eps,
                           A, b, b0, sel, dsel, mean, var, nu, bad)
        return mean, var, nu, bad


def solve_points(px: NDArray[np.float64], py: NDArray[np.float64], z: NDArray[np.float64],
                 idx: NDArray[np.intp], dist: NDArray[np.float64], *, n: int, code: int,
                 model: Any, eps: float, threads: int = 1
                 ) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64],
                            NDArray[np.bool_]]:
    """Solve each point's system from its neighbour indices and distances.

    Indices equal to ``n`` mean "no neighbour" (radius search).  Returns the estimate,
    the kriging variance, the Lagrange multiplier ν (NaN where a point has no neighbour)
    and a ``bad`` mask of points left to the numpy path.  With ``threads`` > 1, blocks of
    :data:`BLOCK` points are shared out over that many numba threads (``prange``); each
    point's result is the same to the last bit as with one thread.  Call it with
    ``threads`` > 1 from one thread at a time (the caller's own thread pool, if any, then
    stays serial).
    """
    if _nb is None:  # pragma: no cover - guarded by kernel_for
        raise RuntimeError("numba is not available")
    shape = float(model.shape) if model.shape is not None else 1.0
    args = (px, py, z, np.ascontiguousarray(idx, dtype=np.intp),
            np.ascontiguousarray(dist, dtype=np.float64), int(n), int(code),
            float(model.nugget), float(model.psill), float(model.range), shape, float(eps))
    t = min(int(threads), int(_nb.config.NUMBA_NUM_THREADS))  # type: ignore[attr-defined]
    if t <= 1 or idx.shape[0] <= BLOCK:
        return _solve_points(*args)
    _nb.set_num_threads(t)  # thread-local in numba: set in the calling thread
    # blocks handed out one at a time (not in equal shares): on a shared machine a thread
    # held up by another program then takes fewer blocks
    old = _nb.set_parallel_chunksize(1)
    try:
        return _solve_points_par(*args, BLOCK)
    finally:
        _nb.set_parallel_chunksize(old)

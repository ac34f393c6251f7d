"""Compiled loops of the conditional simulation (numba), with numpy fallbacks.

:mod:`geo_corrosion.surfaces.simulation` calls three loops here:

* :func:`filtered_weights`: the local ordinary kriging weights of each target point, the
  same system as :mod:`geo_corrosion.surfaces._kernel` (variogram form, as pykrige) but with
  the right-hand side ``γ0_i = nugget + psill·f(d_i)`` for every neighbour, also at
  ``d = 0``: the weights that estimate the nugget-free field from readings that carry the
  nugget as measurement error [Chiles-Delfiner-2012 §3.7.1, from memory].  Away from the
  readings they are the engine's weights.  The variance returned is that of the nugget-free
  field, ``w·γ0 + ν - nugget``.
* :func:`condition_lattice`: add the kriged residuals of all realisations of a batch to
  the unconditional lattice values (the conditioning step).
* :func:`excursion`: the share of each cell beyond a threshold under the bilinear
  interpolant of the cell-centre values, per realisation.

Each loop has a numpy version (used without numba, ``GEO_CORROSION_NO_JIT=1``, or for the
Matérn model in :func:`filtered_weights`); tests compare the two.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from numpy.typing import NDArray

from geo_corrosion.surfaces import _kernel
from geo_corrosion.surfaces._kernel import kernel_for

try:  # numba is a dependency; the numpy versions still work without it
    import numba as _nb
except ImportError:  # pragma: no cover - exercised only on installs without numba
    _nb = None  # type: ignore[assignment]

__all__ = ["filtered_weights", "condition_lattice", "excursion", "weights_numpy"]

if _nb is not None:
    _gamma = _kernel._gamma

    @_nb.njit(cache=True, nogil=True)
    def _weights(px: NDArray[np.float64], py: NDArray[np.float64], idx: NDArray[np.intp],
                 dist: NDArray[np.float64], n: int, code: int, nug: float, psill: float,
                 rng: float, shape: float) -> tuple[Any, Any, Any]:  # pragma: no cover
        m, k = idx.shape
        W = np.zeros((m, k))
        var = np.full(m, np.nan)
        bad = np.zeros(m, dtype=np.bool_)
        kk = k + 1
        A = np.empty((kk, kk))
        b = np.empty(kk)
        b0 = np.empty(kk)
        sel = np.empty(k, dtype=np.intp)
        pos = np.empty(k, dtype=np.intp)
        for p in range(m):
            kv = 0
            for i in range(k):
                if idx[p, i] < n:
                    sel[kv] = idx[p, i]
                    pos[kv] = i
                    kv += 1
            if kv == 0:
                continue
            q = kv + 1
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
                b[i] = _gamma(dist[p, pos[i]], code, nug, psill, rng, shape)
                b0[i] = b[i]
            A[kv, kv] = 0.0
            b[kv] = 1.0
            b0[kv] = 1.0
            singular = False
            for c in range(q):
                piv = c
                best = abs(A[c, c])
                for r in range(c + 1, q):
                    v = abs(A[r, c])
                    if v > best:
                        best = v
                        piv = r
                if best == 0.0:
                    singular = True
                    break
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
            if singular:
                bad[p] = True
                continue
            for r in range(q - 1, -1, -1):
                s = b[r]
                for t in range(r + 1, q):
                    s -= A[r, t] * b[t]
                b[r] = s / A[r, r]
            vv = b[kv] - nug
            ok = np.isfinite(vv)
            for i in range(kv):
                vv += b[i] * b0[i]
                if not np.isfinite(b[i]):
                    ok = False
            if not ok:
                bad[p] = True
                continue
            for i in range(kv):
                W[p, pos[i]] = b[i]
            var[p] = vv if vv > 0.0 else 0.0
        return W, var, bad

    @_nb.njit(cache=True, nogil=True)
    def _condition(zlat: NDArray[np.float64], cells: NDArray[np.intp], idx: NDArray[np.intp],
                   W: NDArray[np.float64], res: NDArray[np.float64]) -> None:  # pragma: no cover
        R = zlat.shape[0]
        m, k = idx.shape
        acc = np.empty(R)
        for c in range(m):
            for r in range(R):
                acc[r] = 0.0
            for j in range(k):
                w = W[c, j]
                if w != 0.0:
                    i = idx[c, j]
                    for r in range(R):
                        acc[r] += w * res[i, r]
            cell = cells[c]
            for r in range(R):
                zlat[r, cell] += acc[r]

    @_nb.njit(cache=True, nogil=True, inline="always")
    def _side(v: float, t: float, below: bool) -> bool:  # pragma: no cover
        return v < t if below else v > t

    @_nb.njit(cache=True, nogil=True)
    def _excursion(zlat: NDArray[np.float64], rows: NDArray[np.intp], cols: NDArray[np.intp],
                   t: float, below: bool, q: int, frac_sum: NDArray[np.float64],
                   areas: NDArray[np.float64]) -> None:  # pragma: no cover
        R, ny, nx = zlat.shape
        m = rows.size
        for r in range(R):
            tot = 0.0
            for c in range(m):
                i = rows[c]
                j = cols[c]
                a = zlat[r, i, j]
                f = 0.0
                for di in (-1, 1):
                    for dj in (-1, 1):
                        ii = i + di
                        jj = j + dj
                        bi = a
                        bj = a
                        bd = a
                        if 0 <= ii < ny:
                            v = zlat[r, ii, j]
                            if np.isfinite(v):
                                bi = v
                        if 0 <= jj < nx:
                            v = zlat[r, i, jj]
                            if np.isfinite(v):
                                bj = v
                        if 0 <= ii < ny and 0 <= jj < nx:
                            v = zlat[r, ii, jj]
                            if np.isfinite(v):
                                bd = v
                        s = (int(_side(a, t, below)) + int(_side(bi, t, below))
                             + int(_side(bj, t, below)) + int(_side(bd, t, below)))
                        if s == 4:
                            f += 0.25
                        elif s > 0:
                            cnt = 0
                            for si in range(q):
                                u = (si + 0.5) / (2.0 * q)
                                for sj in range(q):
                                    w = (sj + 0.5) / (2.0 * q)
                                    val = ((1.0 - u) * (1.0 - w) * a + u * (1.0 - w) * bi
                                           + (1.0 - u) * w * bj + u * w * bd)
                                    if _side(val, t, below):
                                        cnt += 1
                            f += 0.25 * cnt / (q * q)
                frac_sum[c] += f
                tot += f
            areas[r] += tot


def weights_numpy(px: NDArray[np.float64], py: NDArray[np.float64], idx: NDArray[np.intp],
                  dist: NDArray[np.float64], n: int, model: Any
                  ) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.bool_]]:
    """Solve the filtered kriging weights by batched numpy solves (the reference of the kernel)."""
    m, k = idx.shape
    kk = k + 1
    miss = idx >= n
    gx, gy = px[idx], py[idx]
    d = np.sqrt((gx[:, :, None] - gx[:, None, :]) ** 2 + (gy[:, :, None] - gy[:, None, :]) ** 2)
    A = np.zeros((m, kk, kk))
    A[:, :k, :k] = model.gamma_positive(d)
    A[:, np.arange(k), np.arange(k)] = 0.0
    A[:, :k, k] = 1.0
    A[:, k, :k] = 1.0
    b = np.ones((m, kk))
    b[:, :k] = model.gamma_positive(np.where(np.isfinite(dist), dist, 0.0))
    if miss.any():
        gi, ji = np.nonzero(miss)
        A[gi, ji, :] = 0.0
        A[gi, :, ji] = 0.0
        A[gi, ji, ji] = 1.0
        b[gi, ji] = 0.0
    none = miss.all(axis=1)
    A[none, k, k] = 1.0
    bad = np.zeros(m, dtype=bool)
    try:
        X = np.linalg.solve(A, b[:, :, None])[:, :, 0]
    except np.linalg.LinAlgError:
        X = np.einsum("mij,mj->mi", np.linalg.pinv(A), b)
    W = np.where(miss, 0.0, X[:, :k])
    var = np.einsum("ij,ij->i", X, b) - model.nugget
    var = np.where(none, np.nan, np.maximum(var, 0.0))
    W[none] = 0.0
    bad |= ~np.isfinite(W).all(axis=1)
    return W, var, bad


def filtered_weights(px: NDArray[np.float64], py: NDArray[np.float64], idx: NDArray[np.intp],
                     dist: NDArray[np.float64], *, n: int, model: Any, use_kernel: bool = True
                     ) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Return the filtered kriging weights ``(m, k)`` and nugget-free variances ``(m,)``.

    Indices equal to ``n`` mean "no neighbour" (weight 0); a point with none gets zero
    weights and a NaN variance.
    """
    code = kernel_for(model) if use_kernel else None
    idx = np.ascontiguousarray(idx, dtype=np.intp)
    dist = np.ascontiguousarray(dist, dtype=np.float64)
    if code is None:
        W, var, _ = weights_numpy(px, py, idx, dist, n, model)
        return W, var
    shape = float(model.shape) if model.shape is not None else 1.0
    W, var, bad = _weights(px, py, idx, dist, int(n), int(code), float(model.nugget),
                           float(model.psill), float(model.range), shape)
    if bad.any():
        W[bad], var[bad], _ = weights_numpy(px, py, idx[bad], dist[bad], n, model)
    return W, var


def condition_lattice(zlat: NDArray[np.float64], cells: NDArray[np.intp], idx: NDArray[np.intp],
                      W: NDArray[np.float64], res: NDArray[np.float64], *,
                      use_kernel: bool = True) -> None:
    """Add ``sum_j W[c, j] res[idx[c, j], :]`` to ``zlat[:, cells[c]]`` in place.

    ``zlat`` is ``(R, L)`` (realisations, flat lattice); ``res`` is ``(n + 1, R)`` with a
    zero last row for "no neighbour".
    """
    if _nb is not None and use_kernel:
        _condition(zlat, cells, idx, W, res)
        return
    for a in range(0, cells.size, 65536):
        sl = slice(a, a + 65536)
        add = np.einsum("ck,ckr->rc", W[sl], res[idx[sl]])
        zlat[:, cells[sl]] += add


def excursion(zlat: NDArray[np.float64], rows: NDArray[np.intp], cols: NDArray[np.intp],
              threshold: float, *, below: bool, q: int = 8, use_kernel: bool = True
              ) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Share of each target cell beyond ``threshold`` under the bilinear interpolant.

    Parameters
    ----------
    zlat : ndarray, shape ``(R, ny, nx)``
        Realisations at cell centres; NaN where a cell is not simulated (a missing
        neighbour repeats the cell's own value).
    rows, cols : ndarray of int
        The target cells.
    threshold : float
    below : bool
        Count values below (True) or above (False) the threshold.
    q : int
        Each quarter of a cell that the threshold crosses is sampled at ``q x q`` points.

    Returns
    -------
    frac_sum : ndarray, shape ``(m,)``
        Sum over the realisations of each cell's share beyond.
    areas : ndarray, shape ``(R,)``
        Per realisation, the area beyond in cells (sum of the shares).
    """
    frac = np.zeros(rows.size)
    areas = np.zeros(zlat.shape[0])
    if _nb is not None and use_kernel:
        _excursion(zlat, rows.astype(np.intp), cols.astype(np.intp), float(threshold),
                   bool(below), int(q), frac, areas)
        return frac, areas
    R, ny, nx = zlat.shape
    a = zlat[:, rows, cols]
    u = (np.arange(q) + 0.5) / (2.0 * q)
    for di in (-1, 1):
        for dj in (-1, 1):
            ii = rows + di
            jj = cols + dj
            iin = (ii >= 0) & (ii < ny)
            jin = (jj >= 0) & (jj < nx)
            ic, jc = np.clip(ii, 0, ny - 1), np.clip(jj, 0, nx - 1)
            bi = np.where(iin, zlat[:, ic, cols], np.nan)
            bj = np.where(jin, zlat[:, rows, jc], np.nan)
            bd = np.where(iin & jin, zlat[:, ic, jc], np.nan)
            bi = np.where(np.isfinite(bi), bi, a)
            bj = np.where(np.isfinite(bj), bj, a)
            bd = np.where(np.isfinite(bd), bd, a)
            U, V = np.meshgrid(u, u, indexing="ij")
            U, V = U.ravel(), V.ravel()
            val = ((1 - U) * (1 - V) * a[..., None] + (U * (1 - V)) * bi[..., None]
                   + ((1 - U) * V) * bj[..., None] + (U * V) * bd[..., None])
            hit = (val < threshold) if below else (val > threshold)
            share = 0.25 * hit.mean(axis=-1)
            frac += share.sum(axis=0)
            areas += share.sum(axis=1)
    return frac, areas

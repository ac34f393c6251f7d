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
* :func:`excursion`: the share of each cell beyond a threshold under the cubic convolution
  interpolant of the cell-centre values [Keys-1981] (bilinear where a cell lacks the
  4 x 4 neighbours), per realisation.  A cell whose 5 x 5 block of centres, widened by
  :data:`CUBIC_OVERSHOOT`, lies wholly on one side is counted whole without further work
  (most cells are far from the threshold); otherwise each quarter of it is either wholly on
  one side (its 16 values, widened, are, or the Bernstein coefficients of its bicubic
  patch over the samples' square are: :func:`bernstein_hull`) or sampled at ``q x q``
  points, the interpolant evaluated separably (rows, then columns) with weights tabulated
  once.  Each shortcut only skips samples that would all agree, so the shares are those
  of sampling every crossed quarter.

Each loop has a numpy version (used without numba, ``GEO_CORROSION_NO_JIT=1``, or for the
Matérn model in :func:`filtered_weights`); tests compare the two.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from numpy.typing import NDArray

from geo_corrosion.surfaces import _kernel
from geo_corrosion.surfaces._kernel import kernel_for

try:  # numba is a dependency; the numpy versions still work without it
    import numba as _nb
except ImportError:  # pragma: no cover - exercised only on installs without numba
    _nb = None  # type: ignore[assignment]

__all__ = ["filtered_weights", "condition_lattice", "excursion", "weights_numpy",
           "bernstein_hull", "CUBIC_OVERSHOOT", "HULL_SLACK"]

#: Bound on how far the cubic convolution interpolant leaves the range of its 16 values, as
#: a share of that range (derived: the negative weights of Keys' kernel, a = -1/2, sum to at
#: most 1/8 per axis, so at most 2 x 1/8 x 9/8 < 0.3 in two dimensions).
CUBIC_OVERSHOOT = 0.3
#: Widening of the Bernstein bound of a quarter cell in :func:`excursion`, as a share of the
#: largest value of its 16 (the sums' rounding is ~1e-15 of it; this is 1e5 times that).
HULL_SLACK = 1e-10


def bernstein_hull(q: int) -> NDArray[np.float64]:
    """Return ``(2, 4, 4)``: per side, the map from 4 node values to Bernstein coefficients.

    The cubic convolution interpolant [Keys-1981] between nodes 1 and 2 of 4, restricted to
    the span of the ``q`` sample positions of a half interval (side 1: ``s`` in
    ``[1/(4q), 1/2 - 1/(4q)]``; side 0: one minus that), is a cubic in ``t`` on [0, 1]; its
    Bernstein coefficients bound it there (the convex hull property of the Bernstein
    form [Farin-2002 ch. 5, from memory]).  Rows: coefficients; columns: nodes.
    """
    u0, u1 = 0.5 / (2.0 * q), (q - 0.5) / (2.0 * q)
    # Keys' weights as cubics in s, power coefficients (s^0, s^1, s^2, s^3) per node
    keys = 0.5 * np.array([[0.0, -1.0, 2.0, -1.0], [2.0, 0.0, -5.0, 3.0],
                           [0.0, 1.0, 4.0, -3.0], [0.0, 0.0, -1.0, 1.0]])
    out = np.empty((2, 4, 4))
    for side, (a, b) in ((1, (u0, u1)), (0, (1.0 - u1, 1.0 - u0))):
        for node in range(4):
            # s = a + (b - a) t: the node's weight as a cubic in t
            c = np.polynomial.Polynomial(keys[node])(np.polynomial.Polynomial([a, b - a])).coef
            c = np.pad(np.asarray(c, float), (0, 4 - len(c)))
            # power to Bernstein (degree 3): b_k = sum_j C(k, j) / C(3, j) c_j
            for k in range(4):
                out[side, k, node] = sum(math.comb(k, j) / math.comb(3, j) * c[j]
                                         for j in range(k + 1))
    return out

if _nb is not None:
    _gamma = _kernel._gamma
    _lu_solve = _kernel._lu_solve
    _ordinary_matrix = _kernel._ordinary_matrix

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
            _ordinary_matrix(A, sel, kv, px, py, code, nug, psill, rng, shape)
            for i in range(kv):
                b[i] = _gamma(dist[p, pos[i]], code, nug, psill, rng, shape)
                b0[i] = b[i]
            b[kv] = 1.0
            b0[kv] = 1.0
            if _lu_solve(A, b, q):
                bad[p] = True
                continue
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

    @_nb.njit(cache=True, nogil=True, inline="always")
    def _keys(s: float, w: NDArray[np.float64]) -> None:  # pragma: no cover
        s2 = s * s
        s3 = s2 * s
        w[0] = 0.5 * (-s3 + 2.0 * s2 - s)
        w[1] = 0.5 * (3.0 * s3 - 5.0 * s2 + 2.0)
        w[2] = 0.5 * (-3.0 * s3 + 4.0 * s2 + s)
        w[3] = 0.5 * (s3 - s2)

    @_nb.njit(cache=True, nogil=True)
    def _excursion(zlat: NDArray[np.float64], rows: NDArray[np.intp], cols: NDArray[np.intp],
                   t: float, below: bool, q: int, hull: NDArray[np.float64],
                   frac_sum: NDArray[np.float64],
                   areas: NDArray[np.float64]) -> None:  # pragma: no cover
        R, ny, nx = zlat.shape
        m = rows.size
        blk = np.empty((4, 4))
        tb = np.empty((4, 4))
        wr = np.empty(4)
        # range of each cell's 5 x 5 block of centres (the union of its quarters' 4 x 4
        # blocks), by rows then columns; -inf/inf where a value is missing or off the lattice
        rlo = np.empty((ny, nx))
        rhi = np.empty((ny, nx))
        # interpolation weights of the q sample positions: [0] towards the lower index
        # (s = 1 - u), [1] towards the higher one (s = u); cubic (Keys) and bilinear
        wk = np.empty((2, q, 4))
        wl = np.zeros((2, q, 4))
        tmp = np.empty((4, q))
        for si in range(q):
            u = (si + 0.5) / (2.0 * q)
            for side in range(2):
                sr = u if side == 1 else 1.0 - u
                _keys(sr, wr)
                for aa in range(4):
                    wk[side, si, aa] = wr[aa]
                wl[side, si, 1] = 1.0 - sr
                wl[side, si, 2] = sr
        for r in range(R):
            for i in range(ny):
                for j in range(nx):
                    lo = np.inf
                    hi = -np.inf
                    if j < 2 or j + 2 >= nx:
                        lo = -np.inf
                        hi = np.inf
                    else:
                        for bb in range(j - 2, j + 3):
                            v = zlat[r, i, bb]
                            if not np.isfinite(v):
                                lo = -np.inf
                                hi = np.inf
                                break
                            if v < lo:
                                lo = v
                            if v > hi:
                                hi = v
                    rlo[i, j] = lo
                    rhi[i, j] = hi
            tot = 0.0
            for c in range(m):
                i = rows[c]
                j = cols[c]
                # fast path: the whole 5 x 5 block, widened by the cubic overshoot, lies on
                # one side, so every quarter does (the per-quarter test below would agree)
                if i >= 2 and i + 2 < ny:
                    lo = rlo[i - 2, j]
                    hi = rhi[i - 2, j]
                    for aa in range(i - 1, i + 3):
                        lo = min(lo, rlo[aa, j])
                        hi = max(hi, rhi[aa, j])
                    if np.isfinite(lo) and np.isfinite(hi):
                        pad = CUBIC_OVERSHOOT * (hi - lo)
                        if _side(lo - pad, t, below) and _side(hi + pad, t, below):
                            frac_sum[c] += 1.0
                            tot += 1.0
                            continue
                        if not (_side(lo - pad, t, below) or _side(hi + pad, t, below)):
                            continue
                a = zlat[r, i, j]
                f = 0.0
                for di in (-1, 1):
                    for dj in (-1, 1):
                        i0 = i if di > 0 else i - 1
                        j0 = j if dj > 0 else j - 1
                        full = i0 >= 1 and i0 + 2 < ny and j0 >= 1 and j0 + 2 < nx
                        lo = np.inf
                        hi = -np.inf
                        if full:
                            for aa in range(4):
                                for bb in range(4):
                                    v = zlat[r, i0 - 1 + aa, j0 - 1 + bb]
                                    if not np.isfinite(v):
                                        full = False
                                    blk[aa, bb] = v
                        if full:
                            for aa in range(4):
                                for bb in range(4):
                                    v = blk[aa, bb]
                                    lo = min(lo, v)
                                    hi = max(hi, v)
                            pad = CUBIC_OVERSHOOT * (hi - lo)
                            lo -= pad
                            hi += pad
                        else:  # bilinear from the square's corners (a missing one: the cell's)
                            for aa in range(4):
                                for bb in range(4):
                                    blk[aa, bb] = a
                            for aa in range(2):
                                for bb in range(2):
                                    ii = i0 + aa
                                    jj = j0 + bb
                                    if 0 <= ii < ny and 0 <= jj < nx:
                                        v = zlat[r, ii, jj]
                                        if np.isfinite(v):
                                            blk[1 + aa, 1 + bb] = v
                            for aa in range(1, 3):
                                for bb in range(1, 3):
                                    lo = min(lo, blk[aa, bb])
                                    hi = max(hi, blk[aa, bb])
                        if _side(lo, t, below) and _side(hi, t, below):
                            f += 0.25
                            continue
                        if not (_side(lo, t, below) or _side(hi, t, below)):
                            continue
                        kc = 1 if dj > 0 else 0
                        kr = 1 if di > 0 else 0
                        if full:
                            # the patch's Bernstein coefficients over the samples' square
                            # bound its values there (convex hull), so every sample agrees
                            # when they lie on one side, widened far beyond the rounding
                            for aa in range(4):
                                for cc in range(4):
                                    acc = 0.0
                                    for bb in range(4):
                                        acc += blk[aa, bb] * hull[kc, cc, bb]
                                    tb[aa, cc] = acc
                            blo = np.inf
                            bhi = -np.inf
                            for rr in range(4):
                                for cc in range(4):
                                    acc = 0.0
                                    for aa in range(4):
                                        acc += hull[kr, rr, aa] * tb[aa, cc]
                                    blo = min(blo, acc)
                                    bhi = max(bhi, acc)
                            slack = HULL_SLACK * max(abs(lo), abs(hi))
                            if _side(blo - slack, t, below) and _side(bhi + slack, t, below):
                                f += 0.25
                                continue
                            if not (_side(blo - slack, t, below)
                                    or _side(bhi + slack, t, below)):
                                continue
                        # separable: interpolate along the row for each column sample,
                        # then along the column (the same sums, in the same order)
                        for aa in range(4):
                            for sj in range(q):
                                rowv = 0.0
                                for bb in range(4):
                                    if full:
                                        rowv += wk[kc, sj, bb] * blk[aa, bb]
                                    else:
                                        rowv += wl[kc, sj, bb] * blk[aa, bb]
                                tmp[aa, sj] = rowv
                        cnt = 0
                        for si in range(q):
                            for sj in range(q):
                                val = 0.0
                                for aa in range(4):
                                    if full:
                                        val += wk[kr, si, aa] * tmp[aa, sj]
                                    else:
                                        val += wl[kr, si, aa] * tmp[aa, sj]
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
    """Share of each target cell beyond ``threshold`` under the cubic interpolant.

    Parameters
    ----------
    zlat : ndarray, shape ``(R, ny, nx)``
        Realisations at cell centres; NaN where a cell is not simulated.  A quarter cell
        whose 4 x 4 block of centres is incomplete is interpolated bilinearly from its
        square's corners (a missing corner repeats the cell's own value).
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
                   bool(below), int(q), bernstein_hull(int(q)), frac, areas)
        return frac, areas
    R, ny, nx = zlat.shape
    a = zlat[:, rows, cols]
    u = (np.arange(q) + 0.5) / (2.0 * q)
    for di in (-1, 1):
        for dj in (-1, 1):
            i0 = rows if di > 0 else rows - 1
            j0 = cols if dj > 0 else cols - 1
            sr = u if di > 0 else 1.0 - u
            sc = u if dj > 0 else 1.0 - u
            blk = np.empty((R, rows.size, 4, 4))
            inside = (i0 >= 1) & (i0 + 2 < ny) & (j0 >= 1) & (j0 + 2 < nx)
            for aa in range(4):
                for bb in range(4):
                    ii = np.clip(i0 - 1 + aa, 0, ny - 1)
                    jj = np.clip(j0 - 1 + bb, 0, nx - 1)
                    blk[:, :, aa, bb] = zlat[:, ii, jj]
            full = inside[None, :] & np.isfinite(blk).all(axis=(2, 3))
            # bilinear block where the 4 x 4 block is incomplete
            lin = np.broadcast_to(a[:, :, None, None], blk.shape).copy()
            for aa in range(2):
                for bb in range(2):
                    ii, jj = i0 + aa, j0 + bb
                    ok = (ii >= 0) & (ii < ny) & (jj >= 0) & (jj < nx)
                    v = zlat[:, np.clip(ii, 0, ny - 1), np.clip(jj, 0, nx - 1)]
                    v = np.where(ok[None, :] & np.isfinite(v), v, a)
                    lin[:, :, 1 + aa, 1 + bb] = v
            blk = np.where(full[:, :, None, None], blk, lin)
            wr_c, wc_c = _keys_np(sr), _keys_np(sc)
            wr_l, wc_l = _lin_np(sr), _lin_np(sc)
            vc = np.einsum("ia,rcab,jb->rcij", wr_c, blk, wc_c)
            vl = np.einsum("ia,rcab,jb->rcij", wr_l, blk, wc_l)
            val = np.where(full[:, :, None, None], vc, vl)
            hit = (val < threshold) if below else (val > threshold)
            share = 0.25 * hit.mean(axis=(2, 3))
            frac += share.sum(axis=0)
            areas += share.sum(axis=1)
    return frac, areas


def _keys_np(s: NDArray[np.floating[Any]]) -> NDArray[np.float64]:
    s2, s3 = s * s, s * s * s
    return np.stack([0.5 * (-s3 + 2 * s2 - s), 0.5 * (3 * s3 - 5 * s2 + 2),
                     0.5 * (-3 * s3 + 4 * s2 + s), 0.5 * (s3 - s2)], axis=1)


def _lin_np(s: NDArray[np.floating[Any]]) -> NDArray[np.float64]:
    z = np.zeros_like(s)
    return np.stack([z, 1.0 - s, s, z], axis=1)

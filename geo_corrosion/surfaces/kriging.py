"""Local ordinary kriging engine and cross-validation.

Method
------
Each prediction point is kriged from its ``n_neighbors`` nearest readings
(optionally limited to a search ``radius``), found with a k-d tree in the
isotropic space of the variogram model (see
:meth:`VariogramModel.transform_coords`).  The ordinary kriging system is
written in the variogram form used by pykrige::

    [Γ  1] [w]   [γ0]
    [1ᵀ 0] [ν] = [1 ]

with Γ_ii = 0 and γ0_i = 0 where the point coincides with reading i
(distance <= 1e-10), so kriging is exact at the readings.  The estimate is
w·z and the kriging variance σ² = w·γ0 + ν, both in the kriged space.

Speed: points are processed in chunks on a thread pool (the k-d tree, the
compiled kernel, numpy and LAPACK release the GIL).  With numba, each point's
system is built and solved in compiled code (:mod:`geo_corrosion.surfaces._kernel`;
spherical, exponential, Gaussian and stable models).  Otherwise, and for the Matérn
model, the numpy path is used: within a chunk, points with the identical
neighbour set are grouped (an order-independent 64-bit hash of the set,
verified exactly), the left-hand matrix is built once per set and up to four
points of a set share one batched ``np.linalg.solve`` call as right-hand-side
columns.  Memory depends on the chunk size, not on the number of points.

Log transform
-------------
With ``transform="log"`` (lognormal kinds: resistivity, corrosion rate) the
natural logarithm of the readings is kriged and back-transformed with the
lognormal ordinary-kriging correction [Journel-1980]::

    estimate = exp(y* + σ²/2 - ν)        (back_transform="unbiased", default)
    estimate = exp(y*)                   (back_transform="median")
    variance = estimate² · (exp(σ²) - 1)

where y*, σ² and ν are the log-space estimate, variance and Lagrange multiplier.
The variance is the lognormal variance, in value units squared.

Coincident readings (closer than 1e-9 of the data extent) are averaged first,
with a :class:`KrigingWarning`, because they make the system singular.
"""

from __future__ import annotations

import logging
import math
import warnings
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components
from scipy.spatial import cKDTree

from geo_corrosion.errors import KrigingError, KrigingWarning
from geo_corrosion.surfaces.variogram import VariogramModel, as_xyz

__all__ = ["krige", "cross_validate", "cross_validate_groups", "CrossValidation", "KrigingEngine",
           "EXACT_EPS"]

log = logging.getLogger(__name__)

#: Distance (isotropic-space plan units) below which a point is taken to coincide with a reading.
EXACT_EPS = 1e-10
_RHS_PER_SYSTEM = 4
_TRANSFORMS = (None, "log")


def _n_threads() -> int:
    from geo_corrosion.surfaces._kernel import threads  # numba loaded where used

    return max(1, min(8, threads()))


def _warn(msg: str) -> None:
    log.warning(msg)
    warnings.warn(msg, KrigingWarning, stacklevel=3)


def merge_coincident(
    x: NDArray[np.float64], y: NDArray[np.float64], z: NDArray[np.float64], *, what: str
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    """Average readings that share a location (warns with KrigingWarning)."""
    extent = max(float(np.ptp(x)), float(np.ptp(y)), 1.0)
    tree = cKDTree(np.column_stack([x, y]))
    pairs = tree.query_pairs(1e-9 * extent, output_type="ndarray")
    if pairs.shape[0] == 0:
        return x, y, z
    n = x.size
    graph = coo_matrix((np.ones(len(pairs)), (pairs[:, 0], pairs[:, 1])), shape=(n, n))
    n_comp, labels = connected_components(graph, directed=False)
    cnt = np.bincount(labels, minlength=n_comp)
    _warn(
        f"{what}: {n - n_comp} reading(s) share a location with another reading; "
        f"readings at the same location were averaged ({n_comp} locations remain)"
    )
    return (
        np.bincount(labels, weights=x) / cnt,
        np.bincount(labels, weights=y) / cnt,
        np.bincount(labels, weights=z) / cnt,
    )


def is_collinear(x: NDArray[np.float64], y: NDArray[np.float64]) -> bool:
    """Tell whether the points lie on one straight line (or are fewer than 3)."""
    if x.size < 3:
        return True
    pts = np.column_stack([x - x.mean(), y - y.mean()])
    s = np.linalg.svd(pts, compute_uv=False)
    return bool(s[0] == 0 or s[-1] / s[0] < 1e-9)


def _check_transform(transform: str | None, z: NDArray[np.float64]) -> NDArray[np.float64]:
    if transform not in _TRANSFORMS:
        raise KrigingError(f"unknown transform {transform!r}; use None or 'log'")
    if transform == "log":
        if np.any(z <= 0):
            raise KrigingError(
                f"transform='log' needs positive readings; {int(np.sum(z <= 0))} reading(s) "
                "are <= 0 (check the unit or krige without the log transform)"
            )
        return np.log(z)
    return z


class KrigingEngine:
    """Readings, a variogram model and a k-d tree, ready to krige points.

    Parameters
    ----------
    x, y : array_like
        Reading coordinates, plan length units.
    z : array_like
        Values in the kriged space (already log-transformed if wanted).
    model : VariogramModel
        Variogram in the kriged space.
    n_neighbors : int
        Readings per local system; more than the data gives all the data with a warning.
    radius : float, optional
        Search radius in the model's isotropic space, plan length units.
    use_kernel : bool
        Solve with the compiled kernel (:mod:`geo_corrosion.surfaces._kernel`) when the
        model allows it; ``False`` forces the numpy path (the reference).
    """

    def __init__(
        self,
        x: ArrayLike,
        y: ArrayLike,
        z: ArrayLike,
        model: VariogramModel,
        *,
        n_neighbors: int = 16,
        radius: float | None = None,
        what: str = "kriging",
        merge: bool = True,
        use_kernel: bool = True,
    ) -> None:
        if not isinstance(model, VariogramModel):
            raise KrigingError(f"model must be a VariogramModel, got {type(model).__name__}")
        xa, ya, za = as_xyz(x, y, z, min_n=1, what=what)
        if merge:
            xa, ya, za = merge_coincident(xa, ya, za, what=what)
        n = xa.size
        if int(n_neighbors) != n_neighbors or n_neighbors < 1:
            raise KrigingError(f"n_neighbors must be a positive integer, got {n_neighbors!r}")
        k = int(n_neighbors)
        if k > n:
            _warn(
                f"{what}: n_neighbors={k} is larger than the {n} readings; "
                f"all {n} readings are used (global kriging)"
            )
            k = n
        if radius is not None and not radius > 0:
            raise KrigingError(f"radius must be > 0 (plan length units), got {radius}")
        self.model = model
        self.k = k
        self.radius = None if radius is None else float(radius)
        self.n = n
        px, py = model.transform_coords(xa, ya)
        # padded by one dummy entry at index n (used for "no neighbour" in radius mode)
        self.px = np.append(px, 0.0)
        self.py = np.append(py, 0.0)
        self.z = np.append(za, 0.0)
        self.tree = cKDTree(np.column_stack([px, py]))
        rng = np.random.default_rng(0x5EED)
        self._hash = rng.integers(1, 2**63 - 1, size=n + 1, dtype=np.int64).astype(np.uint64)
        iu0, iu1 = np.triu_indices(k, 1)
        kk = k + 1
        self._iu0, self._iu1 = iu0, iu1
        self._up = iu0 * kk + iu1
        self._lo = iu1 * kk + iu0
        self._border = np.concatenate([np.arange(k) * kk + k, k * kk + np.arange(k)])
        self.singular_fallbacks = 0
        #: kernel code of the model (compiled path), or None for the numpy path
        # the compiled kernel (numba) is imported when an engine is made, not with this
        # module: `geo-corrosion check` and `--help` start without loading numba
        from geo_corrosion.surfaces._kernel import kernel_for

        self._kernel = kernel_for(model) if use_kernel else None

    #: with the kernel and several threads: prange inside the kernel (True) or a thread
    #: pool over chunks of the serial kernel (False, the default: faster on the project's
    #: loaded 2-core machine, benchmarks/README.md "Both cores"); the same results
    _prange: bool = False

    # ------------------------------------------------------------------ neighbours
    def query(
        self, qx: NDArray[np.float64], qy: NDArray[np.float64], k: int | None = None,
        *, workers: int = 1
    ) -> tuple[NDArray[np.float64], NDArray[np.intp]]:
        """Nearest readings of points already in isotropic space."""
        kq = self.k if k is None else k
        ub = np.inf if self.radius is None else self.radius * (1 + 1e-12)
        d, i = self.tree.query(np.column_stack([qx, qy]), k=kq, distance_upper_bound=ub,
                               workers=workers)
        if kq == 1:
            d, i = d[:, None], i[:, None]
        return d, i

    # ------------------------------------------------------------------ solve
    def solve(
        self, idx: NDArray[np.intp], dist: NDArray[np.float64], *, threads: int = 1
    ) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
        """Solve the local systems of points given their neighbour indices and distances.

        Returns the estimate, the kriging variance and the Lagrange multiplier ν,
        all in the kriged space; NaN where a point has no neighbour.  ``threads``: of the
        compiled kernel (``prange``; the same results with any count).
        """
        m = idx.shape[0]
        mean = np.full(m, np.nan)
        var = np.full(m, np.nan)
        nu = np.full(m, np.nan)
        if m == 0:
            return mean, var, nu
        n = self.n
        if self._kernel is not None:
            from geo_corrosion.surfaces._kernel import solve_points

            mean, var, nu, bad = solve_points(self.px, self.py, self.z, idx, dist, n=n,
                                              code=self._kernel, model=self.model,
                                              eps=EXACT_EPS, threads=threads)
            if not bad.any():
                return mean, var, nu
            # singular systems: the numpy path, with its pseudo-inverse fallback
            has = bad
        else:
            has = np.asarray((idx < n).any(axis=1), dtype=np.bool_)
        if not has.all():
            idx, dist = idx[has], dist[has]
        mv, vv, nv = self._solve(idx, dist)
        mean[has], var[has], nu[has] = mv, vv, nv
        return mean, var, nu

    def _solve(
        self, idx: NDArray[np.intp], dist: NDArray[np.float64]
    ) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
        m, k = idx.shape
        n, kk, R = self.n, k + 1, _RHS_PER_SYSTEM
        order = np.argsort(idx, axis=1)
        idx_s = np.take_along_axis(idx, order, axis=1)
        d_s = np.take_along_axis(dist, order, axis=1)
        # group points by identical neighbour set
        key = self._hash[idx_s].sum(axis=1)
        _, first, inv = np.unique(key, return_index=True, return_inverse=True)
        inv = inv.ravel()
        if not np.array_equal(idx_s[first][inv], idx_s):  # hash collision: exact grouping
            _, first, inv = np.unique(idx_s, axis=0, return_index=True, return_inverse=True)
            inv = inv.ravel()
        G = first.size
        counts = np.bincount(inv, minlength=G)
        perm = np.argsort(inv, kind="stable")
        starts = np.cumsum(counts) - counts
        rank = np.empty(m, dtype=np.intp)
        rank[perm] = np.arange(m) - starts[inv[perm]]
        nsys = (counts + R - 1) // R
        sys_off = np.cumsum(nsys) - nsys
        sys_id = sys_off[inv] + rank // R
        col = rank % R
        S = int(nsys.sum())
        # left-hand side, one per neighbour set
        rep = idx_s[first]
        gx, gy = self.px[rep], self.py[rep]
        dx = gx[:, self._iu0] - gx[:, self._iu1]
        dy = gy[:, self._iu0] - gy[:, self._iu1]
        gpair = self.model.gamma_positive(np.sqrt(dx * dx + dy * dy))
        del dx, dy
        A = np.zeros((G, kk, kk))
        Af = A.reshape(G, kk * kk)
        Af[:, self._up] = gpair
        Af[:, self._lo] = gpair
        Af[:, self._border] = 1.0
        miss = rep == n
        if miss.any():
            gi, ji = np.nonzero(miss)
            A[gi, ji, :] = 0.0
            A[gi, :, ji] = 0.0
            A[gi, ji, ji] = 1.0
        if S > G:
            A = A[np.repeat(np.arange(G), nsys)]
        # right-hand sides, up to R points of a set per system (rows of a flat buffer)
        bcell = np.empty((m, kk))
        if np.isfinite(d_s).all():
            bcell[:, :k] = self.model.gamma_positive(d_s)
        else:
            bcell[:, :k] = self.model.gamma_positive(np.where(np.isfinite(d_s), d_s, 0.0))
            bcell[:, :k][idx_s == n] = 0.0
        exact = d_s <= EXACT_EPS
        if exact.any():
            bcell[:, :k][exact] = 0.0
        bcell[:, k] = 1.0
        row = sys_id * R + col
        Bt = np.zeros((S * R, kk))
        Bt[:, k] = 1.0
        Bt[row] = bcell
        B = Bt.reshape(S, R, kk).transpose(0, 2, 1)
        try:
            X = np.linalg.solve(A, B)
            if not np.isfinite(X).all():
                raise np.linalg.LinAlgError("non-finite solution")
        except np.linalg.LinAlgError:
            self.singular_fallbacks += 1
            X = np.linalg.pinv(A) @ B
        W = X.transpose(0, 2, 1).reshape(S * R, kk)[row]
        mean = np.einsum("ij,ij->i", W[:, :k], self.z[idx_s])
        var = np.einsum("ij,ij->i", W, bcell)
        np.maximum(var, 0.0, out=var)
        return mean, var, W[:, k].copy()

    # ------------------------------------------------------------------ predict
    def predict(
        self,
        xq: NDArray[np.float64],
        yq: NDArray[np.float64],
        *,
        chunk_size: int = 4096,
        progress: Callable[[int, int], None] | None = None,
    ) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
        """Krige points given in plan coordinates (chunked, multi-threaded).

        Threads: :func:`geo_corrosion.surfaces._kernel.threads` (``--jobs``): chunks go to
        a thread pool of that size (the kernel, the k-d tree and LAPACK release the GIL).
        With ``_prange`` set, the chunks are taken one after another instead, each with
        its neighbour search (``cKDTree.query(workers=...)``) and the compiled kernel
        (``prange``) on every thread.  The results do not depend on the thread count.
        """
        qx, qy = self.model.transform_coords(xq, yq)
        m = qx.size
        mean = np.empty(m)
        var = np.empty(m)
        nu = np.empty(m)
        if chunk_size < 1:
            raise KrigingError(f"chunk_size must be >= 1, got {chunk_size}")
        starts = list(range(0, m, chunk_size))

        nt = _n_threads()
        inner = nt if self._kernel is not None and self._prange else 1

        def task(a: int) -> int:
            b = min(a + chunk_size, m)
            d, i = self.query(qx[a:b], qy[a:b], workers=inner)
            mean[a:b], var[a:b], nu[a:b] = self.solve(i, d, threads=inner)
            return b - a

        done = 0
        if len(starts) <= 1 or inner > 1 or nt == 1:
            for a in starts:
                done += task(a)
        else:
            with ThreadPoolExecutor(max_workers=nt) as pool:
                for cnt in pool.map(task, starts):
                    done += cnt
                    if progress is not None:
                        progress(done, m)
        if self.singular_fallbacks:
            _warn(
                f"{self.singular_fallbacks} chunk(s) held a singular kriging system and were "
                "solved with a pseudo-inverse; add a nugget or thin coincident readings"
            )
            self.singular_fallbacks = 0
        return mean, var, nu


def back_transform(
    mean: NDArray[np.float64],
    var: NDArray[np.float64],
    nu: NDArray[np.float64],
    transform: str | None,
    how: str = "unbiased",
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Back-transform kriged log values (see module notes); identity without transform."""
    if transform is None:
        return mean, var
    if how == "unbiased":
        est = np.exp(mean + 0.5 * var - nu)
    elif how == "median":
        est = np.exp(mean)
    else:
        raise KrigingError(f"back_transform must be 'unbiased' or 'median', got {how!r}")
    return est, est * est * np.expm1(var)


def krige(
    x: ArrayLike,
    y: ArrayLike,
    z: ArrayLike,
    xq: ArrayLike,
    yq: ArrayLike,
    model: VariogramModel,
    *,
    n_neighbors: int = 16,
    radius: float | None = None,
    chunk_size: int = 4096,
    transform: str | None = None,
    back_transform_how: str = "unbiased",
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Ordinary kriging of readings at query points.

    Parameters
    ----------
    x, y : array_like
        Reading coordinates, plan length units (local survey grid).
    z : array_like
        Reading values, value units.
    xq, yq : array_like
        Query coordinates, plan length units.
    model : VariogramModel
        Variogram of ``z`` (of ``log(z)`` when ``transform="log"``).
    n_neighbors : int
        Readings per local system (nearest in the model's isotropic space).
    radius : float, optional
        Search radius, plan length units in the isotropic space; points with no
        reading within it get NaN.
    chunk_size : int
        Query points per chunk (memory grows with it, not with the query size).
    transform : {None, "log"}
        Krige ``log(z)`` and back-transform (module notes).
    back_transform_how : {"unbiased", "median"}
        Back-transform of the log estimate.

    Returns
    -------
    mean, variance : ndarray
        Estimate (value units) and kriging variance (value units squared).

    Raises
    ------
    KrigingError
        On invalid input.

    Warns
    -----
    KrigingWarning
        When readings are merged, the neighbourhood is larger than the data, the
        readings are collinear, or a singular system needed a pseudo-inverse.
    """
    xa, ya, za = as_xyz(x, y, z, min_n=1, what="krige")
    zt = _check_transform(transform, za)
    xqa = np.asarray(xq, dtype=float).ravel()
    yqa = np.asarray(yq, dtype=float).ravel()
    if xqa.size != yqa.size:
        raise KrigingError(f"xq and yq differ in length: {xqa.size} vs {yqa.size}")
    if not (np.isfinite(xqa).all() and np.isfinite(yqa).all()):
        raise KrigingError("query coordinates hold NaN or infinite values")
    if xa.size >= 3 and is_collinear(xa, ya):
        _warn(
            "krige: the readings lie on one straight line; away from the line the surface "
            "is an extrapolation (mask it with a maximum distance to the nearest reading)"
        )
    eng = KrigingEngine(xa, ya, zt, model, n_neighbors=n_neighbors, radius=radius, what="krige")
    mean, var, nu = eng.predict(xqa, yqa, chunk_size=chunk_size)
    return back_transform(mean, var, nu, transform, back_transform_how)


@dataclass(frozen=True)
class CrossValidation:
    """Cross-validation statistics.

    Attributes
    ----------
    method : str
        ``"loo"`` or ``"kfold"``.
    mean_error : float
        Mean of (estimate - reading), value units.
    rmse : float
        Root mean square error, value units.
    msse : float
        Mean standardized squared error (error² / kriging variance, in the kriged
        space); close to 1 when the kriging variance is honest.
    residuals : ndarray
        Estimate - reading at each tested reading, value units (NaN if untested).
    variance : ndarray
        Kriging variance at each tested reading, kriged-space units squared.
    n_tested : int
        Readings tested.
    msse_before_calibration : float, optional
        MSSE of the model before :func:`geo_corrosion.stages.map_surfaces.calibrate_variance`.
    """

    method: str
    mean_error: float
    rmse: float
    msse: float
    residuals: NDArray[np.float64]
    variance: NDArray[np.float64]
    n_tested: int
    msse_before_calibration: float | None = None

    def to_dict(self, *, value_unit: str = "") -> dict[str, Any]:
        """JSON-ready summary (without the residual array)."""
        out = {
            "method": self.method,
            "mean_error": self.mean_error,
            "rmse": self.rmse,
            "msse": self.msse,
            "value_unit": value_unit,
            "n_tested": self.n_tested,
        }
        if self.msse_before_calibration is not None:
            out["msse_before_calibration"] = self.msse_before_calibration
        return out


def _loo(
    eng: KrigingEngine, targets: NDArray[np.intp]
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    k = eng.k
    kq = min(k + 1, eng.n)
    d, i = eng.query(eng.px[targets], eng.py[targets], k=kq)
    is_self = i == targets[:, None]
    pos = np.where(is_self.any(axis=1), is_self.argmax(axis=1), kq - 1)
    keep = np.ones_like(i, dtype=bool)
    keep[np.arange(i.shape[0]), pos] = False
    i = i[keep].reshape(i.shape[0], kq - 1)
    d = d[keep].reshape(d.shape[0], kq - 1)
    return eng.solve(i, d)


def cross_validate(
    x: ArrayLike,
    y: ArrayLike,
    z: ArrayLike,
    model: VariogramModel,
    *,
    n_neighbors: int = 16,
    method: str = "loo",
    k: int = 5,
    transform: str | None = None,
    max_points: int | None = None,
    seed: int = 0,
    groups: ArrayLike | None = None,
) -> CrossValidation:
    """Cross-validate a variogram model with the local kriging engine.

    Leave-one-out krige each reading from its ``n_neighbors`` nearest other
    readings (the variogram is not refitted); k-fold krige each fold from the
    other folds.

    Parameters
    ----------
    x, y : array_like
        Reading coordinates, plan length units.
    z : array_like
        Reading values, value units.
    model : VariogramModel
        Variogram in the kriged space.
    n_neighbors : int
        Readings per local system.
    method : {"loo", "kfold"}
        Leave-one-out or k-fold.
    k : int
        Number of folds for ``"kfold"``.
    transform : {None, "log"}
        As in :func:`krige`; errors are reported in value units, the MSSE in log space.
    max_points : int, optional
        Test only a random subset of this many readings (leave-one-out only).
    seed : int
        Seed of the folds and the subset.
    groups : array_like, optional
        A label per reading (continuity region): each group is cross-validated from its own
        readings only (:func:`cross_validate_groups`).

    Returns
    -------
    CrossValidation

    Raises
    ------
    KrigingError
        With fewer than 3 readings or an unknown method.
    """
    if groups is not None:
        return cross_validate_groups(x, y, z, model, groups, n_neighbors=n_neighbors,
                                     method=method, k=k, transform=transform,
                                     max_points=max_points, seed=seed)
    xa, ya, za = as_xyz(x, y, z, min_n=3, what="cross-validation")
    xa, ya, za = merge_coincident(xa, ya, za, what="cross-validation")
    zt = _check_transform(transform, za)
    n = xa.size
    if n < 3:
        raise KrigingError("cross-validation needs at least 3 distinct reading locations")
    rng = np.random.default_rng(seed)
    est_t = np.full(n, np.nan)
    var_t = np.full(n, np.nan)
    nu_t = np.full(n, np.nan)
    nb = min(int(n_neighbors), n - 1)
    if method == "loo":
        eng = KrigingEngine(xa, ya, zt, model, n_neighbors=nb, merge=False, what="cv")
        targets = np.arange(n)
        if max_points is not None and max_points < n:
            targets = np.sort(rng.choice(n, size=int(max_points), replace=False))
        for a in range(0, targets.size, 8192):
            t = targets[a : a + 8192]
            est_t[t], var_t[t], nu_t[t] = _loo(eng, t)
    elif method == "kfold":
        if not 2 <= k <= n:
            raise KrigingError(f"k-fold cross-validation needs 2 <= k <= {n}, got k={k}")
        fold = rng.permutation(n) % k
        for f in range(k):
            test = fold == f
            train = ~test
            nbf = min(nb, int(train.sum()))
            eng = KrigingEngine(
                xa[train], ya[train], zt[train], model, n_neighbors=nbf, merge=False, what="cv"
            )
            est_t[test], var_t[test], nu_t[test] = eng.predict(xa[test], ya[test])
    else:
        raise KrigingError(f"cross-validation method must be 'loo' or 'kfold', got {method!r}")
    tested = np.isfinite(est_t)
    err_t = est_t - zt
    if transform is None:
        resid = err_t
    else:
        est, _ = back_transform(est_t, var_t, nu_t, transform)
        resid = est - za
    r = resid[tested]
    with np.errstate(divide="ignore", invalid="ignore"):
        sse = err_t[tested] ** 2 / var_t[tested]
    sse = sse[np.isfinite(sse)]
    return CrossValidation(
        method=method,
        mean_error=float(np.mean(r)) if r.size else math.nan,
        rmse=float(np.sqrt(np.mean(r * r))) if r.size else math.nan,
        msse=float(np.mean(sse)) if sse.size else math.nan,
        residuals=resid,
        variance=var_t,
        n_tested=int(tested.sum()),
    )


def cross_validate_groups(
    x: ArrayLike,
    y: ArrayLike,
    z: ArrayLike,
    model: VariogramModel,
    groups: ArrayLike,
    **kw: Any,
) -> CrossValidation:
    """Cross-validate each group (continuity region) from its own readings; pool the results.

    A group of fewer than 3 readings is not tested (NaN residuals).  The pooled mean error
    and RMSE are over every tested reading; the MSSE is the mean of the groups' MSSEs
    weighted by the readings they tested.  Residuals and variances stay in reading order
    (the readings must not hold coincident locations: merge repeats first).
    """
    xa, ya, za = as_xyz(x, y, z, min_n=3, what="cross-validation")
    ga = np.asarray(groups).ravel()
    if ga.size != xa.size:
        raise KrigingError(f"groups has {ga.size} labels for {xa.size} readings")
    n = xa.size
    resid = np.full(n, np.nan)
    var = np.full(n, np.nan)
    sse_sum, sse_n, method = 0.0, 0, str(kw.get("method", "loo"))
    max_points = kw.pop("max_points", None)
    for g in dict.fromkeys(ga.tolist()):
        idx = np.flatnonzero(ga == g)
        if idx.size < 3:
            continue
        mp = None if max_points is None else max(3, int(max_points * idx.size / n))
        cv = cross_validate(xa[idx], ya[idx], za[idx], model, max_points=mp, **kw)
        if cv.residuals.size != idx.size:
            raise KrigingError("cross-validation by group needs distinct reading locations; "
                               "merge repeated readings first")
        resid[idx] = cv.residuals
        var[idx] = cv.variance
        if math.isfinite(cv.msse):
            sse_sum += cv.msse * cv.n_tested
            sse_n += cv.n_tested
    r = resid[np.isfinite(resid)]
    return CrossValidation(
        method=method,
        mean_error=float(np.mean(r)) if r.size else math.nan,
        rmse=float(np.sqrt(np.mean(r * r))) if r.size else math.nan,
        msse=sse_sum / sse_n if sse_n else math.nan,
        residuals=resid,
        variance=var,
        n_tested=int(r.size),
    )

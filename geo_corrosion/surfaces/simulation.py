"""Conditional simulation of a kriged field on its grid (conditioning by kriging).

Method
------
The readings are taken as ``z_i = S(x_i) + e_i``: a Gaussian field ``S`` with the
nugget-free part of the variogram (partial sill and structure) plus measurement error
``e_i`` with the nugget as variance.  Realisations of ``S`` given the readings are drawn by
conditioning by kriging
[Journel-Huijbregts-1978 ch. VII, from memory; Chiles-Delfiner-2012 §7.3.1, from memory]::

    S_c(x) = S_u(x) + sum_i w_i(x) (z_i - (S_u(x_i) + e_i))

with ``S_u`` an unconditional realisation of the nugget-free field, ``e_i`` simulated
noise with the nugget variance, and ``w_i(x)`` the local ordinary kriging weights of ``x``
from its ``n_neighbors`` nearest readings (the neighbourhood of
:class:`~geo_corrosion.surfaces.kriging.KrigingEngine`).  The weights depend on the
geometry only, so they are solved once (compiled, :mod:`geo_corrosion.surfaces._simkernel`)
and applied to every realisation.  They are the weights that estimate ``S`` (the right-hand
side carries the nugget also at zero distance); away from the readings they are the
engine's own weights.  Over the realisations ``S_c`` then has the kriging estimate as its
mean and, as its variance, the ordinary kriging variance minus the nugget: the nugget is
uncertainty of a reading, not of the field between them.

Unconditional field
    ``S_u`` is drawn on a lattice of the grid's cell centres, widened to hold every reading,
    by circulant embedding and the FFT [Wood-Chan-1994; Dietrich-Newsam-1997]: the
    covariance on the lags of a torus of ``M`` cells per axis, its eigenvalues by one FFT,
    and each complex FFT of scaled white noise gives two independent realisations (its real
    and imaginary parts).  ``M`` is at least the lattice plus the distance where the
    covariance falls below 1e-3 of the partial sill, so wrapped lags are uncorrelated to that
    tolerance; while the embedding has negative eigenvalues the padding is doubled, up to
    four times the lattice; what then remains negative is set to zero and its share recorded
    (:attr:`ConditionalSimulator.embedding_clipped`).  Anisotropy is honoured: lags are taken
    into the model's isotropic space.  ``S_u`` at a reading, off the lattice, is the simple
    kriging estimate from the 4 x 4 lattice nodes around it plus an independent Gaussian
    residual with the simple kriging variance (one 16 x 16 system for all readings, the
    lattice being regular); that residuals of readings closer than a cell are independent is
    the approximation of this step (common practice, no source).

Why not sequential Gaussian simulation
    Sequential simulation [Deutsch-Journel-1998 §V.2.3, from memory] solves a kriging system
    per cell and per realisation (its random path changes the neighbourhoods), about
    ``realisations`` times the cost of a kriging pass; conditioning by kriging costs one
    kriging pass for the weights and, per realisation, one FFT and a weighted sum of 16
    residuals per cell, which meets the target of 100 realisations in 10 kriging passes.

Areas
    The area beyond a threshold in a realisation is measured under the cubic convolution
    interpolant of its cell-centre values [Keys-1981], sampled at ``q x q`` points in each
    quarter cell that the threshold may cross (a cell whose 5 x 5 block of values lies
    wholly on one side, allowing for the interpolant's overshoot, is counted whole at once;
    most cells are far from the threshold)
    (:func:`~geo_corrosion.surfaces._simkernel.excursion`), not by counting whole cells: a
    boundary through a cell counts the part beyond it.  The
    remaining discretisation error is of third order in the cell size for a smooth field;
    with bilinear interpolation it was second order and, on a noiseless smooth deck, larger
    than the interval.

Neighbourhood
    The weights use the surface's own neighbourhood: its ``n_neighbors``, its kind's search
    radius where that binds, and, for a surface kriged per continuity region, only the
    readings of the cell's own region (``reading_regions``, ``cell_regions``).  The
    unconditional field stays one field over the deck (a simplification: the regions are
    conditioned independently, so each region's mean and variance are its own kriging's).

Lognormal kinds are simulated in log space (the caller gives ``log z`` and the log-space
model) and back-transformed per realisation; a threshold is compared in the same space.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Iterator
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass

import numpy as np
import scipy.fft
from numpy.typing import ArrayLike, NDArray
from scipy import ndimage

from geo_corrosion.errors import KrigingError, KrigingWarning
from geo_corrosion.surfaces.density import binding_radius
from geo_corrosion.surfaces.grid import GridSpec
from geo_corrosion.surfaces.kriging import KrigingEngine, merge_coincident
from geo_corrosion.surfaces.variogram import VariogramModel, as_xyz

__all__ = ["CirculantEmbedding", "ConditionalSimulator", "ExcursionAreas",
           "decorrelation_distance"]

#: Covariance share (of the partial sill) taken as uncorrelated for the embedding's padding.
COV_TOL = 1e-3
#: Largest embedding, in cells, before padding stops growing (memory of one complex FFT).
MAX_EMBEDDING = 16_000_000


def decorrelation_distance(model: VariogramModel) -> float:
    """Return the lag (isotropic plan units) beyond which ``C(h) <= COV_TOL * psill``."""
    h = np.linspace(0.0, 20.0 * model.range, 20001)[1:]
    rho = 1.0 - model.structure(h)
    beyond = np.flatnonzero(rho <= COV_TOL)
    return float(h[beyond[0]]) if beyond.size else float(h[-1])


@dataclass(frozen=True)
class ExcursionAreas:
    """Areas beyond a threshold over the realisations.

    Attributes
    ----------
    areas : ndarray
        Per realisation, the area beyond, plan units squared (sub-cell, cubic convolution).
    probability : ndarray
        ``(ny, nx)`` on the grid: the mean share of each cell beyond (NaN off the mask).
    """

    areas: NDArray[np.float64]
    probability: NDArray[np.float64]


def _covariance(model: VariogramModel, dx: ArrayLike, dy: ArrayLike) -> NDArray[np.float64]:
    """Nugget-free covariance of plan lags (dx east, dy north)."""
    tx, ty = model.transform_coords(dx, dy)
    h = np.sqrt(np.asarray(tx) ** 2 + np.asarray(ty) ** 2)
    return np.asarray(model.psill * (1.0 - model.structure(h)), dtype=float)


class CirculantEmbedding:
    """Unconditional nugget-free Gaussian fields on a regular lattice, by the FFT.

    Parameters
    ----------
    model : VariogramModel
        Its partial sill and structure are simulated (the nugget is not).
    shape : (int, int)
        Lattice rows (north to south) and columns (west to east).
    cell : float
        Lattice step, plan units.

    Attributes
    ----------
    embedding_shape : (int, int)
        The torus the covariance was embedded in.
    clipped : float
        Share of the spectrum that was negative and set to zero (0 for an exact embedding).
    """

    def __init__(self, model: VariogramModel, shape: tuple[int, int], cell: float) -> None:
        self.model, self.shape, self.cell = model, (int(shape[0]), int(shape[1])), float(cell)
        Ly, Lx = self.shape
        pad = int(math.ceil(decorrelation_distance(model) / cell))
        while True:
            My = scipy.fft.next_fast_len(Ly + pad)
            Mx = scipy.fft.next_fast_len(Lx + pad)
            ly = np.arange(My)
            ly = np.where(ly <= My // 2, ly, ly - My)
            lx = np.arange(Mx)
            lx = np.where(lx <= Mx // 2, lx, lx - Mx)
            c = _covariance(model, lx[None, :] * cell, -ly[:, None] * cell)
            lam = np.real(scipy.fft.fft2(c))
            neg = lam < -1e-9 * max(float(lam.max()), 1e-300)
            bigger = (Ly + 2 * pad) * (Lx + 2 * pad)
            if (not neg.any() or pad >= 4 * max(Ly, Lx) or bigger > MAX_EMBEDDING
                    or model.psill == 0.0):
                break
            pad = max(2 * pad, 1)
        pos = np.clip(lam, 0.0, None)
        total = float(pos.sum())
        self.clipped = float(-lam[lam < 0].sum() / total) if total > 0 else 0.0
        self.embedding_shape = (My, Mx)
        self._sqrt_lam = np.sqrt(pos / (My * Mx))

    def draw(self, count: int, rng: np.random.Generator) -> NDArray[np.float64]:
        """Draw ``count`` realisations, ``(count, Ly * Lx)`` (row-major lattice)."""
        Ly, Lx = self.shape
        out = np.empty((count, Ly * Lx))
        done = 0
        My, Mx = self.embedding_shape
        x = np.empty((My, Mx), dtype=complex)
        while done < count:
            e = rng.standard_normal((2, My, Mx))
            # sqrt(lam) (e0 + i e1) written part by part (the same values, no temporaries);
            # the 2-D FFT as its two passes, the second only over the lattice's rows: the
            # same 1-D transforms as fft2 gives for the cells kept, to the bit
            np.multiply(self._sqrt_lam, e[0], out=x.real)
            np.multiply(self._sqrt_lam, e[1], out=x.imag)
            f = scipy.fft.fft(x, axis=0)[:Ly]
            f = scipy.fft.fft(f, axis=1, overwrite_x=True)[:, :Lx]
            out[done] = f.real.ravel()
            done += 1
            if done < count:
                out[done] = f.imag.ravel()
                done += 1
        return out


class ConditionalSimulator:
    """Readings, a variogram and a grid, ready to draw conditional realisations.

    Parameters
    ----------
    x, y : array_like
        Reading coordinates, plan length units (the grid's).
    z : array_like
        Readings in the kriged space (log values for lognormal kinds).
    model : VariogramModel
        Variogram in the kriged space; its nugget is taken as measurement error.
    grid : GridSpec
    mask : ndarray of bool
        ``(ny, nx)``: the cells to simulate (the kriged cells); a ring of two cells around
        them is simulated too, for the sub-cell areas.
    n_neighbors, radius
        The kriging neighbourhood, as in :class:`KrigingEngine`; ``radius`` (the kind's
        search radius) is applied, as in the kriging pass, only where it leaves out one of
        some cell's nearest readings (:func:`~geo_corrosion.surfaces.density.binding_radius`).
    reading_regions, cell_regions
        For a surface kriged per continuity region
        (:func:`~geo_corrosion.surfaces.regions.krige_regions`): the region of each reading
        and the ``(ny, nx)`` region of each cell (-1 where none).  A cell is then conditioned
        on its own region's readings only (a cell of the ring, on the nearest drawn cell's
        region).  The unconditional field stays one field over the deck: the regions are
        conditioned independently, so only the correlation of the simulation errors across a
        joint, which no result uses but the sub-cell areas of cells at the joint, is not
        that of independent regions.
    use_kernel : bool
        Use the compiled loops (False: numpy, the reference).
    """

    def __init__(self, x: ArrayLike, y: ArrayLike, z: ArrayLike, model: VariogramModel,
                 grid: GridSpec, mask: NDArray[np.bool_], *, n_neighbors: int = 16,
                 radius: float | None = None, use_kernel: bool = True,
                 chunk_size: int = 65536, reading_regions: ArrayLike | None = None,
                 cell_regions: NDArray[np.intp] | None = None) -> None:
        xa, ya, za = as_xyz(x, y, z, min_n=1, what="simulation")
        mask = np.asarray(mask, dtype=bool)
        if mask.shape != grid.shape:
            raise KrigingError(f"mask shape {mask.shape} does not match grid shape {grid.shape}")
        if (reading_regions is None) != (cell_regions is None):
            raise KrigingError("reading_regions and cell_regions go together")
        labels = (np.zeros(xa.size, dtype=np.intp) if reading_regions is None
                  else np.asarray(reading_regions, dtype=np.intp).ravel())
        if labels.size != xa.size:
            raise KrigingError(f"{labels.size} reading regions for {xa.size} readings")
        self.model, self.grid, self.mask = model, grid, mask
        self.use_kernel = use_kernel
        # per region, its readings (coincident ones averaged) and its own kriging engine
        engines: list[tuple[int, int, KrigingEngine]] = []  # (region, first index, engine)
        parts: list[tuple[NDArray[np.float64], ...]] = []
        first = 0
        with warnings.catch_warnings():
            # the kriging pass of the same readings has already reported these
            warnings.simplefilter("ignore", KrigingWarning)
            cgx, cgy = grid.row_centers(slice(None))
            for reg in np.unique(labels):
                sel = labels == reg
                rx, ry, rz = merge_coincident(xa[sel], ya[sel], za[sel], what="simulation")
                # without the radius first: whether it binds is seen from the cells' own
                # neighbours (below), without a search of its own
                eng = KrigingEngine(rx, ry, rz, model, n_neighbors=n_neighbors,
                                    radius=None, what="simulation", merge=False)
                engines.append((int(reg), first, eng))
                parts.append((rx, ry, rz))
                first += rx.size
        n = first
        k = max(e.k for _, _, e in engines)
        #: the readings as the engines hold them (coincident ones averaged, grouped by
        #: region), plan coordinates
        self.rx, self.ry, self.rz = (np.concatenate([p[i] for p in parts]) for i in range(3))
        # lattice: the grid's cell centres, widened to hold every reading (+2 cells)
        cell = grid.cell
        top = grid.y0 + grid.ny * cell
        pad_w = max(2, int(math.ceil((grid.x0 - self.rx.min()) / cell)) + 2)
        pad_e = max(2, int(math.ceil((self.rx.max() - (grid.x0 + grid.nx * cell)) / cell)) + 2)
        pad_n = max(2, int(math.ceil((self.ry.max() - top) / cell)) + 2)
        pad_s = max(2, int(math.ceil((grid.y0 - self.ry.min()) / cell)) + 2)
        self.offset = (pad_n, pad_w)
        self.shape = (grid.ny + pad_n + pad_s, grid.nx + pad_w + pad_e)
        self.lx0 = grid.x0 - pad_w * cell
        self.ltop = top + pad_n * cell
        Ly, Lx = self.shape
        # cells to condition: the mask and a ring of two cells (the cubic interpolant's)
        ring = ndimage.binary_dilation(mask, structure=np.ones((5, 5), bool))
        lat = np.zeros(self.shape, dtype=bool)
        lat[pad_n:pad_n + grid.ny, pad_w:pad_w + grid.nx] = ring
        rows, cols = np.nonzero(lat)
        xs = self.lx0 + (cols + 0.5) * cell
        ys = self.ltop - (rows + 0.5) * cell
        m = rows.size
        self.idx = np.full((m, k), n, dtype=np.intp)
        self.weights = np.zeros((m, k))
        self.variance = np.full(m, np.nan)
        qx, qy = model.transform_coords(xs, ys)
        if cell_regions is None:
            owner = np.zeros(m, dtype=np.intp)
        else:  # a ring cell takes the region of the nearest drawn cell
            creg = np.full(self.shape, -1, dtype=np.intp)
            creg[pad_n:pad_n + grid.ny, pad_w:pad_w + grid.nx] = cell_regions
            near = ndimage.distance_transform_edt(creg < 0, return_distances=False,
                                                  return_indices=True)
            owner = creg[near[0], near[1]][rows, cols] if (creg >= 0).any() else \
                np.full(m, -1, dtype=np.intp)
        # the compiled kernels (numba) load with the first simulator, not with this module
        from geo_corrosion.surfaces._simkernel import filtered_weights

        if radius is not None:  # the drawn cells, for where the radius binds
            drawn = np.zeros(self.shape, dtype=bool)
            drawn[pad_n:pad_n + grid.ny, pad_w:pad_w + grid.nx] = (
                mask if cell_regions is None else mask & (cell_regions >= 0))
            drawn_here = drawn[rows, cols]
        for (reg, start, eng), (rx, ry, rz) in zip(engines, parts, strict=True):
            todo = np.flatnonzero(owner == reg)
            found = [eng.query(qx[todo[a:a + chunk_size]], qy[todo[a:a + chunk_size]])
                     for a in range(0, todo.size, chunk_size)]
            if radius is not None:
                # as the kriging pass: the radius where it leaves out one of some drawn
                # cell's nearest readings (binding_radius); the k-th distances of the
                # drawn cells of this region are those of the search without the radius.
                # Near a tie (the lattice's centres are computed apart from the grid's)
                # binding_radius itself decides
                far = max((float(d[drawn_here[todo[a:a + chunk_size]], -1].max(initial=0.0))
                           for a, (d, _) in zip(range(0, todo.size, chunk_size), found,
                                                strict=True)), default=0.0)
                if abs(far - radius) <= 1e-9 * radius:
                    mine = (mask if cell_regions is None else mask & (cell_regions == reg))
                    flat = mine.ravel()
                    rad = binding_radius(rx, ry, cgx[flat], cgy[flat], n_neighbors, radius,
                                         model.transform_coords)
                else:
                    rad = radius if far > radius else None
                if rad is not None:  # the search within the radius, as the kriging pass
                    with warnings.catch_warnings():  # reported by the kriging pass
                        warnings.simplefilter("ignore", KrigingWarning)
                        eng = KrigingEngine(rx, ry, rz, model, n_neighbors=n_neighbors,
                                            radius=rad, what="simulation", merge=False)
                    found = []
            for a in range(0, todo.size, chunk_size):
                sl = todo[a:a + chunk_size]
                d, i = found[a // chunk_size] if found else eng.query(qx[sl], qy[sl])
                w, v = filtered_weights(eng.px, eng.py, i, d, n=eng.n, model=model,
                                        use_kernel=use_kernel)
                kk = i.shape[1]
                self.idx[sl, :kk] = np.where(i < eng.n, i + start, n)
                self.weights[sl, :kk], self.variance[sl] = w, v
        has = np.isfinite(self.variance)
        self.cells = (rows * Lx + cols)[has]
        self.idx, self.weights, self.variance = self.idx[has], self.weights[has], \
            self.variance[has]
        self.cell_rows, self.cell_cols = rows[has], cols[has]
        self.simulated = np.zeros(Ly * Lx, dtype=bool)
        self.simulated[self.cells] = True
        # the target cells (the mask) within the conditioned cells, lattice indices
        gr, gc = np.nonzero(mask)
        self.target_rows = gr + pad_n
        self.target_cols = gc + pad_w
        # unconditional values at the readings: simple kriging from 4 x 4 lattice nodes
        fx = (self.rx - self.lx0) / cell - 0.5
        fy = (self.ltop - self.ry) / cell - 0.5
        ix, iy = np.floor(fx).astype(np.intp), np.floor(fy).astype(np.intp)
        ux, uy = fx - ix, fy - iy
        off = np.arange(-1, 3)
        gx, gy = np.meshgrid(off, off, indexing="xy")
        ox, oy = gx.ravel(), gy.ravel()
        self.node = (iy[:, None] + oy[None, :]) * Lx + (ix[:, None] + ox[None, :])
        A = self._cov((ox[:, None] - ox[None, :]) * cell, -(oy[:, None] - oy[None, :]) * cell)
        B = self._cov((ox[None, :] - ux[:, None]) * cell, -(oy[None, :] - uy[:, None]) * cell)
        w_eig, v_eig = np.linalg.eigh(A)
        keep = w_eig > 1e-10 * max(float(w_eig.max()), 1e-300)
        A_pinv = (v_eig[:, keep] / w_eig[keep]) @ v_eig[:, keep].T
        self.node_w = B @ A_pinv
        self.node_sd = np.sqrt(np.maximum(model.psill - np.einsum("ij,ij->i", self.node_w, B),
                                          0.0))
        self.embedding = CirculantEmbedding(model, self.shape, cell)

    def _cov(self, dx: ArrayLike, dy: ArrayLike) -> NDArray[np.float64]:
        return _covariance(self.model, dx, dy)

    # ------------------------------------------------------------------ drawing
    @property
    def embedding_clipped(self) -> float:
        """Share of the embedding's spectrum that was negative and set to zero."""
        return self.embedding.clipped

    def unconditional(self, count: int, rng: np.random.Generator) -> NDArray[np.float64]:
        """Draw ``count`` unconditional nugget-free realisations on the lattice, ``(count, L)``."""
        return self.embedding.draw(count, rng)

    def draw(self, count: int, rng: np.random.Generator) -> NDArray[np.float64]:
        """Draw ``count`` conditional realisations on the lattice, ``(count, Ly, Lx)``.

        Cells not simulated (beyond the mask's ring, or with no reading in the
        neighbourhood) are NaN.  Values are in the kriged space.
        """
        from geo_corrosion.surfaces._simkernel import condition_lattice

        zlat = self.unconditional(count, rng)
        n = self.rz.size
        su = np.einsum("ij,rij->ri", self.node_w, zlat[:, self.node])
        su += self.node_sd[None, :] * rng.standard_normal((count, n))
        noise = math.sqrt(self.model.nugget) * rng.standard_normal((count, n))
        res = np.zeros((n + 1, count))
        res[:n] = (self.rz[None, :] - su - noise).T
        condition_lattice(zlat, self.cells, self.idx, self.weights, res,
                          use_kernel=self.use_kernel)
        zlat[:, ~self.simulated] = np.nan
        return zlat.reshape(count, *self.shape)

    def on_grid(self, zlat: NDArray[np.float64]) -> NDArray[np.float64]:
        """Return the realisations on the grid, ``(count, ny, nx)``, NaN off the mask."""
        pn, pw = self.offset
        out = zlat[:, pn:pn + self.grid.ny, pw:pw + self.grid.nx].copy()
        out[:, ~self.mask] = np.nan
        return out

    def realisations(self, count: int, *, seed: int = 0, batch: int = 8
                     ) -> Iterator[NDArray[np.float64]]:
        """Yield batches of conditional realisations on the lattice (see :meth:`draw`)."""
        if count < 1:
            raise KrigingError(f"the number of realisations must be >= 1, got {count}")
        rng = np.random.default_rng(seed)
        done = 0
        while done < count:
            b = min(batch, count - done)
            yield self.draw(b, rng)
            done += b

    def excursion_areas(self, thresholds: list[tuple[float, str]], count: int, *,
                        seed: int = 0, batch: int = 8, q: int = 8) -> list[ExcursionAreas]:
        """Area beyond each threshold per realisation, and the probability maps.

        Parameters
        ----------
        thresholds : list of (float, {"below", "above"})
            In the kriged space.
        count : int
            Realisations.
        q : int
            Sub-samples per side of a quarter cell that a threshold crosses.
        """
        for _, d in thresholds:
            if d not in ("below", "above"):
                raise KrigingError(f"direction must be 'below' or 'above', got {d!r}")
        cell_area = self.grid.cell ** 2
        fracs = [np.zeros(self.target_rows.size) for _ in thresholds]
        areas: list[list[NDArray[np.float64]]] = [[] for _ in thresholds]
        sizes = [min(batch, count - a) for a in range(0, count, batch)]
        # one seed per batch, so the result does not depend on the threads
        rngs = [np.random.default_rng(s) for s in np.random.SeedSequence(seed).spawn(len(sizes))]

        from geo_corrosion.surfaces._simkernel import excursion

        def one(b: int) -> list[tuple[NDArray[np.float64], NDArray[np.float64]]]:
            zlat = self.draw(sizes[b], rngs[b])
            return [excursion(zlat, self.target_rows, self.target_cols, t, below=d == "below",
                              q=q, use_kernel=self.use_kernel) for t, d in thresholds]

        from geo_corrosion.surfaces._kernel import threads

        with ThreadPoolExecutor(max_workers=max(1, min(2, threads()))) as pool:
            for res in pool.map(one, range(len(sizes))):
                for j, (f, a) in enumerate(res):
                    fracs[j] += f
                    areas[j].append(a * cell_area)
        out = []
        gr, gc = self.target_rows - self.offset[0], self.target_cols - self.offset[1]
        for j in range(len(thresholds)):
            p = np.full(self.grid.shape, np.nan)
            p[gr, gc] = fracs[j] / count
            out.append(ExcursionAreas(np.concatenate(areas[j]), p))
        return out

"""Circulant embedding with FFT on regular grids (exact in distribution).

The grid's covariance (a block-Toeplitz matrix) is embedded in a periodic
(block-circulant) covariance on an ``Nx × Ny`` torus whose eigenvalues are
the 2D FFT of its first row (Dietrich & Newsam 1997; Wood & Chan 1994).
When they are all non-negative, ``X = C^{1/2} ξ`` computed as
``irfft2(sqrt(λ) · rfft2(ξ))`` on real white noise ``ξ`` and cropped to the
grid has exactly the grid's covariance.  ``rfft2(ξ)`` is drawn directly in
the frequency domain with its exact Gaussian law (Hermitian symmetry where
needed), which saves the forward transform; the inverse is pruned to the
grid's rows.  The torus starts at the smallest
fast FFT size ≥ 2n per axis and grows (×1.5 per step) until no eigenvalue is
negative beyond round-off; if the size limit is reached first, negative
eigenvalues are set to zero and their share is reported.
"""
from __future__ import annotations

import math

import numpy as np
from scipy import fft as sfft

from ..averaging import grid_cell_covariance
from ..errors import InputError
from .base import FieldGenerator, register

__all__ = ["CirculantGenerator"]


@register("fft", "circulant")
class CirculantGenerator(FieldGenerator):
    """Exact stationary Gaussian field on a :class:`RegularGrid`.

    Options
    -------
    average_cells : bool
        Embed the covariance of ``dx × dy`` cell averages instead of point
        values (default False).
    max_embedding : int
        Largest torus (cells, ``Nx × Ny``) tried before clipping
        (default 2**24, i.e. 128 MB per realisation in work arrays).
    workers : int
        Threads for scipy.fft (default 1).

    Notes
    -----
    ``info`` reports ``embedding`` (Nx, Ny), ``growth_steps``,
    ``min_eigenvalue`` (relative to the largest), ``clipped_fraction``
    (sum of clipped negative eigenvalues / sum of |λ|; 0 means exact) and
    ``variance_after_clipping`` (the point variance actually produced).
    Memory is O(torus cells) per realisation; realisations are generated in
    blocks of ``block`` (64).
    """

    method = "fft"
    block = 16

    def __init__(self, model, *, grid=None, points=None, average_cells=False,
                 max_embedding=2 ** 24, workers=1):
        if grid is None:
            raise InputError("method 'fft' needs a regular grid (grid=RegularGrid(...)); "
                             "for scattered points use 'spectral', 'cholesky' or 'kl'")
        super().__init__(model, grid=grid, points=points)
        self.workers = int(workers)
        self.average_cells = bool(average_cells)
        g = grid
        nx, ny = g.nx, g.ny
        Nx, Ny = _start(nx), _start(ny)
        steps = 0
        while True:
            lam = self._eigenvalues(Nx, Ny)
            lmax = float(lam.max())
            lmin = float(lam.min())
            # eigenvalues below -1e-10 λmax are genuine, not FFT round-off
            if lmin >= -1e-10 * lmax:
                break
            nNx = _grow(Nx, nx)
            nNy = _grow(Ny, ny)
            if nNx * nNy > int(max_embedding):
                break
            Nx, Ny = nNx, nNy
            steps += 1
        # rfft2 holds half the spectrum: weight the columns by multiplicity
        w = _multiplicity(Ny)[None, :]
        neg = float(-(w * np.minimum(lam, 0.0)).sum())
        clipped = neg / float((w * np.abs(lam)).sum()) if lmin < -1e-10 * lmax else 0.0
        lam = np.clip(lam, 0.0, None)
        self._shape = (Nx, Ny)
        self._sqrt_lam = np.sqrt(lam)
        # point variance after clipping: mean of λ over the torus (Parseval)
        var = float((w * lam).sum() / (Nx * Ny))
        self.info.update(embedding=(Nx, Ny), growth_steps=steps, min_eigenvalue=lmin / lmax,
                         clipped_fraction=clipped, variance_after_clipping=var,
                         averaging="grid cells" if self.average_cells else "none (point values)")

    def _eigenvalues(self, Nx, Ny):
        g = self.grid
        ax = np.arange(Nx)
        ay = np.arange(Ny)
        lx = np.where(ax <= Nx // 2, ax, ax - Nx) * g.dx
        ly = np.where(ay <= Ny // 2, ay, ay - Ny) * g.dy
        if self.average_cells:
            c = grid_cell_covariance(self.model, g.dx, g.dy, lx[:, None], ly[None, :])
        else:
            c = self.model.correlation(lx[:, None], ly[None, :])
        # lags at Nx/2 or Ny/2 are ambiguous (±); averaging c with its
        # reflection c[-a, -b] keeps the torus covariance symmetric, so the
        # eigenvalues are real; the grid's own lags are < N/2 and unchanged
        c = 0.5 * (c + np.roll(c[::-1, ::-1], (1, 1), axis=(0, 1)))
        return sfft.rfft2(c, workers=self.workers).real

    def _sample_block(self, rngs, seed, ks, stream):
        Nx, Ny = self._shape
        h = Ny // 2 + 1
        # Draw rfft2(ξ) of real white noise ξ directly in the frequency domain
        # (same Gaussian law, one FFT saved): independent real and imaginary
        # parts of variance M/2, Hermitian pairs in the columns ky = 0 and
        # ky = Ny/2, real entries of variance M at self-conjugate frequencies.
        buf = np.empty((len(rngs), Nx, h, 2))
        for i, r in enumerate(rngs):
            r.standard_normal(out=buf[i])
        return self._from_noise(buf)

    @property
    def noise_size(self):
        Nx, Ny = self._shape
        return Nx * (Ny // 2 + 1) * 2

    def _from_noise_rows(self, z, ks):
        Nx, Ny = self._shape
        # _from_noise works in place on its buffer: give it a copy
        return self._from_noise(np.array(z, dtype=float).reshape(z.shape[0], Nx, Ny // 2 + 1, 2))

    def _from_noise(self, buf):
        """Fields from white noise ``buf`` of shape (b, Nx, Ny//2 + 1, 2) (linear map)."""
        Nx, Ny = self._shape
        nx, ny = self.grid.nx, self.grid.ny
        h = Ny // 2 + 1
        spec = buf.view(np.complex128)[..., 0]
        M = Nx * Ny
        # scalings of the real and imaginary parts as real products: the values of the
        # complex products by (x + 0j), at half their cost
        buf *= math.sqrt(M / 2.0)
        cols = [0] + ([h - 1] if Ny % 2 == 0 and Ny > 1 else [])
        kx = np.arange(1, (Nx + 1) // 2)
        selfc = [0] + ([Nx // 2] if Nx % 2 == 0 and Nx > 1 else [])
        for c in cols:
            spec[:, Nx - kx, c] = np.conj(spec[:, kx, c])
            spec[:, selfc, c] = spec[:, selfc, c].real * math.sqrt(2.0)
        lam2 = self.__dict__.get("_sqrt_lam2")
        if lam2 is None:  # sqrt(λ) for both parts, so that the product runs as one flat loop
            lam2 = self._sqrt_lam2 = np.repeat(self._sqrt_lam[..., None], 2, axis=-1)
        buf *= lam2
        # inverse transform, pruned: only rows i < nx are needed after the
        # transform along x, so the last transform runs on nx of Nx rows
        tmp = sfft.ifft(spec, axis=1, workers=self.workers, overwrite_x=True)[:, :nx, :]
        field = sfft.irfft(tmp, n=Ny, axis=2, workers=self.workers, overwrite_x=True)
        return field[:, :, :ny].reshape(buf.shape[0], nx * ny)


def _multiplicity(Ny):
    m = np.full(Ny // 2 + 1, 2.0)
    m[0] = 1.0
    if Ny % 2 == 0:
        m[-1] = 1.0
    return m


def _start(n):
    return 1 if n == 1 else sfft.next_fast_len(2 * n, real=True)


def _grow(N, n):
    return 1 if n == 1 else sfft.next_fast_len(int(np.ceil(1.5 * N)), real=True)

"""Truncated Karhunen–Loève (eigen) expansion of the covariance matrix."""
from __future__ import annotations

import numpy as np

from ..errors import InputError
from ._dense import MAX_POINTS, check_size, dense_covariance, positioned_matmul, positioned_product
from .base import FieldGenerator, register

__all__ = ["KLGenerator"]


@register("kl")
class KLGenerator(FieldGenerator):
    """Gaussian field from the leading eigenpairs of the covariance matrix.

    Options
    -------
    energy : float
        Keep the fewest modes whose eigenvalues sum to at least this
        fraction of the trace (default 0.99).
    n_modes : int, optional
        Keep exactly this many modes instead (overrides ``energy``).
    average_cells, cell_quadrature, max_points
        As for the Cholesky generator.

    Notes
    -----
    ``info`` reports ``n_modes``, ``energy_fraction`` (kept eigenvalue sum /
    trace), ``truncation_error`` = 1 − energy_fraction (the mean fraction of
    point variance missed), ``max_variance_deficit`` (largest pointwise
    variance missed) and ``clipped_negative`` (sum of negative eigenvalues,
    round-off, set to zero, relative to the trace).  Realisation k uses the
    first ``n_modes`` normals of its stream, so adding modes leaves the
    leading coefficients unchanged (common random numbers across truncations).
    """

    method = "kl"

    def __init__(self, model, *, grid=None, points=None, energy=0.99, n_modes=None,
                 average_cells=False, cell_quadrature=None, max_points=MAX_POINTS):
        super().__init__(model, grid=grid, points=points)
        check_size(self.method, self.n_points, int(max_points))
        energy = float(energy)
        if not (0.0 < energy <= 1.0):
            raise InputError(f"energy must be in (0, 1] (fraction of variance kept), got {energy}")
        C = dense_covariance(self, average_cells, cell_quadrature)
        from scipy import linalg  # here, not at import: only dense generators need it

        lam, vec = linalg.eigh(C, check_finite=False)
        lam, vec = lam[::-1], vec[:, ::-1]
        trace = float(np.trace(C))
        neg = float(max(-lam[lam < 0].sum(), 0.0))
        lam = np.clip(lam, 0.0, None)
        if n_modes is not None:
            m = int(n_modes)
            if not (1 <= m <= self.n_points):
                raise InputError(f"n_modes must be between 1 and {self.n_points}, got {n_modes}")
        else:
            cum = np.cumsum(lam) / trace
            m = int(min(np.searchsorted(cum, energy * (1 - 1e-12)) + 1, self.n_points))
        self._phi = vec[:, :m] * np.sqrt(lam[:m])
        kept = np.einsum("ij,ij->i", self._phi, self._phi)
        frac = float(lam[:m].sum() / trace)
        self.info.update(n_modes=m, energy_fraction=frac, truncation_error=1.0 - frac,
                         max_variance_deficit=float(np.max(np.diag(C) - kept)),
                         clipped_negative=neg / trace)

    def _sample_block(self, rngs, seed, ks, stream):
        return positioned_matmul(rngs, ks, self._phi.shape[1], self._phi.T, self.block)

    @property
    def noise_size(self):
        return self._phi.shape[1]

    def _from_noise_rows(self, z, ks):
        return positioned_product(z, ks, self._phi.T, self.block)

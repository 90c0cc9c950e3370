"""Cholesky decomposition of the covariance matrix (exact, dense)."""
from __future__ import annotations

import numpy as np

from ..errors import InputError
from ._dense import MAX_POINTS, check_size, dense_covariance, positioned_matmul, positioned_product
from .base import FieldGenerator, register

__all__ = ["CholeskyGenerator"]

_JITTERS = (0.0, 1e-12, 1e-10, 1e-8, 1e-6, 1e-4)


@register("cholesky")
class CholeskyGenerator(FieldGenerator):
    """Exact Gaussian field on any point set by C = L Lᵀ.

    Options
    -------
    average_cells : bool
        Use the covariance of ``dx × dy`` cell averages (grid only).
    cell_quadrature : (array (n, q, 2), array (n, q)), optional
        Cell averages over cells of any shape (one cell per point).
    max_points : int
        Refuse larger point sets (default 4000).

    Notes
    -----
    Smooth models (squared exponential) on dense points give numerically
    singular matrices; the smallest jitter ε in (0, 1e-12, ..., 1e-4) for which
    C + εI factorises is used and reported as ``info['jitter']`` (the point
    variance becomes 1 + ε).  Realisation k is ``L z_k`` with ``z_k`` the first
    ``n_points`` normals of its stream.
    """

    method = "cholesky"

    def __init__(self, model, *, grid=None, points=None, average_cells=False,
                 cell_quadrature=None, max_points=MAX_POINTS):
        super().__init__(model, grid=grid, points=points)
        check_size(self.method, self.n_points, int(max_points))
        C = dense_covariance(self, average_cells, cell_quadrature)
        scale = float(np.mean(np.diag(C)))
        from scipy import linalg  # here, not at import: only dense generators need it

        for eps in _JITTERS:
            try:
                L = linalg.cholesky(C + eps * scale * np.eye(self.n_points), lower=True,
                                    check_finite=False)
                break
            except linalg.LinAlgError:
                continue
        else:
            raise InputError("the covariance matrix is not positive definite even with jitter "
                             "1e-4: use method 'kl', which clips negative eigenvalues")
        self._L = L
        self.info.update(jitter=eps * scale)

    def _sample_block(self, rngs, seed, ks, stream):
        return positioned_matmul(rngs, ks, self.n_points, self._L.T, self.block)

    @property
    def noise_size(self):
        return self.n_points

    def _from_noise_rows(self, z, ks):
        return positioned_product(z, ks, self._L.T, self.block)

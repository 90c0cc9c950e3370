"""Covariance matrices for the dense (matrix-decomposition) generators."""
from __future__ import annotations

import numpy as np

from ..averaging import cell_average_covariance, grid_cell_covariance
from ..errors import InputError

#: default largest number of points of a dense generator (a 4000² matrix
#: takes 128 MB, and its factorisation as much again)
MAX_POINTS = 4000


def check_size(method, n_points, max_points):
    if n_points > max_points:
        raise InputError(
            f"{n_points} points is too many for the dense {method!r} generator "
            f"(limit max_points={max_points}, memory grows as n²): use method 'fft' "
            "on a regular grid or 'spectral' for large or unstructured point sets")


def dense_covariance(gen, average_cells, cell_quadrature):
    """Point or cell-average covariance matrix of ``gen.points``."""
    model = gen.model
    if average_cells and cell_quadrature is not None:
        raise InputError("give average_cells=True (grid cells) or cell_quadrature=(points, "
                         "weights) (cells of any shape), not both")
    if cell_quadrature is not None:
        try:
            qp, qw = cell_quadrature
        except (TypeError, ValueError):
            raise InputError("cell_quadrature must be a pair (quad_points (n, q, 2), "
                             "quad_weights (n, q))") from None
        if np.asarray(qp).shape[0] != gen.n_points:
            raise InputError(f"cell_quadrature has {np.asarray(qp).shape[0]} cells but "
                             f"there are {gen.n_points} points")
        gen.info["averaging"] = "cell quadrature"
        return cell_average_covariance(model, qp, qw)
    if average_cells:
        g = gen.grid
        if g is None:
            raise InputError("average_cells=True needs grid=; for other cells pass "
                             "cell_quadrature=(quad_points, quad_weights)")
        # stationary on the grid: integrate once per distinct offset
        di = np.arange(-(g.nx - 1), g.nx)
        dj = np.arange(-(g.ny - 1), g.ny)
        cov = grid_cell_covariance(model, g.dx, g.dy, di[:, None] * g.dx, dj[None, :] * g.dy)
        ii, jj = np.meshgrid(np.arange(g.nx), np.arange(g.ny), indexing="ij")
        ii, jj = ii.ravel(), jj.ravel()
        gen.info["averaging"] = "grid cells"
        return cov[ii[:, None] - ii[None, :] + g.nx - 1, jj[:, None] - jj[None, :] + g.ny - 1]
    gen.info["averaging"] = "none (point values)"
    return model.covariance_matrix(gen.points)


def positioned_matmul(rngs, ks, n_modes, factor_t, block):
    """``z @ factor_t`` with realisation ``k``'s normals always in row ``k % block``.

    BLAS kernels sum in an order that depends on the row's place in the tile,
    not only on the matrix shape; putting realisation ``k`` in the same row of
    a block of fixed shape every time makes it bit-identical whatever batch
    it is drawn in (measured: 1e-16 differences otherwise on OpenBLAS).
    """
    out = np.empty((len(ks), factor_t.shape[1]))
    z = np.zeros((block, n_modes))
    pending = {}                      # row -> position in ks
    def flush():
        res = z @ factor_t
        for row, i in pending.items():
            out[i] = res[row]
        pending.clear()
        z[:] = 0.0
    for i, (k, r) in enumerate(zip(ks, rngs)):
        row = int(k) % block
        if row in pending:
            flush()
        r.standard_normal(out=z[row])
        pending[row] = i
    if pending:
        flush()
    return out


def positioned_product(z, ks, factor_t, block):
    """``z @ factor_t`` for given rows ``z``, row ``i`` placed at ``ks[i] % block`` (see above)."""
    out = np.empty((z.shape[0], factor_t.shape[1]))
    buf = np.zeros((block, z.shape[1]))
    pending = {}

    def flush():
        res = buf @ factor_t
        for row, i in pending.items():
            out[i] = res[row]
        pending.clear()
        buf[:] = 0.0
    for i, k in enumerate(ks):
        row = int(k) % block
        if row in pending:
            flush()
        buf[row] = z[i]
        pending[row] = i
    if pending:
        flush()
    return out

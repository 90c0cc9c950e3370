"""Random fields of the simulator conditioned on site data (simple kriging).

Each property with data (``RandomProblem.site_data``: points, standard-normal
values, error variances) has, per zone of its material, its own
unconditional field (stream ``(i, z)``); the data lying in that zone
condition it by the residual-kriging construction of
:mod:`slipfield.fields.conditioning`:

    Z_c = Z_u + W [z_data − Z_u(data) − e],  W = C_td (C_dd + diag σ²_e)⁻¹,

applied after the cross-correlation mixing (so the conditioned property is
exactly conditioned; data of one property do not inform another, i.e. no
co-kriging).  The field lives at cell centres, so each datum is assigned to
the centre of the cell that holds it (a shift of at most half a cell);
several data in one cell are merged: the mean of the zero-error ones if any,
else their precision-weighted mean with variance 1/Σ(1/σ²_e).

Only the cells asked for are conditioned (the slice bases' cells in the
simulator, the whole grid for exports), with weights cached per cell set.
Noise of realisation k: ``realisation_rng(seed, k, i, z, NOISE_STREAM)``.
"""
from __future__ import annotations

import numpy as np

from slipfield.fields.conditioning import DataCovariance, add_kriged_residuals

__all__ = ["ZoneConditioner", "conditioner"]


class ZoneConditioner:
    """Conditioning of one property's field in one zone.

    Parameters
    ----------
    model : fields CorrelationModel
    grid : fields.RegularGrid
    points : ndarray (n, 2), m
    z : ndarray (n,), standard-normal values
    nugget : ndarray (n,), error variances (standard-normal units)
    """

    def __init__(self, model, grid, points, z, nugget):
        ix = np.clip(np.floor((points[:, 0] - grid.x0) / grid.dx).astype(int), 0, grid.nx - 1)
        iy = np.clip(np.floor((points[:, 1] - grid.y0) / grid.dy).astype(int), 0, grid.ny - 1)
        flat = ix * grid.ny + iy
        cells = np.unique(flat)
        zd, nug = np.empty(cells.size), np.empty(cells.size)
        for k, c in enumerate(cells):
            sel = flat == c
            exact = sel & (nugget == 0)
            if np.any(exact):
                zd[k], nug[k] = z[exact].mean(), 0.0
            else:
                w = 1.0 / nugget[sel]
                zd[k], nug[k] = float((w * z[sel]).sum() / w.sum()), float(1.0 / w.sum())
        self.cells, self.z, self.nugget = cells, zd, nug
        self.centres = grid.points()
        self.cov = DataCovariance(model, self.centres[cells], nug)
        self._weights = {}

    def weights(self, cells):
        """Kriging weights of the cells ``cells`` (flat indices), cached."""
        key = (cells.size, hash(np.ascontiguousarray(cells).tobytes()))
        if key not in self._weights:
            self._weights[key] = self.cov.weights(self.centres[cells])
        return self._weights[key]

    def apply(self, values, at_data, cells, seed, indices, stream):
        """Conditioned values at ``cells`` from unconditional ones.

        Parameters
        ----------
        values : ndarray (s, len(cells))
            Unconditional standard normals at ``cells``.
        at_data : ndarray (s, n_data_cells)
            The same realisations at :attr:`cells` (the data cells).
        """
        # a given noise (subset simulation, slope.simulate.rare) carries the measurement errors too
        err = (seed.measurement_errors(self, indices, stream) if hasattr(seed, "measurement_errors")
               else self.cov.noise(seed, indices, stream))
        resid = self.z[None, :] - at_data - err
        return add_kriged_residuals(np.array(values, dtype=float), resid, self.weights(cells))


def conditioner(problem, i, z):
    """The :class:`ZoneConditioner` of property i in zone z, or None without data there."""
    data = getattr(problem, "site_data", None) or {}
    p = problem.properties[i]
    if p.key not in data or p.single:
        return None
    cache = problem.__dict__.setdefault("_conditioners", {})
    if (i, z) not in cache:
        pts, zv, nug = data[p.key]
        inside = np.asarray(problem.section.zone_at(pts[:, 0], pts[:, 1])) == z
        cache[(i, z)] = (ZoneConditioner(p.correlation_model(), problem.grid, pts[inside], zv[inside],
                                         nug[inside]) if np.any(inside) else None)
    return cache[(i, z)]


#: Gauss–Hermite (probabilists') nodes for the conditional mean in physical units
_GH_X, _GH_W = np.polynomial.hermite_e.hermegauss(24)
_GH_W = _GH_W / _GH_W.sum()


def conditional_mean_fs(problem):
    """Least FS over the bank with strengths at their conditional mean where site data exist.

    The physical conditional mean E[F⁻¹(Φ(Z)) | data] of each cell, Z ~
    N(kriged mean, kriging variance), is integrated by Gauss–Hermite
    quadrature (24 nodes); it is mapped on the slice bases as the simulator
    maps a realisation. Zones without data keep the material's values.

    Returns
    -------
    dict
        ``fs`` (least FS over the valid, converged, admissible surfaces, or
        None), ``fs_material_values`` (the same bank with the material's
        values, for comparison), ``bank_index`` of the least.
    """
    from slipfield.slope.methods import factor_of_safety
    from slipfield.slope.search.evaluate import _TOLERABLE
    from slipfield.slope.strength import base_strength

    from .engine import _det_value, stencil, strength_overrides

    st = stencil(problem)
    vals = {p.key: np.full((1,) + st.shape, np.nan) for p in problem.properties}
    centres = problem.grid.points()
    for z, (bases, cells, W) in st.zones.items():
        for i, p in enumerate(problem.properties):
            if z not in problem.zones_of(i):
                continue
            cd = conditioner(problem, i, z)
            if cd is None:
                continue
            Wk = cd.weights(cells)
            m = Wk @ cd.z
            C = cd.cov.model.covariance_matrix(centres[cells], cd.cov.data_points)
            sd = np.sqrt(np.clip(1.0 - np.einsum("td,td->t", Wk, C), 0.0, 1.0))
            phys = np.asarray(p.marginal.from_standard_normal(m[None, :] + sd[None, :] * _GH_X[:, None]), float)
            mean = _GH_W @ phys
            vals[p.key].reshape(1, -1)[0, bases] = W @ mean
    tolerated = _TOLERABLE["negative-normal"] | _TOLERABLE["thrust-outside"]
    out = {}
    for label, v in (("fs", vals), ("fs_material_values", None)):
        ov = (strength_overrides(problem, v, lambda prop: _det_value(problem, prop)) if v is not None else None)
        c, tphi = base_strength(st.bank, problem.section.materials, problem.hypothesis, overrides=ov)
        res = factor_of_safety(st.terms, c, tphi, problem.method, interslice=problem.interslice)
        fs = np.asarray(res.fs, float).reshape(-1)
        ok = np.asarray(res.converged).reshape(-1) & ((np.asarray(res.flags).reshape(-1) & ~tolerated) == 0) \
            & np.isfinite(fs)
        k = int(np.argmin(np.where(ok, fs, np.inf))) if ok.any() else None
        out[label] = None if k is None else float(fs[k])
        if label == "fs":
            out["bank_index"] = None if k is None else int(st.rows[k])
    return out

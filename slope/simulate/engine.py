"""Realisations of the random fields on slice bases, and FS per realisation.

Noise of realisation k, property i, zone z comes only from
``realisation_rng(seed, k, i, z)`` (through the field generator), so results
do not depend on batch size or on the number of workers.
"""
from __future__ import annotations

import numpy as np

from fields.seeding import realisation_rng

from ..methods import factor_of_safety
from ..search import _TOLERABLE
from ..strength import base_strength
from .problem import AVERAGING

__all__ = ["standard_normals", "base_values", "batch_fs", "bilinear"]


def bilinear(grid, values, x, y):
    """Bilinear interpolation of cell-centre values.

    Parameters
    ----------
    grid : RegularGrid
    values : ndarray, shape (s, nx, ny)
    x, y : ndarray, m, any common shape P

    Returns
    -------
    ndarray, shape (s, *P)
    """
    fx = np.clip((x - grid.x0) / grid.dx - 0.5, 0.0, grid.nx - 1.0)
    fy = np.clip((y - grid.y0) / grid.dy - 0.5, 0.0, grid.ny - 1.0)
    i0 = np.minimum(np.floor(fx).astype(int), max(grid.nx - 2, 0))
    j0 = np.minimum(np.floor(fy).astype(int), max(grid.ny - 2, 0))
    i1 = np.minimum(i0 + 1, grid.nx - 1)
    j1 = np.minimum(j0 + 1, grid.ny - 1)
    tx, ty = fx - i0, fy - j0
    v = values
    return ((1 - tx) * (1 - ty) * v[:, i0, j0] + tx * (1 - ty) * v[:, i1, j0]
            + (1 - tx) * ty * v[:, i0, j1] + tx * ty * v[:, i1, j1])


def standard_normals(problem, seed, indices, i, z):
    """Standard-normal field of property i in zone z: (s, nx, ny), or (s, 1, 1) for θ = inf."""
    p = problem.properties[i]
    if p.single:
        return np.array([realisation_rng(seed, int(k), i, z).standard_normal() for k in indices])[:, None, None]
    return problem.generator(i).sample_grid(seed, list(indices), stream=(i, z))


def _correlated(problem, seed, indices, z, members):
    """Standard normals of the properties ``members`` in zone z, mixed by the Nataf Cholesky factor."""
    raw = {i: standard_normals(problem, seed, indices, i, z) for i in members}
    L = problem._chol
    out = {}
    for i in members:
        acc = None
        for j in members:
            if j <= i and L[i, j] != 0.0:
                term = L[i, j] * raw[j]
                acc = term if acc is None else acc + term
        out[i] = acc
    return out


def base_values(problem, seed, indices):
    """Random values at the slice bases of every surface.

    Returns
    -------
    dict key -> ndarray (s, m, n) in physical units (NaN on bases outside
    the property's material); for ``multiplier`` properties the factor.
    """
    bank = problem.bank
    npb = AVERAGING[problem.averaging]
    xb, yb = bank.base_points_section_frame(npb)  # (m, n, q)
    zone = np.asarray(bank.zone)
    s = len(indices)
    out = {p.key: np.full((s,) + zone.shape, np.nan) for p in problem.properties}
    grid = problem.grid
    for z in range(len(problem.section.zones)):
        members = [i for i, p in enumerate(problem.properties) if z in problem.zones_of(i)]
        mask = zone == z
        if not members or not mask.any():
            continue
        zs = _correlated(problem, seed, indices, z, members)
        for i in members:
            p = problem.properties[i]
            if p.single:
                vals = np.broadcast_to(p.marginal.from_standard_normal(zs[i][:, 0, 0])[:, None], (s, int(mask.sum())))
            else:
                phys = np.asarray(p.marginal.from_standard_normal(zs[i]), dtype=float)
                # physical values are averaged: the base mobilises the mean strength
                vals = bilinear(grid, phys, xb[mask], yb[mask]).mean(axis=-1)
            out[p.key][:, mask] = vals
    return out


def _det_value(problem, prop):
    """Deterministic per-base value of a property (for multiplier fields)."""
    bank = problem.bank
    mats = problem.section.materials
    if prop in ("su", "su_ratio"):
        c, _ = base_strength(bank, mats, "undrained")
        return c, "su"
    c, tphi = base_strength(bank, mats, "drained")
    if prop == "c":
        return c, "c"
    return np.degrees(np.arctan(tphi)), "phi"


def batch_fs(problem, seed, indices):
    """FS of every surface for realisations ``indices``.

    Returns
    -------
    fs, converged, admissible : ndarray (s, m)
    """
    vals = base_values(problem, seed, indices)
    overrides = {}
    for p in problem.properties:
        v = vals[p.key]
        key = p.prop
        if p.multiplier:
            det, key = _det_value(problem, p.prop)
            v = v * det[None]
        if key in overrides:
            overrides[key] = np.where(np.isnan(v), overrides[key], v)
        else:
            overrides[key] = v
    c, tphi = base_strength(problem.bank, problem.section.materials, problem.hypothesis, overrides=overrides)
    # rejected bank rows carry NaN geometry; the kernel reports them as invalid, whatever their strength
    ok = np.asarray(problem.bank.valid, bool)[None, :, None]
    c, tphi = np.where(ok, c, 0.0), np.where(ok, tphi, 0.0)
    res = factor_of_safety(problem.terms, c, tphi, problem.method, interslice=problem.interslice)
    # the flags the deterministic search tolerates by default (search.evaluate_surfaces) are
    # tolerated here too, or the critical surface of the search could never be critical here
    tolerated = _TOLERABLE["negative-normal"] | _TOLERABLE["thrust-outside"]
    adm = (np.asarray(res.flags) & ~tolerated) == 0
    return np.asarray(res.fs), np.asarray(res.converged), adm

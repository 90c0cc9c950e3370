"""Realisations of the random fields on slice bases, and FS per realisation.

Noise of realisation k, property i, zone z comes only from
``field_noise_rng(seed, k, i, z)`` (through the field generator, on the
zone's field box, :mod:`.field_box`; ``realisation_rng(seed, k, i, z)`` for
a single random variable), so results do not depend on batch size or on the
number of workers.

The mapping from grid cells to slice bases is linear (bilinear
interpolation at ``AVERAGING[problem.averaging]`` points per base, then
their mean), so it is assembled once per problem as a sparse matrix over the
cells the bases touch (:class:`BaseStencil`); a realisation then costs one
gather, the marginal transform of those cells only, and one sparse product.
Only bank-valid surfaces are evaluated; rejected rows are reported as
invalid, as the kernel would.
"""
from __future__ import annotations

import hashlib
import pickle

import numpy as np
from scipy import sparse

from slipfield.fields.properties import coregionalise, field_stream
from slipfield.fields.seeding import realisation_rng

from ..bank import scale_unit_weights, unit_weight_parts
from ..methods import factor_of_safety, prepare_bank
from ..search.evaluate import _TOLERABLE
from ..strength import base_strength
from .conditioning import conditioner
from .field_box import field_box
from .fused import strength_map
from .problem import AVERAGING

__all__ = ["standard_normals", "base_values", "batch_fs", "bilinear", "bilinear_weights",
           "BaseStencil", "stencil", "prepare", "zone_cell_values"]


def bilinear_weights(grid, x, y):
    """Cells and weights of bilinear interpolation of cell-centre values.

    Parameters
    ----------
    grid : RegularGrid
    x, y : ndarray, m, any common shape P

    Returns
    -------
    cells : ndarray of int, shape (*P, 4)
        Flat cell indices ``i * ny + j`` (C order over the grid).
    weights : ndarray, shape (*P, 4)
        Non-negative, summing to 1 (values outside the grid are clamped to
        the edge cells).
    """
    fx = np.clip((x - grid.x0) / grid.dx - 0.5, 0.0, grid.nx - 1.0)
    fy = np.clip((y - grid.y0) / grid.dy - 0.5, 0.0, grid.ny - 1.0)
    i0 = np.minimum(np.floor(fx).astype(int), max(grid.nx - 2, 0))
    j0 = np.minimum(np.floor(fy).astype(int), max(grid.ny - 2, 0))
    i1 = np.minimum(i0 + 1, grid.nx - 1)
    j1 = np.minimum(j0 + 1, grid.ny - 1)
    tx, ty = fx - i0, fy - j0
    ny = grid.ny
    cells = np.stack([i0 * ny + j0, i1 * ny + j0, i0 * ny + j1, i1 * ny + j1], axis=-1)
    weights = np.stack([(1 - tx) * (1 - ty), tx * (1 - ty), (1 - tx) * ty, tx * ty], axis=-1)
    return cells, weights


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
    cells, w = bilinear_weights(grid, x, y)
    v = np.asarray(values).reshape(np.shape(values)[0], -1)
    return (v[:, cells] * w).sum(axis=-1)


class BaseStencil:
    """Linear map from grid cells to the slice bases of the valid surfaces.

    Attributes
    ----------
    rows : ndarray of int (mv,)
        Bank rows of the valid surfaces.
    bank, terms : SliceBank, BankTerms
        The valid surfaces only (what the kernel evaluates).
    zones : dict zone index -> (bases, cells, matrix)
        ``bases``: flat indices into the ``(mv, n)`` bases of that zone;
        ``cells``: the grid cells they touch; ``matrix``: CSR
        ``(len(bases), len(cells))`` whose rows are the mean bilinear weights
        of the base's points (each row sums to 1).
    deterministic : dict
        Per-base material values for multiplier properties, filled on use.
    weight_parts : dict
        :func:`slope.bank.unit_weight_parts` of the valid surfaces for the
        zones with a random unit weight (empty without one).
    """

    def __init__(self, problem):
        full = problem.bank
        self.rows = np.flatnonzero(np.asarray(full.valid, bool))
        self.bank = full.subset(self.rows)
        self.terms = prepare_bank(self.bank)
        npb = AVERAGING[problem.averaging]
        xb, yb = self.bank.base_points_section_frame(npb)  # (mv, n, q)
        zone = np.asarray(self.bank.zone).ravel()
        grid = problem.grid
        self.zones = {}
        for z in range(len(problem.section.zones)):
            bases = np.flatnonzero(zone == z)
            if bases.size == 0:
                continue
            cells, w = bilinear_weights(grid, xb.reshape(-1, npb)[bases], yb.reshape(-1, npb)[bases])
            r = np.repeat(np.arange(bases.size), npb * 4)
            m = sparse.csr_matrix((w.ravel() / npb, (r, cells.ravel())),
                                  shape=(bases.size, grid.n_points))  # duplicates summed
            used = np.flatnonzero(np.asarray(m.sum(axis=0)).ravel() > 0.0)
            self.zones[z] = (bases, used, m[:, used].tocsr())
        self.deterministic = {}
        uw = sorted({z for i, p in enumerate(problem.properties) if p.prop == "unit_weight"
                     for z in problem.zones_of(i)})
        self.weight_parts = (unit_weight_parts(problem.section, [problem.surfaces[r] for r in self.rows], uw,
                                               problem.n_slices) if uw and self.rows.size else {})

    @property
    def shape(self):
        return (self.rows.size, self.bank.n_slices)


_SHARED = []  # (geometry key, full bank, stencil) of the last two geometries built


def _geometry_key(problem):
    """Everything a :class:`BaseStencil` and the full bank depend on, hashed by content."""
    uw = sorted({z for i, p in enumerate(problem.properties) if p.prop == "unit_weight"
                 for z in problem.zones_of(i)})
    blob = pickle.dumps((problem.section, problem.surfaces, problem.n_slices, problem.cell,
                         problem.averaging, uw), protocol=pickle.HIGHEST_PROTOCOL)
    return hashlib.sha256(blob).hexdigest()


def stencil(problem) -> BaseStencil:
    """The problem's :class:`BaseStencil`, built on first use and kept.

    Problems of one geometry (a run's spatial and single-variable problems:
    same section, surfaces, slices, cell and averaging) share one stencil
    and full bank instead of building them again; the key hashes their
    content, so a changed section or bank never reuses a stale one.
    """
    st = getattr(problem, "_stencil", None)
    if st is None:
        key = _geometry_key(problem)
        for k, bank, shared in _SHARED:
            if k == key:
                st = shared
                if problem._bank is None:
                    problem._bank = bank
                break
        else:
            st = BaseStencil(problem)
            _SHARED.insert(0, (key, problem._bank, st))
            del _SHARED[2:]
        problem._stencil = st
    return st


def prepare(problem):
    """Build what every realisation reuses (stencil, strength map, field generators), once."""
    st = stencil(problem)
    strength_map(problem, st, lambda prop: _det_value(problem, prop))
    for z in st.zones:
        for i in zone_members(problem, z):
            if not problem.properties[i].single:
                problem.generator(i, z)
    return st


def standard_normals(problem, seed, indices, i, z):
    """Standard-normal field of property i in zone z on the zone's field box: (s, bx, by)
    (:func:`.field_box.field_box`), or (s, 1, 1) for θ = inf.

    ``seed`` is the run seed, or a given white noise (an object with
    ``standard_normals(problem, indices, i, z)``, :mod:`slope.simulate.rare`)
    whose rows ``indices`` are used instead of the seeded streams.
    """
    if hasattr(seed, "standard_normals"):
        return seed.standard_normals(problem, indices, i, z)
    p = problem.properties[i]
    if p.single:
        return np.array([realisation_rng(seed, int(k), *field_stream(i, z)).standard_normal() for k in indices])[:, None, None]
    return problem.generator(i, z).sample_grid(seed, list(indices), stream=field_stream(i, z))


def _mix(problem, raw, members):
    """Standard normals of ``members`` mixed by the Nataf Cholesky factor (cross-correlation),
    by the same rule as :func:`fields.properties.coregionalise`."""
    return coregionalise(problem._chol, {i: raw[i] for i in members})


def _correlated(problem, seed, indices, z, members, outside="edge"):
    """Standard normals of the properties ``members`` in zone z on the whole grid ``(s, nx, ny)``,
    correlated (and conditioned on the site data of the zone); ``(s, 1, 1)`` for θ = inf.

    The fields exist on the zone's field box; ``outside`` says what the cells
    beyond it hold (:meth:`.field_box.FieldBox.embed`: the nearest box cell,
    or NaN).
    """
    box = field_box(problem, z)
    zs = _mix(problem, {i: standard_normals(problem, seed, indices, i, z) for i in members}, members)
    for i in members:
        if zs[i].shape[1:] == (1, 1):
            continue
        cd = conditioner(problem, i, z)
        if cd is not None:
            flat = zs[i].reshape(len(indices), -1)
            zs[i] = cd.apply(flat, flat[:, box.local(cd.cells)], box.cells(), seed, indices, (i, z))
        zs[i] = box.embed(zs[i], outside)
    return zs


def zone_members(problem, z):
    """Indices of the properties whose material fills zone z."""
    return [i for i in range(len(problem.properties)) if z in problem.zones_of(i)]


def zone_cell_values(problem, seed, indices, z, cells, members):
    """Physical values of the properties ``members`` in zone z on the grid cells ``cells``.

    The one place a zone's fields are generated for the simulator (the hook
    for steps acting on a zone's Gaussian fields, e.g. conditioning).

    Returns
    -------
    dict i -> ndarray (s, len(cells)), or (s, 1) for a single variable (θ = inf)
    """
    s = len(indices)
    raw = {}
    conds = {i: conditioner(problem, i, z) for i in members}
    # site data: the fields are also gathered at the data cells, then conditioned after mixing
    take = field_box(problem, z).local(np.concatenate([cells] + [c.cells for c in conds.values() if c is not None]))
    for i in members:
        zi = standard_normals(problem, seed, indices, i, z)
        raw[i] = zi[:, 0, 0][:, None] if problem.properties[i].single else zi.reshape(s, -1)[:, take]
    # a single variable (θ = inf) mixes as one column broadcast over the cells
    zs = _mix(problem, raw, members)
    at = cells.size
    for i in members:
        zi = zs[i]
        if zi.shape[1] > 1 and take.size > cells.size:
            zs[i] = zi[:, :cells.size]
        if conds[i] is not None:
            n_d = conds[i].cells.size
            zs[i] = conds[i].apply(zi[:, :cells.size], zi[:, at:at + n_d], cells, seed, indices, (i, z))
            at += n_d
    return {i: np.asarray(problem.properties[i].marginal.from_standard_normal(zs[i]), dtype=float)
            for i in members}


def _valid_base_values(problem, seed, indices):
    """Random values at the bases of the valid surfaces: key -> (s, mv, n), NaN outside the material."""
    st = stencil(problem)
    s = len(indices)
    out = {p.key: np.full((s,) + st.shape, np.nan) for p in problem.properties}
    for z, (bases, cells, W) in st.zones.items():
        members = zone_members(problem, z)
        if not members:
            continue
        values = zone_cell_values(problem, seed, indices, z, cells, members)
        for i in members:
            p = problem.properties[i]
            phys = values[i]
            if phys.shape[1] == 1:
                vals = np.broadcast_to(phys, (s, bases.size))
            else:
                # physical values are averaged: the base mobilises the mean strength
                vals = (W @ phys.T).T
            out[p.key].reshape(s, -1)[:, bases] = vals
    return out


def base_values(problem, seed, indices):
    """Random values at the slice bases of every surface.

    Returns
    -------
    dict key -> ndarray (s, m, n) in physical units (NaN on bases outside
    the property's material and on rejected bank rows); for ``multiplier``
    properties the factor.
    """
    st = stencil(problem)
    s = len(indices)
    m, n = len(problem.surfaces), st.bank.n_slices
    out = {}
    for key, v in _valid_base_values(problem, seed, indices).items():
        full = np.full((s, m, n), np.nan)
        full[:, st.rows] = v
        out[key] = full
    return out


def deterministic_value(bank, materials, prop):
    """Material value of ``prop`` on every base of ``bank``, and the override key it multiplies.

    Returns
    -------
    values : ndarray (m, n)
        su (kPa) for ``su`` and ``su_ratio`` (the factor scales the whole
        undrained law), c' (kPa) or φ' (degrees).
    key : {"su", "c", "phi"}
    """
    if prop in ("su", "su_ratio"):
        return base_strength(bank, materials, "undrained")[0], "su"
    c, tphi = base_strength(bank, materials, "drained")
    return (c, "c") if prop == "c" else (np.degrees(np.arctan(tphi)), "phi")


def strength_overrides(problem, values, det):
    """Overrides for :func:`slope.strength.base_strength` from per-property base values.

    ``values``: key -> base values (NaN outside the property's zones);
    ``det``: prop -> (deterministic values, key), which multiplier
    properties scale. Unit weights are not strengths and are skipped; two
    properties acting on one key (su and su_ratio) fill each other's NaN.
    """
    out = {}
    for p in problem.properties:
        if p.prop == "unit_weight":
            continue
        v, key = values[p.key], p.prop
        if p.multiplier:
            d, key = det(p.prop)
            v = v * d
        out[key] = v if key not in out else np.where(np.isnan(v), out[key], v)
    return out


def _det_value(problem, prop):
    """:func:`deterministic_value` on the valid surfaces, kept with the stencil."""
    st = stencil(problem)
    if prop not in st.deterministic:
        st.deterministic[prop] = deterministic_value(st.bank, problem.section.materials, prop)
    return st.deterministic[prop]


def batch_fs(problem, seed, indices):
    """FS of every surface for realisations ``indices``.

    Returns
    -------
    fs, converged, admissible : ndarray (s, m)
        Rejected bank rows: NaN, False, False.
    """
    st = stencil(problem)
    sm = strength_map(problem, st, lambda prop: _det_value(problem, prop))
    if sm is not None:
        res = _fused_fs(problem, st, sm, seed, indices)
        if res is not None:
            return res
    vals = _valid_base_values(problem, seed, indices)
    overrides = strength_overrides(problem, vals, lambda prop: _det_value(problem, prop))
    weight_factors = {}
    for i, p in enumerate(problem.properties):
        if p.prop == "unit_weight":
            for z in problem.zones_of(i):
                if z in st.zones:  # one value per zone and realisation, on all its bases
                    weight_factors[z] = vals[p.key].reshape(len(indices), -1)[:, st.zones[z][0][0]]
    mats = problem.section.materials
    if weight_factors:
        # weights change per realisation: slice terms are rebuilt for each one
        runs = []
        for r in range(len(indices)):
            bank = scale_unit_weights(st.bank, st.weight_parts, {z: f[r] for z, f in weight_factors.items()})
            c, tphi = base_strength(bank, mats, problem.hypothesis,
                                    overrides={k: v[r:r + 1] for k, v in overrides.items()})
            runs.append(factor_of_safety(prepare_bank(bank), c, tphi, problem.method,
                                         interslice=problem.interslice))
        res_fs = np.concatenate([x.fs for x in runs])
        res_conv = np.concatenate([x.converged for x in runs])
        res_flags = np.concatenate([np.asarray(x.flags) for x in runs])
    else:
        c, tphi = base_strength(st.bank, mats, problem.hypothesis, overrides=overrides)
        res = factor_of_safety(st.terms, c, tphi, problem.method, interslice=problem.interslice)
        res_fs, res_conv, res_flags = res.fs, res.converged, np.asarray(res.flags)
    return _scatter(problem, st, len(indices), res_fs, res_conv, res_flags)


def _fused_fs(problem, st, sm, seed, indices):
    """:func:`batch_fs` through the :class:`StrengthMap`, a chunk of realisations per kernel call.

    None when a cell value could give an inadmissible strength (the array
    path then reports it as before).
    """
    s = len(indices)
    phys = np.empty((s, sm.n_cols))
    values = {}
    for z, i, off, ncol in sm.entries:
        if z not in values:
            values[z] = zone_cell_values(problem, seed, indices, z, st.zones[z][1], zone_members(problem, z))
        phys[:, off:off + ncol] = values[z][i]
    del values
    if not sm.safe(phys):
        return None
    mv = st.rows.size
    fs = np.empty((s, mv))
    conv = np.empty((s, mv), bool)
    flags = np.empty((s, mv), np.int64)
    step = sm.chunk()
    for a in range(0, s, step):
        c, tphi = sm.strengths(phys[a:a + step])
        res = factor_of_safety(st.terms, c, tphi, problem.method, interslice=problem.interslice)
        fs[a:a + step], conv[a:a + step], flags[a:a + step] = res.fs, res.converged, res.flags
    return _scatter(problem, st, s, fs, conv, flags)


def _scatter(problem, st, s, res_fs, res_conv, res_flags):
    """FS, converged, admissible of the valid surfaces onto every bank row (s, m)."""
    # the flags the deterministic search tolerates by default (search.evaluate_surfaces) are
    # tolerated here too, or the critical surface of the search could never be critical here
    tolerated = _TOLERABLE["negative-normal"] | _TOLERABLE["thrust-outside"]
    m = len(problem.surfaces)
    fs = np.full((s, m), np.nan)
    conv = np.zeros((s, m), bool)
    adm = np.zeros((s, m), bool)
    fs[:, st.rows] = res_fs
    conv[:, st.rows] = res_conv
    adm[:, st.rows] = (res_flags & ~tolerated) == 0
    return fs, conv, adm

"""One compiled pass from cell values to slice-base strengths.

:func:`slope.simulate.engine.batch_fs` used to build, per batch, a dense
``(s, m, n)`` array of base values per random property, then overrides,
then the full strength law of :func:`slope.strength.base_strength` over
every base (a dozen whole-array passes and temporaries of ``s × m × n``
floats: 1.2 GB for a batch of 100 on a bank of 5,000 surfaces). Here the
law is resolved once per problem into what each base receives:

* a deterministic ``(c, tan φ)`` per base (the law without overrides);
* per (property, zone) a list of rows: the base it writes, the CSR row of
  :class:`slope.simulate.engine.BaseStencil` (mean bilinear weights over the
  touched cells; one cell of weight 1 for a single random variable), the
  multiplier (the deterministic value for ``multiplier`` properties) and the
  target (``c`` directly, or ``tan φ`` from φ in degrees).

A realisation then costs one compiled loop over those rows (sum in CSR
order from 0, as ``scipy.sparse`` does, then the multiplier and ``tan``),
written into ``(chunk, m, n)`` arrays for a few realisations at a time, and
the kernel of the method of slices on that chunk: the arrays stay in cache
and memory is bounded by the chunk, not the batch. Every operation is the
one the array code performed, in the same order, so FS values are
bit-identical to it (checked in ``tests/simulate/test_fused.py``).

What the law does not let a property change is skipped, as ``base_strength``
ignored it: ``su`` acts on undrained bases only, ``c`` and ``phi`` on drained
ones. Problems with a random unit weight (slice terms rebuilt per
realisation) or a non-multiplier ``su_ratio`` keep the array path.
"""
from __future__ import annotations

import math

import numpy as np
from numba import njit

from ..methods.compiled import FROM_PYTHON
from ..strength import base_strength

__all__ = ["StrengthMap", "strength_map", "CHUNK_VALUES"]

#: slice bases × realisations evaluated together (two float arrays of this
#: many values, 4 MB each): large enough to amortise a kernel call, small
#: enough to stay in cache and to bound memory for any bank size.
CHUNK_VALUES = 1 << 19

_C, _TAN = 0, 1


@njit(cache=True, **FROM_PYTHON)
def _fill(c, tp, phys_t, row_base, row_ptr, col, w, mult, target):
    """Write the random values of rows into c and tp, both (k, B) with B = m × n.

    phys_t : (n_cols, k) cell values, realisations last so that the inner
    loops run along them (the vector axis). Row r sums w * phys_t over its
    CSR entries (from 0, in CSR order, as scipy.sparse does), times mult[r],
    into base row_base[r]: c directly or tan of φ (degrees) into tp. A NaN
    value leaves the base as it was. A row equal to the one before (a
    single random variable: one cell of weight 1 on every base of its zone)
    reuses its values instead of recomputing them (one tan per zone, not per
    base).
    """
    k = c.shape[0]
    deg = np.pi / 180.0
    acc = np.empty(k)
    val = np.empty(k)
    ok = np.empty(k, np.bool_)
    for r in range(row_base.size):
        a, b = row_ptr[r], row_ptr[r + 1]
        same = (r > 0 and b - a == 1 and a - row_ptr[r - 1] == 1 and col[a] == col[a - 1]
                and w[a] == w[a - 1] and mult[r] == mult[r - 1] and target[r] == target[r - 1])
        if not same:
            acc[:] = 0.0
            for j in range(a, b):
                wj = w[j]
                cj = col[j]
                for s in range(k):
                    acc[s] += wj * phys_t[cj, s]
            mr = mult[r]
            for s in range(k):
                v = acc[s] * mr
                ok[s] = v == v
                val[s] = v if target[r] == 0 else math.tan(v * deg)
        base = row_base[r]
        if target[r] == 0:
            for s in range(k):
                if ok[s]:
                    c[s, base] = val[s]
        else:
            for s in range(k):
                if ok[s]:
                    tp[s, base] = val[s]


class StrengthMap:
    """What every valid base receives from the random properties (see module doc).

    Attributes
    ----------
    c0, tp0 : ndarray (mv, n)
        Deterministic c (kPa) and tan φ of each base (``base_strength``).
    entries : list of (zone, property index, column offset, n columns)
        The blocks of the concatenated cell values, in evaluation order.
    """

    def __init__(self, problem, st, det_value):
        bank = st.bank
        mats = problem.section.materials
        self.c0, self.tp0 = (np.ascontiguousarray(a, dtype=float)
                             for a in base_strength(bank, mats, problem.hypothesis))
        und_mat = {name: problem.hypothesis == "undrained" and m.has_undrained for name, m in mats.items()}
        rb, rp, col, w, mult, target = [], [0], [], [], [], []
        self.entries = []
        off = 0
        for z, (bases, cells, W) in st.zones.items():
            und = und_mat[problem.section.zones[z].material]
            for i, p in enumerate(problem.properties):
                if z not in problem.zones_of(i):
                    continue
                ncol = 1 if p.single else cells.size
                self.entries.append((z, i, off, ncol))
                key = p.prop
                d = None
                if p.multiplier:
                    dv, key = det_value(p.prop)
                    d = np.asarray(dv, float).ravel()[bases]
                # base_strength: su only on undrained bases, c and phi only on drained ones
                if (key == "su") != und:
                    off += ncol
                    continue
                tgt = _TAN if key == "phi" else _C
                if p.single:
                    for r in range(bases.size):
                        col.append(off)
                        w.append(1.0)
                        rp.append(rp[-1] + 1)
                else:
                    W = W.tocsr()
                    col.extend((W.indices + off).tolist())
                    w.extend(W.data.tolist())
                    rp.extend((rp[-1] + W.indptr[1:]).tolist())
                rb.extend(bases.tolist())
                mult.extend((np.ones(bases.size) if d is None else d).tolist())
                target.extend([tgt] * bases.size)
                off += ncol
        self.n_cols = off
        self.row_base = np.asarray(rb, np.int64)
        self.row_ptr = np.asarray(rp, np.int64)
        self.col = np.asarray(col, np.int64)
        self.w = np.asarray(w, float)
        self.mult = np.asarray(mult, float)
        self.target = np.asarray(target, np.int64)
        # a negative cell value may average to a negative strength, φ near 90° to an
        # inadmissible one: such batches take the array path, which reports them
        self._phi_cols = np.zeros(self.n_cols, bool)
        for z, i, o, nc in self.entries:
            if problem.properties[i].prop == "phi":
                self._phi_cols[o:o + nc] = True
        self._phi_mult_max = max([float(np.max(self.mult[self.target == _TAN]))] if np.any(self.target == _TAN)
                                 else [1.0])

    @staticmethod
    def supports(problem) -> bool:
        """False for problems the array path must evaluate (random unit weight, su_ratio as a value)."""
        return all(p.prop != "unit_weight" and (p.multiplier or p.prop != "su_ratio") for p in problem.properties)

    def safe(self, phys) -> bool:
        """Whether cell values ``phys`` (s, n_cols) give finite, admissible strengths on every base."""
        if not np.all(np.isfinite(phys)) or (phys.size and phys.min() < 0.0):
            return False
        if self._phi_cols.any() and float(phys[:, self._phi_cols].max()) * self._phi_mult_max >= 90.0:
            return False
        return True

    def chunk(self) -> int:
        """Realisations per kernel call."""
        return max(1, CHUNK_VALUES // max(1, self.c0.size))

    def strengths(self, phys):
        """c (kPa) and tan φ on the valid bases, shape (k, mv, n), for cell values ``phys`` (k, n_cols)."""
        k = phys.shape[0]
        c = np.empty((k,) + self.c0.shape)
        tp = np.empty((k,) + self.c0.shape)
        c[:] = self.c0
        tp[:] = self.tp0
        _fill(c.reshape(k, -1), tp.reshape(k, -1), np.ascontiguousarray(np.asarray(phys, float).T), self.row_base,
              self.row_ptr, self.col, self.w, self.mult, self.target)
        return c, tp


def strength_map(problem, st, det_value):
    """The problem's :class:`StrengthMap` for stencil ``st``, built once (None when unsupported)."""
    if not StrengthMap.supports(problem):
        return None
    # kept on the problem, not the stencil: problems derived by studies share the stencil
    sm = problem.__dict__.get("_strength_map")
    if sm is None or sm[0] is not st:
        sm = problem._strength_map = (st, StrengthMap(problem, st, det_value))
    return sm[1]


def warm_up():
    """Load the compiled kernels of the simulator (from numba's cache) with tiny inputs of the real types."""
    from ..methods.bishop import _single_equation_kernel
    from ..methods.compiled import first_call

    z = np.zeros((1, 1))
    with first_call(_fill):  # one process compiles, the others load it (see methods.compiled)
        _fill(z.copy(), z.copy(), np.zeros((1, 1)), np.zeros(1, np.int64), np.array([0, 1], np.int64),
              np.zeros(1, np.int64), np.ones(1), np.ones(1), np.zeros(1, np.int64))
    one = np.ones((1, 1))
    geo = [one.copy() for _ in range(13)] + [np.zeros(1, np.bool_), np.ones(1), np.ones(1, np.bool_)]
    with first_call(_single_equation_kernel):
        _single_equation_kernel(np.ones((1, 1, 1)), np.zeros((1, 1, 1)), *geo, 1e-6, 50, 0.2, np.empty((1, 1)),
                                np.zeros((1, 1), np.int64), np.zeros((1, 1), np.bool_), np.zeros((1, 1), np.int64),
                                np.empty((1, 1, 1)), False)

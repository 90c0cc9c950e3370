"""Limit state of a slice bank with zone strengths as random variables.

Each random variable sets one strength property of one zone on every slice
base in that zone (no spatial variation: that is :mod:`slope.simulate`'s
job). With a bank of one surface this is the *fixed surface* limit state;
with a bank of many trial surfaces, each sample's FS is the least over the
bank's valid, converged, admissible surfaces (:mod:`.limit_state`), which is
the per-sample search over that set of trial surfaces (the surfaces
themselves are not re-optimised per sample).

Properties: ``"c"`` (c', kPa), ``"phi"`` (φ', degrees), ``"tan_phi"``
(tan φ'), for bases analysed drained; ``"su_factor"`` (dimensionless
multiplier of the zone's su profile, mean 1 typically) for bases analysed
undrained; ``"unit_weight"`` (dimensionless factor on the zone's γ and γsat:
slice weights, σ'v and ru pore pressures follow it, so each sample gets its
own slice terms, see :func:`slope.bank.scale_unit_weights`).

Site data (``gaussian_shift``): a column may carry, per slice base, a shift
``μ_c`` of its variable in the standard-normal space of its marginal ``F``;
the value on a base is then ``F⁻¹(Φ(Φ⁻¹(F(x)) + μ_c))`` instead of ``x``.
``μ_c`` is the conditional (simple-kriging) mean of the property's field at
the base given the case's site data (:mod:`slope.case.site_means`); where
``μ_c = 0`` (no data) the value is ``x`` itself, bit for bit.
"""
from __future__ import annotations

import contextlib

import numpy as np

from .bank import scale_unit_weights
from .errors import InputError
from .methods import factor_of_safety, prepare_bank
from .strength import base_strength

__all__ = ["SliceBankLimitState", "PROPERTIES"]

PROPERTIES = ("c", "phi", "tan_phi", "su_factor", "unit_weight")

#: Samples × surfaces below which a kernel call runs on this thread alone. FORM, the point
#: estimates and the tornado call the kernel about 200 times on one surface with 4-10 samples:
#: waking the kernel's threads cost 15 ms a call on a loaded machine (3 s of a levee run) against
#: 0.06 ms for the call's own work. Results do not depend on the thread count (each sample and
#: surface is solved on its own).
PARALLEL_MIN_PAIRS = 4096


@contextlib.contextmanager
def _threads_for(pairs: int):
    """Run the kernels called inside on one thread when ``pairs`` (samples × surfaces) is small."""
    if pairs >= PARALLEL_MIN_PAIRS:
        yield
        return
    import numba

    before = numba.get_num_threads()
    numba.set_num_threads(1)
    try:
        yield
    finally:
        numba.set_num_threads(before)


class SliceBankLimitState:
    """``g(X) -> FSResult`` for a slice bank with random zone strengths.

    Parameters
    ----------
    bank : slope.slices.SliceBank
        Slices of one (fixed surface) or many (searched) surfaces.
    materials : mapping str -> slope.strength.Material
        Usually ``section.materials``; give the mean strengths.
    assign : mapping int -> (str, str)
        Column of ``X`` → ``(zone name, property)``, property in
        :data:`PROPERTIES`.
    method : str
        Method of slices (see :func:`slope.methods.factor_of_safety`).
    hypothesis : {'drained', 'undrained'}
    chunk : int
        Upper bound on samples × surfaces × slices per kernel call (memory).
    weight_parts : dict, optional
        :func:`slope.bank.unit_weight_parts` of the bank's surfaces for the
        zones assigned ``"unit_weight"`` (required for them).
    gaussian_shift : mapping int -> (Marginal, ndarray (m, n)), optional
        Column of ``X`` → its marginal and the standard-normal shift ``μ_c``
        of every slice base of the bank (0 where the column's zone has no
        data). The variable keeps its own spread: only its median moves on
        each base (for c', φ' and su factors; not for unit weights).
    **method_opts
        Passed to :func:`slope.methods.factor_of_safety`.
    """

    def __init__(self, bank, materials, assign, *, method="bishop", hypothesis="drained",
                 chunk=2_000_000, weight_parts=None, gaussian_shift=None, **method_opts):

        if not assign:
            raise InputError("assign: map at least one column of X to (zone, property)")
        self.zone_names = list(bank.zone_names)
        self.assign = {}
        c0, t0 = base_strength(bank, materials, hypothesis)
        # Bases analysed undrained: zones whose material has an su model.
        und_by_zone = np.array([hypothesis == "undrained" and materials[mn].has_undrained
                                for mn in bank.zone_materials], bool)
        zsafe = np.where(np.asarray(bank.zone) >= 0, bank.zone, 0)
        und_zone = und_by_zone[zsafe] if und_by_zone.size else np.zeros(bank.zone.shape, bool)
        for col, pair in assign.items():
            try:
                zone, prop = pair
            except (TypeError, ValueError):
                raise InputError(f"assign[{col}]: give (zone name, property), got {pair!r}") from None
            if zone not in self.zone_names:
                raise InputError(f"assign[{col}]: unknown zone {zone!r}; zones: {self.zone_names}")
            if prop not in PROPERTIES:
                raise InputError(f"assign[{col}]: unknown property {prop!r}; use one of {PROPERTIES}")
            self.assign[int(col)] = (self.zone_names.index(zone), prop)
        self.weight_cols = {col: zi for col, (zi, prop) in self.assign.items() if prop == "unit_weight"}
        missing = sorted({self.zone_names[zi] for zi in self.weight_cols.values()}
                         - {self.zone_names[z] for z in (weight_parts or {})})
        if missing:
            raise InputError(f"weight_parts: no unit_weight_parts for zone(s) {missing}; compute them with "
                             "slipfield.slope.bank.unit_weight_parts(section, surfaces, zones, n_slices)")
        self.weight_parts = weight_parts or {}
        self.shift = {}
        for col, pair in (gaussian_shift or {}).items():
            marginal, mu = pair
            mu = np.asarray(mu, float)
            if int(col) not in self.assign or self.assign[int(col)][1] == "unit_weight":
                raise InputError(f"gaussian_shift[{col}]: give it only for columns assigned c, phi, tan_phi "
                                 "or su_factor")
            if mu.shape != np.shape(bank.zone) or not np.all(np.isfinite(mu)):
                raise InputError(f"gaussian_shift[{col}]: need finite shifts of shape {np.shape(bank.zone)} "
                                 f"(surfaces, slices), got {mu.shape}")
            if np.any(mu != 0):
                self.shift[int(col)] = (marginal, mu)
        self.materials = materials
        self.bank = bank
        self.valid = np.asarray(bank.valid, bool)
        self.zone = np.where(self.valid[:, None], bank.zone, -1)
        self.c0, self.t0 = c0, t0
        self.undrained = und_zone
        self.method = method
        self.hypothesis = hypothesis
        self.method_opts = method_opts
        self.chunk = int(chunk)
        self._terms = None

    def _prepared(self):

        if self._terms is None:
            self._terms = prepare_bank(self.bank)
        return self._terms

    def strengths(self, X, c0=None, t0=None):
        """Base strengths ``c (s, m, n)`` kPa and ``tan_phi (s, m, n)`` for samples ``X``.

        ``c0``, ``t0``: the strengths at the means to start from (default those of the bank).
        """
        X = np.atleast_2d(np.asarray(X, float))
        s = X.shape[0]
        c0 = self.c0 if c0 is None else c0
        t0 = self.t0 if t0 is None else t0
        c = np.broadcast_to(c0, (s,) + c0.shape[-2:]).copy()   # (m, n) or one per sample (s, m, n)
        t = np.broadcast_to(t0, (s,) + t0.shape[-2:]).copy()
        for col, (zi, prop) in self.assign.items():
            mask = self.zone == zi
            v = X[:, col][:, None, None]
            if col in self.shift:
                v = self._shifted(col, X[:, col], mask)
            if prop == "c":
                c = np.where(mask & ~self.undrained, v, c)
            elif prop == "phi":
                t = np.where(mask & ~self.undrained, np.tan(np.radians(v)), t)
            elif prop == "tan_phi":
                t = np.where(mask & ~self.undrained, v, t)
            elif prop == "su_factor":
                c = np.where(mask & self.undrained, v * c0, c)
        valid_rows = self.valid[None, :, None]
        return np.where(valid_rows, c, 0.0), np.where(valid_rows, t, 0.0)

    def _shifted(self, col, x, mask):
        """Values ``(s, m, n)`` of column ``col`` on each base: its median moved by ``μ_c`` (Gaussian space)."""
        marginal, mu = self.shift[col]
        u = np.asarray(marginal.to_standard_normal(x), float)[:, None, None]
        moved = np.asarray(marginal.from_standard_normal(u + mu[None]), float)
        return np.where(((mu != 0) & mask)[None], moved, x[:, None, None])

    def __call__(self, X):

        X = np.atleast_2d(np.asarray(X, float))
        m, n = self.c0.shape
        if not self.valid.any():
            raise InputError("slice bank has no valid surface")
        # a stacked bank (random unit weight) holds ~20 arrays of samples × m × n
        step = max(1, self.chunk // max(1, (20 if self.weight_cols else 1) * m * n))
        fs, conv, adm = [], [], []
        for a in range(0, X.shape[0], step):
            x = X[a:a + step]
            s = x.shape[0]
            terms, c, t = self._chunk(x)
            if np.any(c < 0) or np.any(t < 0):
                raise InputError(self._sign_message(x, c, t))
            with _threads_for(s * m):
                r = factor_of_safety(terms, c.reshape(-1, terms.n_surfaces, n),
                                     t.reshape(-1, terms.n_surfaces, n), method=self.method, **self.method_opts)
            fs.append(r.fs.reshape(s, m))
            conv.append(np.asarray(r.converged).reshape(s, m))
            adm.append(np.asarray(r.admissible).reshape(s, m) & self.valid[None, :])
        fs = np.concatenate(fs)
        return (np.where(self.valid[None, :], fs, np.nan), np.concatenate(conv),
                np.concatenate(adm))

    def _sign_message(self, x, c, t):
        """What made a base strength negative, in the user's terms, and the fix."""
        vals = [np.empty(0)]
        for col, (zi, prop) in self.assign.items():
            if prop == "phi":  # the values on the bases (site data move them base by base)
                mask = self.zone == zi
                vals.append(self._shifted(col, x[:, col], mask)[:, mask].ravel() if col in self.shift
                            else x[:, col])
        vals = np.concatenate(vals)
        where = "at an evaluation point (a sample, or a trial point of FORM or the tornado)"
        if vals.size and np.nanmax(vals) >= 90.0:
            return (f"φ' reached {np.nanmax(vals):.4g}° {where}; at 90° or more tan φ' is no longer a friction "
                    "coefficient. Its marginal has a tail beyond 90°, as a lognormal or normal always has: "
                    "bound φ' below 90° (truncated-normal or beta with upper < 90) or reduce its cov")
        if vals.size and np.nanmin(vals) < 0.0:
            return (f"φ' was {np.nanmin(vals):.4g}° (negative) {where}; use a marginal for φ' bounded below "
                    "at 0 (lognormal, truncated-normal or beta with lower >= 0) or reduce its cov")
        if np.any(t < 0):
            return (f"tan φ' was negative {where}; use a marginal for it bounded below at 0 (lognormal, "
                    "truncated-normal or beta with lower >= 0) or reduce its cov")
        return (f"c' or su was negative {where} (least {float(np.min(c)):.4g} kPa on a slice base); use a "
                "marginal bounded below at 0 (lognormal, truncated-normal or beta with lower >= 0) or reduce "
                "its cov")

    def _chunk(self, x):
        """Slice terms and base strengths ``(s, m, n)`` of the samples ``x``."""
        if not self.weight_cols:
            return (self._prepared(), *self.strengths(x))
        # a random unit weight changes the slice terms themselves: the samples' banks are
        # stacked as s × m surfaces, so the chunk still goes through one kernel call

        s, (m, n) = x.shape[0], self.c0.shape
        factors = {zi: x[:, col] for col, zi in self.weight_cols.items()}
        if any(np.any(~(f > 0)) for f in factors.values()):
            raise InputError("random unit weight factor <= 0; use a positive marginal (lognormal, "
                             "truncated-normal, beta)")
        bank = scale_unit_weights(self.bank, self.weight_parts, factors)
        c0, t0 = base_strength(bank, self.materials, self.hypothesis)
        return (prepare_bank(bank), *self.strengths(x, c0.reshape(s, m, n), t0.reshape(s, m, n)))

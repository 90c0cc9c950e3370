"""Compiled kernels of :mod:`slope.search.upper_bound`: the work equation of a chain of rigid blocks.

Plain arrays in and out (section frame, kN/m, kPa·m): ``tb``, ``nb`` (n, 2) unit tangent of each
base in the direction of motion and its upward normal; ``Cb``, ``Tb``, ``Ub`` (n,) ∫c dL, mean
tan φ and ∫u dL of each base; ``Ftot`` (2,) weight and loads of the whole mass; per interface
``i`` and table entry ``k``: ``si``, ``mi`` (n-1, K, 2) unit vectors up the interface and normal to
it toward +x, ``Ci``, ``Ti``, ``Ui`` (n-1, K) as for the bases, ``Fr`` (n-1, K, 2) weight and loads
of the mass to the right of the interface, ``xt`` (n-1, K) abscissa of its ground end, ``ok``
(n-1, K) admissible geometry; ``idx`` (n-1,) the table entry chosen at each interface.
"""
from __future__ import annotations

import numpy as np
from numba import njit

from ..methods.compiled import CALLEE_ONLY, FROM_PYTHON

__all__ = ["_work", "_solve_f", "_least_g", "_least_f"]


@njit(cache=True, error_model="numpy", **CALLEE_ONLY)
def _jump(ex, ey, vx, vy, six, siy, mix, miy, ti):  # pragma: no cover - compiled
    """Velocity triangle at an interface: v_i = a e_i and v_i - v_(i-1) = b g, g inclined at the
    interface's reduced friction angle, in the sense of shear that needs the least jump;
    returns (a, b, cos, sin) of that angle, a <= 0 where no sense is admissible."""
    cg = 1.0 / np.sqrt(1.0 + ti * ti)
    sg = ti * cg
    best_a, best_b = -1.0, np.inf
    for sgn in (1.0, -1.0):        # the sense of shear on the interface
        gx = sgn * cg * six + sg * mix
        gy = sgn * cg * siy + sg * miy
        det = gx * ey - ex * gy
        if abs(det) < 1e-14:
            continue
        a = (gx * vy - gy * vx) / det
        b = (ex * vy - ey * vx) / det
        if a > 0.0 and b >= -1e-12 and b < best_b:
            best_a, best_b = a, max(b, 0.0)
    return best_a, best_b, cg, sg


@njit(cache=True, error_model="numpy", **CALLEE_ONLY)
def _no_mechanism(m):  # pragma: no cover - compiled
    """Table entries (m,) all -1: no interface chosen."""
    idx = np.empty(m, np.int64)
    for i in range(m):
        idx[i] = -1
    return idx


@njit(cache=True, error_model="numpy", **CALLEE_ONLY)
def _work(idx, F, tb, nb, Cb, Tb, Ub, Ftot, si, mi, Ci, Ti, Ui, Fr):  # pragma: no cover - compiled
    """Work of the loads (incl. pore water) and dissipation (undivided by F) at trial F; (ok, drive, diss)."""
    n = tb.shape[0]
    tpsi = Tb[0] / F
    cs = 1.0 / np.sqrt(1.0 + tpsi * tpsi)
    sn = tpsi * cs
    vx = cs * tb[0, 0] + sn * nb[0, 0]
    vy = cs * tb[0, 1] + sn * nb[0, 1]
    drive = Ftot[0] * vx + Ftot[1] * vy + Ub[0] * sn
    diss = Cb[0] * cs
    for i in range(1, n):
        k = idx[i - 1]
        tb_ = Tb[i] / F
        ce = 1.0 / np.sqrt(1.0 + tb_ * tb_)
        se = tb_ * ce
        ex = ce * tb[i, 0] + se * nb[i, 0]
        ey = ce * tb[i, 1] + se * nb[i, 1]
        best_a, best_b, cg, sg = _jump(ex, ey, vx, vy, si[i - 1, k, 0], si[i - 1, k, 1], mi[i - 1, k, 0],
                                       mi[i - 1, k, 1], Ti[i - 1, k] / F)
        if best_a <= 0.0:
            return False, 0.0, 0.0
        dvx, dvy = best_a * ex - vx, best_a * ey - vy
        vx, vy = best_a * ex, best_a * ey
        drive += Fr[i - 1, k, 0] * dvx + Fr[i - 1, k, 1] * dvy + Ui[i - 1, k] * best_b * sg + Ub[i] * best_a * se
        diss += Ci[i - 1, k] * best_b * cg + Cb[i] * best_a * ce
    return True, drive, diss


@njit(cache=True, error_model="numpy", **FROM_PYTHON)
def _solve_f(idx, F0, tb, nb, Cb, Tb, Ub, Ftot, si, mi, Ci, Ti, Ui, Fr):  # pragma: no cover - compiled
    """F of the work equation F·drive(F) = diss(F) for one set of interfaces; inf without a mechanism.

    With φ = 0 on every line the velocities do not depend on F and F = diss / drive. Otherwise
    g(F) = F·drive - diss is solved by the Illinois variant of false position on a bracket in
    [1e-3, 1e3] (a trial F at which the mechanism is not admissible counts as below the root: the
    jumps' inclination φ_d grows as F falls).
    """
    # Tb.max() > 0 (False with a NaN, which max propagates), as a loop: numba's max compiled in 0.5 s
    frictional = False
    for i in range(Tb.shape[0]):
        if Tb[i] != Tb[i]:
            frictional = False
            break
        frictional = frictional or Tb[i] > 0.0
    if not frictional:
        for i in range(idx.shape[0]):
            if Ti[i, idx[i]] > 0.0:
                frictional = True
                break
    if not frictional:
        ok, drive, diss = _work(idx, 1.0, tb, nb, Cb, Tb, Ub, Ftot, si, mi, Ci, Ti, Ui, Fr)
        if not ok or not drive > 0.0:
            return np.inf
        return diss / drive
    lo, hi = 1e-3, 1e3
    ok, drive, diss = _work(idx, hi, tb, nb, Cb, Tb, Ub, Ftot, si, mi, Ci, Ti, Ui, Fr)
    ghi = hi * drive - diss
    if not ok or not ghi > 0.0:
        return np.inf
    ok, drive, diss = _work(idx, lo, tb, nb, Cb, Tb, Ub, Ftot, si, mi, Ci, Ti, Ui, Fr)
    glo = lo * drive - diss if ok else np.nan
    if ok and glo >= 0.0:
        return lo
    side = 0
    for _ in range(200):
        if np.isfinite(glo):
            F = hi - ghi * (hi - lo) / (ghi - glo)
            if not (lo < F < hi):
                F = np.sqrt(lo * hi)
        else:
            F = np.sqrt(lo * hi)
        ok, drive, diss = _work(idx, F, tb, nb, Cb, Tb, Ub, Ftot, si, mi, Ci, Ti, Ui, Fr)
        g = F * drive - diss if ok else np.nan
        if ok and g > 0.0:
            hi, ghi = F, g
            if side == 1 and np.isfinite(glo):
                glo *= 0.5
            side = 1
        else:
            lo, glo = F, g
            if side == -1:
                ghi *= 0.5
            side = -1
        if hi - lo <= 1e-11 * hi:
            break
    # a root, not a pole: near a singular interface the speeds (and g) jump across zero
    ok, drive, diss = _work(idx, hi, tb, nb, Cb, Tb, Ub, Ftot, si, mi, Ci, Ti, Ui, Fr)
    if not ok or abs(hi * drive - diss) > 1e-6 * abs(diss):
        return np.inf
    return hi


@njit(cache=True, error_model="numpy", **CALLEE_ONLY)
def _least_g(F, xt, ok, tb, nb, Cb, Tb, Ub, Ftot, si, mi, Ci, Ti, Ui, Fr):  # pragma: no cover - compiled
    """min over the table of interface inclinations of G = diss - F·drive (first block's speed 1).

    At a fixed trial F every jump's inclination is fixed, so the mechanism is linear: interface i
    turns the speed a_(i-1) of the block before it into a_i = ρ_i a_(i-1) and a jump b_i = β_i a_(i-1),
    both depending on that interface's inclination only, and G = h_0 + Σ a_(i-1) h_i. That is a chain
    whose suffix scales with the speed entering it, so the least G is found exactly by dynamic
    programming from the last interface back (the only coupling left is that neighbouring
    interfaces may not cross: their ground ends stay in order). Returns (G, idx).
    """
    n = tb.shape[0]
    m, K = ok.shape
    E = np.empty((n, 2))
    for i in range(n):
        t = Tb[i] / F
        c = 1.0 / np.sqrt(1.0 + t * t)
        E[i, 0] = c * tb[i, 0] + t * c * nb[i, 0]
        E[i, 1] = c * tb[i, 1] + t * c * nb[i, 1]
    t0 = Tb[0] / F
    c0 = 1.0 / np.sqrt(1.0 + t0 * t0)
    h0 = Cb[0] * c0 - F * (Ftot[0] * E[0, 0] + Ftot[1] * E[0, 1] + Ub[0] * t0 * c0)
    # np.empty and loops, not np.zeros / np.full: each of their specialisations is a compilation of
    # its own (0.05-0.1 s of CPU each on a first run)
    rho = np.empty((m, K))
    h = np.empty((m, K))
    V = np.empty((m, K))
    nxt = np.empty((m, K), np.int64)
    for i in range(m):
        for k in range(K):
            rho[i, k] = 0.0
            h[i, k] = np.inf
            V[i, k] = np.inf
            nxt[i, k] = -1
    for i in range(1, n):
        ce = 1.0 / np.sqrt(1.0 + (Tb[i] / F) ** 2)
        se = (Tb[i] / F) * ce
        ex, ey = E[i, 0], E[i, 1]
        vx, vy = E[i - 1, 0], E[i - 1, 1]
        for k in range(K):
            if not ok[i - 1, k]:
                continue
            best_a, best_b, cg, sg = _jump(ex, ey, vx, vy, si[i - 1, k, 0], si[i - 1, k, 1], mi[i - 1, k, 0],
                                           mi[i - 1, k, 1], Ti[i - 1, k] / F)
            if best_a <= 0.0:
                continue
            dvx, dvy = best_a * ex - vx, best_a * ey - vy
            drive = Fr[i - 1, k, 0] * dvx + Fr[i - 1, k, 1] * dvy + Ui[i - 1, k] * best_b * sg + Ub[i] * best_a * se
            diss = Ci[i - 1, k] * best_b * cg + Cb[i] * best_a * ce
            rho[i - 1, k] = best_a
            h[i - 1, k] = diss - F * drive
    for k in range(K):
        V[m - 1, k] = h[m - 1, k]
    for i in range(m - 2, -1, -1):
        for k in range(K):
            if not np.isfinite(h[i, k]):
                continue
            best, arg = np.inf, -1
            for k2 in range(K):
                if np.isfinite(V[i + 1, k2]) and xt[i + 1, k2] > xt[i, k] and V[i + 1, k2] < best:
                    best, arg = V[i + 1, k2], k2
            if arg >= 0:
                V[i, k] = h[i, k] + rho[i, k] * best
                nxt[i, k] = arg
    idx = _no_mechanism(m)
    best, arg = np.inf, -1
    for k in range(K):
        if V[0, k] < best:
            best, arg = V[0, k], k
    if arg < 0:
        return np.inf, idx
    idx[0] = arg
    for i in range(1, m):
        idx[i] = nxt[i - 1, idx[i - 1]]
    return h0 + best, idx


@njit(cache=True, error_model="numpy", **FROM_PYTHON)
def _least_f(F0, xt, ok, tb, nb, Cb, Tb, Ub, Ftot, si, mi, Ci, Ti, Ui, Fr):  # pragma: no cover - compiled
    """Least F over the table: the least trial F at which some mechanism of the table has G <= 0.

    Any F at which a mechanism's work of the loads reaches its dissipation with the strength
    divided by F is an upper bound. From such an F the least-G mechanism's own root is a lower
    one (Dinkelbach 1967); when that root is not genuine (a pole of the speeds), the bracket is
    halved instead. Returns (F, idx); inf when no mechanism reaches G <= 0 by F = 1e3.
    """
    m = ok.shape[0]
    hi = F0
    G, idx = _least_g(hi, xt, ok, tb, nb, Cb, Tb, Ub, Ftot, si, mi, Ci, Ti, Ui, Fr)
    if not (idx[0] >= 0 and G <= 0.0):
        hi = 1e3
        G, idx = _least_g(hi, xt, ok, tb, nb, Cb, Tb, Ub, Ftot, si, mi, Ci, Ti, Ui, Fr)
        if not (idx[0] >= 0 and G <= 0.0):
            return np.inf, _no_mechanism(m)
    lo = 1e-3
    for _ in range(200):
        Fn = _solve_f(idx, hi, tb, nb, Cb, Tb, Ub, Ftot, si, mi, Ci, Ti, Ui, Fr)
        if Fn >= hi * (1.0 - 1e-10) and np.isfinite(Fn):
            break                           # no mechanism of the table below hi
        trial = Fn if (np.isfinite(Fn) and Fn > lo) else np.sqrt(lo * hi)
        Gt, it = _least_g(trial, xt, ok, tb, nb, Cb, Tb, Ub, Ftot, si, mi, Ci, Ti, Ui, Fr)
        if it[0] >= 0 and Gt <= 1e-12 * abs(Gt) + 0.0:
            hi, idx = trial, it
        else:
            lo = trial
        if hi - lo <= 1e-10 * hi:
            break
    return hi, idx

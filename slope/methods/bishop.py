"""Bishop's simplified method (Bishop 1955, Géotechnique 5(1):7-17).

Interslice shear forces are neglected (X = 0); vertical equilibrium of each
slice gives the base normal force

    N = [A - (c l - u l tan phi) sin a / F] / m_alpha,
    m_alpha = cos a + sin a tan phi / F,

and overall moment equilibrium about the moment point gives

    F * (M_active + sum N mn) = sum mt [c b + (A - u b) tan phi] / m_alpha.

For a circle about its centre ``mn = 0`` and ``mt = R`` (or the distance to
the chord midpoint), the textbook form. For other surfaces the moment point
matters (see :func:`slope.methods.terms.default_moment_point`).

The equation is solved per (sample, surface) by Newton's method on F in a
compiled kernel (numba, parallel over samples x surfaces), falling back to a
fixed-point step where a Newton step would leave F > 0.
"""
from __future__ import annotations

import numpy as np
from numba import njit, prange

from .result import NEGATIVE_NORMAL, NONPOSITIVE, SMALL_M_ALPHA

__all__ = ["bishop", "solve_single_equation"]

_FASTMATH = {"contract", "arcp", "nsz", "reassoc"}


@njit(parallel=True, cache=True, fastmath=_FASTMATH)
def _single_equation_kernel(c, tp, ca, sa, wb, wa, l, A, ub, ul, mn, use_mn, den0,
                            valid, tol, max_iter, m_alpha_min,
                            fs, iters, conv, flags, neff, want_forces):
    # wb = w b and wa = w (A - u b) are per-surface terms, so the numerator
    # of slice i is (wb c + wa tan phi) / m_alpha.
    S = fs.shape[0]
    M = fs.shape[1]
    N = ca.shape[1]
    for k in prange(S * M):
        s = k // M
        m = k - s * M
        if not valid[m]:
            fs[s, m] = np.nan
            iters[s, m] = 0
            conv[s, m] = False
            continue
        circ = not use_mn[m]
        # start: F -> infinity, m_alpha = cos a, N = A / cos a
        num = 0.0
        den = den0[m]
        for i in range(N):
            num += (wb[m, i] * c[s, m, i] + wa[m, i] * tp[s, m, i]) / ca[m, i]
            if not circ:
                den += mn[m, i] * A[m, i] / ca[m, i]
        F = num / den
        if not (F > 0.0) or not np.isfinite(F):
            F = 1.0
        done = False
        n_it = 0
        fl = 0
        for it in range(max_iter):
            n_it = it + 1
            inv = 1.0 / F
            inv2 = inv * inv
            num = 0.0
            dnum = 0.0
            den = den0[m]
            dden = 0.0
            fl = 0
            for i in range(N):
                t = tp[s, m, i]
                cc = c[s, m, i]
                st = sa[m, i] * t
                ma = ca[m, i] + st * inv
                r = 1.0 / ma
                P = (wb[m, i] * cc + wa[m, i] * t) * r
                num += P
                g = st * inv2 * r          # -d(m_alpha)/dF / m_alpha
                dnum += P * g
                # admissibility at this iterate; the last one is within tol of F
                ne = (A[m, i] - ub[m, i] - cc * l[m, i] * sa[m, i] * inv) * r
                if ma <= m_alpha_min:
                    fl |= 2
                if ne < -1e-9 * abs(A[m, i]):
                    fl |= 1
                if not circ:
                    K = (cc * l[m, i] - ul[m, i] * t) * sa[m, i]
                    Nn = (A[m, i] - K * inv) * r
                    den += mn[m, i] * Nn
                    dden += mn[m, i] * (K * inv2 * r + Nn * g)
            h = F * den - num
            dh = den + F * dden - dnum
            Fn = F - h / dh if dh != 0.0 else -1.0
            if not (Fn > 0.0) or not np.isfinite(Fn):
                Fn = num / den          # fixed-point step
            if not (Fn > 0.0) or not np.isfinite(Fn):
                F = Fn
                break
            if abs(Fn - F) <= tol * Fn:
                F = Fn
                done = True
                break
            F = Fn
        fs[s, m] = F
        iters[s, m] = n_it
        conv[s, m] = done
        if not (F > 0.0) or not np.isfinite(F):
            flags[s, m] = 8
            continue
        flags[s, m] = fl
        if want_forces:
            inv = 1.0 / F
            for i in range(N):
                ma = ca[m, i] + sa[m, i] * tp[s, m, i] * inv
                neff[s, m, i] = (A[m, i] - ub[m, i] - c[s, m, i] * l[m, i] * sa[m, i] * inv) / ma


def solve_single_equation(terms, c, tan_phi, w, den0, use_mn, *, tol, max_iter,
                          m_alpha_min, return_forces):
    """Solve ``F (den0 + sum mn N) = sum w [c b + (A - u b) tan phi] / m_alpha``.

    Shared by Bishop (moment equilibrium, ``w = mt``) and Janbu (horizontal
    force equilibrium, ``w = 1 / cos a``, no ``mn`` term).

    Returns
    -------
    dict with ``fs``, ``converged``, ``flags``, ``iterations`` (s, m) and
    optionally ``normal_eff`` (s, m, n).
    """
    S, M, N = c.shape
    fs = np.empty((S, M))
    iters = np.zeros((S, M), dtype=np.int64)
    conv = np.zeros((S, M), dtype=np.bool_)
    flags = np.zeros((S, M), dtype=np.int64)
    neff = np.empty((S, M, N) if return_forces else (1, 1, 1))
    w = np.asarray(w, dtype=float)
    wb = np.ascontiguousarray(w * terms.width)
    wa = np.ascontiguousarray(w * (terms.A - terms.ub))
    _single_equation_kernel(c, tan_phi, terms.cos_a, terms.sin_a, wb, wa,
                            terms.length, terms.A, terms.ub, terms.ul, terms.mn,
                            np.ascontiguousarray(use_mn, dtype=np.bool_),
                            np.ascontiguousarray(den0, dtype=float),
                            np.ascontiguousarray(terms.valid), float(tol), int(max_iter),
                            float(m_alpha_min), fs, iters, conv, flags, neff,
                            bool(return_forces))
    out = {"fs": fs, "converged": conv, "flags": flags, "iterations": iters}
    if return_forces:
        out["normal_eff"] = neff
    return out


def bishop(terms, c, tan_phi, *, tol=1e-6, max_iter=50, m_alpha_min=0.2,
           return_forces=False):
    """Bishop simplified factor of safety.

    Parameters
    ----------
    terms : BankTerms
    c, tan_phi : ndarray, shape (s, m, n)
        Cohesion (kPa) and tan of friction angle (-) at the slice bases.
    tol : float
        Relative change of F that ends the iteration.
    max_iter : int
    m_alpha_min : float
        Slices with ``m_alpha <= m_alpha_min`` flag the result inadmissible
        (0.2 is common practice, after Whitman & Bailey 1967 -- value
        recalled from that paper).
    return_forces : bool
        Also return effective base normal forces (kN/m).
    """
    return solve_single_equation(terms, c, tan_phi, terms.mt, terms.m_active,
                                 terms.use_mn, tol=tol, max_iter=max_iter,
                                 m_alpha_min=m_alpha_min, return_forces=return_forces)

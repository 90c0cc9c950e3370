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
compiled kernel (numba, one loop over samples x surfaces), falling back to a
fixed-point step where a Newton step would leave F > 0. The kernel is serial:
the simulator runs it in one process per core, where numba's parallel version
was 20-30 % slower per CPU second (its per-call scheduling, on the
simulator's chunks) and took 1.7 s more CPU to compile on a first run.
"""
from __future__ import annotations

import numpy as np
from numba import njit

from .compiled import FROM_PYTHON, first_call
from .result import NEGATIVE_NORMAL, NONPOSITIVE, SMALL_M_ALPHA

__all__ = ["bishop", "solve_single_equation"]

_FASTMATH = {"contract", "arcp", "nsz", "reassoc"}
#: the largest finite float: ``0 <= x <= _FMAX`` is False for NaN, inf and negatives
_FMAX = float(np.finfo(float).max)


@njit(cache=True, fastmath=_FASTMATH, error_model="numpy", **FROM_PYTHON)  # numpy's model: the sums vectorise
def _single_equation_kernel(c, tp, ca, sa, wb, wa, inv_ca, l, A, ub, ul, mn, mnA_ca, lsa,
                            ulsa, use_mn, den0, valid, tol, max_iter, m_alpha_min,
                            fs, iters, conv, flags, neff, want_forces):
    # c and tp are C-contiguous (Sc, Mc, N) with Sc in {1, S}, Mc in {1, M}:
    # one compiled specialisation whatever the broadcasting of the inputs, so
    # the vectorised sums run in the same order (identical bits) for every
    # layout and number of samples. wb = w b, wa = w (A - u b), inv_ca =
    # 1 / cos a, mnA_ca = mn A / cos a, lsa = l sin a, ulsa = u l sin a are
    # per-surface terms; the numerator of slice i is (wb c + wa tan phi) / m_alpha.
    S = fs.shape[0]
    M = fs.shape[1]
    N = ca.shape[1]
    sc_all = c.shape[0] > 1
    mc_all = c.shape[1] > 1
    st_all = tp.shape[0] > 1
    mt_all = tp.shape[1] > 1
    # strengths read that are negative, NaN or infinite (the caller names them, see
    # solve_single_equation): checked here, in the pass that reads them anyway, instead of
    # in passes of their own over the arrays (a fifth of the whole call)
    n_bad = 0
    for k in range(S * M):
        s = k // M
        m = k - s * M
        if not valid[m]:
            fs[s, m] = np.nan
            iters[s, m] = 0
            conv[s, m] = False
            continue
        # row indices, not row views: a view costs reference counting per
        # (sample, surface)
        cs = s if sc_all else 0
        cm = m if mc_all else 0
        ts = s if st_all else 0
        tm = m if mt_all else 0
        circ = not use_mn[m]
        # start: F -> infinity, m_alpha = cos a, N = A / cos a
        num = 0.0
        for i in range(N):
            num += (wb[m, i] * c[cs, cm, i] + wa[m, i] * tp[ts, tm, i]) * inv_ca[m, i]
        # a loop of its own (the row is in cache): inside the sum above it changed
        # how the sum is vectorised, hence its round-off
        bad = False
        for i in range(N):
            cc = c[cs, cm, i]
            t = tp[ts, tm, i]
            bad |= ~((cc >= 0.0) & (cc <= _FMAX) & (t >= 0.0) & (t <= _FMAX))
        n_bad += 1 if bad else 0
        den = den0[m]
        if not circ:
            for i in range(N):
                den += mnA_ca[m, i]
        F = num / den
        if not (F > 0.0) or not np.isfinite(F):
            F = 1.0
        done = False
        n_it = 0
        # admissibility is judged at the iterate the last pass evaluated
        # (within tol of the returned F)
        fl = 0
        for it in range(max_iter):
            n_it = it + 1
            inv = 1.0 / F
            inv2 = inv * inv
            num = 0.0
            dnum = 0.0
            den = den0[m]
            dden = 0.0
            # admissibility at this iterate, judged in the same pass (no
            # pass of its own): the flags of the last iterate evaluated are kept
            nflag = 0
            # two versions of the loop, branch-free inside, so that they vectorise
            if circ:
                for i in range(N):
                    t = tp[ts, tm, i]
                    cc = c[cs, cm, i]
                    st = sa[m, i] * t
                    ma = ca[m, i] + st * inv
                    r = 1.0 / ma
                    P = (wb[m, i] * cc + wa[m, i] * t) * r
                    num += P
                    dnum += P * (st * inv2 * r)
                    ne = (A[m, i] - ub[m, i] - cc * l[m, i] * sa[m, i] * inv) * r
                    nflag |= (2 if ma <= m_alpha_min else 0) | (1 if ne < -1e-9 * abs(A[m, i]) else 0)
            else:
                for i in range(N):
                    t = tp[ts, tm, i]
                    cc = c[cs, cm, i]
                    st = sa[m, i] * t
                    ma = ca[m, i] + st * inv
                    r = 1.0 / ma
                    P = (wb[m, i] * cc + wa[m, i] * t) * r
                    g = st * inv2 * r          # -d(m_alpha)/dF / m_alpha
                    num += P
                    dnum += P * g
                    K = cc * lsa[m, i] - ulsa[m, i] * t
                    Nn = (A[m, i] - K * inv) * r
                    den += mn[m, i] * Nn
                    dden += mn[m, i] * (K * inv2 * r + Nn * g)
                    ne = (A[m, i] - ub[m, i] - cc * l[m, i] * sa[m, i] * inv) * r
                    nflag |= (2 if ma <= m_alpha_min else 0) | (1 if ne < -1e-9 * abs(A[m, i]) else 0)
            fl = nflag
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
                ma = ca[m, i] + sa[m, i] * tp[ts, tm, i] * inv
                neff[s, m, i] = (A[m, i] - ub[m, i] - c[cs, cm, i] * l[m, i] * sa[m, i] * inv) / ma
    return n_bad


def _compact(x, N):
    """Strength array for the kernel: C-contiguous, writeable, (Sc, Mc, N).

    ``x`` is (S, M, N), usually a read-only broadcast view. Sample and
    surface axes of stride 0 shrink to length 1 (the kernel reuses row 0);
    a slice axis of stride 0 is materialised. The kernel only reads the
    array, but it must not be typed read-only: numba's read-only
    specialisation of the kernel runs a third slower. A contiguous read-only
    view of writeable memory is therefore re-viewed from its owner instead of
    copied (the copy would cost a third of the kernel time).
    """
    x = np.asarray(x, dtype=float)
    idx = tuple(slice(0, 1) if (x.shape[d] > 1 and x.strides[d] == 0) else slice(None)
                for d in range(2))
    core = x[idx]
    if core.shape[2] != N or (N > 1 and core.strides[2] == 0):
        return np.array(np.broadcast_to(core, core.shape[:2] + (N,)), order="C")
    if not core.flags.c_contiguous:
        return np.array(core, order="C")
    if core.flags.writeable:
        return core
    owner = core
    while isinstance(owner.base, np.ndarray):
        owner = owner.base
    try:
        if not owner.flags.writeable:
            raise ValueError
        offset = core.__array_interface__["data"][0] - owner.__array_interface__["data"][0]
        return np.ndarray(core.shape, dtype=float, buffer=owner, offset=offset,
                          strides=core.strides)
    except (ValueError, TypeError, BufferError):
        return np.array(core, order="C")


def _kernel_terms(terms, w, den0, use_mn, cache_key):
    """Per-surface kernel arrays (C-contiguous), kept on ``terms`` under ``cache_key`` if given.

    A simulator calls the kernel on small chunks of realisations over one
    bank: rebuilding these (m, n) arrays on every call cost a twentieth of it.
    """
    cache = terms.__dict__.setdefault("_kernel_terms", {}) if cache_key is not None else {}
    if cache_key in cache:
        return cache[cache_key]
    w = np.asarray(w, dtype=float)
    C = np.ascontiguousarray
    ca, sa, A = C(terms.cos_a), C(terms.sin_a), C(terms.A)
    inv_ca = C(1.0 / terms.cos_a)
    mn = C(terms.mn)
    geo = (ca, sa, C(w * terms.width), C(w * (terms.A - terms.ub)), inv_ca, C(terms.length), A,
           C(terms.ub), C(terms.ul), mn, C(mn * A * inv_ca), C(terms.length * terms.sin_a),
           C(terms.ul * terms.sin_a), C(use_mn, dtype=np.bool_), C(den0, dtype=float), C(terms.valid))
    if cache_key is not None:
        cache[cache_key] = geo
    return geo


def solve_single_equation(terms, c, tan_phi, w, den0, use_mn, *, tol, max_iter,
                          m_alpha_min, return_forces, cache_key=None):
    """Solve ``F (den0 + sum mn N) = sum w [c b + (A - u b) tan phi] / m_alpha``.

    Shared by Bishop (moment equilibrium, ``w = mt``) and Janbu (horizontal
    force equilibrium, ``w = 1 / cos a``, no ``mn`` term).

    Parameters
    ----------
    terms : BankTerms
    c, tan_phi : ndarray, shape (s, m, n)
        Cohesion (kPa) and tan of friction angle (-), broadcast views allowed.
    w : ndarray, shape (m, n)
        Weight of each slice's resisting term (m for moments, - for forces).
    den0 : ndarray, shape (m,)
        Constant part of the left-hand side (kN m/m or kN/m).
    use_mn : ndarray of bool, shape (m,)
        Surfaces whose normal forces have a moment (``mn`` term).
    tol, max_iter, m_alpha_min, return_forces
        As for :func:`bishop`.
    cache_key : str, optional
        Keep the per-surface arrays built from ``w``, ``den0``, ``use_mn``
        on ``terms`` under this name (they must then be the same on every
        call with that name, as Bishop's are).

    Returns
    -------
    dict with ``fs``, ``converged``, ``flags``, ``iterations`` (s, m),
    ``strengths_ok`` (True: every value of ``c`` and ``tan_phi`` was read and
    is finite and >= 0; False: some may not be, the caller checks them) and
    optionally ``normal_eff`` (s, m, n).
    """
    S, M, N = c.shape
    fs = np.empty((S, M))
    iters = np.zeros((S, M), dtype=np.int64)
    conv = np.zeros((S, M), dtype=np.bool_)
    flags = np.zeros((S, M), dtype=np.int64)
    neff = np.empty((S, M, N) if return_forces else (1, 1, 1))
    geo = _kernel_terms(terms, w, den0, use_mn, cache_key)
    with first_call(_single_equation_kernel):
        n_bad = _single_equation_kernel(_compact(c, N), _compact(tan_phi, N), *geo, float(tol), int(max_iter),
                                        float(m_alpha_min), fs, iters, conv, flags, neff,
                                        bool(return_forces))
    # every strength was read (and found finite, >= 0) when every surface is valid
    out = {"fs": fs, "converged": conv, "flags": flags, "iterations": iters,
           "strengths_ok": bool(n_bad == 0 and np.all(geo[-1]))}
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
                                 m_alpha_min=m_alpha_min, return_forces=return_forces,
                                 cache_key="bishop")

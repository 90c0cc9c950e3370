"""Morgenstern-Price / general limit equilibrium (GLE) method.

Morgenstern & Price (1965, Géotechnique 15(1):79-93); the GLE statement of
Fredlund & Krahn (1977, Can. Geotech. J. 14:429-439). Interslice forces at
boundary ``k``: normal ``E_k`` (pushing toward +x' on the slice downslope of
the boundary) and shear ``X_k = lam f(x_k) E_k`` (pushing that slice
*downward*; so ``lam > 0`` means the interslice resultant dips in the
direction of motion). ``E_0 = 0`` at the upslope end (a tension-crack water
force is an applied load on slice 0, see :mod:`slope.methods.terms`) and
``X_0 = 0``.

Normal and tangential equilibrium of slice ``i`` with the Mohr-Coulomb base
``F S = c l + (N - u l) tan phi`` give a recursion linear in ``E``:

    E_{i+1} = [E_i (Phi - lam f_i Psi) + F T - R] / (Phi - lam f_{i+1} Psi),
    Phi = F cos a + tan phi sin a,   Psi = tan phi cos a - F sin a,
    T = B cos a + A sin a,           R = c l - u l tan phi + (A cos a - B sin a) tan phi.

Force equilibrium of the whole mass is ``E_n(F, lam) = 0``; moment
equilibrium about any point is

    G0 - sum [dx_i (X_{i+1} - X_i) - dy_i (E_i - E_{i+1})] = 0,

where ``G0`` sums the moments of each slice's loads about its own base
midpoint. Both are solved together by Newton's method on ``(F, lam)`` with
derivatives carried through the recursion (forward mode), in a compiled
kernel parallel over samples x surfaces. Where the Jacobian is singular
(interslice forces vanish for every ``lam``, as on an infinite slope) the
step is taken on F alone.

Newton starts from Bishop's F and ``lam = 0``. The equations have other
roots than the physical one: on a circle with no driving moment (centred
over a symmetric embankment) the physical F is unbounded, yet Newton can
land on a finite F with large ``|lam|`` that is only in equilibrium because
slice bases with a *negative* Mohr-Coulomb strength ``c l + N' tan phi``
cancel the resistance of the others (flag ``NEGATIVE_STRENGTH``, see
:data:`NEGATIVE_STRENGTH_FRACTION`). When the first run ends on such a root
or on F <= 0, the solve is repeated by continuation in the interslice
function, ``(1 - t) + t f`` for t = 0 (Spencer's constant function), 1/2
and 1, each step started from the root of the previous one; its root
replaces the first when it converges without that flag (the iteration count
then includes the continuation). A root that keeps the flag is returned
with it, so searches never take it as critical.

The line of thrust follows from the moment equilibrium of each slice about
its base midpoint, marching from the upslope end.
"""
from __future__ import annotations

import numpy as np
from numba import njit, prange

__all__ = ["morgenstern_price"]

_FASTMATH = {"contract", "arcp", "nsz", "reassoc"}
#: boundaries where E is below this fraction of the largest E on the surface
#: are not checked for the thrust-line position: the height is the ratio of
#: a moment to E, so near the ends of the surface and where E changes sign
#: (tension under a cohesive crest) it is a ratio of two vanishing
#: quantities. 10 % is our convention, not a published value.
THRUST_E_FRACTION = 0.1
#: a solution is flagged NEGATIVE_STRENGTH when the slice bases with a
#: negative Mohr-Coulomb strength c l + N' tan(phi) sum to more than this
#: fraction of the strength of the others. A few such bases at the crest
#: (a tension-crack force on a thin end slice) cancel a few per cent; the
#: spurious roots of circles without a driving moment cancel all of it (the
#: resisting moment must vanish with the driving one). 0.5 is our
#: convention, not a published value.
NEGATIVE_STRENGTH_FRACTION = 0.5


@njit(cache=True, fastmath=_FASTMATH)
def _newton(s, m, c, tp, ca, sa, l, A, B, ul, dx, dy, f, fr, G0m, s1, s2, tol, max_iter,
            F, lam):
    """Newton on (F, lam) for one (sample, surface) with the interslice
    function ``f[fr]``.

    Returns F, lam, iterations, converged.
    """
    N = ca.shape[1]
    done = False
    n_it = 0
    for it in range(max_iter):
        n_it = it + 1
        E = 0.0
        EF = 0.0
        El = 0.0
        g2 = G0m
        g2F = 0.0
        g2l = 0.0
        for i in range(N):
            t = tp[s, m, i]
            cai = ca[m, i]
            sai = sa[m, i]
            Ai = A[m, i]
            Bi = B[m, i]
            R = c[s, m, i] * l[m, i] - ul[m, i] * t + (Ai * cai - Bi * sai) * t
            T = Bi * cai + Ai * sai
            Phi = F * cai + t * sai
            Psi = t * cai - F * sai
            fi = f[fr, i] if i > 0 else 0.0
            fj = f[fr, i + 1]
            D = Phi - lam * fi * Psi
            G = Phi - lam * fj * Psi
            invG = 1.0 / G
            En = (E * D + F * T - R) * invG
            DF = cai + lam * fi * sai
            GF = cai + lam * fj * sai
            EnF = (EF * D + E * DF + T - En * GF) * invG
            Enl = (El * D - E * fi * Psi + En * fj * Psi) * invG
            dE = E - En
            dEF_ = EF - EnF
            dEl_ = El - Enl
            q = fj * En - fi * E
            dX = lam * q
            dXF = lam * (fj * EnF - fi * EF)
            dXl = q + lam * (fj * Enl - fi * El)
            g2 -= dx[m, i] * dX - dy[m, i] * dE
            g2F -= dx[m, i] * dXF - dy[m, i] * dEF_
            g2l -= dx[m, i] * dXl - dy[m, i] * dEl_
            E = En
            EF = EnF
            El = Enl
        # scaled residuals and Jacobian
        r1 = E / s1
        r2 = g2 / s2
        j11 = EF / s1
        j12 = El / s1
        j21 = g2F / s2
        j22 = g2l / s2
        det = j11 * j22 - j12 * j21
        # lam has no influence (no interslice force for any lam, e.g. an
        # infinite slope) when its Jacobian column is round-off
        lam_col = abs(j12) + abs(j22)
        F_col = abs(j11) + abs(j21)
        if (lam_col > 1e-9 * F_col and abs(det) > 1e-10 * (abs(j11 * j22) + abs(j12 * j21))
                and np.isfinite(det)):
            dF = (-r1 * j22 + r2 * j12) / det
            dl = (-r2 * j11 + r1 * j21) / det
        elif j11 != 0.0:
            dF = -r1 / j11
            dl = 0.0
        else:
            F = np.nan
            break
        if not (np.isfinite(dF) and np.isfinite(dl)):
            F = np.nan
            break
        small = abs(dF) <= tol * F and abs(dl) <= tol * max(1.0, abs(lam))
        # damping: no more than half of F, half a unit of lam per step
        if abs(dF) > 0.5 * F:
            dF = 0.5 * F * (1.0 if dF > 0 else -1.0)
        if abs(dl) > 0.5:
            dl = 0.5 * (1.0 if dl > 0 else -1.0)
        F = F + dF
        lam = lam + dl
        if small:
            done = True
            break
    return F, lam, n_it, done


@njit(cache=True, fastmath=_FASTMATH, inline="always")
def _next_E(s, m, i, E, c, tp, ca, sa, l, A, B, ul, f, F, lam):
    """Interslice normal force on the right of slice i from the one on its left (force recursion)."""
    t = tp[s, m, i]
    Phi = F * ca[m, i] + t * sa[m, i]
    Psi = t * ca[m, i] - F * sa[m, i]
    fi = f[m, i] if i > 0 else 0.0
    R = c[s, m, i] * l[m, i] - ul[m, i] * t + (A[m, i] * ca[m, i] - B[m, i] * sa[m, i]) * t
    T = B[m, i] * ca[m, i] + A[m, i] * sa[m, i]
    return (E * (Phi - lam * fi * Psi) + F * T - R) / (Phi - lam * f[m, i + 1] * Psi)


@njit(cache=True, fastmath=_FASTMATH)
def _post(s, m, c, tp, ca, sa, l, A, B, ul, f, xb, yb_b, yt_b, xm, yb, couple, fscale,
          lscale, F, lam, E_out, X_out, yt_out, neff_out, want):
    """Flags of a solution (F, lam); with ``want`` also its forces and line of thrust."""
    N = ca.shape[1]
    fl = 0
    E = 0.0
    Emax = 0.0
    for i in range(N):
        En = _next_E(s, m, i, E, c, tp, ca, sa, l, A, B, ul, f, F, lam)
        if i < N - 1 and En > Emax:
            Emax = En
        E = En
    E = 0.0
    ZE = 0.0     # E * (elevation of its line of action)
    s_pos = 0.0
    s_neg = 0.0
    for i in range(N):
        t = tp[s, m, i]
        fi = f[m, i] if i > 0 else 0.0
        fj = f[m, i + 1]
        cl = c[s, m, i] * l[m, i]
        En = _next_E(s, m, i, E, c, tp, ca, sa, l, A, B, ul, f, F, lam)
        Xi = lam * fi * E
        Xn = lam * fj * En
        dE = E - En
        dX = Xn - Xi
        ne = (A[m, i] - dX) * ca[m, i] - (B[m, i] + dE) * sa[m, i] - ul[m, i]
        if ne < -1e-9 * abs(A[m, i]):
            fl |= 1
        strength = cl + ne * t
        if strength > 0.0:
            s_pos += strength
        else:
            s_neg -= strength
        # moment of slice i about its base midpoint (x right, y up, ccw +)
        m_left = (xb[m, i] - xm[m, i]) * (-Xi) - (ZE - yb[m, i] * E)
        ZEn = yb[m, i] * En - couple[m, i] - m_left - (xb[m, i + 1] - xm[m, i]) * Xn
        if want:
            neff_out[s, m, i] = ne
            E_out[s, m, i] = E
            X_out[s, m, i] = Xi
            if i == 0:
                yt_out[s, m, 0] = np.nan
        if i < N - 1:
            if En > THRUST_E_FRACTION * Emax and Emax > 1e-9 * fscale[m]:
                y = ZEn / En
                tolz = 1e-9 * lscale[m]
                if y < yb_b[m, i + 1] - tolz or y > yt_b[m, i + 1] + tolz:
                    fl |= 4
            if want:
                yt_out[s, m, i + 1] = ZEn / En if En != 0.0 else np.nan
        E = En
        ZE = ZEn
    if s_neg > NEGATIVE_STRENGTH_FRACTION * s_pos:
        fl |= 32
    if want:
        E_out[s, m, N] = E
        X_out[s, m, N] = lam * f[m, N] * E
        yt_out[s, m, N] = np.nan
    return fl


@njit(parallel=True, cache=True, fastmath=_FASTMATH)
def _gle_kernel(c, tp, ca, sa, l, A, B, ul, dx, dy, f, G0, xb, yb_b, yt_b, xm, yb,
                couple, fscale, lscale, valid, tol, max_iter, F_start, lam_start,
                fs, lam_out, iters, conv, flags, E_out, X_out, yt_out, neff_out, want):
    S = fs.shape[0]
    M = fs.shape[1]
    for k in prange(S * M):
        s = k // M
        m = k - s * M
        if not valid[m]:
            fs[s, m] = np.nan
            lam_out[s, m] = np.nan
            conv[s, m] = False
            iters[s, m] = 0
            continue
        F0 = F_start[s, m]
        if not (F0 > 0.0) or not np.isfinite(F0):
            F0 = 1.0
        lam0 = lam_start[s, m]
        if not np.isfinite(lam0):
            lam0 = 0.0
        s1 = fscale[m]
        s2 = fscale[m] * lscale[m]
        F, lam, n_it, done = _newton(s, m, c, tp, ca, sa, l, A, B, ul, dx, dy, f, m, G0[m],
                                     s1, s2, tol, max_iter, F0, lam0)
        fl = 8
        if F > 0.0 and np.isfinite(F):
            fl = _post(s, m, c, tp, ca, sa, l, A, B, ul, f, xb, yb_b, yt_b, xm, yb, couple,
                       fscale, lscale, F, lam, E_out, X_out, yt_out, neff_out, False)
        if (fl & 40) != 0:
            # Newton from (Bishop's F, lam = 0) diverged or reached a spurious
            # root (negative base strength): continuation from Spencer's
            # constant function, whose root is found reliably from that start,
            # to f in two steps, each started from the root of the previous
            # one. Not retried when Newton merely ran out of iterations: on the
            # demo and benchmark banks the continuation rescued none of those
            # and cost a fifth of the M-P throughput.
            F2 = F0
            lam2 = 0.0
            ok = True
            ft = np.empty((1, f.shape[1]))
            for step in range(3):
                tw = 0.5 * step
                for i in range(f.shape[1]):
                    ft[0, i] = (1.0 - tw) + tw * f[m, i]
                F2, lam2, k2, d2 = _newton(s, m, c, tp, ca, sa, l, A, B, ul, dx, dy, ft, 0,
                                           G0[m], s1, s2, tol, max_iter, F2, lam2)
                n_it += k2
                if not d2 or not (F2 > 0.0) or not np.isfinite(F2):
                    ok = False
                    break
            if ok:
                fl2 = _post(s, m, c, tp, ca, sa, l, A, B, ul, f, xb, yb_b, yt_b, xm, yb,
                            couple, fscale, lscale, F2, lam2, E_out, X_out, yt_out,
                            neff_out, False)
                if (fl2 & 32) == 0:
                    F = F2
                    lam = lam2
                    done = True
                    fl = fl2
        fs[s, m] = F
        lam_out[s, m] = lam
        iters[s, m] = n_it
        conv[s, m] = done
        if not (F > 0.0) or not np.isfinite(F):
            flags[s, m] = 8
            continue
        if want:
            fl = _post(s, m, c, tp, ca, sa, l, A, B, ul, f, xb, yb_b, yt_b, xm, yb, couple,
                       fscale, lscale, F, lam, E_out, X_out, yt_out, neff_out, True)
        flags[s, m] = fl


def morgenstern_price(terms, c, tan_phi, f, *, tol=1e-6, max_iter=50, F_start=None,
                      lam_start=0.0, return_forces=False):
    """Morgenstern-Price / GLE factor of safety and interslice force ratio.

    Parameters
    ----------
    terms : BankTerms
    c, tan_phi : ndarray, shape (s, m, n)
        Cohesion (kPa) and tan of friction angle (-) at the slice bases.
    f : ndarray, shape (m, n + 1)
        Interslice function at the boundaries
        (:func:`slope.methods.interslice.interslice_function`).
    tol : float
        Newton ends when the step in F is below ``tol * F`` and the step in
        lam below ``tol * max(1, |lam|)``.
    max_iter : int
    F_start : ndarray broadcastable to (s, m), optional
        Starting F (default: Bishop's value, computed here).
    lam_start : float or ndarray broadcastable to (s, m)
    return_forces : bool
        Also return E, X, line of thrust and effective base normals.

    Returns
    -------
    dict with ``fs``, ``lam``, ``converged``, ``flags``, ``iterations`` and
    optionally ``E``, ``X``, ``thrust_y``, ``normal_eff``.
    """
    S, M, N = c.shape
    if F_start is None:
        from .bishop import bishop
        F_start = bishop(terms, c, tan_phi, tol=1e-3, max_iter=20)["fs"]
    F_start = np.broadcast_to(np.asarray(F_start, dtype=float), (S, M))
    lam_start = np.broadcast_to(np.asarray(lam_start, dtype=float), (S, M))
    fs = np.empty((S, M))
    lam = np.empty((S, M))
    iters = np.zeros((S, M), dtype=np.int64)
    conv = np.zeros((S, M), dtype=np.bool_)
    flags = np.zeros((S, M), dtype=np.int64)
    shp = (S, M, N + 1) if return_forces else (1, 1, 1)
    E = np.empty(shp)
    X = np.empty(shp)
    yt = np.empty(shp)
    neff = np.empty((S, M, N) if return_forces else (1, 1, 1))
    G0 = terms.couple.sum(axis=1)
    bank = terms.bank
    _gle_kernel(c, tan_phi, terms.cos_a, terms.sin_a, terms.length, terms.A, terms.B,
                terms.ul, terms.dx, terms.dy, np.ascontiguousarray(f, dtype=float), G0,
                terms.x_bound, terms.y_bound_base, terms.y_bound_top,
                np.asarray(bank.x_mid, dtype=float), np.asarray(bank.y_base, dtype=float),
                terms.couple, terms.force_scale, terms.length_scale,
                np.ascontiguousarray(terms.valid), float(tol), int(max_iter), F_start,
                lam_start, fs, lam, iters, conv, flags, E, X, yt, neff, bool(return_forces))
    out = {"fs": fs, "lam": lam, "converged": conv, "flags": flags, "iterations": iters}
    if return_forces:
        out.update(E=E, X=X, thrust_y=yt, normal_eff=neff)
    return out

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
kernel, parts of the bank on threads (:mod:`slope.methods.surface_threads`). Where the Jacobian is singular
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
from numba import njit

from .compiled import CALLEE_ONLY, FROM_PYTHON, first_call
from .surface_threads import borrowed, over_surfaces

__all__ = ["morgenstern_price", "bracketed_roots", "reverse_circles", "SCAN_LAMBDAS", "REVERSE_MOMENT"]

# No fastmath: these kernels call each other, and LLVM inlines a callee compiled in the same process
# (its IR at hand) but not one loaded from numba's cache, so with reassoc/contract the same source
# gave other bits on a first run than on later runs (a 1-ulp FS difference in the dam demo's
# search). Strict IEEE arithmetic is the same inlined or not; it cost 15 % of Morgenstern-Price's
# speed (62-71 -> 54-59 M slice-evaluations/s, bench_speed --parts kernel).
_FASTMATH = False
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


@njit(cache=True, fastmath=_FASTMATH, error_model="numpy", **CALLEE_ONLY)
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


@njit(cache=True, fastmath=_FASTMATH, error_model="numpy", **CALLEE_ONLY)
def _newton_lanes(ct, tt, m, ca, sa, l, A, B, ul, dx, dy, f, fr, G0m, s1, s2, tol, max_iter, F, lam,
                  n_it, done):
    """:func:`_newton` for every sample of surface ``m`` at once (interslice function ``f[fr]``).

    ``ct``, ``tt`` are c and tan(phi) of the surface, shape (n, s): the sample
    axis is the inner, contiguous one, so each step of the force recursion
    runs on all samples in SIMD lanes (the recursion is sequential along the
    slices; one sample alone is a chain of dependent operations). Each
    sample's arithmetic and stopping rule are those of :func:`_newton`; a
    sample that has stopped keeps its values while the others go on.
    ``F``, ``lam`` (s,) hold the starts and receive the results; ``n_it``,
    ``done`` (s,) receive the iterations and convergence.

    Compiled with numpy's error model: a division by zero gives inf or NaN
    (the sample then stops, F NaN, as in _newton's non-finite step) instead of
    Python's check before every division, which kept the lanes from being
    vectorised.
    """
    N = ca.shape[1]
    S = F.shape[0]
    active = np.empty(S, dtype=np.bool_)  # np.empty and loops: np.ones / np.zeros compile on their own
    E = np.empty(S)
    EF = np.empty(S)
    El = np.empty(S)
    g2 = np.empty(S)
    g2F = np.empty(S)
    g2l = np.empty(S)
    for j in range(S):
        active[j] = True
        n_it[j] = 0
        done[j] = False
    n_active = S
    for it in range(max_iter):
        if n_active == 0:
            break
        for j in range(S):
            E[j] = 0.0
            EF[j] = 0.0
            El[j] = 0.0
            g2[j] = G0m
            g2F[j] = 0.0
            g2l[j] = 0.0
        for i in range(N):
            cai = ca[m, i]
            sai = sa[m, i]
            Ai = A[m, i]
            Bi = B[m, i]
            li = l[m, i]
            uli = ul[m, i]
            dxi = dx[m, i]
            dyi = dy[m, i]
            fi = f[fr, i] if i > 0 else 0.0
            fj = f[fr, i + 1]
            for j in range(S):
                t = tt[i, j]
                Fj = F[j]
                lj = lam[j]
                Ej = E[j]
                EFj = EF[j]
                Elj = El[j]
                R = ct[i, j] * li - uli * t + (Ai * cai - Bi * sai) * t
                T = Bi * cai + Ai * sai
                Phi = Fj * cai + t * sai
                Psi = t * cai - Fj * sai
                D = Phi - lj * fi * Psi
                G = Phi - lj * fj * Psi
                invG = 1.0 / G
                En = (Ej * D + Fj * T - R) * invG
                DF = cai + lj * fi * sai
                GF = cai + lj * fj * sai
                EnF = (EFj * D + Ej * DF + T - En * GF) * invG
                Enl = (Elj * D - Ej * fi * Psi + En * fj * Psi) * invG
                dE = Ej - En
                dEF_ = EFj - EnF
                dEl_ = Elj - Enl
                q = fj * En - fi * Ej
                dX = lj * q
                dXF = lj * (fj * EnF - fi * EFj)
                dXl = q + lj * (fj * Enl - fi * Elj)
                g2[j] -= dxi * dX - dyi * dE
                g2F[j] -= dxi * dXF - dyi * dEF_
                g2l[j] -= dxi * dXl - dyi * dEl_
                E[j] = En
                EF[j] = EnF
                El[j] = Enl
        for j in range(S):
            if not active[j]:
                continue
            n_it[j] = it + 1
            Fj = F[j]
            lj = lam[j]
            # scaled residuals and Jacobian, the steps of _newton
            r1 = E[j] / s1
            r2 = g2[j] / s2
            j11 = EF[j] / s1
            j12 = El[j] / s1
            j21 = g2F[j] / s2
            j22 = g2l[j] / s2
            det = j11 * j22 - j12 * j21
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
                F[j] = np.nan
                active[j] = False
                n_active -= 1
                continue
            if not (np.isfinite(dF) and np.isfinite(dl)):
                F[j] = np.nan
                active[j] = False
                n_active -= 1
                continue
            small = abs(dF) <= tol * Fj and abs(dl) <= tol * max(1.0, abs(lj))
            if abs(dF) > 0.5 * Fj:
                dF = 0.5 * Fj * (1.0 if dF > 0 else -1.0)
            if abs(dl) > 0.5:
                dl = 0.5 * (1.0 if dl > 0 else -1.0)
            F[j] = Fj + dF
            lam[j] = lj + dl
            if small:
                done[j] = True
                active[j] = False
                n_active -= 1


#: interslice force inclinations (degrees) of the lam scan that brackets the
#: roots Newton missed: both signs, 2 degree steps to 80 degrees, lam = tan
#: of the inclination (Spencer's theta; for Morgenstern-Price lam scales f)
SCAN_LAMBDAS = np.tan(np.radians(np.r_[np.arange(0.0, 80.01, 2.0), -np.arange(2.0, 80.01, 2.0)]))
#: roots tried from the scan, nearest lam = 0 first
_MAX_BRACKETS = 6


@njit(cache=True, fastmath=_FASTMATH, error_model="numpy", **CALLEE_ONLY)
def _residuals(s, m, c, tp, ca, sa, l, A, B, ul, dx, dy, f, fr, G0m, F, lam):
    """Force residual E_n, moment residual and its F derivative at (F, lam).

    Also returns how many slices have a negative recursion denominator
    ``Phi - lam f Psi``: E_n has a pole where one changes sign, so a sign
    change of E_n across such a change is a pole, not a root.
    """
    N = ca.shape[1]
    E = 0.0
    EF = 0.0
    g2 = G0m
    g2F = 0.0
    neg = 0
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
        if G < 0.0:
            neg += 1
        En = (E * D + F * T - R) / G
        EnF = (EF * D + E * (cai + lam * fi * sai) + T - En * (cai + lam * fj * sai)) / G
        g2 -= dx[m, i] * lam * (fj * En - fi * E) - dy[m, i] * (E - En)
        g2F -= dx[m, i] * lam * (fj * EnF - fi * EF) - dy[m, i] * (EF - EnF)
        E = En
        EF = EnF
    return E, g2, g2F, neg


@njit(cache=True, fastmath=_FASTMATH, error_model="numpy", inline="always")
def _next_E(s, m, i, E, c, tp, ca, sa, l, A, B, ul, f, F, lam):
    """Interslice normal force on the right of slice i from the one on its left (force recursion)."""
    t = tp[s, m, i]
    Phi = F * ca[m, i] + t * sa[m, i]
    Psi = t * ca[m, i] - F * sa[m, i]
    fi = f[m, i] if i > 0 else 0.0
    R = c[s, m, i] * l[m, i] - ul[m, i] * t + (A[m, i] * ca[m, i] - B[m, i] * sa[m, i]) * t
    T = B[m, i] * ca[m, i] + A[m, i] * sa[m, i]
    return (E * (Phi - lam * fi * Psi) + F * T - R) / (Phi - lam * f[m, i + 1] * Psi)


@njit(cache=True, fastmath=_FASTMATH, error_model="numpy", **CALLEE_ONLY)
def _post(s, m, c, tp, ca, sa, l, A, B, ul, f, xb, yb_b, yt_b, xm, yb, couple, fscale,
          lscale, F, lam, E_out, X_out, yt_out, neff_out):
    """Flags of a solution (F, lam); also its forces and line of thrust when ``E_out`` has room for
    them (shape (s, m, n + 1); callers that want the flags only pass a (1, 1, 1) placeholder).

    Not a bool argument: numba compiled this function once per literal True/False its callers wrote
    (0.7 s of CPU on a first run)."""
    N = ca.shape[1]
    want = N > 0 and E_out.shape[2] == N + 1
    fl = 0
    E = 0.0
    Emax = 0.0
    # the forces are marched once and kept: the checks below need the largest E first
    E_next = np.empty(N)
    for i in range(N):
        En = _next_E(s, m, i, E, c, tp, ca, sa, l, A, B, ul, f, F, lam)
        E_next[i] = En
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
        En = E_next[i]
        Xi = lam * fi * E
        Xn = lam * fj * En
        dE = E - En
        dX = Xn - Xi
        ne = (A[m, i] - dX) * ca[m, i] - (B[m, i] + dE) * sa[m, i] - ul[m, i]
        if ne < -1e-9 * abs(A[m, i]):
            fl |= 1
        # recursion denominator (the m_alpha of this method): a root reached
        # across one of its poles is not on the physical branch
        if F * ca[m, i] + t * sa[m, i] - lam * fj * (t * ca[m, i] - F * sa[m, i]) <= 0.0:
            fl |= 64
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


@njit(cache=True, fastmath=_FASTMATH, error_model="numpy", **CALLEE_ONLY)
def _post_lanes(ct, tt, m, ca, sa, l, A, B, ul, f, xb, yb_b, yt_b, xm, yb, couple, fscale, lscale,
                F, lam, fl_out):
    """:func:`_post`'s flags (no forces) for every sample of surface ``m`` at once.

    ``ct``, ``tt`` (n, s) as for :func:`_newton_lanes`; ``F``, ``lam`` (s,)
    the solutions; ``fl_out`` (s,) receives the flags. The same arithmetic
    and tests as :func:`_post`, written without branches inside the sample
    loop so that it is vectorised (numpy's error model: a division by zero
    gives inf or NaN where _post would not divide, and the test it feeds is
    then off as in _post).
    """
    N = ca.shape[1]
    S = F.shape[0]
    E_next = np.empty((N, S))
    E = np.empty(S)  # np.empty and a loop: np.zeros compiles on its own
    Emax = np.empty(S)
    ZE = np.empty(S)
    s_pos = np.empty(S)
    s_neg = np.empty(S)
    fl = np.empty(S, dtype=np.int64)
    for j in range(S):
        E[j] = 0.0
        Emax[j] = 0.0
        ZE[j] = 0.0
        s_pos[j] = 0.0
        s_neg[j] = 0.0
        fl[j] = 0
    # the forces are marched once and kept: the checks below need the largest E first
    for i in range(N):
        cai = ca[m, i]
        sai = sa[m, i]
        fi = f[m, i] if i > 0 else 0.0
        fj = f[m, i + 1]
        R0 = A[m, i] * cai - B[m, i] * sai
        T = B[m, i] * cai + A[m, i] * sai
        li = l[m, i]
        uli = ul[m, i]
        last = i == N - 1
        for j in range(S):
            t = tt[i, j]
            Fj = F[j]
            lj = lam[j]
            Phi = Fj * cai + t * sai
            Psi = t * cai - Fj * sai
            R = ct[i, j] * li - uli * t + R0 * t
            En = (E[j] * (Phi - lj * fi * Psi) + Fj * T - R) / (Phi - lj * fj * Psi)
            E_next[i, j] = En
            Emax[j] = En if (not last and En > Emax[j]) else Emax[j]
            E[j] = En
    for j in range(S):
        E[j] = 0.0
    for i in range(N):
        cai = ca[m, i]
        sai = sa[m, i]
        Ai = A[m, i]
        Bi = B[m, i]
        uli = ul[m, i]
        li = l[m, i]
        fi = f[m, i] if i > 0 else 0.0
        fj = f[m, i + 1]
        ybi = yb[m, i]
        xbi = xb[m, i] - xm[m, i]
        xbn = xb[m, i + 1] - xm[m, i]
        cpl = couple[m, i]
        thr_ne = -1e-9 * abs(Ai)
        inner = i < N - 1
        lo = yb_b[m, i + 1] - 1e-9 * lscale[m] if inner else 0.0
        hi = yt_b[m, i + 1] + 1e-9 * lscale[m] if inner else 0.0
        e_floor = 1e-9 * fscale[m]
        for j in range(S):
            t = tt[i, j]
            Fj = F[j]
            lj = lam[j]
            Ej = E[j]
            En = E_next[i, j]
            Xi = lj * fi * Ej
            Xn = lj * fj * En
            dE = Ej - En
            dX = Xn - Xi
            ne = (Ai - dX) * cai - (Bi + dE) * sai - uli
            bits = 1 if ne < thr_ne else 0
            if Fj * cai + t * sai - lj * fj * (t * cai - Fj * sai) <= 0.0:
                bits |= 64
            strength = ct[i, j] * li + ne * t
            s_pos[j] += strength if strength > 0.0 else 0.0
            s_neg[j] -= strength if not (strength > 0.0) else 0.0
            m_left = xbi * (-Xi) - (ZE[j] - ybi * Ej)
            ZEn = ybi * En - cpl - m_left - xbn * Xn
            if inner:
                y = ZEn / En
                if (En > THRUST_E_FRACTION * Emax[j] and Emax[j] > e_floor) and (y < lo or y > hi):
                    bits |= 4
            fl[j] |= bits
            E[j] = En
            ZE[j] = ZEn
    for j in range(S):
        fl_out[j] = fl[j] | (32 if s_neg[j] > NEGATIVE_STRENGTH_FRACTION * s_pos[j] else 0)


@njit(cache=True, fastmath=_FASTMATH, error_model="numpy", **FROM_PYTHON)
def _rescue_kernel(ss, ms, c, tp, ca, sa, l, A, B, ul, dx, dy, f, G0, xb, yb_b, yt_b, xm, yb, couple,
                   fscale, lscale, tol, max_iter, F0, lams, F_out, lam_out, it_out, found_out, fl_out):
    """Bracket-then-Newton solve for the (sample, surface) pairs ``(ss, ms)`` that Newton from
    lam = 0 missed (Spencer's misses, and Morgenstern-Price's: kept out of :func:`_gle_kernel`,
    which compiles faster without it).

    Starting points (F, lam) of each pair are bracketed by a scan over lam (both signs): for each
    lam of ``lams`` (ordered outward from 0: the positive half, then the negative half) the moment
    equation is solved for F by a damped 1-D Newton (warm-started from the previous lam), and the
    force residual E_n(F_m(lam), lam) is evaluated: the Spencer / Fredlund-Krahn picture of the
    moment and force factors of safety as functions of lam, whose crossing is the solution. A sign
    change of E_n between neighbouring lam values, both with every denominator positive, brackets
    a root; its linear interpolation is a start for the 2-D Newton (at most ``_MAX_BRACKETS``,
    nearest lam = 0 first).

    Each pair tries its starts in that order and takes the first converged root without a flag;
    failing that, the first converged root flagged only by the tolerable flags (negative normal,
    thrust line outside); failing that, ``found = False``. Outputs per pair: F, lam, iterations
    (of the Newton runs from the starts), found, flags.

    Serial: the pairs are few (170 in the whole cut demo, 20 ms of CPU), and numba's parallel
    version took 1.1 s more CPU to compile on a first run. One function with the scan and the
    loop over a pair's starts, not calls per pair: numba optimises and translates again, at each
    level of calls, everything the level calls.
    """
    E_out = np.empty((1, 1, 1))
    G = lams.size
    Fm = np.empty(G)
    r1 = np.empty(G)
    negs = np.empty(G, dtype=np.int64)  # np.empty and loops: np.zeros compiles on its own
    good = np.empty(G, dtype=np.bool_)
    sF = np.empty(_MAX_BRACKETS)
    sl = np.empty(_MAX_BRACKETS)
    key = np.empty(_MAX_BRACKETS)
    for k in range(ss.size):
        s = ss[k]
        m = ms[k]
        G0m = G0[m]
        s1 = fscale[m]
        s2 = fscale[m] * lscale[m]
        # the scan: F_m(lam) and the scaled force residual at each lam
        F = F0[k]
        for g in range(G):
            negs[g] = 0
            good[g] = False
            lam = lams[g]
            if g > 0 and lams[g] < 0.0 and lams[g - 1] >= 0.0:
                F = F0[k]    # the negative half starts again from lam = 0's start
            root = False
            for it in range(40):
                E, g2, g2F, neg = _residuals(s, m, c, tp, ca, sa, l, A, B, ul, dx, dy, f, m, G0m, F, lam)
                if not (np.isfinite(g2) and np.isfinite(g2F)) or g2F == 0.0:
                    break
                dF = -g2 / g2F
                if abs(dF) > 0.5 * F:
                    dF = 0.5 * F * (1.0 if dF > 0 else -1.0)
                F = F + dF
                if abs(dF) <= 1e-9 * F:
                    root = True
                    break
            if root and F > 0.0 and np.isfinite(F):
                E, g2, g2F, neg = _residuals(s, m, c, tp, ca, sa, l, A, B, ul, dx, dy, f, m, G0m, F, lam)
                if np.isfinite(E):
                    Fm[g] = F
                    r1[g] = E / s1
                    negs[g] = neg
                    good[g] = True
            if not good[g]:
                F = F0[k]
        # the brackets: sign changes of the residual on the physical branch
        n_starts = 0
        for g in range(G - 1):
            a = g
            b = g + 1
            if lams[b] < 0.0 and lams[a] >= 0.0:
                a = 0   # the negative half's first interval is [0, -step]
            # only the branch on which every recursion denominator is positive
            # (the analogue of Bishop's m_alpha > 0): beyond a pole, roots exist
            # between every two poles and none is physical
            if not (good[a] and good[b]) or negs[a] != 0 or negs[b] != 0:
                continue
            if r1[a] == 0.0 or (r1[a] > 0.0) != (r1[b] > 0.0):
                w = r1[a] / (r1[a] - r1[b]) if r1[a] != r1[b] else 0.0
                lam_s = lams[a] + w * (lams[b] - lams[a])
                F_s = Fm[a] + w * (Fm[b] - Fm[a])
                kk = abs(lam_s)
                if n_starts < _MAX_BRACKETS:
                    sF[n_starts] = F_s
                    sl[n_starts] = lam_s
                    key[n_starts] = kk
                    n_starts += 1
                else:
                    worst = 0
                    for j in range(1, _MAX_BRACKETS):
                        if key[j] > key[worst]:
                            worst = j
                    if kk < key[worst]:
                        sF[worst] = F_s
                        sl[worst] = lam_s
                        key[worst] = kk
        # nearest lam = 0 first (insertion sort of at most _MAX_BRACKETS)
        for i in range(1, n_starts):
            j = i
            while j > 0 and key[j - 1] > key[j]:
                key[j - 1], key[j] = key[j], key[j - 1]
                sF[j - 1], sF[j] = sF[j], sF[j - 1]
                sl[j - 1], sl[j] = sl[j], sl[j - 1]
                j -= 1
        # the 2-D Newton from each start
        bF = np.nan
        bl = np.nan
        bfl = 8
        found = False
        n_it = 0
        for j in range(n_starts):
            F, lam, it, done = _newton(s, m, c, tp, ca, sa, l, A, B, ul, dx, dy, f, m, G0m, s1, s2, tol,
                                       max_iter, sF[j], sl[j])
            n_it += it
            if not done or not (F > 0.0) or not np.isfinite(F):
                continue
            fl = _post(s, m, c, tp, ca, sa, l, A, B, ul, f, xb, yb_b, yt_b, xm, yb, couple, fscale,
                       lscale, F, lam, E_out, E_out, E_out, E_out)
            if (fl & 104) != 0:
                continue
            if not found or (fl == 0 and bfl != 0):
                bF = F
                bl = lam
                bfl = fl
                found = True
            if fl == 0:
                break
        F_out[k] = bF
        lam_out[k] = bl
        it_out[k] = n_it
        found_out[k] = found
        fl_out[k] = bfl


#: a circle is a *reverse* circle when the moment of its loads about its
#: centre turns the mass against the direction of motion by more than this
#: fraction of force_scale x length_scale (see :func:`reverse_circles`).
#: 1e-6 is our convention: far above the round-off of the moment (1e-16)
#: and of the equilibrium residual at a converged root (about tol^2).
REVERSE_MOMENT = 1e-6


def reverse_circles(terms):
    """Surfaces on which no unflagged Spencer / Morgenstern-Price root exists (a bound).

    A circle whose moment point is its centre (normal forces pass through it:
    ``mn = 0``), with every shear arm ``mt`` positive and within a factor 2
    of the largest, and whose loads have a negative moment about the centre
    (they turn the mass against the direction of motion, so Bishop's F is
    negative). Moment equilibrium of the whole mass about the centre gives,
    at any root ``(F, lam)`` with ``F > 0``,

        sum mt_i s_i = F M_active < 0,     s_i = c_i l_i + N'_i tan(phi_i),

    so the bases with a negative strength outweigh the others:
    ``mt_max s_neg > mt_min s_pos``, hence ``s_neg > s_pos / 2`` -- the
    ``NEGATIVE_STRENGTH`` flag of :func:`_post`. The continuation and the
    lam scan accept only roots without that flag, so on these surfaces they
    cannot change the result; they are skipped. The bound holds wherever the
    equilibrium residual at the root is below ``F |M_active|``
    (``|M_active|`` is at least :data:`REVERSE_MOMENT` of the surface's
    force x length scale here).

    Returns
    -------
    ndarray of bool, shape (m,) (kept on ``terms``)
    """
    cache = terms.__dict__.setdefault("_kernel_terms", {})
    if "reverse" not in cache:
        mt = np.asarray(terms.mt, dtype=float)
        with np.errstate(invalid="ignore"):
            lo = mt.min(axis=1)
            hi = mt.max(axis=1)
            cache["reverse"] = np.ascontiguousarray(
                np.asarray(terms.valid, bool) & ~np.asarray(terms.use_mn, bool) & (lo > 0.0) & (lo >= 0.5 * hi)
                & (terms.m_active < -REVERSE_MOMENT * terms.force_scale * terms.length_scale))
    return cache["reverse"]


def _geometry(terms):
    """The kernels' per-surface arrays, C-contiguous (one numba specialisation), kept on ``terms``.

    ``cos_a, sin_a, length, A, B, ul, dx, dy`` (0-7), ``G0, x_bound, y_bound_base,
    y_bound_top, x_mid, y_base, couple, force_scale, length_scale`` (8-16), ``valid`` (17).
    """
    cache = terms.__dict__.setdefault("_kernel_terms", {})
    if "gle" not in cache:
        C = np.ascontiguousarray
        bank = terms.bank
        cache["gle"] = tuple(C(a, dtype=float) for a in (
            terms.cos_a, terms.sin_a, terms.length, terms.A, terms.B, terms.ul, terms.dx, terms.dy,
            terms.couple.sum(axis=1), terms.x_bound, terms.y_bound_base, terms.y_bound_top, bank.x_mid,
            bank.y_base, terms.couple, terms.force_scale, terms.length_scale)) + (C(terms.valid, dtype=np.bool_),)
    return cache["gle"]


def _dense(x, shape):
    """``x`` broadcast to ``shape`` as a C-contiguous, writeable float array.

    One array type for every caller, so the kernels compile once (a
    read-only or broadcast view is another numba specialisation: seconds of
    compilation each). Arrays that already are so are passed as they are.
    """
    x = np.asarray(x, dtype=float)
    if x.shape == tuple(shape) and x.flags.c_contiguous and x.flags.writeable:
        return x
    return np.array(np.broadcast_to(x, shape), dtype=float, order="C")


def bracketed_roots(terms, c, tan_phi, f, pairs, F_start, *, tol=1e-6, max_iter=50):
    """Roots (F, lam) of the GLE equations by a lam scan then Newton, for some cells.

    Parameters
    ----------
    terms : BankTerms
    c, tan_phi : ndarray (s, m, n)
    f : ndarray (m, n + 1)
        Interslice function (ones for Spencer).
    pairs : (ndarray of int, ndarray of int)
        Sample and surface indices of the cells to solve.
    F_start : ndarray
        Starting F of each cell (e.g. Bishop's).

    Returns
    -------
    F, lam, iterations, found, flags : ndarray (len(pairs[0]),)
    """
    ss = np.ascontiguousarray(pairs[0], dtype=np.int64)
    ms = np.ascontiguousarray(pairs[1], dtype=np.int64)
    k = ss.size
    F = np.full(k, np.nan)
    lam = np.full(k, np.nan)
    its = np.zeros(k, dtype=np.int64)
    found = np.zeros(k, dtype=np.bool_)
    fl = np.full(k, 8, dtype=np.int64)
    if k == 0:
        return F, lam, its, found, fl
    F0 = np.asarray(F_start, dtype=float).ravel()
    F0 = np.ascontiguousarray(np.where(np.isfinite(F0) & (F0 > 0), F0, 1.0))
    S = int(c.shape[0])
    shape = (S, terms.n_surfaces, terms.n_slices)
    g = _geometry(terms)
    with first_call(_rescue_kernel):
        _rescue_kernel(ss, ms, _dense(c, shape), _dense(tan_phi, shape), *g[:8], np.ascontiguousarray(f, dtype=float),
                       *g[8:17], float(tol), int(max_iter), F0, SCAN_LAMBDAS, F, lam, its, found, fl)
    return F, lam, its, found, fl


@njit(cache=True, nogil=True, fastmath=_FASTMATH, error_model="numpy", **FROM_PYTHON)
def _gle_kernel(m0, m1, c, tp, ca, sa, l, A, B, ul, dx, dy, f, G0, xb, yb_b, yt_b, xm, yb,
                couple, fscale, lscale, valid, reverse, tol, max_iter, F_start, lam_start,
                fs, lam_out, iters, conv, flags, rescue):
    """Surfaces ``m0 <= m < m1``: Newton from (F_start, lam_start) on all the samples of a surface
    at once (:func:`_newton_lanes`), their flags (:func:`_post_lanes`), then the continuation
    for the samples that need it, and the outputs.

    Cells that still miss a clean root are marked in ``rescue`` for the lam
    scan (:func:`_rescue_kernel`, run after this kernel on those cells only).
    Serial, without the GIL: :func:`slope.methods.surface_threads.over_surfaces` runs parts of
    the bank on threads (numba's ``parallel=True`` cost 2 s more CPU to compile).

    One function, not a loop calling a function per surface: numba optimises and translates to
    machine code again, at each level of calls, everything the level calls (0.7 s of CPU on a
    first run for that level). Each call of a compiled function counts a reference to every array
    it is passed (an atomic add and subtract each): the continuation's calls, which take some 30
    arrays, are made only where it runs (made for every sample, those counts took 25 % of the
    kernel's time on one thread, ``perf``, levee drained), and the arrays are passed as uncounted
    views.
    """
    # uncounted views: the threads' calls of the callees would contend for each array's reference
    # count (surface_threads.borrowed); the caller holds them all
    c, tp, ca, sa, l, A, B, ul = (borrowed(c), borrowed(tp), borrowed(ca), borrowed(sa), borrowed(l), borrowed(A),
                                  borrowed(B), borrowed(ul))
    dx, dy, f, G0, xb, yb_b, yt_b = borrowed(dx), borrowed(dy), borrowed(f), borrowed(G0), borrowed(xb), \
        borrowed(yb_b), borrowed(yt_b)
    xm, yb, couple, fscale, lscale = borrowed(xm), borrowed(yb), borrowed(couple), borrowed(fscale), borrowed(lscale)
    S = fs.shape[0]
    N = ca.shape[1]
    ct = np.empty((N, S))  # one surface's strengths, samples inner (the lanes)
    tt = np.empty((N, S))
    FL = np.empty(S)
    lamL = np.empty(S)
    F0L = np.empty(S)
    itL = np.empty(S, dtype=np.int64)
    doneL = np.empty(S, dtype=np.bool_)
    flL = np.empty(S, dtype=np.int64)
    ft = np.empty((1, f.shape[1]))  # the continuation's interslice function
    none = np.empty((1, 1, 1))      # _post: flags only, no forces
    for m in range(m0, m1):
        if not valid[m]:
            for s in range(S):
                rescue[s, m] = False
                fs[s, m] = np.nan
                lam_out[s, m] = np.nan
                conv[s, m] = False
                iters[s, m] = 0
            continue
        s1 = fscale[m]
        s2 = fscale[m] * lscale[m]
        for s in range(S):
            for i in range(N):
                ct[i, s] = c[s, m, i]
                tt[i, s] = tp[s, m, i]
            F0 = F_start[s, m]
            if not (F0 > 0.0) or not np.isfinite(F0):
                F0 = 1.0
            lam0 = lam_start[s, m]
            if not np.isfinite(lam0):
                lam0 = 0.0
            F0L[s] = F0
            FL[s] = F0
            lamL[s] = lam0
        _newton_lanes(ct, tt, m, ca, sa, l, A, B, ul, dx, dy, f, m, G0[m], s1, s2, tol,
                      max_iter, FL, lamL, itL, doneL)
        _post_lanes(ct, tt, m, ca, sa, l, A, B, ul, f, xb, yb_b, yt_b, xm, yb, couple, fscale,
                    lscale, FL, lamL, flL)
        for s in range(S):
            F = FL[s]
            lam = lamL[s]
            n_it = itL[s]
            done = doneL[s]
            fl = flL[s] if F > 0.0 and np.isfinite(F) else 8
            # on a reverse circle every root is flagged NEGATIVE_STRENGTH (see
            # reverse_circles): neither the continuation nor the scan can replace it
            if (fl & 40) != 0 and not reverse[m]:
                # Newton from (Bishop's F, lam = 0) diverged or reached a spurious root (negative
                # base strength): continuation from Spencer's constant function, whose root is
                # found reliably from that start, to f in two steps, each started from the root of
                # the previous one; its root replaces Newton's when it converges without the
                # negative-strength flag. Not run when Newton merely ran out of iterations: on the
                # demo and benchmark banks the continuation rescued none of those and cost a fifth
                # of the M-P throughput.
                F2 = F0L[s]
                lam2 = 0.0
                ok = True
                for step in range(3):
                    tw = 0.5 * step
                    for i in range(f.shape[1]):
                        ft[0, i] = (1.0 - tw) + tw * f[m, i]
                    # np.int64(0), not 0: a literal row index is a specialisation of its own, and
                    # _rescue_kernel passes a variable one (_newton compiled twice: 0.55 s of CPU)
                    F2, lam2, k2, d2 = _newton(s, m, c, tp, ca, sa, l, A, B, ul, dx, dy, ft, np.int64(0),
                                               G0[m], s1, s2, tol, max_iter, F2, lam2)
                    n_it += k2
                    if not d2 or not (F2 > 0.0) or not np.isfinite(F2):
                        ok = False
                        break
                if ok:
                    fl2 = _post(s, m, c, tp, ca, sa, l, A, B, ul, f, xb, yb_b, yt_b, xm, yb,
                                couple, fscale, lscale, F2, lam2, none, none, none, none)
                    if (fl2 & 32) == 0:
                        F = F2
                        lam = lam2
                        done = True
                        fl = fl2
            # Newton from lam = 0 (and the continuation) missed, or reached a
            # root across a pole of the recursion: the lam scan over both signs
            # looks for a root on the physical branch (after this kernel)
            rescue[s, m] = (not done or (fl & 104) != 0) and not reverse[m]
            fs[s, m] = F
            lam_out[s, m] = lam
            iters[s, m] = n_it
            conv[s, m] = done
            flags[s, m] = fl if F > 0.0 and np.isfinite(F) else 8


@njit(cache=True, fastmath=_FASTMATH, error_model="numpy", **FROM_PYTHON)
def _forces_kernel(c, tp, ca, sa, l, A, B, ul, f, xb, yb_b, yt_b, xm, yb, couple, fscale, lscale,
                   valid, fs, lam, flags, E_out, X_out, yt_out, neff_out):
    """Interslice forces, line of thrust and base normals of the solutions (on request)."""
    S = fs.shape[0]
    M = fs.shape[1]
    for k in range(S * M):
        s = k // M
        m = k - s * M
        F = fs[s, m]
        if valid[m] and F > 0.0 and np.isfinite(F):
            flags[s, m] = _post(s, m, c, tp, ca, sa, l, A, B, ul, f, xb, yb_b, yt_b, xm, yb, couple,
                                fscale, lscale, F, lam[s, m], E_out, X_out, yt_out, neff_out)


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
    dict with ``fs``, ``lam``, ``converged``, ``flags``, ``iterations``,
    ``strengths_ok`` (True when the Bishop start found every strength finite
    and >= 0, see :func:`slope.methods.bishop.solve_single_equation`) and
    optionally ``E``, ``X``, ``thrust_y``, ``normal_eff``.
    ``iterations`` counts Newton's steps, the continuation's and the lam
    scan's (neither is run on :func:`reverse_circles`).
    """
    S, M, N = c.shape
    strengths_ok = False
    if F_start is None:
        from .bishop import bishop
        start = bishop(terms, c, tan_phi, tol=1e-3, max_iter=20)
        F_start = start["fs"]
        strengths_ok = start["strengths_ok"]  # Bishop's kernel read and checked them all
    c = _dense(c, (S, M, N))
    tan_phi = _dense(tan_phi, (S, M, N))
    F_start = _dense(F_start, (S, M))
    lam_start = _dense(lam_start, (S, M))
    fs = np.empty((S, M))
    lam = np.empty((S, M))
    iters = np.zeros((S, M), dtype=np.int64)
    conv = np.zeros((S, M), dtype=np.bool_)
    flags = np.zeros((S, M), dtype=np.int64)
    rescue = np.zeros((S, M), dtype=np.bool_)
    f = np.ascontiguousarray(f, dtype=float)
    g = _geometry(terms)
    with first_call(_gle_kernel):
        over_surfaces(_gle_kernel, M, c, tan_phi, *g[:8], f, *g[8:], reverse_circles(terms), float(tol),
                      int(max_iter), F_start, lam_start, fs, lam, iters, conv, flags, rescue)
    if rescue.any():
        si, mi = np.nonzero(rescue)
        Fr, lr, kr, found, flr = bracketed_roots(terms, c, tan_phi, f, (si, mi), F_start[si, mi],
                                                 tol=tol, max_iter=max_iter)
        iters[si, mi] += kr
        si, mi = si[found], mi[found]
        fs[si, mi] = Fr[found]
        lam[si, mi] = lr[found]
        conv[si, mi] = True
        flags[si, mi] = flr[found]
    out = {"fs": fs, "lam": lam, "converged": conv, "flags": flags, "iterations": iters,
           "strengths_ok": strengths_ok}
    if return_forces:
        E = np.empty((S, M, N + 1))
        X = np.empty((S, M, N + 1))
        yt = np.empty((S, M, N + 1))
        neff = np.empty((S, M, N))
        with first_call(_forces_kernel):
            _forces_kernel(c, tan_phi, *g[:6], f, *g[9:], fs, lam, flags, E, X, yt, neff)
        out.update(E=E, X=X, thrust_y=yt, normal_eff=neff)
    return out

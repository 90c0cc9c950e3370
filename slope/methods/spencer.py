"""Spencer's method (Spencer 1967, Géotechnique 17(1):11-26).

Interslice resultants are parallel, inclined at ``theta`` (``lam = tan
theta``, with the sign convention of :mod:`slope.methods.gle`). Each slice's
net interslice force ``Q`` (acting toward +x' and down, at angle theta) then
follows in closed form from its own normal and tangential equilibrium,

    Q = (R - F T) / [F cos(a - theta) + tan phi sin(a - theta)],

and the whole mass is in equilibrium when ``sum Q = 0`` (force) and
``sum Q L(theta) = G0`` (moment, ``L`` the moment arm of the unit resultant
at the base midpoint, ``G0`` the loads' couples about the base midpoints).

This is written independently of the GLE recursion, in plain numpy
vectorised over (samples, surfaces, slices), and solved by Newton's method
on (F, theta); it must agree with Morgenstern-Price with a constant
interslice function, which the tests check (flags included: a root whose
negative base strengths cancel the others is flagged ``NEGATIVE_STRENGTH``
as in :mod:`slope.methods.gle`).
"""
from __future__ import annotations

import numpy as np

from .gle import NEGATIVE_STRENGTH_FRACTION, THRUST_E_FRACTION
from .result import BEYOND_POLE, NEGATIVE_NORMAL, NEGATIVE_STRENGTH, NONPOSITIVE, THRUST_OUTSIDE

__all__ = ["spencer", "thrust_line"]

_THETA_MAX = 1.45   # rad, about 83 degrees: keeps cos(theta) away from zero


def thrust_line(terms, E, X):
    """Elevation of the line of thrust from slice moment equilibrium.

    Parameters
    ----------
    terms : BankTerms
    E, X : ndarray, shape (s, m, n + 1), kN/m
        Interslice normal and shear forces at the boundaries (``E_0 = 0``).

    Returns
    -------
    y : ndarray, shape (s, m, n + 1), m
        NaN at the two ends and where ``E = 0``.
    """
    bank = terms.bank
    xb, xm, yb = terms.x_bound, bank.x_mid, bank.y_base
    S, M, N1 = E.shape
    y = np.full(E.shape, np.nan)
    ZE = np.zeros((S, M))
    for i in range(N1 - 1):
        m_left = (xb[:, i] - xm[:, i]) * (-X[:, :, i]) - (ZE - yb[:, i] * E[:, :, i])
        ZE = (yb[:, i] * E[:, :, i + 1] - terms.couple[:, i] - m_left
              - (xb[:, i + 1] - xm[:, i]) * X[:, :, i + 1])
        if i < N1 - 2:
            with np.errstate(divide="ignore", invalid="ignore"):
                y[:, :, i + 1] = np.where(E[:, :, i + 1] != 0, ZE / E[:, :, i + 1], np.nan)
    return y


def thrust_outside(terms, E, y):
    """True where the line of thrust leaves the slice at an interior boundary.

    Boundaries where ``E`` is below ``THRUST_E_FRACTION`` of the surface's
    largest ``E`` are not judged (see :mod:`slope.methods.gle`).
    """
    Ei = E[:, :, 1:-1]
    yi = y[:, :, 1:-1]
    emax = Ei.max(axis=2, keepdims=True)
    # E of round-off size (no interslice force at all) is not judged either
    judged = (Ei > THRUST_E_FRACTION * emax) & (emax > 1e-9 * terms.force_scale[None, :, None])
    tolz = 1e-9 * terms.length_scale[None, :, None]
    out = (yi < terms.y_bound_base[None, :, 1:-1] - tolz) | (yi > terms.y_bound_top[None, :, 1:-1] + tolz)
    return (judged & out).any(axis=2)


def spencer(terms, c, tan_phi, *, tol=1e-6, max_iter=50, F_start=None, lam_start=0.0,
            return_forces=False):
    """Spencer factor of safety and interslice force ratio ``lam = tan(theta)``.

    Parameters
    ----------
    terms : BankTerms
    c, tan_phi : ndarray, shape (s, m, n)
        Cohesion (kPa) and tan of friction angle (-) at the slice bases.
    tol, max_iter, F_start, lam_start, return_forces
        As for :func:`slope.methods.gle.morgenstern_price`.

    Returns
    -------
    dict with ``fs``, ``lam``, ``converged``, ``flags``, ``iterations`` and
    optionally ``E``, ``X``, ``thrust_y``, ``normal_eff``.
    """
    S, M, N = c.shape
    if F_start is None:
        from .bishop import bishop
        F_start = bishop(terms, c, tan_phi, tol=1e-3, max_iter=20)["fs"]
    F = np.broadcast_to(np.asarray(F_start, dtype=float), (S, M)).copy()
    F = np.where(np.isfinite(F) & (F > 0), F, 1.0)
    th = np.arctan(np.broadcast_to(np.asarray(lam_start, dtype=float), (S, M))).copy()
    ca, sa, A, B = terms.cos_a, terms.sin_a, terms.A, terms.B
    T = B * ca + A * sa
    R = c * terms.length - terms.ul * tan_phi + (A * ca - B * sa) * tan_phi
    R = np.broadcast_to(R, (S, M, N))
    t = np.broadcast_to(tan_phi, (S, M, N))
    G0 = terms.couple.sum(axis=1)
    s1 = terms.force_scale
    s2 = terms.force_scale * terms.length_scale
    valid = np.broadcast_to(terms.valid, (S, M))

    def net_forces(F, th):
        cth, sth = np.cos(th)[..., None], np.sin(th)[..., None]
        cam = ca * cth + sa * sth          # cos(a - theta)
        sam = sa * cth - ca * sth          # sin(a - theta)
        Dn = F[..., None] * cam + t * sam
        Q = (R - F[..., None] * T) / Dn
        return Q, cam, sam, Dn, cth, sth

    def newton(F, th, active):
        done = ~active
        conv = np.zeros((S, M), dtype=bool)
        iters = np.zeros((S, M), dtype=np.int64)
        failed = np.zeros((S, M), dtype=bool)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            for it in range(max_iter):
                if done.all():
                    break
                Q, cam, sam, Dn, cth, sth = net_forces(F, th)
                L = -terms.dx * sth - terms.dy * cth
                dL = -terms.dx * cth + terms.dy * sth
                dQF = (-T - Q * cam) / Dn
                dQt = -Q * (F[..., None] * sam - t * cam) / Dn
                r1 = Q.sum(axis=2) / s1
                r2 = ((Q * L).sum(axis=2) - G0) / s2
                j11 = dQF.sum(axis=2) / s1
                j12 = dQt.sum(axis=2) / s1
                j21 = (dQF * L).sum(axis=2) / s2
                j22 = (dQt * L + Q * dL).sum(axis=2) / s2
                det = j11 * j22 - j12 * j21
                # theta has no influence (no interslice force for any theta, e.g.
                # an infinite slope) when its Jacobian column is round-off
                regular = ((np.abs(det) > 1e-10 * (np.abs(j11 * j22) + np.abs(j12 * j21)))
                           & (np.abs(j12) + np.abs(j22) > 1e-9 * (np.abs(j11) + np.abs(j21))))
                dF = np.where(regular, (-r1 * j22 + r2 * j12) / det, -r1 / j11)
                dt = np.where(regular, (-r2 * j11 + r1 * j21) / det, 0.0)
                bad = ~(np.isfinite(dF) & np.isfinite(dt)) & ~done
                failed |= bad
                done |= bad
                small = (np.abs(dF) <= tol * F) & (np.abs(dt) <= tol * np.maximum(1.0, np.abs(np.tan(th))))
                dF = np.clip(dF, -0.5 * F, 0.5 * F)
                dt = np.clip(dt, -0.35, 0.35)
                live = ~done
                F = np.where(live, F + dF, F)
                th = np.where(live, np.clip(th + dt, -_THETA_MAX, _THETA_MAX), th)
                iters = np.where(live, it + 1, iters)
                newly = live & small
                conv |= newly
                done |= newly
        return F, th, conv, iters, failed

    F, th, conv, iters, failed = newton(F, th, valid)
    # Newton from theta = lam_start missed (no root reached, F <= 0, or a root
    # across a pole of Q: a slice whose base normal the interslice resultant
    # has turned past, flag BEYOND_POLE), as on steep toe circles. Bracket a
    # root on the physical branch by a scan of
    # lam over both signs (shared with Morgenstern-Price, f = 1) and restart
    # Newton on Spencer's own equations from there.
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        beyond = (net_forces(np.where(np.isfinite(F), F, 1.0), th)[3] <= 0).any(axis=2)
    from .gle import bracketed_roots, reverse_circles

    # the scan finds no unflagged root on a reverse circle (a bound, see
    # reverse_circles): it is not run there
    miss = valid & (~conv | failed | ~(F > 0) | beyond) & ~reverse_circles(terms)[None, :]
    if miss.any():
        si, mi = np.nonzero(miss)
        F0 = np.broadcast_to(np.asarray(F_start, dtype=float), (S, M))[si, mi]
        Fb, lb, kb, found, _ = bracketed_roots(terms, c, tan_phi, np.ones((M, N + 1)), (si, mi), F0,
                                               tol=tol, max_iter=max_iter)
        if found.any():
            act = np.zeros((S, M), dtype=bool)
            act[si[found], mi[found]] = True
            F2 = F.copy()
            th2 = th.copy()
            F2[si[found], mi[found]] = Fb[found]
            th2[si[found], mi[found]] = np.arctan(lb[found])
            F2, th2, conv2, it2, failed2 = newton(F2, th2, act)
            take = act & conv2 & ~failed2 & (F2 > 0)
            F = np.where(take, F2, F)
            th = np.where(take, th2, th)
            conv = conv | take
            failed = failed & ~take
            iters = iters + np.where(act, it2, 0)
            iters[si[found], mi[found]] += kb[found]

    F = np.where(valid & ~failed, F, np.nan)
    lam = np.where(valid, np.tan(th), np.nan)
    flags = np.where(valid & (~np.isfinite(F) | ~(F > 0)), NONPOSITIVE, 0).astype(np.int64)
    Q, cam, sam, Dn, cth, sth = net_forces(np.where(np.isfinite(F), F, 1.0), th)
    E = np.zeros((S, M, N + 1))
    E[:, :, 1:] = -np.cumsum(Q * cth, axis=2)
    X = lam[..., None] * E
    n_eff = A * ca - B * sa - Q * sam - terms.ul
    neg = (n_eff < -1e-9 * np.abs(A)).any(axis=2)
    strength = c * terms.length + n_eff * tan_phi
    spurious = (np.maximum(-strength, 0.0).sum(axis=2)
                > NEGATIVE_STRENGTH_FRACTION * np.maximum(strength, 0.0).sum(axis=2))
    y = thrust_line(terms, E, X)
    outside = thrust_outside(terms, E, y)
    ok = flags == 0
    flags |= np.where(ok & neg, NEGATIVE_NORMAL, 0)
    flags |= np.where(ok & outside, THRUST_OUTSIDE, 0)
    flags |= np.where(ok & spurious, NEGATIVE_STRENGTH, 0)
    flags |= np.where(ok & (Dn <= 0).any(axis=2), BEYOND_POLE, 0)
    out = {"fs": F, "lam": lam, "converged": conv & np.isfinite(F), "flags": flags,
           "iterations": iters}
    if return_forces:
        out.update(E=E, X=X, thrust_y=y, normal_eff=n_eff)
    return out

"""Janbu's simplified method with the correction factor f0.

Interslice shear forces are neglected; vertical equilibrium of each slice
gives ``N`` as in Bishop's method and overall *horizontal* force equilibrium
gives the uncorrected factor of safety

    F0 * sum (A tan a + B) = sum [c b + (A - u b) tan phi] / (m_alpha cos a).

Janbu (1973, "Slope stability computations", in *Embankment-Dam
Engineering*, Casagrande volume, Wiley, pp. 47-86) multiplies F0 by a
factor f0 >= 1 read from a chart against d/L, the greatest depth of the
surface below the chord joining its ends over the chord length. We use the
usual curve fit to that chart,

    f0 = 1 + b1 [d/L - 1.4 (d/L)^2],

with b1 = 0.69 for c only (phi = 0), 0.31 for phi only (c = 0) and 0.50 for
c and phi -- coefficients recalled from Abramson, Lee, Sharma & Boyce (2002),
*Slope Stability and Stabilization Methods*, 2nd ed., Wiley. ``d`` is taken
perpendicular to the chord.
"""
from __future__ import annotations

import numpy as np

from .bishop import solve_single_equation

__all__ = ["janbu", "janbu_depth_ratio", "janbu_f0"]

#: b1 of the f0 curve fit (value recalled from Abramson et al. 2002)
B1_C_ONLY = 0.69
B1_PHI_ONLY = 0.31
B1_C_PHI = 0.50


def janbu_depth_ratio(terms):
    """d/L of each surface (-), shape (m,).

    ``L`` is the chord from the upslope to the downslope end of the slip
    surface; ``d`` the largest perpendicular distance of the surface below it.
    """
    x, y = terms.x_bound, terms.y_bound_base
    x0, y0 = x[:, :1], y[:, :1]
    ex, ey = x[:, -1:] - x0, y[:, -1:] - y0
    L = np.hypot(ex, ey)
    # signed distance, positive below the chord (the chord descends toward +x')
    dist = ((x - x0) * ey - (y - y0) * ex) / L
    d = np.maximum(dist.max(axis=1), 0.0)
    return d / L[:, 0]


def janbu_f0(d_over_L, c, tan_phi):
    """Janbu's correction factor f0 (curve fit; coefficients recalled).

    Parameters
    ----------
    d_over_L : ndarray, shape (m,)
    c, tan_phi : ndarray, shape (s, m, n)

    Returns
    -------
    f0 : ndarray, shape (s, m)
    """
    no_c = ~(c > 0).any(axis=2)
    no_phi = ~(tan_phi > 0).any(axis=2)
    b1 = np.where(no_phi, B1_C_ONLY, np.where(no_c, B1_PHI_ONLY, B1_C_PHI))
    r = d_over_L[None, :]
    return 1.0 + b1 * (r - 1.4 * r * r)


def janbu(terms, c, tan_phi, *, tol=1e-6, max_iter=50, m_alpha_min=0.2,
          correction=True, return_forces=False):
    """Janbu simplified factor of safety (corrected by f0 unless told not to).

    Parameters
    ----------
    terms : BankTerms
    c, tan_phi : ndarray, shape (s, m, n)
        Cohesion (kPa) and tan of friction angle (-) at the slice bases.
    correction : bool
        Multiply by Janbu's f0 (default True); the uncorrected value is
        ``fs / f0``.
    tol, max_iter, m_alpha_min, return_forces
        As for :func:`slope.methods.bishop.bishop`.
    """
    den0 = (terms.A * terms.sin_a / terms.cos_a + terms.B).sum(axis=1)
    out = solve_single_equation(terms, c, tan_phi, 1.0 / terms.cos_a, den0,
                                np.zeros(terms.n_surfaces, dtype=bool), tol=tol,
                                max_iter=max_iter, m_alpha_min=m_alpha_min,
                                return_forces=return_forces)
    if correction:
        f0 = janbu_f0(janbu_depth_ratio(terms), c, tan_phi)
    else:
        f0 = np.ones_like(out["fs"])
    out["fs"] = out["fs"] * f0
    out["f0"] = f0
    return out

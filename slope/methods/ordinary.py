"""Ordinary method of slices (Fellenius 1936): interslice forces ignored.

The base normal force balances the slice's own loads normal to the base,
``N = A cos a - B sin a``; moment equilibrium about the moment point gives

    F = sum mt (c l + (N - u l) tan phi) / (M_active + sum N mn)

(``mt = R``, ``mn = 0`` for a circle about its centre, giving the textbook
``sum (c l + (W cos a - u l) tan phi) / sum W sin a``). No iteration.
"""
from __future__ import annotations

import numpy as np

from .result import NEGATIVE_NORMAL, NONPOSITIVE

__all__ = ["ordinary"]


def ordinary(terms, c, tan_phi, *, return_forces=False):
    """Ordinary (Fellenius) factor of safety.

    Parameters
    ----------
    terms : BankTerms
    c, tan_phi : ndarray, shape (s, m, n)
        Cohesion (kPa) and tan of the friction angle (-) at the slice bases.
    return_forces : bool
        Also return the effective base normal forces (kN/m).

    Returns
    -------
    dict with ``fs``, ``converged``, ``flags``, ``iterations`` (s, m) and
    optionally ``normal_eff`` (s, m, n).
    """
    N = terms.A * terms.cos_a - terms.B * terms.sin_a
    n_eff = N - terms.ul
    num = np.einsum("mn,smn->sm", terms.mt, c * terms.length + n_eff * tan_phi)
    den = terms.m_active + (N * terms.mn).sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        fs = num / den
    shape = fs.shape
    flags = np.zeros(shape, dtype=np.int64)
    neg = (n_eff < -1e-9 * np.abs(terms.A)).any(axis=1)
    flags |= np.where(neg, NEGATIVE_NORMAL, 0)[None, :]
    flags |= np.where(~np.isfinite(fs) | (fs <= 0), NONPOSITIVE, 0)
    out = {"fs": fs, "converged": np.isfinite(fs), "flags": flags,
           "iterations": np.zeros(shape, dtype=np.int64)}
    if return_forces:
        out["normal_eff"] = np.broadcast_to(n_eff, c.shape).copy()
    return out

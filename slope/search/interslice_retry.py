"""Another interslice function before a non-circular solution is refused.

A Spencer or Morgenstern-Price solution on a non-circular surface that is
clean in every other respect may still be refused by the interslice
shear-strength check (:mod:`slope.search.interslice_strength`) or, where
the search does not tolerate it (the per-realisation searches), by a line of
thrust outside the sliding mass (the ``THRUST_OUTSIDE`` flag of the
kernels, Spencer 1973's criterion, recalled). Both judge the
interslice forces, and those depend on the assumed distribution of the
interslice inclination: Spencer's constant one (Spencer 1967) asks
``X = λ E`` with the same λ from crest to toe. Morgenstern & Price (1965)
leave the function ``f(x)`` to the analyst and say to check the forces
(recalled); an analyst whose solution fails those checks tries another
published function. So before such a solution is refused, the surface is
solved again by Morgenstern-Price with each other function that
:mod:`slope.methods.interslice` offers without user data, in the order of
:data:`RETRY_FUNCTIONS` (``constant`` = Spencer's, ``half-sine``,
``clipped-sine`` with ends 0.5), skipping the one already used. The first
solution that passes *every* check of the search (converged, no
intolerable flag, interslice shear within the strength, thrust line within
the mass where the search asks it) is counted, with its own factor of safety; which function gave
it is kept per trial (``SearchResult.interslice_function``) and counted
(``SearchResult.retried``). Where none passes, the surface stays refused
under the reasons of the first solution.

Measured (issue 15): on the registry test section (c' 8 kPa, φ' 25°) no
block entering within 4 m of the section's end passes with any of the three
functions (largest ratios 1.06-23 with the clipped sine, 1.13-2.0 with the
half-sine against 1.08-9.6 with Spencer's): those blocks need interslice
inclinations near the friction angle along their whole length (Spencer's
λ = 0.48 against tan φ' = 0.47 on the lowest one), whatever the function.
"""
from __future__ import annotations

import numpy as np

__all__ = ["RETRY_FUNCTIONS", "retry_label", "retry_rows"]

#: Interslice functions tried, in order (each as Morgenstern-Price's f(x); clipped sine with ends 0.5, 0.5).
RETRY_FUNCTIONS = ("constant", "half-sine", "clipped-sine")


def retry_label(function: str) -> str:
    """The plain name of a retry: method and interslice function."""
    return f"Morgenstern-Price, {function} interslice function" + (" (ends 0.5)" if function == "clipped-sine" else "")


def _rows_of(value, m, n, rows):
    """Per-base strength ``value`` (broadcastable to (s, m, n)) for the surfaces ``rows`` only."""
    v = np.asarray(value, float)
    shape = np.broadcast_shapes(v.shape, (m, n))
    return np.broadcast_to(v, shape)[..., rows, :]


def retry_rows(section, sub, rows, c, tp, *, used, hypothesis, overrides, tolerated, frictionless, judge,
               F_start=None, terms=None):
    """Solve surfaces ``rows`` of ``sub`` by Morgenstern-Price with the other interslice functions.

    Parameters
    ----------
    section : Section
    sub : SliceBank
        The valid surfaces of the search.
    rows : ndarray of int
        Rows of ``sub`` to retry.
    c, tp : ndarray
        Base strengths of ``sub`` (kPa, -), as passed to the method.
    used : str
        Interslice function of the first solution (``constant`` for Spencer).
    hypothesis : str
    overrides : dict or callable or None
        As for :func:`slope.search.evaluate_surfaces` (the boundary strengths need them).
    tolerated : int
        Flags the search tolerates.
    frictionless : ndarray of bool (len(sub),)
        Surfaces whose every base is frictionless (a negative normal force changes nothing there).
    judge : callable
        ``judge(rows, res, ok) -> (ratio, fails)``: largest interslice ratio
        of the solutions ``res`` on the surfaces ``rows`` of ``sub`` (those
        ``ok`` only) and whether they fail the check.
    F_start : ndarray (len(rows),), optional
        Starting factors of safety (e.g. the first solution's).
    terms : BankTerms, optional
        :func:`slope.methods.prepare_bank` of ``sub`` when kept by the caller
        (used when every row of ``sub`` is retried).

    Returns
    -------
    fs, flags, ratio : ndarray (len(rows),)
        Of the accepted solutions (NaN / 0 where none passed).
    function : ndarray of object (len(rows),)
        The function that gave the accepted solution, '' where none passed.
    """
    from ..methods import factor_of_safety
    from ..methods.result import NEGATIVE_NORMAL

    k = len(rows)
    fs = np.full(k, np.nan)
    flags = np.zeros(k, dtype=np.int64)
    ratio = np.full(k, np.nan)
    function = np.full(k, "", dtype=object)
    left = np.arange(k)
    m, n = sub.width.shape
    for name in RETRY_FUNCTIONS:
        if name == used or not left.size:
            continue
        r_rows = np.asarray(rows)[left]
        whole = terms is not None and np.array_equal(r_rows, np.arange(sub.n_surfaces))
        part = terms if whole else sub.subset(r_rows)
        opts = {} if F_start is None else {"F_start": np.asarray(F_start, float)[left][None, :]}
        res = factor_of_safety(part, _rows_of(c, m, n, r_rows), _rows_of(tp, m, n, r_rows),
                               method="morgenstern-price", interslice=name, return_forces=True, **opts)
        f = res.fs.reshape(-1, left.size)[0]
        fl = np.asarray(res.flags).reshape(-1, left.size)[0]
        conv = np.asarray(res.converged).reshape(-1, left.size)[0]
        bad = fl & ~tolerated & ~np.where(frictionless[r_rows], NEGATIVE_NORMAL, 0)
        ok = conv & (bad == 0) & np.isfinite(f)
        if ok.any():
            rat, fails = judge(r_rows, res, ok)
            ok &= ~fails
        else:
            rat = np.full(left.size, np.nan)
        got = left[ok]
        fs[got], flags[got], ratio[got], function[got] = f[ok], fl[ok], rat[ok], name
        left = left[~ok]
    return fs, flags, ratio, function

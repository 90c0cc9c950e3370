"""Interslice force functions f(x) of the Morgenstern-Price / GLE method.

``X = lam * f(x) * E`` at each slice boundary; ``x`` is normalised to
``xi = (x - x_first) / (x_last - x_first)`` over the horizontal extent of
each surface, so one function serves every surface of a bank.

* ``constant``: f = 1 (Spencer's assumption, Spencer 1967).
* ``half-sine``: f = sin(pi xi) (Morgenstern & Price 1965).
* ``clipped-sine``: a sine arch cut so that it starts at ``f_ends[0]`` and
  ends at ``f_ends[1]`` (0 <= f_end < 1): f = sin(pi s) with s running
  linearly from asin(f_left)/pi to 1 - asin(f_right)/pi.
* ``tabulated``: linear interpolation of a user table ``(xi, f)``.
"""
from __future__ import annotations

import numpy as np

from slipfield.slope.errors import InputError

__all__ = ["interslice_function", "INTERSLICE_NAMES"]

INTERSLICE_NAMES = ("constant", "half-sine", "clipped-sine", "tabulated")


def interslice_function(x_bound, kind="constant", *, f_ends=(0.5, 0.5), table=None):
    """Values of f at the slice boundaries.

    Parameters
    ----------
    x_bound : ndarray, shape (m, n + 1), m
        Boundary abscissae, increasing along each row.
    kind : str
        One of :data:`INTERSLICE_NAMES`.
    f_ends : (float, float)
        End values of the clipped sine, each in [0, 1).
    table : (array, array)
        ``(xi, f)`` for ``tabulated``: xi increasing from 0 to 1, f >= 0.

    Returns
    -------
    f : ndarray, shape (m, n + 1), -
    """
    x0 = x_bound[:, :1]
    xi = (x_bound - x0) / (x_bound[:, -1:] - x0)
    if kind == "constant":
        return np.ones_like(xi)
    if kind == "half-sine":
        return np.sin(np.pi * xi)
    if kind == "clipped-sine":
        try:
            fl, fr = (float(v) for v in f_ends)
        except (TypeError, ValueError):
            raise InputError("f_ends: give two numbers (f at the upslope and the downslope end), "
                             "each in [0, 1)") from None
        if not (0.0 <= fl < 1.0 and 0.0 <= fr < 1.0):
            raise InputError(f"f_ends: {f_ends!r} out of range; each end value of the clipped "
                             "sine must lie in [0, 1) (use half-sine for zero ends)")
        s0 = np.arcsin(fl) / np.pi
        s1 = 1.0 - np.arcsin(fr) / np.pi
        return np.sin(np.pi * (s0 + (s1 - s0) * xi))
    if kind == "tabulated":
        if table is None:
            raise InputError("interslice_table: the tabulated interslice function needs "
                             "interslice_table=(xi, f) with xi from 0 to 1")
        try:
            tx, tf = (np.asarray(v, dtype=float) for v in table)
        except (TypeError, ValueError):
            raise InputError("interslice_table: expected two arrays (xi, f)") from None
        if tx.ndim != 1 or tx.shape != tf.shape or tx.size < 2:
            raise InputError("interslice_table: xi and f must be 1-D arrays of the same "
                             "length, at least 2 points")
        if not (np.all(np.diff(tx) > 0) and abs(tx[0]) < 1e-12 and abs(tx[-1] - 1) < 1e-12):
            raise InputError("interslice_table: xi must increase strictly from 0 to 1 "
                             "(normalised position along the surface)")
        if not (np.all(np.isfinite(tf)) and np.all(tf >= 0)):
            raise InputError("interslice_table: f values must be finite and >= 0")
        return np.interp(xi, tx, tf)
    raise InputError(f"interslice: unknown function {kind!r}; choose one of "
                     + ", ".join(INTERSLICE_NAMES))

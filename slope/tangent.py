"""tan φ from φ in degrees by the C library's ``tan``, the function the compiled kernels call.

On CPUs with AVX-512, NumPy's ``np.tan`` runs a SIMD approximation that
differs from the C library's ``tan`` in the last bit for about 0.6 % of
friction angles (measured on 10⁵ angles in 17–35°). The compiled strength
pass of the simulator (:mod:`slope.simulate.fused`) calls the C library's
``tan``; if the strength law used ``np.tan``, a base's tan φ -- and so FS --
would depend on which path computed it and on the machine's SIMD. The tan φ of
:func:`slope.strength.base_strength` (deterministic analyses, searches, the
simulator's array path) goes through :func:`tan_degrees`.
"""
from __future__ import annotations

import functools
import math

import numpy as np

__all__ = ["tan_degrees"]


def _tan_degrees_py(phi, out):
    deg = np.pi / 180.0  # the constant np.radians multiplies by
    for i in range(phi.size):
        out[i] = math.tan(phi[i] * deg)


@functools.cache
def _kernel():
    """The compiled loop, made on first use (importing the strength law does not import numba)."""
    from numba import njit

    from .methods.compiled import FROM_PYTHON

    return njit(cache=True, **FROM_PYTHON)(_tan_degrees_py)


def tan_degrees(phi):
    """tan of ``phi`` (degrees), element by element, by the C library's ``tan``.

    Parameters
    ----------
    phi : array_like
        Angles, degrees; NaN gives NaN.

    Returns
    -------
    ndarray of float64, the shape of ``phi``.
    """
    from .methods.compiled import first_call

    phi = np.ascontiguousarray(phi, dtype=np.float64)
    out = np.empty_like(phi)
    kernel = _kernel()
    with first_call(kernel):  # one process of a run compiles it, the others load it
        kernel(phi.reshape(-1), out.reshape(-1))
    return out

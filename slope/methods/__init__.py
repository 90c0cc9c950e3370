"""Methods of slices, vectorised over strength samples and trial surfaces.

>>> res = factor_of_safety(bank, c, tan_phi, method="bishop")
>>> res.fs.shape                     # (n_samples, n_surfaces)
>>> res.summary()                    # counts of non-converged / inadmissible

``c`` (kPa) and ``tan_phi`` (-) are the strength at the slice bases,
broadcastable to ``(n_samples, n_surfaces, n_slices)``; undrained analyses
pass ``c = su, tan_phi = 0``. Geometry-only terms are computed once per bank
by :func:`prepare_bank`; pass its result instead of the bank to reuse them
over many calls.

Methods: ``ordinary`` (Fellenius), ``bishop`` (simplified), ``janbu``
(simplified, with f0), ``spencer``, ``morgenstern-price`` (GLE; interslice
functions ``constant``, ``half-sine``, ``clipped-sine``, ``tabulated``).
"""
from __future__ import annotations

import importlib
from dataclasses import dataclass
from typing import Callable

import numpy as np

from slipfield.slope.errors import InputError
from slipfield.slope.slices import SliceBank

from .interslice import INTERSLICE_NAMES, interslice_function
from .result import FLAG_NAMES, INVALID_SURFACE, FSResult
from .terms import BankTerms, default_moment_point, prepare_bank


def _kernel(module, name):
    """The method ``name`` of ``module``, imported on its first call.

    The compiled kernels import numba (a third of a second or more): reading
    the registry's names (case schema, command line) must not pay it.
    """
    def call(*args, **kwargs):
        return getattr(importlib.import_module(module, __name__), name)(*args, **kwargs)
    call.__name__ = call.__qualname__ = name
    return call


# private names: importing a submodule (e.g. .bishop) sets the package attribute of its name
_bishop = _kernel(".bishop", "bishop")
_morgenstern_price = _kernel(".gle", "morgenstern_price")
_janbu = _kernel(".janbu", "janbu")
_ordinary_kernel = _kernel(".ordinary", "ordinary")
_spencer = _kernel(".spencer", "spencer")

__all__ = ["factor_of_safety", "prepare_bank", "FSResult", "BankTerms", "METHODS", "METHOD_NAMES",
           "POLYLINE_METHOD_NAMES", "MethodOfSlices", "register_method", "method_spec",
           "INTERSLICE_NAMES", "FLAG_NAMES", "interslice_function",
           "default_moment_point"]


@dataclass(frozen=True)
class MethodOfSlices:
    """One method of slices of the registry.

    Attributes
    ----------
    name : str
        The name users write (case files, the command line).
    run : callable
        ``run(terms, c, tan_phi, *, tol, max_iter, return_forces, interslice, **options)``
        returning the kernel's dict (``fs``, ``converged``, ``flags``, ...).
    options : tuple of str
        Keyword options the method accepts beyond the common ones.
    polylines : bool
        Whether the method is suited to non-circular surfaces (force
        equilibrium, or moment equilibrium not tied to a circle's centre).
    aliases : tuple of str
        Other names accepted by :func:`factor_of_safety`.
    checks_strengths : bool
        ``run`` checks that ``c`` and ``tan_phi`` are finite and >= 0 while
        it reads them, and says so with ``strengths_ok`` in its dict
        (:func:`factor_of_safety` then skips its own passes over them, and
        makes them, with their messages, whenever ``strengths_ok`` is not True).
    compiled : tuple of str
        The groups of compiled kernels ``run`` may call, which a run's idle
        workers compile ahead of it (:data:`slope.methods.compiled.KERNEL_GROUPS`;
        empty for a method in numpy only).
    """

    name: str
    run: Callable
    options: tuple = ()
    polylines: bool = False
    aliases: tuple = ()
    checks_strengths: bool = False
    compiled: tuple = ()


#: name -> MethodOfSlices; the case schema, the command line and the refinement read their lists here.
METHODS: dict[str, MethodOfSlices] = {}
_ALIASES: dict[str, str] = {}


def register_method(spec: MethodOfSlices) -> MethodOfSlices:
    """Add a method of slices to the registry (one line per method)."""
    from .compiled import KERNEL_GROUPS

    unknown = set(spec.compiled) - set(KERNEL_GROUPS)
    if unknown:
        raise ValueError(f"method {spec.name!r}: unknown kernel groups {sorted(unknown)}; "
                         f"known: {sorted(KERNEL_GROUPS)}")
    METHODS[spec.name] = spec
    for a in (spec.name, *spec.aliases):
        _ALIASES[a] = spec.name
    return spec


def _ordinary(terms, c, tp, *, tol, max_iter, return_forces, interslice):
    return _ordinary_kernel(terms, c, tp, return_forces=return_forces)


def _iterative(fn):
    def run(terms, c, tp, *, tol, max_iter, return_forces, interslice, **opts):
        return fn(terms, c, tp, tol=tol, max_iter=max_iter, return_forces=return_forces, **opts)
    return run


def _gle(terms, c, tp, *, tol, max_iter, return_forces, interslice, f_ends=(0.5, 0.5),
         interslice_table=None, **opts):
    f = interslice_function(terms.x_bound, interslice, f_ends=f_ends, table=interslice_table)
    return _morgenstern_price(terms, c, tp, f, tol=tol, max_iter=max_iter, return_forces=return_forces, **opts)


register_method(MethodOfSlices("ordinary", _ordinary, aliases=("fellenius",)))
register_method(MethodOfSlices("bishop", _iterative(_bishop), options=("m_alpha_min",),
                               checks_strengths=True, compiled=("single-equation",)))
register_method(MethodOfSlices("janbu", _iterative(_janbu), options=("m_alpha_min", "correction"),
                               polylines=True, checks_strengths=True, compiled=("single-equation",)))
register_method(MethodOfSlices("spencer", _iterative(_spencer), options=("F_start", "lam_start"),
                               polylines=True, compiled=("lam-scan",)))
register_method(MethodOfSlices("morgenstern-price", _gle,
                               options=("F_start", "lam_start", "f_ends", "interslice_table"),
                               polylines=True, aliases=("m-p", "mp", "gle", "morgenstern_price"),
                               checks_strengths=True, compiled=("general", "lam-scan")))

#: Every method's name, in registry order.
METHOD_NAMES = tuple(METHODS)
#: Methods suited to non-circular (polyline) surfaces.
POLYLINE_METHOD_NAMES = tuple(n for n, m in METHODS.items() if m.polylines)


def method_spec(method) -> MethodOfSlices:
    """The registry entry of a method name or alias (case-insensitive).

    Raises
    ------
    InputError
        An unknown name; the message lists the known ones.
    """
    key = _ALIASES.get(str(method).strip().lower())
    if key is None:
        raise InputError(f"method: unknown method {method!r}; choose one of " + ", ".join(METHODS))
    return METHODS[key]


def _strength(name, value, m, n, check_values=True):
    arr = np.asarray(value, dtype=float)
    if arr.ndim > 3:
        raise InputError(f"{name}: {arr.ndim}-D array; give an array broadcastable to "
                         f"(n_samples, n_surfaces={m}, n_slices={n})")
    arr3 = arr.reshape((1,) * (3 - arr.ndim) + arr.shape)
    try:
        out = np.broadcast_to(arr3, (arr3.shape[0], m, n))
    except ValueError:
        raise InputError(f"{name}: shape {arr.shape} does not broadcast to "
                         f"(n_samples, n_surfaces={m}, n_slices={n}); give one value per "
                         "slice base, per surface or a scalar") from None
    if check_values:
        _check_strength_values(name, arr)
    return out


def _check_strength_values(name, arr):
    """InputError naming ``name`` if ``arr`` holds NaN, infinite or negative values."""
    # two reductions without temporaries: this check runs on every kernel call
    # (arrays of millions of values), where isfinite/any cost a quarter of Bishop
    lo, hi = (float(arr.min()), float(arr.max())) if arr.size else (0.0, 0.0)
    if not (np.isfinite(lo) and np.isfinite(hi)):
        raise InputError(f"{name}: contains NaN or infinite values; every slice base needs a "
                         "finite strength")
    if lo < 0:
        raise InputError(f"{name}: negative values (min {lo:g}); strengths must be >= 0")


def factor_of_safety(bank, c, tan_phi, method="bishop", *, interslice="constant",
                     tol=1e-6, max_iter=50, moment_point=None, return_forces=False,
                     **opts) -> FSResult:
    """Factor of safety of every surface of a bank for every strength sample.

    Parameters
    ----------
    bank : SliceBank or BankTerms
        Slices of ``m`` surfaces with ``n`` slices each (``prepare_bank``
        output reuses the geometry-only terms across calls).
    c : array_like, broadcastable to (s, m, n), kPa
        Cohesion (effective c', or su for undrained analyses) at slice bases.
    tan_phi : array_like, broadcastable to (s, m, n), -
        tan of the friction angle (0 for undrained analyses).
    method : str
        ``ordinary`` (alias ``fellenius``), ``bishop``, ``janbu``,
        ``spencer``, ``morgenstern-price`` (aliases ``gle``, ``m-p``).
    interslice : str
        Morgenstern-Price interslice function: ``constant``, ``half-sine``,
        ``clipped-sine`` (with ``f_ends=(f_left, f_right)``) or ``tabulated``
        (with ``interslice_table=(xi, f)``, xi from 0 to 1 along the surface).
    tol : float
        Relative tolerance on F (and on lam) that ends the iteration.
    max_iter : int
        Iterations before a result is reported as not converged.
    moment_point : (xo, yo), optional
        Moment centre in the sliding frame (m), numbers or arrays of one value
        per surface; only used when ``bank`` is a SliceBank. Default: circle
        centre, else a point above the surface.
    return_forces : bool
        Also return effective base normal forces and, for Spencer and
        Morgenstern-Price, interslice forces and line of thrust.
    **opts
        ``m_alpha_min`` (Bishop, Janbu; default 0.2), ``correction`` (Janbu
        f0, default True), ``F_start`` and ``lam_start`` (Spencer, M-P),
        ``f_ends``, ``interslice_table``.

    Returns
    -------
    FSResult
        ``fs`` (s, m) with ``converged``, ``flags`` / ``admissible``
        (bits of :data:`FLAG_NAMES`: negative effective normal force,
        m_alpha too small, thrust line outside a slice, F not positive,
        surface rejected by the bank, and for Spencer / Morgenstern-Price
        negative base shear strengths cancelling much of the rest -- a
        spurious root),
        ``iterations``, ``lam`` (Spencer, M-P), ``f0`` (Janbu).
    """
    spec = method_spec(method)
    key = spec.name
    if isinstance(bank, BankTerms):
        terms = bank
    elif isinstance(bank, SliceBank):
        terms = prepare_bank(bank, moment_point)
    else:
        raise InputError(f"bank: expected a SliceBank or the output of prepare_bank, got "
                         f"{type(bank).__name__}")
    m, n = terms.n_surfaces, terms.n_slices
    if not (np.isfinite(tol) and 0 < tol < 0.1):
        raise InputError(f"tol: {tol!r}; give a relative tolerance between 0 and 0.1, e.g. 1e-6")
    if int(max_iter) < 1:
        raise InputError(f"max_iter: {max_iter!r}; give at least 1 iteration")
    # a method that checks the strengths in its own pass over them (checks_strengths) is
    # trusted with that only when it says it read them all; else they are checked here
    cc = _strength("c", c, m, n, check_values=not spec.checks_strengths)
    tp = _strength("tan_phi", tan_phi, m, n, check_values=not spec.checks_strengths)
    s = max(cc.shape[0], tp.shape[0])
    cc = np.broadcast_to(cc, (s, m, n))
    tp = np.broadcast_to(tp, (s, m, n))

    unknown = set(opts) - set(spec.options)
    if unknown:
        raise InputError(f"{', '.join(sorted(unknown))}: not an option of method {key!r}; "
                         f"its options are {', '.join(sorted(spec.options)) or 'none'}")
    out = spec.run(terms, cc, tp, tol=tol, max_iter=max_iter, return_forces=return_forces,
                   interslice=interslice, **opts)
    if spec.checks_strengths and not out.get("strengths_ok", False):
        _check_strength_values("c", cc)
        _check_strength_values("tan_phi", tp)

    flags = out["flags"] | np.where(terms.valid, 0, INVALID_SURFACE)[None, :]
    fs = np.where(terms.valid[None, :], out["fs"], np.nan)
    conv = out["converged"] & terms.valid[None, :]
    options = {"tol": tol, "max_iter": max_iter}
    if key == "morgenstern-price":
        options["interslice"] = interslice
    return FSResult(method=key, fs=fs, converged=conv, flags=flags,
                    iterations=out["iterations"], lam=out.get("lam"), f0=out.get("f0"),
                    normal_eff=out.get("normal_eff"), E=out.get("E"), X=out.get("X"),
                    thrust_y=out.get("thrust_y"), options=options)

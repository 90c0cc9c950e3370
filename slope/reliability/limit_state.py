"""The limit state seen by every reliability method.

A limit state is a vectorised function of the random variables in physical
units, ``g(X: (n, n_vars)) -> FS (n,)``; failure is ``FS < threshold``
(threshold 1 by default, so pf = P(FS < 1)). The function may also return
per-sample status, which every method counts and reports:

- a plain array ``fs`` (all samples taken as converged and admissible);
- a tuple ``(fs, converged, admissible)`` of arrays;
- an object with attributes ``fs`` and optionally ``converged`` and
  ``admissible`` (e.g. ``slope.methods``' ``FSResult``).

If ``fs`` is 2-D ``(n, n_surfaces)``, each row's minimum over the surfaces
is taken (the critical surface of that sample, i.e. a per-sample search), with
the status of that surface.

Per-sample search option: a :class:`LimitState` holds the limit state on
the fixed (deterministic critical) surface and, optionally, one that searches
again for each sample. Methods take ``surface="fixed" | "searched" | "both"``.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

from ..errors import InputError

__all__ = ["Evaluation", "LimitState", "as_limit_state", "SURFACE_LABELS"]

SURFACE_LABELS = {"fixed": "fixed surface", "searched": "surface searched per sample"}


@dataclass
class Evaluation:
    """FS of a batch of samples with their status.

    Attributes
    ----------
    fs : ndarray (n,)
        Factor of safety (dimensionless).
    converged, admissible : ndarray of bool (n,)
        Status per sample.
    """

    fs: np.ndarray
    converged: np.ndarray
    admissible: np.ndarray

    @property
    def valid(self) -> np.ndarray:
        """Converged, admissible and finite."""
        return self.converged & self.admissible & np.isfinite(self.fs)

    @staticmethod
    def concatenate(parts) -> "Evaluation":
        parts = list(parts)
        return Evaluation(np.concatenate([p.fs for p in parts]),
                          np.concatenate([p.converged for p in parts]),
                          np.concatenate([p.admissible for p in parts]))


def _normalise(out, n) -> Evaluation:
    conv = adm = None
    if isinstance(out, tuple):
        if len(out) != 3:
            raise InputError("a limit state returning a tuple must give (fs, converged, admissible)")
        fs, conv, adm = out
    elif hasattr(out, "fs"):
        fs = out.fs
        conv = getattr(out, "converged", None)
        adm = getattr(out, "admissible", None)
    else:
        fs = out
    fs = np.asarray(fs, dtype=float)
    conv = np.ones(fs.shape, bool) if conv is None else np.broadcast_to(np.asarray(conv, bool), fs.shape)
    adm = np.ones(fs.shape, bool) if adm is None else np.broadcast_to(np.asarray(adm, bool), fs.shape)
    if fs.ndim == 2:
        # Per-sample search: the critical surface of each sample is the valid
        # surface with the least FS; invalid surfaces only count if all are.
        ok = conv & adm & np.isfinite(fs)
        masked = np.where(ok, fs, np.inf)
        k = np.argmin(masked, axis=1)
        none_ok = ~ok.any(axis=1)
        k = np.where(none_ok, np.argmin(np.where(np.isfinite(fs), fs, np.inf), axis=1), k)
        r = np.arange(fs.shape[0])
        fs, conv, adm = fs[r, k], conv[r, k], adm[r, k]
    fs = fs.reshape(-1)
    if fs.shape[0] != n:
        raise InputError(
            f"the limit state returned {fs.shape[0]} values for {n} samples; it must be "
            "vectorised: g(X of shape (n, n_vars)) -> FS of shape (n,)"
        )
    return Evaluation(fs, np.asarray(conv, bool).reshape(-1).copy(),
                      np.asarray(adm, bool).reshape(-1).copy())


class LimitState:
    """Limit state(s) of a reliability analysis.

    Parameters
    ----------
    fixed : callable
        ``g(X (n, n_vars)) -> FS`` on the fixed surface (see module doc for
        the return forms).
    searched : callable, optional
        The same with the critical surface searched again for each sample.
    threshold : float
        Failure is ``FS < threshold`` (default 1.0).
    """

    def __init__(self, fixed: Callable, searched: Callable | None = None, *,
                 threshold: float = 1.0):
        if not callable(fixed):
            raise InputError("limit state 'fixed' must be callable g(X) -> FS")
        if searched is not None and not callable(searched):
            raise InputError("limit state 'searched' must be callable g(X) -> FS or None")
        self.fixed = fixed
        self.searched = searched
        self.threshold = float(threshold)

    def surfaces(self, surface: str) -> list[str]:
        """Keys of the limit states asked for by ``surface``."""
        if surface not in ("fixed", "searched", "both"):
            raise InputError(
                f"surface must be 'fixed', 'searched' or 'both', got {surface!r}"
            )
        if surface in ("searched", "both") and self.searched is None:
            raise InputError(
                f"surface={surface!r} needs a re-searched limit state: give "
                "LimitState(fixed, searched=...)"
            )
        return ["fixed", "searched"] if surface == "both" else [surface]

    def evaluate(self, X, surface: str = "fixed") -> Evaluation:
        """Evaluate one limit state (``surface`` 'fixed' or 'searched') on ``X (n, n_vars)``."""
        X = np.atleast_2d(np.asarray(X, dtype=float))
        func = self.fixed if surface == "fixed" else self.searched
        if func is None:
            raise InputError("no re-searched limit state was given")
        return _normalise(func(X), X.shape[0])


def as_limit_state(g) -> LimitState:
    """A :class:`LimitState` from a callable (fixed surface) or a LimitState."""
    if isinstance(g, LimitState):
        return g
    return LimitState(g)

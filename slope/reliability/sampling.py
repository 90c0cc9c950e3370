"""Crude Monte Carlo and Latin hypercube sampling of a limit state.

Both draw independent standard normals ``u``, map them to physical values
through the random vector's Nataf copula and evaluate the limit state in
vectorised batches (optionally across processes). With ``surface="both"``
the same samples are evaluated on the fixed surface and with the surface
searched again per sample (common random numbers: the difference is the
effect of the search, not of sampling noise).

Latin hypercube stratification is applied to the *independent* standard
normals (McKay, Beckman & Conover 1979); when variables are correlated the
Cholesky mixing keeps the stratification exact only for the first variable.
The binomial interval reported for LHS is that of independent sampling;
LHS usually does better, so it is conservative for pf (documented in the
result's ``notes``).
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from .limit_state import Evaluation, SURFACE_LABELS, as_limit_state
from .parallel import (BLOCK, STREAM_MC, batch_ranges, check_jobs, lhs_normal_rows,
                       lhs_permutations, map_batches, normal_rows)
from .stats import PfEstimate, convergence_history, estimate_pf, fs_distribution
from .variables import RandomVector

__all__ = ["SurfaceResult", "SamplingResult", "monte_carlo", "latin_hypercube",
           "sample_variables"]


@dataclass
class SurfaceResult:
    """Sampled FS of one limit state (fixed or searched surface) and its summaries."""

    label: str
    evaluation: Evaluation
    estimate: PfEstimate
    history: dict
    distribution: dict


@dataclass
class SamplingResult:
    """Result of :func:`monte_carlo` / :func:`latin_hypercube`.

    Attributes
    ----------
    design : str
        ``"monte-carlo"`` or ``"latin-hypercube"``.
    n, seed : int
    names : list of str
        Variable names (columns of ``X``).
    X : ndarray (n, n_vars) or None
        The samples in physical units (None if ``keep_samples=False``).
    surfaces : dict
        ``"fixed"`` and/or ``"searched"`` → :class:`SurfaceResult`.
    n_evaluations : int
        Limit-state evaluations (samples × surfaces asked).
    notes : list of str
    """

    design: str
    n: int
    seed: int
    names: list
    X: np.ndarray | None
    surfaces: dict
    n_evaluations: int
    notes: list = field(default_factory=list)

    @property
    def main(self) -> SurfaceResult:
        return next(iter(self.surfaces.values()))

    @property
    def pf(self) -> float:
        """pf of the first surface asked (fixed if it was asked)."""
        return self.main.estimate.pf

    @property
    def fs(self) -> np.ndarray:
        return self.main.evaluation.fs


def _check_common(variables, n, seed):
    if not isinstance(variables, RandomVector):
        raise InputError("variables must be a RandomVector (see random_vector)")
    if not isinstance(n, (int, np.integer)) or n < 1:
        raise InputError(f"number of samples n must be a positive integer, got {n!r}")
    if not isinstance(seed, (int, np.integer)) or seed < 0:
        raise InputError(f"seed must be a non-negative integer, got {seed!r}")


def _physical(variables, u_of, a, b, n):
    """Physical rows a..b-1, transformed per whole block (batch-size independent)."""
    A = (a // BLOCK) * BLOCK
    B = min(-(-b // BLOCK) * BLOCK, n)
    u = u_of(A, B)
    X = np.concatenate([variables.to_physical(u[i:i + BLOCK]) for i in range(0, B - A, BLOCK)])
    return X[a - A: b - A]


def sample_variables(variables: RandomVector, n: int, *, seed: int, design="monte-carlo",
                     start: int = 0, stop: int | None = None) -> np.ndarray:
    """Rows ``start .. stop-1`` of the sample design, physical units ``(k, n_vars)``."""
    _check_common(variables, n, seed)
    stop = n if stop is None else stop
    d = variables.n_random
    if design == "monte-carlo":
        return _physical(variables, lambda A, B: normal_rows(seed, A, B, d, STREAM_MC),
                         start, stop, n)
    if design == "latin-hypercube":
        perms = lhs_permutations(seed, n, d)
        return _physical(variables, lambda A, B: lhs_normal_rows(seed, perms, A, B),
                         start, stop, n)
    raise InputError(f"design must be 'monte-carlo' or 'latin-hypercube', got {design!r}")


def _run(design, limit_state, variables, n, seed, surface, n_jobs, batch_size,
         keep_samples, level, ci_method, bins):
    _check_common(variables, n, seed)
    check_jobs(n_jobs, batch_size)
    ls = as_limit_state(limit_state)
    keys = ls.surfaces(surface)
    d = variables.n_random
    if design == "latin-hypercube":
        perms = lhs_permutations(seed, n, d)

        def u_of(A, B):
            return lhs_normal_rows(seed, perms, A, B)
    else:
        def u_of(A, B):
            return normal_rows(seed, A, B, d, STREAM_MC)

    def work(a, b):
        X = _physical(variables, u_of, a, b, n)
        return X, {k: ls.evaluate(X, k) for k in keys}

    parts = map_batches(work, batch_ranges(n, batch_size or 10_000), n_jobs)
    X = np.concatenate([p[0] for p in parts]) if keep_samples else None
    out = {}
    for k in keys:
        ev = Evaluation.concatenate(p[1][k] for p in parts)
        est = estimate_pf(ev.fs, converged=ev.converged, admissible=ev.admissible,
                          threshold=ls.threshold, level=level, ci_method=ci_method)
        hist = convergence_history(ev.fs, ev.valid, threshold=ls.threshold, level=level,
                                   ci_method=ci_method)
        out[k] = SurfaceResult(SURFACE_LABELS[k], ev, est, hist,
                               fs_distribution(ev.fs, ev.valid, bins=bins))
    notes = []
    if design == "latin-hypercube":
        notes.append("binomial interval assumes independent samples; conservative for LHS")
        if variables.is_correlated:
            notes.append("LHS strata hold exactly only for the first variable when "
                         "variables are correlated (Cholesky mixing)")
    return SamplingResult(design, int(n), int(seed), list(variables.names), X, out,
                          int(n) * len(keys), notes)


def monte_carlo(limit_state, variables: RandomVector, n: int, *, seed: int,
                surface: str = "fixed", n_jobs: int = 1, batch_size: int | None = None,
                keep_samples: bool = True, level: float = 0.95,
                ci_method: str = "wilson", bins: int = 50) -> SamplingResult:
    """Crude Monte Carlo estimate of pf = P(FS < threshold).

    Parameters
    ----------
    limit_state : LimitState or callable
        ``g(X (n, n_vars)) -> FS (n,)`` (see :mod:`.limit_state`).
    variables : RandomVector
    n : int
        Number of samples.
    seed : int
        Seed of the run; identical results for any ``n_jobs``/``batch_size``.
    surface : {'fixed', 'searched', 'both'}
        Which limit state(s) to evaluate on the same samples.
    n_jobs : int
        Processes for joblib (1 = in this process, -1 = all cores).
    batch_size : int, optional
        Samples per batch (default 10 000).
    keep_samples : bool
        Keep ``X`` in the result (needed for rank correlations).
    level, ci_method
        Confidence level and ``'wilson'`` or ``'clopper-pearson'``.
    bins : int
        Histogram bins of the FS distribution.
    """
    return _run("monte-carlo", limit_state, variables, n, seed, surface, n_jobs,
                batch_size, keep_samples, level, ci_method, bins)


def latin_hypercube(limit_state, variables: RandomVector, n: int, *, seed: int,
                    surface: str = "fixed", n_jobs: int = 1, batch_size: int | None = None,
                    keep_samples: bool = True, level: float = 0.95,
                    ci_method: str = "wilson", bins: int = 50) -> SamplingResult:
    """Latin hypercube estimate of pf; parameters as :func:`monte_carlo`.

    The whole design (one permutation of the n strata per variable) is fixed
    by ``seed`` and ``n``, so it is reproducible for any batching.
    """
    return _run("latin-hypercube", limit_state, variables, n, seed, surface, n_jobs,
                batch_size, keep_samples, level, ci_method, bins)

"""Importance sampling about the FORM design point.

Samples u ~ N(u*, I) in the independent standard-normal space; each carries
the weight w = φ(u)/φ(u − u*) = exp(−u·u* + ½‖u*‖²), and
pf = mean(1[FS < threshold] · w), with CoV estimated from the sample
variance of the weighted indicators (e.g. Melchers & Beck 2018,
*Structural Reliability Analysis and Prediction*, 3rd ed., ch. 3).
Draws follow :mod:`.parallel`'s fixed blocks: identical for any ``n_jobs``
and ``batch_size``.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from .limit_state import Evaluation, as_limit_state
from .parallel import (BLOCK, STREAM_IS, batch_ranges, check_jobs, map_batches,
                       normal_rows)
from .stats import beta_from_pf
from .variables import RandomVector

__all__ = ["ImportanceResult", "importance_sampling"]


@dataclass
class ImportanceResult:
    """Importance-sampling estimate of pf.

    Attributes
    ----------
    pf, cov_pf : float
        Estimate and its coefficient of variation.
    ci : tuple
        Normal-approximation interval pf(1 ± z·CoV), clipped at 0.
    beta_from_pf : float
    n, n_evaluations, n_fail : int
    n_nonconverged, n_inadmissible : int
        Invalid samples are counted as safe in ``pf`` (see notes).
    design_point_u : ndarray
    history : dict
        ``n`` and running ``pf``.
    """

    pf: float
    cov_pf: float
    ci: tuple
    beta_from_pf: float
    n: int
    n_evaluations: int
    n_fail: int
    n_nonconverged: int
    n_inadmissible: int
    design_point_u: np.ndarray
    history: dict
    notes: list = field(default_factory=list)


def importance_sampling(limit_state, variables: RandomVector, n: int, *, seed: int,
                        design_point=None, form_result=None, surface: str = "fixed",
                        n_jobs: int = 1, batch_size: int | None = None,
                        level: float = 0.95) -> ImportanceResult:
    """pf by importance sampling centred on the design point.

    Parameters
    ----------
    limit_state : LimitState or callable
    variables : RandomVector
    n : int
        Number of samples.
    seed : int
    design_point : array_like (n_random,), optional
        Centre in u-space; or give ``form_result`` (a :class:`FORMResult`).
    surface : {'fixed', 'searched'}
    n_jobs, batch_size
        As for :func:`monte_carlo`.
    level : float
        Confidence level of the normal-approximation interval.
    """
    from scipy import special

    if not isinstance(variables, RandomVector):
        raise InputError("variables must be a RandomVector (see random_vector)")
    if not isinstance(n, (int, np.integer)) or n < 2:
        raise InputError(f"number of samples n must be an integer >= 2, got {n!r}")
    check_jobs(n_jobs, batch_size)
    if design_point is None:
        if form_result is None:
            raise InputError("give design_point (u-space) or form_result from form()")
        design_point = form_result.design_point_u
    us = np.asarray(design_point, float).reshape(-1)
    d = variables.n_random
    if us.size != d:
        raise InputError(f"design_point must have {d} entries (random variables), got {us.size}")
    if surface not in ("fixed", "searched"):
        raise InputError("importance sampling takes surface='fixed' or 'searched'")
    ls = as_limit_state(limit_state)
    ls.surfaces(surface)
    half = 0.5 * float(us @ us)

    def work(a, b):
        A = (a // BLOCK) * BLOCK
        B = min(-(-b // BLOCK) * BLOCK, n)
        U = normal_rows(seed, A, B, d, STREAM_IS) + us
        X = np.concatenate([variables.to_physical(U[i:i + BLOCK]) for i in range(0, B - A, BLOCK)])
        U, X = U[a - A:b - A], X[a - A:b - A]
        ev = ls.evaluate(X, surface)
        logw = -(U @ us) + half
        return ev, logw

    parts = map_batches(work, batch_ranges(n, batch_size or 10_000), n_jobs)
    ev = Evaluation.concatenate(p[0] for p in parts)
    w = np.exp(np.concatenate([p[1] for p in parts]))
    ind = (ev.valid & (ev.fs < ls.threshold)).astype(float) * w
    pf = float(ind.mean())
    sd = float(ind.std(ddof=1))
    cov = sd / (pf * math.sqrt(n)) if pf > 0 else math.inf
    z = float(special.ndtri(0.5 + level / 2))
    ci = (max(0.0, pf * (1 - z * cov)), pf * (1 + z * cov)) if pf > 0 else (0.0, math.nan)
    ns = np.unique(np.geomspace(min(10, n), n, 50).astype(int))
    run = np.cumsum(ind)[ns - 1] / ns
    notes = []
    if not np.all(ev.valid):
        notes.append(f"{int((~ev.valid).sum())} samples not converged/admissible, counted as safe")
    return ImportanceResult(pf, cov, ci, float(beta_from_pf(pf)), int(n), int(n),
                            int((ind > 0).sum()), int((~ev.converged).sum()),
                            int((ev.converged & ~ev.admissible).sum()), us.copy(),
                            {"n": ns, "pf": run}, notes)

"""Subset simulation for small probabilities of failure.

Au & Beck (2001, Probab. Eng. Mech. 16:263-277): pf = P(F₁) Π P(Fᵢ₊₁|Fᵢ)
with intermediate failure events Fᵢ = {FS ≤ bᵢ}, each threshold bᵢ chosen so
that a fraction p0 of the level's N samples lies below it. Samples of level
i + 1 are Markov chains started from the p0·N samples below bᵢ. The chains
use the conditional-sampling step of Papaioannou, Betz, Zwirglmaier &
Straub (2015, Probab. Eng. Mech. 41:89-103) in the standard-normal space:
candidate v = ρ u + √(1 − ρ²) ξ (which leaves N(0, I) invariant), kept if
FS(v) ≤ bᵢ; all chains advance together, so each step is one vectorised
limit-state call.

Coefficient of variation (Au & Beck 2001, eqs. 27-31): level 0
δ₀² = (1 − p₀)/(p₀ N); level i δᵢ² = (1 − pᵢ)/(pᵢ N)(1 + γᵢ), γᵢ from the
chains' indicator autocorrelation. ``cov_pf`` = √Σδᵢ² (levels uncorrelated)
and ``cov_pf_upper`` = Σδᵢ (fully correlated levels), a bracket.

Random numbers of level ℓ come from ``realisation_rng(seed, ℓ, STREAM_SUBSET)``
drawn in a fixed shape, so results do not depend on ``n_jobs``.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from .limit_state import as_limit_state
from .parallel import STREAM_SUBSET, block_rng, check_jobs, evaluate_rows
from .stats import beta_from_pf
from .variables import RandomVector

__all__ = ["SubsetResult", "subset_simulation"]


@dataclass
class SubsetResult:
    """Subset simulation estimate of pf.

    Attributes
    ----------
    pf : float
    cov_pf, cov_pf_upper : float
        CoV of pf assuming uncorrelated / fully correlated levels.
    beta_from_pf : float
    thresholds : list of float
        Intermediate FS thresholds bᵢ (the last is the failure threshold).
    level_probabilities : list of float
    level_cov : list of float
        δᵢ per level.
    acceptance : list of float
        Acceptance rate of the chains per level ≥ 1.
    n_evaluations : int
        Limit-state evaluations in total.
    mc_equivalent_evaluations : float
        Crude Monte Carlo samples for the same CoV: (1 − pf)/(pf δ²).
    n_nonconverged, n_inadmissible : int
    fs_final : ndarray
        FS of the last level's samples.
    """

    pf: float
    cov_pf: float
    cov_pf_upper: float
    beta_from_pf: float
    thresholds: list
    level_probabilities: list
    level_cov: list
    acceptance: list
    n_evaluations: int
    mc_equivalent_evaluations: float
    n_nonconverged: int
    n_inadmissible: int
    fs_final: np.ndarray = field(repr=False)
    notes: list = field(default_factory=list)


def _gamma(ind, p):
    """Au & Beck (2001) eq. 29: correlation factor of chain indicators ``ind (Ns, Nc)``."""
    ns, nc = ind.shape
    N = ns * nc
    r0 = p * (1.0 - p)
    if r0 <= 0:
        return 0.0
    g = 0.0
    for k in range(1, ns):
        rk = np.sum(ind[:-k] * ind[k:]) / (N - k * nc) - p * p
        g += 2.0 * (1.0 - k / ns) * rk / r0
    return max(g, 0.0)


def subset_simulation(limit_state, variables: RandomVector, *, seed: int,
                      n_per_level: int = 1000, p0: float = 0.1, rho: float = 0.8,
                      max_levels: int = 20, surface: str = "fixed",
                      n_jobs: int = 1, batch_size: int | None = None) -> SubsetResult:
    """Estimate a small pf = P(FS < threshold) by subset simulation.

    Parameters
    ----------
    limit_state : LimitState or callable
    variables : RandomVector
    seed : int
    n_per_level : int
        Samples per level N; ``p0 * N`` must be an integer ≥ 1 and ``1/p0``
        an integer (chain length).
    p0 : float
        Conditional probability per level (0 < p0 ≤ 0.5; 0.1 is usual).
    rho : float
        Correlation of the conditional-sampling proposal (0 ≤ rho < 1).
    max_levels : int
        Stop (and say so) after this many levels.
    surface : {'fixed', 'searched'}
    n_jobs, batch_size
        Split each limit-state call across processes.
    """
    if not isinstance(variables, RandomVector):
        raise InputError("variables must be a RandomVector (see random_vector)")
    if not isinstance(seed, (int, np.integer)) or seed < 0:
        raise InputError(f"seed must be a non-negative integer, got {seed!r}")
    if not 0.0 < p0 <= 0.5:
        raise InputError(f"p0 must be in (0, 0.5], got {p0}; 0.1 is usual")
    nc = p0 * n_per_level
    ns = 1.0 / p0
    if abs(nc - round(nc)) > 1e-9 or abs(ns - round(ns)) > 1e-9 or round(nc) < 1:
        raise InputError(
            f"p0 * n_per_level ({nc:g}) and 1/p0 ({ns:g}) must be integers: e.g. p0=0.1 "
            "with n_per_level a multiple of 10"
        )
    if not 0.0 <= rho < 1.0:
        raise InputError(f"rho must be in [0, 1), got {rho}")
    if surface not in ("fixed", "searched"):
        raise InputError("subset simulation takes surface='fixed' or 'searched'")
    check_jobs(n_jobs, batch_size)
    ls = as_limit_state(limit_state)
    ls.surfaces(surface)
    nc, ns, N = int(round(nc)), int(round(ns)), int(n_per_level)
    d = variables.n_random
    t = ls.threshold
    counts = {"n": 0, "nc": 0, "na": 0}

    def fs_of(U):
        ev = evaluate_rows(ls, variables.to_physical(U), surface, n_jobs, batch_size)
        counts["n"] += U.shape[0]
        counts["nc"] += int((~ev.converged).sum())
        counts["na"] += int((ev.converged & ~ev.admissible).sum())
        # Samples without a valid FS rank as safe (never selected as seeds).
        return np.where(ev.valid, ev.fs, np.inf)

    U = block_rng(seed, 0, STREAM_SUBSET).standard_normal((N, d))
    Y = fs_of(U)
    thresholds, probs, deltas, acc = [], [], [], []
    chains = None  # indicator layout (Ns, Nc) of the current level
    notes = []
    pf = 1.0
    for level in range(max_levels + 1):
        order = np.argsort(Y, kind="stable")
        b = 0.5 * (Y[order[nc - 1]] + Y[order[nc]])
        last = b <= t or level == max_levels
        if last:
            b = t
            if level == max_levels and Y[order[nc - 1]] > t:
                notes.append(f"stopped at max_levels={max_levels} before reaching FS < {t}")
        fail = Y < b if last else Y <= b
        p = float(fail.mean()) if last else nc / N
        if level == 0:
            delta2 = (1.0 - p) / (p * N) if p > 0 else math.inf
        else:
            ind = fail[chains].astype(float)
            delta2 = (1.0 - p) / (p * N) * (1.0 + _gamma(ind, p)) if p > 0 else math.inf
        thresholds.append(float(b))
        probs.append(p)
        deltas.append(math.sqrt(delta2))
        pf *= p
        if last or p == 0:
            break
        # Seeds: the nc samples with the least FS; each starts a chain of ns states.
        seeds = order[:nc]
        rng = block_rng(seed, level + 1, STREAM_SUBSET)
        xi = rng.standard_normal((ns - 1, nc, d))
        states = [U[seeds]]
        ys = [Y[seeds]]
        u_cur, y_cur = U[seeds].copy(), Y[seeds].copy()
        s = math.sqrt(1.0 - rho * rho)
        n_acc = 0
        for step in range(ns - 1):
            v = rho * u_cur + s * xi[step]
            yv = fs_of(v)
            ok = yv <= b
            n_acc += int(ok.sum())
            u_cur = np.where(ok[:, None], v, u_cur)
            y_cur = np.where(ok, yv, y_cur)
            states.append(u_cur.copy())
            ys.append(y_cur.copy())
        acc.append(n_acc / (nc * (ns - 1)))
        # Flattened so that chain j, state l is row l*nc + j.
        U = np.concatenate(states)
        Y = np.concatenate(ys)
        chains = np.arange(N).reshape(ns, nc)
    cov = math.sqrt(sum(x * x for x in deltas))
    cov_up = sum(deltas)
    mc_eq = (1.0 - pf) / (pf * cov * cov) if pf > 0 and cov > 0 else math.inf
    return SubsetResult(pf, cov, cov_up, float(beta_from_pf(pf)), thresholds, probs, deltas,
                        acc, counts["n"], mc_eq, counts["nc"], counts["na"], Y, notes)

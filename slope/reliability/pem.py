"""Point estimate methods: moments of FS from a few evaluations.

Rosenblueth (1975, PNAS 72:3812-3814): 2ⁿ points at μᵢ ± σᵢ (every sign
combination) with weights (1 + Σ_{i<j} sᵢ sⱼ ρᵢⱼ)/2ⁿ for correlated
variables; exact for the mean and variance of a low-order polynomial of
symmetric variables. This is the symmetric form; skewed inputs are used at
μ ± σ as stated (Rosenblueth 1981's skew correction is not applied).

Hong (1998, Reliab. Eng. Syst. Saf. 59:261-267) 2n + 1 scheme: variable k in
turn at μₖ + ξₖ,ᵢ σₖ, others at the mean, with
ξₖ,₁,₂ = λ₃/2 ± √(λ₄ − 3λ₃²/4), ξₖ,₃ = 0, weights
pₖ,ᵢ = (−1)^(3−i)/(ξₖ,ᵢ (ξₖ,₁ − ξₖ,₂)) (i = 1, 2) and
pₖ,₃ = 1/n − 1/(λ₄ − λ₃²), where λ₃, λ₄ are the skewness and kurtosis of
variable k. For normal inputs: ξ = ±√3, p = 1/6 and the centre point's total
weight is 1 − n/3 (= 1 − 2n/6). The per-variable three-point rule matches the
first five moments of the variable (derived in the tests). Correlated
variables are handled in the independent standard-normal space of the Nataf
copula (normal-space points, λ₃ = 0, λ₄ = 3), because Hong's scheme assumes
independence.

From the moments, pf is given under a normal and a lognormal assumption for
FS (both labelled).
"""
from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from .limit_state import as_limit_state
from .stats import beta_lognormal, beta_normal, pf_lognormal, pf_normal
from .variables import RandomVector

__all__ = ["PointEstimate", "rosenblueth", "hong", "hong_points"]

#: Default ceiling on Rosenblueth's 2ⁿ runs (n ≤ 10).
MAX_ROSENBLUETH_RUNS = 1024


@dataclass
class PointEstimate:
    """Moments of FS from a point estimate method and pf under two assumptions.

    Attributes
    ----------
    method : str
    mean_fs, std_fs, skew_fs : float
    beta_normal, pf_normal : float
        FS taken as normal.
    beta_lognormal, pf_lognormal : float
        FS taken as lognormal.
    points : ndarray (m, n_vars)
        The evaluation points (physical units).
    weights : ndarray (m,)
    fs : ndarray (m,)
    n_evaluations, n_nonconverged, n_inadmissible : int
    notes : list of str
    """

    method: str
    mean_fs: float
    std_fs: float
    skew_fs: float
    beta_normal: float
    pf_normal: float
    beta_lognormal: float
    pf_lognormal: float
    points: np.ndarray
    weights: np.ndarray
    fs: np.ndarray
    n_evaluations: int
    n_nonconverged: int
    n_inadmissible: int
    notes: list = field(default_factory=list)


def _finish(method, ls, X, w, surface, notes):
    ev = ls.evaluate(X, surface)
    y = ev.fs
    notes = list(notes)
    if not np.all(ev.valid):
        notes.append(f"{int((~ev.valid).sum())} of {y.size} points are not converged/"
                     "admissible; their FS values are used as returned")
    m1 = float(np.sum(w * y))
    m2 = float(np.sum(w * (y - m1) ** 2))
    m3 = float(np.sum(w * (y - m1) ** 3))
    if m2 < 0:
        notes.append(f"weighted variance came out negative ({m2:.3g}): negative centre "
                     "weight with a strongly non-linear FS; std set to nan")
    s = math.sqrt(m2) if m2 >= 0 else math.nan
    sk = m3 / s**3 if s and s > 0 else math.nan
    with np.errstate(divide="ignore", invalid="ignore"):
        res = PointEstimate(
            method, m1, s, sk,
            float(beta_normal(m1, s, ls.threshold)), float(pf_normal(m1, s, ls.threshold)),
            float(beta_lognormal(m1, s, ls.threshold)), float(pf_lognormal(m1, s, ls.threshold)),
            X, w, y, int(y.size), int((~ev.converged).sum()),
            int((ev.converged & ~ev.admissible).sum()), notes)
    return res


def rosenblueth(limit_state, variables: RandomVector, *, surface: str = "fixed",
                max_runs: int = MAX_ROSENBLUETH_RUNS) -> PointEstimate:
    """Rosenblueth's 2ⁿ point estimate of the mean and std of FS.

    Parameters
    ----------
    limit_state : LimitState or callable
    variables : RandomVector
        Deterministic variables stay at their value and add no points.
    surface : {'fixed', 'searched'}
    max_runs : int
        Refuse more than this many evaluations (2ⁿ grows fast).

    Raises
    ------
    InputError
        If 2ⁿ > ``max_runs``: use :func:`hong` (2n + 1 runs) instead.
    """
    if not isinstance(variables, RandomVector):
        raise InputError("variables must be a RandomVector (see random_vector)")
    ls = as_limit_state(limit_state)
    if surface not in ("fixed", "searched"):
        raise InputError("point estimates take surface='fixed' or 'searched' (run twice for both)")
    ls.surfaces(surface)
    act = np.flatnonzero(variables.active)
    n = act.size
    if 2**n > max_runs:
        raise InputError(
            f"Rosenblueth's method needs 2^{n} = {2**n} runs for {n} random variables, more "
            f"than max_runs = {max_runs}; use the Hong 2n+1 scheme (hong(), {2 * n + 1} runs)"
        )
    R = variables.correlation[np.ix_(act, act)]
    signs = np.array(list(itertools.product((1.0, -1.0), repeat=n))) if n else np.zeros((1, 0))
    iu = np.triu_indices(n, 1)
    pair = (signs[:, iu[0]] * signs[:, iu[1]] * R[iu]).sum(axis=1) if n > 1 else 0.0
    w = (1.0 + pair) / 2.0**n
    if np.any(w < 0):
        raise InputError("Rosenblueth weights came out negative: correlations too strong "
                         "for the two-point scheme; use FORM or sampling")
    X = np.repeat(variables.at_mean(), signs.shape[0], axis=0)
    X[:, act] += signs * variables.stds[act]
    notes = []
    skewed = [variables.names[i] for i in act
              if variables.variables[i].marginal.name not in ("normal", "uniform", "deterministic")
              and abs(_skew_kurt(variables.variables[i].marginal)[0]) > 1e-6]
    if skewed:
        notes.append("skewed inputs used at mean ± std (symmetric form): " + ", ".join(skewed))
    return _finish("Rosenblueth 2^n", ls, X, w, surface, notes)


def _skew_kurt(marginal):
    if marginal.name == "normal":
        return 0.0, 3.0
    s, k = marginal._dist.stats(moments="sk")
    return float(s), float(k) + 3.0


def hong_points(skew: float, kurtosis: float, n: int):
    """Standardised locations ξ (3,) and weights p (3,) of Hong's 2n+1 scheme for one variable.

    Parameters
    ----------
    skew, kurtosis : float
        λ₃ and λ₄ (kurtosis, not excess: 3 for a normal).
    n : int
        Number of random variables of the problem.
    """
    root = math.sqrt(kurtosis - 0.75 * skew * skew)
    x1, x2 = skew / 2.0 + root, skew / 2.0 - root
    p1 = 1.0 / (x1 * (x1 - x2))
    p2 = -1.0 / (x2 * (x1 - x2))
    p3 = 1.0 / n - 1.0 / (kurtosis - skew * skew)
    return np.array([x1, x2, 0.0]), np.array([p1, p2, p3])


def hong(limit_state, variables: RandomVector, *, surface: str = "fixed") -> PointEstimate:
    """Hong's 2n + 1 point estimate of the mean and std of FS.

    Independent variables are placed in physical space with their own skewness
    and kurtosis; correlated ones in the Nataf standard-normal space.
    """
    if not isinstance(variables, RandomVector):
        raise InputError("variables must be a RandomVector (see random_vector)")
    ls = as_limit_state(limit_state)
    if surface not in ("fixed", "searched"):
        raise InputError("point estimates take surface='fixed' or 'searched' (run twice for both)")
    ls.surfaces(surface)
    act = np.flatnonzero(variables.active)
    n = act.size
    notes = []
    if n == 0:
        return _finish("Hong 2n+1", ls, variables.at_mean(), np.ones(1), surface, notes)
    rows, w = [], []
    centre_w = 0.0
    if variables.is_correlated:
        xi, p = hong_points(0.0, 3.0, n)
        for j in range(n):
            for i in range(2):
                u = np.zeros(n)
                u[j] = xi[i]
                rows.append(variables.to_physical(u[None, :])[0])
                w.append(p[i])
            centre_w += p[2]
        notes.append("correlated variables: points placed in the Nataf standard-normal space")
    else:
        for j, k in enumerate(act):
            m = variables.variables[k].marginal
            sk, ku = _skew_kurt(m)
            xi, p = hong_points(sk, ku, n)
            for i in range(2):
                x = variables.means.copy()
                x[k] = m.mean + xi[i] * m.std
                if not m.lower <= x[k] <= m.upper:
                    raise InputError(
                        f"Hong point for {variables.names[k]!r} at {x[k]:g} lies outside its "
                        f"support [{m.lower:g}, {m.upper:g}]"
                    )
                rows.append(x)
                w.append(p[i])
            centre_w += p[2]
    rows.append(variables.means.copy())
    w.append(centre_w)
    if centre_w < 0:
        notes.append(f"centre weight is negative ({centre_w:.3f}), as Hong's scheme gives for "
                     "n > 3 normal variables")
    return _finish("Hong 2n+1", ls, np.array(rows), np.array(w), surface, notes)

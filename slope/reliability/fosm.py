"""First-order second-moment (FOSM) method, mean-value form.

μ_FS ≈ g(μ), σ²_FS ≈ ∇gᵀ C ∇g with C the covariance matrix of the inputs
(from the target correlation and the marginals' standard deviations).
Derivatives are central differences with a step of ``step`` standard
deviations; ``step = 1`` is the Taylor-series practice of the US Army Corps
of Engineers (1997, ETL 1110-2-547; recalled) and Duncan (2000, JGGE
126(4):307-316; recalled): common practice, not a requirement. Exact for a
limit state linear in the inputs.

The share of each variable in the first-order variance,
(∂g/∂xᵢ σᵢ)²/σ²_FS (uncorrelated inputs), is a cheap variance decomposition.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from .limit_state import as_limit_state
from .stats import beta_lognormal, beta_normal, pf_lognormal, pf_normal
from .variables import RandomVector

__all__ = ["FOSMResult", "fosm"]


@dataclass
class FOSMResult:
    """Mean-value FOSM result.

    Attributes
    ----------
    mean_fs, std_fs : float
    beta_normal, pf_normal, beta_lognormal, pf_lognormal : float
        Labelled as in :mod:`.stats`.
    gradient : ndarray (n_vars,)
        ∂FS/∂xᵢ at the mean (1/property units; 0 for deterministic ones).
    variance_share : dict
        Variable name → share of σ²_FS (sums to 1 for uncorrelated inputs;
        with correlation the cross terms are in ``"(correlation terms)"``).
    n_evaluations : int
    """

    mean_fs: float
    std_fs: float
    beta_normal: float
    pf_normal: float
    beta_lognormal: float
    pf_lognormal: float
    gradient: np.ndarray
    variance_share: dict
    n_evaluations: int
    n_nonconverged: int
    n_inadmissible: int
    notes: list = field(default_factory=list)


def fosm(limit_state, variables: RandomVector, *, step: float = 1.0,
         surface: str = "fixed") -> FOSMResult:
    """Mean-value FOSM estimate of the mean and std of FS.

    Parameters
    ----------
    limit_state : LimitState or callable
    variables : RandomVector
    step : float
        Central-difference step in standard deviations (> 0; default 1).
    surface : {'fixed', 'searched'}
    """
    if not isinstance(variables, RandomVector):
        raise InputError("variables must be a RandomVector (see random_vector)")
    if not step > 0:
        raise InputError(f"FOSM step must be > 0 standard deviations, got {step}")
    if surface not in ("fixed", "searched"):
        raise InputError("FOSM takes surface='fixed' or 'searched' (run twice for both)")
    ls = as_limit_state(limit_state)
    ls.surfaces(surface)
    act = np.flatnonzero(variables.active)
    mu, sd = variables.means, variables.stds
    X = np.repeat(mu[None, :], 1 + 2 * act.size, axis=0)
    for j, k in enumerate(act):
        X[1 + 2 * j, k] += step * sd[k]
        X[2 + 2 * j, k] -= step * sd[k]
    ev = ls.evaluate(X, surface)
    y = ev.fs
    grad = np.zeros(variables.n)
    for j, k in enumerate(act):
        grad[k] = (y[1 + 2 * j] - y[2 + 2 * j]) / (2 * step * sd[k])
    C = variables.correlation * np.outer(sd, sd)
    var = float(grad @ C @ grad)
    terms = {variables.names[k]: (grad[k] * sd[k]) ** 2 / var if var > 0 else 0.0 for k in act}
    if variables.is_correlated and var > 0:
        terms["(correlation terms)"] = 1.0 - sum(terms.values())
    s = math.sqrt(var)
    m = float(y[0])
    notes = [] if np.all(ev.valid) else [f"{int((~ev.valid).sum())} points not converged/admissible"]
    with np.errstate(divide="ignore", invalid="ignore"):
        return FOSMResult(m, s, float(beta_normal(m, s, ls.threshold)),
                          float(pf_normal(m, s, ls.threshold)),
                          float(beta_lognormal(m, s, ls.threshold)),
                          float(pf_lognormal(m, s, ls.threshold)), grad, terms, int(y.size),
                          int((~ev.converged).sum()), int((ev.converged & ~ev.admissible).sum()),
                          notes)

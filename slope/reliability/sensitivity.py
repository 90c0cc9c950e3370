"""Sensitivity of FS to the random variables.

- :func:`tornado`: FS with each variable in turn at μ ± kσ, the others at
  their means. k = 2 by default, which is common practice (a range that
  covers most of a variable's plausible values), not a rule; the user
  chooses k. Values outside a bounded support are clipped to it and flagged.
  One variable at a time ignores correlation (stated in the result).
- :func:`rank_correlations`: Spearman rank correlation of each input with FS
  over Monte Carlo samples (scipy.stats.spearmanr).
- :func:`first_order_indices`: a cheap variance decomposition from the same
  samples, with no extra limit-state runs: Sᵢ = Var(E[FS | xᵢ])/Var(FS)
  estimated by the correlation ratio over equiprobable bins of xᵢ, with the
  usual small-sample correction of the between-bin variance.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from .limit_state import as_limit_state
from .variables import RandomVector

__all__ = ["TornadoResult", "tornado", "rank_correlations", "first_order_indices"]


@dataclass
class TornadoResult:
    """FS at μ ± kσ of each variable.

    Attributes
    ----------
    k : float
    fs_mean : float
        FS with every variable at its mean.
    names : list of str
        Random variables, sorted by decreasing swing.
    low_value, high_value : ndarray
        Variable values used (μ − kσ, μ + kσ, clipped to the support).
    fs_low, fs_high : ndarray
        FS at those values.
    swing : ndarray
        |fs_high − fs_low|.
    clipped : list of str
        Variables whose μ ± kσ left the support.
    """

    k: float
    fs_mean: float
    names: list
    low_value: np.ndarray
    high_value: np.ndarray
    fs_low: np.ndarray
    fs_high: np.ndarray
    swing: np.ndarray
    clipped: list
    n_evaluations: int
    notes: list = field(default_factory=list)


def tornado(limit_state, variables: RandomVector, *, k: float = 2.0,
            surface: str = "fixed") -> TornadoResult:
    """One-at-a-time sensitivity of FS: each variable at μ ± kσ.

    Parameters
    ----------
    limit_state : LimitState or callable
    variables : RandomVector
    k : float
        Number of standard deviations (> 0; default 2, common practice).
    surface : {'fixed', 'searched'}
    """
    if not isinstance(variables, RandomVector):
        raise InputError("variables must be a RandomVector (see random_vector)")
    if not k > 0:
        raise InputError(f"tornado k (standard deviations) must be > 0, got {k}")
    ls = as_limit_state(limit_state)
    if surface not in ("fixed", "searched"):
        raise InputError("tornado takes surface='fixed' or 'searched'")
    ls.surfaces(surface)
    act = np.flatnonzero(variables.active)
    mu = variables.means
    X = np.repeat(mu[None, :], 1 + 2 * act.size, axis=0)
    lo, hi, clipped = [], [], []
    for j, i in enumerate(act):
        m = variables.variables[i].marginal
        a, b = m.mean - k * m.std, m.mean + k * m.std
        ca, cb = min(max(a, m.lower), m.upper), min(max(b, m.lower), m.upper)
        if (ca, cb) != (a, b):
            clipped.append(variables.names[i])
        X[1 + 2 * j, i], X[2 + 2 * j, i] = ca, cb
        lo.append(ca)
        hi.append(cb)
    ev = ls.evaluate(X, surface)
    f = ev.fs
    fl, fh = f[1::2], f[2::2]
    sw = np.abs(fh - fl)
    o = np.argsort(-sw, kind="stable")
    names = [variables.names[i] for i in act]
    notes = []
    if variables.is_correlated:
        notes.append("one variable at a time: correlations between variables are ignored")
    if not np.all(ev.valid):
        notes.append(f"{int((~ev.valid).sum())} runs not converged/admissible")
    return TornadoResult(float(k), float(f[0]), [names[i] for i in o], np.array(lo)[o],
                         np.array(hi)[o], fl[o], fh[o], sw[o], clipped, int(f.size), notes)


def rank_correlations(X, fs, names, valid=None) -> dict:
    """Spearman rank correlation of each input column with FS.

    Parameters
    ----------
    X : ndarray (n, n_vars)
    fs : ndarray (n,)
    names : list of str
    valid : ndarray of bool (n,), optional
        Samples to use (default: finite FS). Constant columns give nan.
    """
    X = np.asarray(X, float)
    fs = np.asarray(fs, float)
    ok = np.isfinite(fs) if valid is None else np.asarray(valid, bool)
    from scipy import stats  # here: importing it costs every command half a second

    out = {}
    for j, nm in enumerate(names):
        col = X[ok, j]
        out[nm] = float("nan") if np.ptp(col) == 0 else float(stats.spearmanr(col, fs[ok])[0])
    return out


def first_order_indices(X, fs, names, valid=None, n_bins: int | None = None) -> dict:
    """First-order variance shares Sᵢ = Var(E[FS|xᵢ])/Var(FS) from existing samples.

    Parameters
    ----------
    X, fs, names, valid
        As :func:`rank_correlations`.
    n_bins : int, optional
        Equiprobable bins per variable (default ⌊√n / 2⌋, at least 5, at most 100).

    Returns
    -------
    dict
        name → Sᵢ. The between-bin variance is corrected for its sampling
        bias, (B − 1)/(n − B) times the within-bin variance (analysis of
        variance), so Sᵢ may come out slightly negative for a variable with no
        effect. Binning also smooths E[FS|xᵢ], which lowers Sᵢ a little.
    """
    X = np.asarray(X, float)
    fs = np.asarray(fs, float)
    ok = np.isfinite(fs) if valid is None else np.asarray(valid, bool)
    X, y = X[ok], fs[ok]
    n = y.size
    B = n_bins or int(min(100, max(5, np.sqrt(n) // 2)))
    if n < 2 * B:
        raise InputError(f"first-order indices need at least {2 * B} valid samples, got {n}")
    vt = y.var()
    out = {}
    for j, nm in enumerate(names):
        col = X[:, j]
        if np.ptp(col) == 0 or vt == 0:
            out[nm] = float("nan")
            continue
        rank = np.argsort(np.argsort(col, kind="stable"), kind="stable")
        b = rank * B // n
        cnt = np.bincount(b, minlength=B)
        mean_b = np.bincount(b, weights=y, minlength=B) / cnt
        between = np.sum(cnt * (mean_b - y.mean()) ** 2) / n
        within = vt - between
        out[nm] = float((between - (B - 1) / (n - B) * within) / vt)
    return out

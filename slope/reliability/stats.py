"""Probability of failure, its confidence interval, reliability indices.

Definitions used throughout (labelled in every output):

- ``beta_normal`` = (μ_FS − 1)/σ_FS: FS taken as normal;
- ``beta_lognormal`` = ln(μ_FS/√(1+V²))/√ln(1+V²), V = σ_FS/μ_FS: FS taken
  as lognormal (closed form, e.g. μ = 1.5, V = 0.2 → 1.9483);
- ``beta_from_pf`` = −Φ⁻¹(pf): the generalised index of an estimated pf.

Binomial intervals for pf from ``k`` failures in ``n`` independent samples:
Wilson (1927, JASA 22:209-212) score interval and the Clopper–Pearson
(1934, Biometrika 26:404-413) exact interval.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy import special

from ..errors import InputError

__all__ = [
    "binomial_interval",
    "beta_normal",
    "beta_lognormal",
    "beta_from_pf",
    "pf_normal",
    "pf_lognormal",
    "PfEstimate",
    "estimate_pf",
    "convergence_history",
    "fs_distribution",
]


def binomial_interval(k: int, n: int, level: float = 0.95, method: str = "wilson"):
    """Two-sided confidence interval of a binomial proportion ``k/n``.

    Parameters
    ----------
    k, n : int
        Failures and samples (0 ≤ k ≤ n, n ≥ 1).
    level : float
        Confidence level in (0, 1).
    method : {'wilson', 'clopper-pearson'}

    Returns
    -------
    (float, float)
    """
    k, n = int(k), int(n)
    if n < 1 or not 0 <= k <= n:
        raise InputError(f"binomial interval needs 0 <= k <= n and n >= 1, got k={k}, n={n}")
    if not 0.0 < level < 1.0:
        raise InputError(f"confidence level must be in (0, 1), got {level}")
    a = 1.0 - level
    if method == "wilson":
        z = special.ndtri(1.0 - a / 2.0)
        p = k / n
        den = 1.0 + z * z / n
        c = (p + z * z / (2 * n)) / den
        h = z * math.sqrt(p * (1 - p) / n + z * z / (4 * n * n)) / den
        # c = h exactly at k = 0 (and c + h = 1 at k = n): round-off must not print a bound of 2e-19
        return (0.0 if k == 0 else max(0.0, c - h)), (1.0 if k == n else min(1.0, c + h))
    if method == "clopper-pearson":
        lo = 0.0 if k == 0 else float(special.betaincinv(k, n - k + 1, a / 2))
        hi = 1.0 if k == n else float(special.betaincinv(k + 1, n - k, 1 - a / 2))
        return lo, hi
    raise InputError(f"interval method must be 'wilson' or 'clopper-pearson', got {method!r}")


def beta_normal(mean, std, threshold: float = 1.0):
    """Reliability index with FS normal: (μ − threshold)/σ."""
    return (np.asarray(mean, float) - threshold) / np.asarray(std, float)


def beta_lognormal(mean, std, threshold: float = 1.0):
    """Reliability index with FS lognormal: ln(μ/(t√(1+V²)))/√ln(1+V²)."""
    mean = np.asarray(mean, float)
    v = np.asarray(std, float) / mean
    s2 = np.log1p(v * v)
    return np.log(mean / (threshold * np.sqrt(1.0 + v * v))) / np.sqrt(s2)


def beta_from_pf(pf):
    """Generalised reliability index −Φ⁻¹(pf)."""
    return -special.ndtri(np.asarray(pf, float))


def pf_normal(mean, std, threshold: float = 1.0):
    """pf = Φ(−β_normal)."""
    return special.ndtr(-beta_normal(mean, std, threshold))


def pf_lognormal(mean, std, threshold: float = 1.0):
    """pf = Φ(−β_lognormal)."""
    return special.ndtr(-beta_lognormal(mean, std, threshold))


@dataclass
class PfEstimate:
    """pf = P(FS < threshold) from samples, with its status counts.

    ``pf`` uses the valid samples (converged, admissible, finite FS).
    ``pf_bounds`` brackets pf over all ``n`` samples: invalid samples counted
    as safe (low) and as failed (high), so no sample is silently dropped.
    """

    pf: float
    n: int
    n_valid: int
    n_fail: int
    ci: tuple
    ci_method: str
    level: float
    pf_bounds: tuple
    n_nonconverged: int
    n_inadmissible: int
    mean_fs: float
    std_fs: float
    beta_from_pf: float
    beta_normal: float
    beta_lognormal: float
    cov_pf: float
    extra: dict = field(default_factory=dict)

    def summary(self) -> str:
        lo, hi = self.ci
        return (
            f"pf = {self.pf:.4g} ({self.n_fail}/{self.n_valid}; {self.level:.0%} "
            f"{self.ci_method} [{lo:.3g}, {hi:.3g}]); beta from pf = {self.beta_from_pf:.3f}; "
            f"FS mean {self.mean_fs:.4g}, std {self.std_fs:.3g}; beta (FS normal) = "
            f"{self.beta_normal:.3f}, beta (FS lognormal) = {self.beta_lognormal:.3f}; "
            f"non-converged {self.n_nonconverged}, inadmissible {self.n_inadmissible}"
        )


def estimate_pf(fs, valid=None, *, converged=None, admissible=None, threshold=1.0,
                level=0.95, ci_method="wilson") -> PfEstimate:
    """pf and summary statistics from sampled FS.

    Parameters
    ----------
    fs : array_like (n,)
        Factors of safety.
    valid : array_like of bool (n,), optional
        Valid samples (default: finite FS and, if given, converged & admissible).
    converged, admissible : array_like of bool (n,), optional
        Status, counted in the result.
    threshold : float
        Failure is FS < threshold.
    level, ci_method
        See :func:`binomial_interval`.
    """
    fs = np.asarray(fs, float).reshape(-1)
    n = fs.size
    conv = np.ones(n, bool) if converged is None else np.asarray(converged, bool)
    adm = np.ones(n, bool) if admissible is None else np.asarray(admissible, bool)
    ok = conv & adm & np.isfinite(fs) if valid is None else np.asarray(valid, bool)
    nv = int(ok.sum())
    if nv == 0:
        raise InputError("no valid FS sample: every sample failed to converge or is inadmissible")
    fail = fs[ok] < threshold
    k = int(fail.sum())
    pf = k / nv
    lo, hi = binomial_interval(k, nv, level, ci_method)
    m = float(np.mean(fs[ok]))
    s = float(np.std(fs[ok], ddof=1)) if nv > 1 else 0.0
    with np.errstate(divide="ignore", invalid="ignore"):
        bn = float(beta_normal(m, s, threshold)) if s > 0 else math.inf
        bl = float(beta_lognormal(m, s, threshold)) if s > 0 and m > 0 else math.nan
        cov = math.sqrt((1 - pf) / (pf * nv)) if pf > 0 else math.inf
    return PfEstimate(
        pf=pf, n=n, n_valid=nv, n_fail=k, ci=(lo, hi), ci_method=ci_method, level=level,
        pf_bounds=(k / n, (k + n - nv) / n), n_nonconverged=int((~conv).sum()),
        n_inadmissible=int((conv & ~adm).sum()), mean_fs=m, std_fs=s,
        beta_from_pf=float(beta_from_pf(pf)), beta_normal=bn, beta_lognormal=bl, cov_pf=cov,
    )


def convergence_history(fs, valid=None, *, threshold=1.0, n_points=50, level=0.95,
                        ci_method="wilson") -> dict:
    """Running pf, its interval and the running β as samples accumulate.

    Returns
    -------
    dict of arrays
        ``n`` (samples used), ``pf``, ``ci_low``, ``ci_high``,
        ``beta_from_pf``, ``mean_fs``, ``std_fs``, ``beta_normal``,
        ``beta_lognormal`` at ``n_points`` sample counts spaced
        geometrically up to the total.
    """
    fs = np.asarray(fs, float).reshape(-1)
    ok = np.isfinite(fs) if valid is None else np.asarray(valid, bool)
    f = fs[ok]
    N = f.size
    if N == 0:
        raise InputError("no valid FS sample for a convergence history")
    ns = np.unique(np.geomspace(min(10, N), N, n_points).astype(int))
    cf = np.cumsum(f < threshold)
    s1 = np.cumsum(f)
    s2 = np.cumsum(f * f)
    k = cf[ns - 1]
    pf = k / ns
    ci = np.array([binomial_interval(a, b, level, ci_method) for a, b in zip(k, ns)])
    mean = s1[ns - 1] / ns
    var = np.maximum(s2[ns - 1] - ns * mean**2, 0.0) / np.maximum(ns - 1, 1)
    std = np.sqrt(var)
    with np.errstate(divide="ignore", invalid="ignore"):
        return {
            "n": ns, "pf": pf, "ci_low": ci[:, 0], "ci_high": ci[:, 1],
            "beta_from_pf": beta_from_pf(pf), "mean_fs": mean, "std_fs": std,
            "beta_normal": beta_normal(mean, std, threshold),
            "beta_lognormal": beta_lognormal(mean, std, threshold),
        }


def fs_distribution(fs, valid=None, *, bins=50) -> dict:
    """Histogram (density) and empirical CDF of FS.

    Returns
    -------
    dict
        ``edges`` (bins + 1), ``density`` (bins), ``fs_sorted`` and ``ecdf``
        (i/n at each sorted value).
    """
    fs = np.asarray(fs, float).reshape(-1)
    ok = np.isfinite(fs) if valid is None else np.asarray(valid, bool)
    f = np.sort(fs[ok])
    dens, edges = np.histogram(f, bins=bins, density=True)
    return {"edges": edges, "density": dens, "fs_sorted": f,
            "ecdf": np.arange(1, f.size + 1) / f.size}

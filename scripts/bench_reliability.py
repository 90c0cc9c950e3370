"""Benchmark of the single-random-variable reliability methods (issue 4).

Problem: ``slope.examples.two_zone_section`` (invented: sandy fill on clay,
phreatic surface), drained, Bishop, 30 slices, on the *fixed* surface = the
deterministic critical circle of a 12 x 10 x 9 centre-lattice search.
Random variables: c' and φ' of the fill and of the clay, independent,
lognormal, means = the section's values, COVs = k x (0.3 for c', 0.1 for φ').

How pf ≈ 1e-5 is obtained: the factor k is solved (Brent's method) so that
the FORM index is β = −Φ⁻¹(1e-5) = 4.265; FORM is only the tool that sets
the COVs, the pf of interest is then estimated by subset simulation and
compared with FORM.

Prints, measured side by side in one run:

(a) crude Monte Carlo, 10^5 samples: wall time, FS evaluations, pf and its
    95 % Wilson interval;
(b) subset simulation (Au & Beck 2001; N = 2,000 per level, p0 = 0.1):
    wall time, evaluations, pf and its CoV (uncorrelated levels / upper
    bracket with fully correlated levels);
(c) the crude Monte Carlo samples needed for the same CoV,
    N = (1 − pf)/(pf · CoV²), the ratio to subset's evaluations and the
    wall time crude MC would take at the measured per-evaluation cost;
and FORM (β, pf, evaluations, time) against subset on the same problem.

Usage: python scripts/bench_reliability.py [n_mc] [n_per_level] [n_subset_runs]
"""
import math
import sys
import time

import numpy as np
from scipy import optimize, special

from slipfield.slope.examples import two_zone_section
from slipfield.slope.reliability import form, monte_carlo, random_vector, subset_simulation
from slipfield.slope.limit_state import SliceBankLimitState
from slipfield.slope.search import centre_lattice

TARGET_PF = 1e-5
COV_BASE = {"c": 0.3, "phi": 0.1}


def build():
    """Fixed-surface limit state of the two-zone section and its mean strengths."""
    sec = two_zone_section()
    search = centre_lattice(sec, method="bishop", n_slices=30, nx=12, ny=10, n_radii=9)
    bank = search.bank.subset([search.critical_index])
    cols = [("fill", "c"), ("fill", "phi"), ("clay", "c"), ("clay", "phi")]
    ls = SliceBankLimitState(bank, sec.materials, dict(enumerate(cols)), method="bishop")
    means = [getattr(sec.materials[z], p) for z, p in cols]
    return sec, search, ls, cols, means


def breitung(ls, v, fr, h=0.05):
    """Breitung (1984, J. Eng. Mech. 110(3):357-366) curvature factor Π(1 + βκᵢ)^(-1/2).

    Principal curvatures κᵢ of the limit-state surface at the FORM design
    point, from a central-difference Hessian in u-space (step ``h``).
    """
    u = fr.design_point_u
    n = u.size
    E = np.eye(n) * h
    pts = [u] + [u + s * E[i] for i in range(n) for s in (1, -1)]
    pairs = [(i, j) for i in range(n) for j in range(i + 1, n)]
    pts += [u + a * E[i] + b * E[j] for i, j in pairs for a in (1, -1) for b in (1, -1)]
    g = ls(v.to_physical(np.array(pts)))[0][:, 0] - 1.0
    grad = np.array([(g[1 + 2 * i] - g[2 + 2 * i]) / (2 * h) for i in range(n)])
    H = np.diag([(g[1 + 2 * i] - 2 * g[0] + g[2 + 2 * i]) / h**2 for i in range(n)])
    for q, (i, j) in enumerate(pairs):
        pp, pm, mp, mm = g[1 + 2 * n + 4 * q: 5 + 2 * n + 4 * q]
        H[i, j] = H[j, i] = (pp - pm - mp + mm) / (4 * h * h)
    a = -grad / np.linalg.norm(grad)
    Q, _ = np.linalg.qr(np.column_stack([a, np.eye(n)]))
    T = Q[:, 1:n]
    kappa = np.linalg.eigvalsh(T.T @ H @ T / np.linalg.norm(grad))
    return float(np.prod(1.0 + fr.beta * kappa) ** -0.5)


def variables(cols, means, k):
    return random_vector([dict(name=f"{p}_{z}", dist="lognormal", mean=m, cov=k * COV_BASE[p])
                          for (z, p), m in zip(cols, means)])


def main():
    n_mc = int(sys.argv[1]) if len(sys.argv) > 1 else 100_000
    n_lvl = int(sys.argv[2]) if len(sys.argv) > 2 else 2000
    n_runs = int(sys.argv[3]) if len(sys.argv) > 3 else 40
    sec, search, ls, cols, means = build()
    beta_t = -special.ndtri(TARGET_PF)
    k = optimize.brentq(lambda k: form(ls, variables(cols, means, k)).beta - beta_t, 0.5, 3.0,
                        xtol=1e-4)
    v = variables(cols, means, k)
    print(f"two-zone c'-phi' section with water table, Bishop, 30 slices; fixed surface = "
          f"critical circle {search.critical} (FS = {search.fs_min:.4f})")
    print(f"4 lognormal variables, COV c' = {k * 0.3:.3f}, COV phi' = {k * 0.1:.3f} "
          f"(k = {k:.3f} solved so that FORM beta = {beta_t:.3f}, pf = {TARGET_PF:g})")

    t = time.perf_counter()
    mc = monte_carlo(ls, v, n_mc, seed=1, keep_samples=False)
    t_mc = time.perf_counter() - t
    e = mc.main.estimate

    t = time.perf_counter()
    fr = form(ls, v)
    t_form = time.perf_counter() - t

    subs, t_sub = [], []
    for s in range(n_runs):
        t = time.perf_counter()
        subs.append(subset_simulation(ls, v, seed=10 + s, n_per_level=n_lvl))
        t_sub.append(time.perf_counter() - t)
    ss = subs[0]
    per_eval = t_mc / mc.n_evaluations
    n_eq = (1 - ss.pf) / (ss.pf * ss.cov_pf ** 2)

    print()
    print(f"{'method':<26} {'wall s':>8} {'FS evals':>10} {'pf':>10} {'uncertainty':>30}")
    print(f"{'(a) crude Monte Carlo':<26} {t_mc:>8.2f} {mc.n_evaluations:>10d} {e.pf:>10.2e} "
          f"{'95%% Wilson [%.1e, %.1e]' % e.ci:>30}  ({e.n_fail} failures)")
    print(f"{'(b) subset simulation':<26} {t_sub[0]:>8.2f} {ss.n_evaluations:>10d} {ss.pf:>10.2e} "
          f"{'CoV %.3f (upper %.3f)' % (ss.cov_pf, ss.cov_pf_upper):>30}  "
          f"({len(ss.thresholds)} levels)")
    print(f"{'FORM (iHLRF)':<26} {t_form:>8.2f} {fr.n_evaluations:>10d} {fr.pf:>10.2e} "
          f"{'beta %.3f' % fr.beta:>30}")
    print(f"{'(c) crude MC at same CoV':<26} {n_eq * per_eval:>8.1f} {n_eq:>10.3g} {'':>10} "
          f"{'N = (1-pf)/(pf CoV^2)':>30}")
    print(f"evaluations ratio crude MC / subset at the same CoV: {n_eq / ss.n_evaluations:.0f}x "
          f"(wall time at {per_eval * 1e6:.2f} us per crude-MC evaluation: "
          f"{n_eq * per_eval / t_sub[0]:.0f}x)")

    bf = breitung(ls, v, fr)
    pfs = np.array([r.pf for r in subs])
    emp = pfs.std(ddof=1) / pfs.mean()
    print()
    print(f"subset vs FORM over {n_runs} subset runs (seeds 10..{9 + n_runs}): mean pf "
          f"{pfs.mean():.3e} (std error {pfs.std(ddof=1) / math.sqrt(n_runs):.1e}), "
          f"FORM {fr.pf:.3e}, ratio {pfs.mean() / fr.pf:.3f}; beta from mean pf "
          f"{-special.ndtri(pfs.mean()):.3f} vs FORM {fr.beta:.3f}")
    print(f"FORM with Breitung's curvature factor {bf:.3f}: pf {fr.pf * bf:.3e}; "
          f"subset mean / curvature-corrected FORM = {pfs.mean() / (fr.pf * bf):.3f}")
    print(f"empirical CoV of pf across runs {emp:.3f}; reported CoV mean "
          f"{np.mean([r.cov_pf for r in subs]):.3f} (upper {np.mean([r.cov_pf_upper for r in subs]):.3f}); "
          f"mean subset wall time {np.mean(t_sub):.2f} s")


if __name__ == "__main__":
    main()

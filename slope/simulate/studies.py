"""Studies on top of :func:`simulate`: effect of spatial averaging, θ sweeps."""
from __future__ import annotations

import dataclasses
import math

import numpy as np
from scipy import special

from fields import variance_function

from ..errors import InputError
from .problem import RandomProblem
from .run import simulate

__all__ = ["averaging_report", "theta_sweep"]


def _with_thetas(problem, thetas):
    props = [dataclasses.replace(p, theta_h=th, theta_v=tv) for p, (th, tv) in zip(problem.properties, thetas)]
    new = RandomProblem(problem.section, problem.hypothesis, problem.method, props, problem.surfaces,
                        problem.fixed_index, cross_correlation=list(problem.cross_correlation),
                        n_slices=problem.n_slices, cell=problem.cell, field_method=problem.field_method,
                        averaging=problem.averaging, interslice=problem.interslice)
    # same geometry: share the bank rather than rebuilding it
    new._bank, new._terms = problem._bank, problem._terms
    return new


def _summary(res):
    f = res.fs[np.isfinite(res.fs)]
    lo, hi = res.pf_interval
    return {"pf": res.pf, "lo": lo, "hi": hi, "beta_normal": res.beta["normal"],
            "beta_lognormal": res.beta["lognormal"],
            "mean_fs": float(f.mean()) if f.size else float("nan"),
            "std_fs": float(f.std(ddof=1)) if f.size > 1 else float("nan"),
            "pf_fixed": res.pf_fixed, "pf_fixed_interval": list(res.pf_fixed_interval)}


def averaging_report(problem, n, seed, **simulate_kw) -> dict:
    """How much spatial averaging changes pf.

    Returns
    -------
    dict with
        ``as_given``: pf, 95 % Wilson CI, β, mean/std of FS with the given θ;
        ``single_variable``: the same with every θ → inf;
        ``variance_reduction_fs``: var FS (as given) / var FS (θ → inf);
        ``analytic``: per property, the averaging length T (m) of the fixed
        surface in the property's zones and the point σ reduced by √γ(T)
        (El-Ramly, Morgenstern & Cruden 2002 style; γ along θh, a
        simplification for inclined bases).
    """
    a = simulate(problem, n, seed, **simulate_kw)
    b = simulate(_with_thetas(problem, [(math.inf, math.inf)] * len(problem.properties)), n, seed,
                 **simulate_kw)
    sa, sb = _summary(a), _summary(b)
    bank = problem.bank
    j = problem.fixed_index
    analytic = []
    for i, p in enumerate(problem.properties):
        zs = problem.zones_of(i)
        T = float(bank.base_length[j][np.isin(bank.zone[j], zs)].sum())
        if p.single or T == 0.0:
            g = 1.0
        else:
            g = float(variance_function(p.correlation_model(), T))
        analytic.append({"property": p.key, "length_m": T, "gamma": g,
                         "std_point": float(p.marginal.std), "std_averaged": float(p.marginal.std * math.sqrt(g))})
    vr = sa["std_fs"] ** 2 / sb["std_fs"] ** 2 if sb["std_fs"] > 0 else float("nan")
    return {"n": int(n), "seed": int(seed), "as_given": sa, "single_variable": sb,
            "variance_reduction_fs": vr, "analytic": analytic,
            "note": "analytic: point std scaled by sqrt(gamma(T)), T = length of the fixed surface in the zone"}


def theta_sweep(problem, theta_h, theta_v, n, seed, **simulate_kw) -> list:
    """pf over a grid of scales of fluctuation (common random numbers).

    Every property gets the same (θh, θv) at each grid point; the same seed
    and streams are used throughout, so differences between rows are not
    sampling noise of independent runs.  A point with θh or θv infinite is
    run with both infinite (one random variable per property; a field
    infinite in one direction only is not a random variable), and each
    distinct point is simulated once.

    Returns
    -------
    list of dict rows {theta_h, theta_v, theta_h_run, theta_v_run (m), pf,
    lo, hi, mean_fs, std_fs (-), n, n_valid, n_nonconverged,
    n_inadmissible, n_no_valid_surface (counts)}
    """
    th_list, tv_list = list(theta_h), list(theta_v)
    if not th_list or not tv_list:
        raise InputError("theta_sweep: give at least one theta_h and one theta_v (m)")
    rows, done = [], {}
    for th in th_list:
        for tv in tv_list:
            th, tv = float(th), float(tv)
            eff = (math.inf, math.inf) if math.isinf(th) or math.isinf(tv) else (th, tv)
            if eff not in done:
                done[eff] = simulate(_with_thetas(problem, [eff] * len(problem.properties)), n, seed,
                                     **simulate_kw)
            res = done[eff]
            s = _summary(res)
            rows.append({"theta_h": th, "theta_v": tv, "theta_h_run": eff[0], "theta_v_run": eff[1],
                         "pf": s["pf"], "lo": s["lo"], "hi": s["hi"],
                         "mean_fs": s["mean_fs"], "std_fs": s["std_fs"],
                         "n": res.n, "n_valid": int(np.isfinite(res.fs).sum()),
                         "n_nonconverged": res.n_nonconverged, "n_inadmissible": res.n_inadmissible,
                         "n_no_valid_surface": res.n_no_valid})
    return rows

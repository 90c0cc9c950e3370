"""Studies on top of :func:`simulate`: effect of spatial averaging, θ sweeps."""
from __future__ import annotations

import dataclasses
import math

import numpy as np
from scipy import special

from slipfield.fields import variance_function
from slipfield.fields.averaging import cell_average_covariance
from slipfield.fields.marginals import scaled_spread

from ..errors import InputError
from .problem import RandomProblem
from .driver import simulate

__all__ = ["averaging_report", "theta_sweep", "surface_variance_factor", "reduced_variance_problem",
           "fixed_surface_problem"]


def _with_properties(problem, props):
    """The same problem with other random properties (same order, same materials)."""
    new = RandomProblem(problem.section, problem.hypothesis, problem.method, props, problem.surfaces,
                        problem.fixed_index, cross_correlation=list(problem.cross_correlation),
                        n_slices=problem.n_slices, cell=problem.cell, field_method=problem.field_method,
                        averaging=problem.averaging, interslice=problem.interslice)
    # same geometry and grid: share the bank and the base mapping rather than rebuilding them
    new._bank, new._terms, new._stencil = problem._bank, problem._terms, problem._stencil
    return new


def _with_thetas(problem, thetas):
    # a unit weight is always one random variable per zone (RandomProperty): its θ stays infinite
    return _with_properties(problem, [p if p.prop == "unit_weight" else dataclasses.replace(p, theta_h=th, theta_v=tv)
                                      for p, (th, tv) in zip(problem.properties, thetas)])


def surface_variance_factor(problem, i, surface=None, *, max_points=3000):
    """Variance reduction of property i averaged along one surface.

    The strength a slip surface mobilises is (to first order) the
    length-weighted average of the field over its bases in the property's
    zones, so its variance is ``γ σ²`` with

        γ = (1/T²) ∫∫ ρ(p(s) − p(s')) ds ds'        (Vanmarcke 1983, ch. 5)

    over the curve itself: θh, θv and rotation all enter through the 2D
    correlation at the actual lags, and for a straight line along x this is
    the variance function γ(T) along θh. Integrated by the midpoint rule
    with points at most min(θh, θv)/8 apart (fewer if ``max_points`` binds).

    Parameters
    ----------
    problem : RandomProblem
    i : int
        Property index.
    surface : int, optional
        Bank index (default: the fixed deterministic critical surface).
    max_points : int

    Returns
    -------
    T : float, m
        Length of the surface within the property's zones.
    gamma : float, -
        1 for a single random variable (θ infinite) or T = 0.
    """
    bank = problem.bank
    j = problem.fixed_index if surface is None else int(surface)
    p = problem.properties[i]
    inz = np.isin(bank.zone[j], problem.zones_of(i))
    lengths = np.asarray(bank.base_length[j])[inz]
    T = float(lengths.sum())
    if p.single or T == 0.0:
        return T, 1.0
    h = min(p.theta_h, p.theta_v) / 8.0
    q = int(min(max(1, math.ceil(float(lengths.max()) / h)), max(1, max_points // int(inz.sum()))))
    xb, yb = bank.base_points_section_frame(q)
    pts = np.stack([xb[j][inz], yb[j][inz]], axis=-1).reshape(1, -1, 2)
    w = np.repeat(lengths / q, q)[None]
    g = float(cell_average_covariance(p.correlation_model(), pts, w)[0, 0])
    return T, min(max(g, 0.0), 1.0)


def fixed_surface_problem(problem):
    """The same problem on its fixed deterministic critical surface alone (``fixed_index`` 0).

    For runs that read only ``fs_fixed``: realisations are the same (noise
    depends on the seed, realisation, property and zone, and the fields lie on
    the whole problem's boxes, :func:`.field_box.inherit_boxes`),
    and the kernel evaluates one surface instead of the whole bank.
    """
    from .field_box import inherit_boxes

    # the fields live on the whole problem's boxes (slope.simulate.field_box), not on one surface's
    return inherit_boxes(problem, RandomProblem(
        problem.section, problem.hypothesis, problem.method, problem.properties,
        [problem.surfaces[problem.fixed_index]], 0,
        cross_correlation=list(problem.cross_correlation), n_slices=problem.n_slices,
        cell=problem.cell, field_method=problem.field_method, averaging=problem.averaging,
        interslice=problem.interslice, site_data=dict(problem.site_data)))


def reduced_variance_problem(problem, *, fixed_only=False):
    """The quick spatial-averaging estimate as a problem of single random variables.

    Every random property becomes one random variable (θ → ∞) with its
    mean kept and its standard deviation reduced by √γ, γ being
    :func:`surface_variance_factor` along the fixed deterministic critical
    surface (El-Ramly, Morgenstern & Cruden 2002 style: variance reduction
    over the critical surface, then a single-variable simulation).

    With ``fixed_only`` the problem holds that surface alone
    (:func:`fixed_surface_problem`): ``fs_fixed`` is unchanged, bit for bit.

    Returns
    -------
    problem : RandomProblem
    table : list of dict
        Per property: ``property``, ``length_m`` (m), ``gamma`` (along the
        surface, 2D correlation), ``gamma_1d_theta_h`` (the 1D variance
        function over T along θh, the common simplification), ``std_point``,
        ``std_averaged`` (property units), ``distribution``.
    """
    props, table = [], []
    for i, p in enumerate(problem.properties):
        T, g = surface_variance_factor(problem, i)
        g1 = 1.0 if (p.single or T == 0.0) else float(variance_function(p.correlation_model(), T))
        marg = scaled_spread(p.marginal, math.sqrt(g)) if g > 0 else p.marginal
        props.append(dataclasses.replace(p, marginal=marg, theta_h=math.inf, theta_v=math.inf))
        table.append({"property": p.key, "length_m": T, "gamma": g, "gamma_1d_theta_h": g1,
                      "std_point": float(p.marginal.std), "std_averaged": float(marg.std),
                      "distribution": marg.name})
    red = _with_properties(problem, props)
    return (fixed_surface_problem(red) if fixed_only else red), table


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
        ``analytic_estimate``: the same for :func:`reduced_variance_problem`
        (single variables with σ × √γ along the fixed critical surface);
        ``variance_reduction_fs``: var FS (as given) / var FS (θ → inf);
        ``analytic``: its per-property table (T, γ, reduced σ).
    """
    a = simulate(problem, n, seed, **simulate_kw)
    b = simulate(_with_thetas(problem, [(math.inf, math.inf)] * len(problem.properties)), n, seed,
                 **simulate_kw)
    red, analytic = reduced_variance_problem(problem)
    c = simulate(red, n, seed, **simulate_kw)
    sa, sb, sc = _summary(a), _summary(b), _summary(c)
    vr = sa["std_fs"] ** 2 / sb["std_fs"] ** 2 if sb["std_fs"] > 0 else float("nan")
    return {"n": int(n), "seed": int(seed), "as_given": sa, "single_variable": sb,
            "analytic_estimate": sc, "variance_reduction_fs": vr, "analytic": analytic,
            "note": "analytic: each property one random variable with std x sqrt(gamma), gamma of the "
                    "field averaged along the fixed deterministic critical surface"}


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

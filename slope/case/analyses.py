"""The analyses a case asks for, as plain results (no files written here).

- :func:`deterministic` — critical surface and FS by every requested method
  under every drainage hypothesis;
- :func:`single_variable_reliability` — each random property as one random
  variable (θ → ∞) on the deterministic critical surface: Monte Carlo,
  point estimates, FORM, tornado, rank correlations;
- :func:`random_problem` — the random limit-equilibrium problem of a case
  (:mod:`slope.simulate`), which ``slipfield run`` simulates.

Each returns JSON-ready dicts (units in the keys or a ``units`` entry) plus
the arrays the figures need.
"""
from __future__ import annotations

import math

import numpy as np

from slipfield.fields.marginals import make_marginal

from ..bank import unit_weight_parts
from .build import Case, theta_value
from ..errors import InputError
from ..reliability.limit_state import LimitState
from ..reliability.pem import hong, rosenblueth
from ..reliability.form import form
from ..reliability.sampling import latin_hypercube, monte_carlo
from ..reliability.sensitivity import rank_correlations, tornado
from ..limit_state import SliceBankLimitState
from ..reliability.variables import RandomVariable, RandomVector
from ..search import evaluate_surfaces, centre_lattice, window
from ..surfaces import Circle, Polyline

__all__ = ["deterministic", "trial_surfaces", "single_variable_reliability", "random_problem", "surface_xy",
           "properties_for", "marginal_of"]

# which random properties act under which hypothesis
_DRAINED_PROPS = ("c", "phi")
_UNDRAINED_PROPS = ("su", "su_ratio")


def surface_xy(bank, i: int) -> np.ndarray:
    """Slip surface ``i`` of a bank as [x, y] points in the section frame (m)."""
    d = bank.direction[i]
    x = np.r_[bank.x_left[i], bank.x_right[i, -1]] * d
    y = np.r_[bank.y_base_left[i], bank.y_base_right[i, -1]]
    return np.c_[x, y]


def trial_surfaces(case: Case, hypothesis: str, method: str):
    """Run the case's search once (its ``[search]`` table) for one hypothesis and method.

    Returns
    -------
    SearchResult
        Every trial surface with its FS; ``surfaces`` is the bank the
        simulator re-searches.
    """
    s = case.data.get("search", {"kind": "centre-lattice", "trials": 1500, "min_depth": 0.5})
    sec = case.section
    n_slices = case.analysis["slices"]
    opts = dict(hypothesis=hypothesis, method=method, n_slices=n_slices,
                interslice=case.analysis["interslice"]) if method == "morgenstern-price" else \
        dict(hypothesis=hypothesis, method=method, n_slices=n_slices)
    kind = s.get("kind", "centre-lattice")
    trials = int(s.get("trials", 1500))
    if kind == "fixed":
        if "circle" in s:
            c = s["circle"]
            surf = Circle(float(c["x"]), float(c["y"]), float(c["r"]))
        else:
            surf = Polyline(np.asarray(s["polyline"], float))
        return evaluate_surfaces(sec, [surf], search="fixed", **opts)
    n_radii = 10
    per_axis = max(3, int(round(math.sqrt(trials / n_radii))))
    if kind == "window":
        n_ends = max(3, int(round(math.sqrt(trials / n_radii))))
        return window(sec, upslope=tuple(s["entry"]), downslope=tuple(s["exit"]),
                      n_up=n_ends, n_down=n_ends, n_radii=n_radii, **opts)
    return centre_lattice(sec, x_range=tuple(s["x_range"]) if "x_range" in s else None,
                          y_range=tuple(s["y_range"]) if "y_range" in s else None,
                          nx=per_axis, ny=per_axis, n_radii=n_radii, **opts)


def _search_dict(res, section) -> dict:
    ok = res.critical_index >= 0
    return {
        "method": res.method,
        "search": res.search,
        "fs": float(res.fs_min) if ok else None,
        "critical_index": int(res.critical_index),
        "n_trials": int(res.n_trials),
        "n_counted": int(np.sum(res.counted)),
        "not_counted": {k: int(v) for k, v in res.rejected.items()},
        "status": "ok" if ok else "no admissible, converged trial surface",
        "surface_xy_m": surface_xy(res.bank, res.critical_index).round(4).tolist() if ok else None,
    }


def deterministic(case: Case) -> dict:
    """Critical surface and FS for every hypothesis × method of the case.

    The surface bank is searched with the case's random-run method; every
    other method is evaluated on the same bank, so all methods see the same
    trial surfaces.

    Returns
    -------
    dict
        ``{hypothesis: {"bank": SearchResult of the run method,
        "methods": {method: dict}}}``; each method dict has ``fs`` (-),
        ``critical_index``, trial counts, reasons for not counted trials and
        the critical surface's points (m).
    """
    out = {}
    run_method = case.analysis["method"]
    methods = list(dict.fromkeys([run_method] + list(case.analysis["methods"])))
    for hyp in case.analysis["hypotheses"]:
        first = trial_surfaces(case, hyp, run_method)
        per_method = {run_method: _search_dict(first, case.section)}
        for m in methods[1:]:
            opts = dict(interslice=case.analysis["interslice"]) if m == "morgenstern-price" else {}
            res = evaluate_surfaces(case.section, first.surfaces, hypothesis=hyp, method=m,
                                    n_slices=case.analysis["slices"], search=first.search, **opts)
            per_method[m] = _search_dict(res, case.section)
        out[hyp] = {"bank": first, "methods": per_method}
    return out


def properties_for(case: Case, hypothesis: str) -> list[dict]:
    """The case's random properties that act under ``hypothesis``.

    Drained: c', φ' of every material; undrained: su (as a factor on the
    material's su law), su_ratio, and c', φ' of materials without an undrained
    strength (they stay drained); a unit weight acts under both.
    """
    mats = case.section.materials
    out = []
    for r in case.randoms:
        m = mats[r["material"]]
        p = r["property"]
        if p == "unit_weight":
            out.append(r)
        elif hypothesis == "drained" and p in _DRAINED_PROPS:
            out.append(r)
        elif hypothesis == "undrained" and (p in _UNDRAINED_PROPS or (p in _DRAINED_PROPS and not m.has_undrained)):
            out.append(r)
    return out


def marginal_of(case: Case, r: dict):
    """Marginal of one random property in the units the engines use.

    c' (kPa) and φ' (degrees) keep their values (mean: the material's unless
    given); su and su_ratio are factors of mean 1 on the material's
    undrained law, so a trend with depth keeps its shape; a unit weight is
    given in kN/m³ (mean: the material's γ unless given) and used as the
    factor value/γ on γ and γsat.
    """
    mat = case.section.materials[r["material"]]
    p = r["property"]
    kw = {k: r[k] for k in ("lower", "upper") if k in r}
    if p == "unit_weight":
        g = float(mat.unit_weight)
        mean = float(r.get("mean", g))
        if mean <= 0:
            raise InputError(f"random property {r['material']}.unit_weight: the mean is {mean:g} kN/m³; give a "
                             "positive mean")
        return make_marginal(r["distribution"], mean=mean / g, cov=float(r["cov"]),
                             **{k: v / g for k, v in kw.items()})
    if p in ("su", "su_ratio"):
        return make_marginal(r["distribution"], mean=float(r.get("mean", 1.0)), cov=float(r["cov"]), **kw)
    mean = float(r.get("mean", getattr(mat, p)))
    if mean <= 0:
        raise InputError(f"random property {r['material']}.{p}: the mean is {mean:g}; give a positive "
                         f"mean in the [[random]] entry or in the material")
    return make_marginal(r["distribution"], mean=mean, cov=float(r["cov"]), **kw)


def _name(r) -> str:
    return f"{r['material']}.{r['property']}"


def _correlation(case: Case, props: list[dict]) -> np.ndarray:
    names = [_name(r) for r in props]
    R = np.eye(len(props))
    for cc in case.data.get("cross_correlation", []):
        a, b = cc["between"]
        if a in names and b in names:
            i, j = names.index(a), names.index(b)
            R[i, j] = R[j, i] = float(cc["rho"])
    return R


class _ExpandedLimitState:
    """One column per material property fanned out to every zone of that material.

    A sample counts when its FS converged to a positive finite value: the same
    rule the deterministic search applied when it accepted this surface (flags
    for a negative base normal force or a thrust line outside a slice are
    tolerated there and reported with the deterministic result).
    """

    def __init__(self, inner, expand):
        self.inner = inner
        self.expand = np.asarray(expand, int)

    def __call__(self, X):
        fs, conv, _adm = self.inner(np.atleast_2d(X)[:, self.expand])
        return fs, conv, np.isfinite(fs) & (fs > 0)


def _limit_state(case: Case, bank, props, hypothesis, method, surfaces):
    zones = case.section.zones
    assign, expand = {}, []
    for j, r in enumerate(props):
        prop = {"c": "c", "phi": "phi", "su": "su_factor", "su_ratio": "su_factor",
                "unit_weight": "unit_weight"}[r["property"]]
        for z in zones:
            if z.material == r["material"]:
                assign[len(expand)] = (z.name, prop)
                expand.append(j)
    opts = dict(interslice=case.analysis["interslice"]) if method == "morgenstern-price" else {}
    uw = [i for i, z in enumerate(zones) if (z.name, "unit_weight") in assign.values()]
    parts = unit_weight_parts(case.section, surfaces, uw, case.analysis["slices"]) if uw else None
    inner = SliceBankLimitState(bank, case.section.materials, assign, method=method,
                                hypothesis=hypothesis, weight_parts=parts, **opts)
    return _ExpandedLimitState(inner, expand)


def single_variable_reliability(case: Case, det: dict, hypothesis: str, *, n_jobs: int = 1) -> dict | None:
    """Each random property as one random variable, on the critical surface.

    Returns None when no random property acts under ``hypothesis``.
    """
    props = properties_for(case, hypothesis)
    if not props:
        return None
    first = det[hypothesis]["bank"]
    if first.critical_index < 0:
        raise InputError(f"{hypothesis} analysis: no admissible critical surface, so no reliability "
                         "analysis is possible; widen the search")
    method = case.analysis["method"]
    names = [_name(r) for r in props]
    variables = RandomVector([RandomVariable(n, marginal_of(case, r)) for n, r in zip(names, props)],
                             _correlation(case, props))
    cfg = case.data.get("reliability", {"methods": ["monte-carlo", "point-estimate", "form"],
                                        "samples": 5000, "tornado_k": 2.0})
    research = bool(cfg.get("research_surface", False))
    if research:
        # every sample takes the least FS over the whole trial bank (a per-sample search of those surfaces)
        surfaces = _surface_list(first.surfaces)
        ls = LimitState(_limit_state(case, first.bank, props, hypothesis, method, surfaces))
    else:
        ls = LimitState(_limit_state(case, first.bank.subset([first.critical_index]), props, hypothesis,
                                     method, [first.critical]))
    seed = int(case.simulation["seed"])
    out: dict = {"variables": [{"name": n, "distribution": v.marginal.name, "mean": v.mean, "std": v.std}
                               for n, v in zip(names, variables.variables)],
                 "surface": ("re-searched over the trial surfaces for each sample" if research else
                             "fixed (deterministic critical surface)"), "method": method}
    arrays: dict = {}
    for m in cfg["methods"]:
        # a method that cannot reach an answer reports it in its own row and
        # never stops the others (FORM's line search can step to phi' > 90
        # degrees, where tan(phi') < 0, when FS is well below 1)
        try:
            _run_reliability_method(m, ls, variables, names, cfg, seed, n_jobs, out, arrays)
        except (InputError, ArithmeticError, np.linalg.LinAlgError) as exc:
            out[m] = _failed_row(m, exc)
    k = float(cfg.get("tornado_k", 2.0))
    try:
        tr = tornado(ls, variables, k=k)
    except (InputError, ArithmeticError, np.linalg.LinAlgError) as exc:
        out["tornado"] = _failed_row("tornado", exc) | {"k": k}
        return {"summary": out, "arrays": arrays}
    out["tornado"] = {"k": k, "note": "each variable at mean ± k·σ, others at their means (k = 2 is common practice)",
                      "fs_mean": float(tr.fs_mean), "names": list(tr.names),
                      "fs_low": [float(v) for v in tr.fs_low], "fs_high": [float(v) for v in tr.fs_high],
                      "clipped": list(tr.clipped)}
    arrays["tornado"] = tr
    return {"summary": out, "arrays": arrays}


def _failed_row(m, exc) -> dict:
    """The row of a reliability method that could not reach an answer."""
    why = str(exc) if isinstance(exc, InputError) else "a numerical failure in the evaluation"
    return {"status": f"failed: {why}", "failed": True}


def _run_reliability_method(m, ls, variables, names, cfg, seed, n_jobs, out, arrays):
    """Run one reliability method into ``out[m]`` (and its arrays)."""
    if True:  # the body keeps the indentation it had in the loop (other branches edit it)
        if m in ("monte-carlo", "latin-hypercube"):
            fn = monte_carlo if m == "monte-carlo" else latin_hypercube
            res = fn(ls, variables, int(cfg["samples"]), seed=seed, n_jobs=n_jobs)
            est = res.main.estimate
            out[m] = _pf_dict(est) | {"n_evaluations": int(res.n_evaluations)}
            arrays[m] = {"fs": res.fs, "history": res.main.history}
            if res.X is not None:
                rc = rank_correlations(res.X, res.fs, names)
                out[m]["spearman"] = {k: float(v) if np.isscalar(v) else v for k, v in rc.items()}
        elif m == "point-estimate":
            pe = rosenblueth(ls, variables) if len(names) <= 6 else hong(ls, variables)
            out[m] = {"scheme": pe.method, "mean_fs": pe.mean_fs, "std_fs": pe.std_fs,
                      "beta_normal": pe.beta_normal, "pf_normal": pe.pf_normal,
                      "beta_lognormal": pe.beta_lognormal, "pf_lognormal": pe.pf_lognormal,
                      "n_evaluations": int(pe.n_evaluations), "n_nonconverged": int(pe.n_nonconverged),
                      "n_inadmissible": int(pe.n_inadmissible)}
        elif m == "form":
            fr = form(ls, variables)
            out[m] = {"beta": fr.beta, "pf": fr.pf, "converged": bool(fr.converged),
                      "design_point": dict(zip(names, map(float, fr.design_point_x))),
                      "importance": {k: float(v) for k, v in fr.importance.items()},
                      "n_evaluations": int(fr.n_evaluations)}


def _pf_dict(est) -> dict:
    return {"pf": float(est.pf), "pf_interval_95": [float(est.ci[0]), float(est.ci[1])],
            "ci_method": est.ci_method, "n": int(est.n), "n_valid": int(est.n_valid),
            "n_failed": int(est.n_fail), "n_nonconverged": int(est.n_nonconverged),
            "n_inadmissible": int(est.n_inadmissible), "mean_fs": float(est.mean_fs),
            "std_fs": float(est.std_fs), "beta_from_pf": float(est.beta_from_pf),
            "beta_normal": float(est.beta_normal), "beta_lognormal": float(est.beta_lognormal)}


def _surface_list(surfaces):
    if hasattr(surfaces, "xc"):  # a vectorised set of circles: a list of Circle
        return [Circle(float(x), float(y), float(r)) for x, y, r in zip(surfaces.xc, surfaces.yc, surfaces.radius)]
    return list(surfaces)


def random_problem(case: Case, det: dict, hypothesis: str, *, theta_override=None):
    """The :class:`slope.simulate.RandomProblem` of a case under one hypothesis."""
    from ..simulate import RandomProblem, RandomProperty

    props = properties_for(case, hypothesis)
    if not props:
        return None
    first = det[hypothesis]["bank"]
    rp = []
    for r in props:
        th, tv = theta_value(r["theta_h"]), theta_value(r["theta_v"])
        if theta_override is not None and r["property"] != "unit_weight":  # unit weight: one variable always
            th, tv = theta_override
        rp.append(RandomProperty(r["material"], r["property"], marginal_of(case, r), th, tv,
                                 model=r["model"], angle=float(r["angle"]),
                                 nu=float(r["nu"]) if r["model"] == "matern" else None,
                                 multiplier=r["property"] in ("su", "su_ratio")))
    R = _correlation(case, props)
    cc = [(i, j, float(R[i, j])) for i in range(len(rp)) for j in range(i + 1, len(rp)) if R[i, j] != 0]
    sim = case.simulation
    surfaces = _surface_list(first.surfaces)
    return RandomProblem(case.section, hypothesis, case.analysis["method"], rp, surfaces,
                         int(first.critical_index), cross_correlation=cc,
                         n_slices=case.analysis["slices"], cell=float(sim["cell"]),
                         field_method=sim["field_method"], averaging=sim["averaging"],
                         interslice=case.analysis["interslice"])

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


import numpy as np

from slipfield.fields.marginals import make_marginal, marginal_form

from ..bank import unit_weight_parts
from .build import Case, theta_value
from .schema import acts_under
from ..errors import InputError
from ..reliability.limit_state import LimitState
from ..reliability.registry import Settings, run_estimator
from ..reliability.sensitivity import tornado
from ..limit_state import SliceBankLimitState
from ..reliability.variables import RandomVariable, RandomVector
from ..search import evaluate_surfaces, search_from_case
from ..search.families import add_families
from ..surfaces import Circle

__all__ = ["deterministic", "other_methods", "add_other_methods", "trial_surfaces", "single_variable_reliability", "random_problem",
           "surface_xy", "properties_for", "marginal_of"]


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
        simulator re-searches: the circles of ``[search] kind`` plus the
        block and dynamic-programming families the table asks for.
    """
    opts = dict(hypothesis=hypothesis, method=method, n_slices=case.analysis["slices"])
    if method == "morgenstern-price":
        opts["interslice"] = case.analysis["interslice"]
    cache = case.extras.setdefault("trial_surfaces", {})  # a preflight's searches, not repeated by the run
    if (hypothesis, method) not in cache:
        table = case.data["search"]
        circles = search_from_case(case.section, table, **opts)
        cache[(hypothesis, method)] = add_families(case.section, circles, table, min_depth=table.get("min_depth"),
                                                   **opts)
    return cache[(hypothesis, method)]


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
        # non-circular trials counted only with another interslice function (slope.search.interslice_retry)
        **({"counted_with_another_interslice_function": {k: int(v) for k, v in res.retried.items()},
            "critical_interslice_function": (str(res.interslice_function[res.critical_index]) or None) if ok else None}
           if res.retried else {}),
        "status": "ok" if ok else "no admissible, converged trial surface",
        "surface_xy_m": surface_xy(res.bank, res.critical_index).round(4).tolist() if ok else None,
    }


def deterministic(case: Case, *, other_methods: bool = True) -> dict:
    """Critical surface and FS for every hypothesis × method of the case.

    The surface bank is searched with the case's random-run method; every
    other method is evaluated on the same bank, so all methods see the same
    trial surfaces.

    Parameters
    ----------
    case : Case
    other_methods : bool
        Also evaluate the case's other methods (:func:`add_other_methods`);
        False: the run method's search only, which is all the random analyses
        start from (``slipfield run`` evaluates the others after them).

    Returns
    -------
    dict
        ``{hypothesis: {"bank": SearchResult of the run method,
        "methods": {method: dict}}}``; each method dict has ``fs`` (-),
        ``critical_index``, trial counts, reasons for not counted trials and
        the critical surface's points (m).
    """
    run_method = case.analysis["method"]
    out = {}
    for hyp in case.analysis["hypotheses"]:
        first = trial_surfaces(case, hyp, run_method)
        out[hyp] = {"bank": first, "methods": {run_method: _search_dict(first, case.section)}}
    if other_methods:
        add_other_methods(case, out)
    return out


def other_methods(case: Case) -> list[str]:
    """The case's methods of slices other than its run method, in the case's order, each once."""
    return [m for m in dict.fromkeys(case.analysis["methods"]) if m != case.analysis["method"]]


def other_methods_results(case: Case, banks: dict) -> dict:
    """The case's :func:`other_methods` evaluated on each hypothesis's bank: ``{hypothesis: {method:
    result}}``, methods in the case's order. ``banks``: ``{hypothesis: {"bank": search result}}``
    (the ``"bank"`` entries of :func:`deterministic`; ``run`` sends only those to a worker)."""
    out = {}
    for hyp, d in banks.items():
        first = d["bank"]
        out[hyp] = {}
        for m in other_methods(case):
            opts = dict(interslice=case.analysis["interslice"]) if m == "morgenstern-price" else {}
            # the same surfaces and slices: the search's own slice bank, not built again per method
            res = evaluate_surfaces(case.section, first.surfaces, hypothesis=hyp, method=m,
                                    n_slices=case.analysis["slices"], search=first.search, bank=first.bank, **opts)
            for k in ("shallower than search.min_depth",):  # dropped before the bank: counted for every method
                if k in first.rejected:
                    res.rejected[k] = first.rejected[k]
                    res.n_trials = first.n_trials
            out[hyp][m] = _search_dict(res, case.section)
    return out


def add_other_methods(case: Case, det: dict, results: dict | None = None) -> None:
    """The case's :func:`other_methods`, evaluated on each hypothesis's bank of ``det``
    (:func:`deterministic`), added to its ``"methods"`` in the case's order (in place).
    ``results``: :func:`other_methods_results` already computed (e.g. by a worker)."""
    if results is None:
        results = other_methods_results(case, det)
    for hyp, d in det.items():
        d["methods"].update(results[hyp])


def properties_for(case: Case, hypothesis: str) -> list[dict]:
    """The case's random properties that act under ``hypothesis`` (rule: :func:`.schema.acts_under`)."""
    mats = case.section.materials
    return [r for r in case.randoms if acts_under(r["property"], mats[r["material"]].has_undrained, hypothesis)]


def _marginal_kwargs(r: dict, default_mean: float, scale: float = 1.0) -> dict:
    """Parameters of a [[random]] entry for make_marginal, in the form its keys state (values ÷ ``scale``)."""
    given = {k for k in ("mean", "lower", "upper", "mode") if k in r} | ({"spread"} if "cov" in r else set())
    form = marginal_form(r["distribution"], given, implied={"mean"})
    kw = {k: float(r[k]) / scale for k in ("lower", "upper", "mode") if k in r}
    if "mean" in form:
        kw["mean"] = float(r.get("mean", default_mean * scale)) / scale
    if "cov" in r:
        kw["cov"] = float(r["cov"])
    return kw


def marginal_of(case: Case, r: dict):
    """Marginal of one random property in the units the engines use.

    c' (kPa) and φ' (degrees) keep their values (mean: the material's unless
    given); su and su_ratio are factors of mean 1 on the material's
    undrained law, so a trend with depth keeps its shape (bounds and mode are
    factors too); a unit weight is given in kN/m³ (mean: the material's γ
    unless given) and used as the factor value/γ on γ and γsat.
    """
    mat = case.section.materials[r["material"]]
    p = r["property"]
    if p == "unit_weight":
        g = float(mat.unit_weight)
        kw = _marginal_kwargs(r, 1.0, g)
        if kw.get("mean", 1.0) <= 0:
            raise InputError(f"random property {r['material']}.unit_weight: the mean is {kw['mean'] * g:g} kN/m³; "
                             "give a positive mean")
        return make_marginal(r["distribution"], **kw)
    if p in ("su", "su_ratio"):
        return make_marginal(r["distribution"], **_marginal_kwargs(r, 1.0))
    kw = _marginal_kwargs(r, float(getattr(mat, p)))
    if kw.get("mean", 1.0) <= 0:
        raise InputError(f"random property {r['material']}.{p}: the mean is {kw['mean']:g}; give a positive "
                         f"mean in the [[random]] entry or in the material")
    return make_marginal(r["distribution"], **kw)


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


def _limit_state(case: Case, bank, props, hypothesis, method, surfaces, means=None):
    """The single-variable limit state; ``means``: ``{j: μ_c (m, n)}`` of :func:`.site_means.gaussian_means`."""
    zones = case.section.zones
    assign, expand, shift = {}, [], {}
    for j, r in enumerate(props):
        prop = {"c": "c", "phi": "phi", "su": "su_factor", "su_ratio": "su_factor",
                "unit_weight": "unit_weight"}[r["property"]]
        for z in zones:
            if z.material == r["material"]:
                if means and j in means:
                    shift[len(expand)] = (marginal_of(case, r), means[j])
                assign[len(expand)] = (z.name, prop)
                expand.append(j)
    opts = dict(interslice=case.analysis["interslice"]) if method == "morgenstern-price" else {}
    uw = [i for i, z in enumerate(zones) if (z.name, "unit_weight") in assign.values()]
    parts = unit_weight_parts(case.section, surfaces, uw, case.analysis["slices"]) if uw else None
    inner = SliceBankLimitState(bank, case.section.materials, assign, method=method,
                                hypothesis=hypothesis, weight_parts=parts, gaussian_shift=shift or None, **opts)
    return _ExpandedLimitState(inner, expand)


def single_variable_reliability(case: Case, det: dict, hypothesis: str, *, n_jobs: int = 1,
                                estimator=None) -> dict | None:
    """Each random property as one random variable, on the critical surface.

    With ``[[site_data]]`` for a property, its variable ``U`` (standard normal
    in the space of its marginal) keeps its prior spread and the value on
    each slice base is ``F⁻¹(Φ(μ_c + U))``, ``μ_c`` the conditional (kriged)
    mean of the property's field at the base (:mod:`.site_means`): the data
    move the median base by base, they do not narrow the variable
    (conservative; the spatial simulation is where they reduce uncertainty).
    The summary's ``site_data`` says so, names the properties, and gives the
    same analyses without the data beside them when that is cheap (fixed
    surface; with ``research_surface`` only the FS at the means).

    Returns None when no random property acts under ``hypothesis``.
    """
    from .site_means import gaussian_means

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
    cfg = case.data["reliability"]
    research = bool(cfg.get("research_surface", False))
    if research:
        # every sample takes the least FS over the whole trial bank (a per-sample search of those surfaces)
        bank, surfaces = first.bank, _surface_list(first.surfaces)
    else:
        bank, surfaces = first.bank.subset([first.critical_index]), [first.critical]
    means = gaussian_means(case, det, hypothesis, bank)
    ls = LimitState(_limit_state(case, bank, props, hypothesis, method, surfaces, means))
    seed = int(case.simulation["seed"])
    out: dict = {"variables": [{"name": n, "distribution": v.marginal.name, "mean": v.mean, "std": v.std}
                               for n, v in zip(names, variables.variables)],
                 "surface": ("re-searched over the trial surfaces for each sample" if research else
                             "fixed (deterministic critical surface)"), "method": method}
    est_name, sub = estimator if estimator is not None else ("monte-carlo", None)
    settings = Settings(samples=int(cfg["samples"]), seed=seed, n_jobs=n_jobs,
                        **({} if sub is None else {"level_probability": sub.level_probability,
                                                   "samples_per_level": sub.samples_per_level}))
    methods = list(cfg["methods"])
    if est_name != "monte-carlo" and "subset" not in methods:
        methods.append("subset")  # [simulation] estimator = subset/auto: the single variables' pf by subset too
    arrays = _run_methods(ls, variables, settings, methods, cfg, est_name, out)
    k = float(cfg.get("tornado_k", 2.0))
    try:
        tr = tornado(ls, variables, k=k)
    except InputError as exc:  # the tornado too reports in its own row and stops nothing
        out["tornado"] = {"k": k, "status": f"not computed: {exc}"}
        tr = None
    else:
        out["tornado"] = {"k": k, "note": "each variable at mean ± k·σ, others at their means (k = 2 is common "
                          "practice)", "fs_mean": float(tr.fs_mean), "names": list(tr.names),
                          "fs_low": [float(v) for v in tr.fs_low], "fs_high": [float(v) for v in tr.fs_high],
                          "clipped": list(tr.clipped)}
        arrays["tornado"] = tr
    if means:
        plain = LimitState(_limit_state(case, bank, props, hypothesis, method, surfaces))
        out["site_data"] = _site_data_summary(means, names, ls, plain, variables, settings,
                                              [] if research else [m for m in methods if m in out], cfg, est_name)
    return {"summary": out, "arrays": arrays}


def _run_methods(ls, variables, settings, methods, cfg, est_name, out) -> dict:
    """Each estimator through the registry into ``out``; one that cannot reach an answer says so in its row."""
    arrays = {}
    for m in methods:
        if m == "subset" and "subset" not in cfg["methods"] and est_name == "auto":
            from ..simulate.estimators import AUTO_MIN_FAILURES

            k = out.get("monte-carlo", {}).get("n_failed")
            if k is not None and k >= AUTO_MIN_FAILURES:
                continue  # auto: Monte Carlo saw enough failures
        try:
            out[m], arr = run_estimator(m, ls, variables, settings)
        except InputError as exc:
            out[m], arr = {"status": f"not computed: {exc}"}, {}
        except (ArithmeticError, np.linalg.LinAlgError):
            out[m], arr = {"status": "not computed: a numerical failure in the evaluation"}, {}
        if arr:
            arrays[m] = arr
    return arrays


#: what the comparison without site data keeps of each method's row
_COMPARED = ("pf", "pf_normal", "beta", "beta_from_pf", "beta_normal", "mean_fs")


def _fs_at_means(ls, variables) -> float | None:
    ev = ls.evaluate(np.asarray([v.mean for v in variables.variables], float)[None, :])
    return float(ev.fs[0]) if bool(ev.valid[0]) else None


def _site_data_summary(means, names, ls, plain, variables, settings, methods, cfg, est_name) -> dict:
    """The ``site_data`` block: which variables used conditional means, and the same analyses without them."""
    used = [names[j] for j in sorted(means)]
    without: dict = {}
    try:
        without["fs_at_means"] = _fs_at_means(plain, variables)
    except InputError as exc:
        without["fs_at_means"] = None
        without["status"] = f"not computed: {exc}"
    rows: dict = {}
    if methods:
        _run_methods(plain, variables, settings, methods, cfg, est_name, rows)
    for m, row in rows.items():
        without[m] = ({k: row[k] for k in _COMPARED if k in row} if "status" not in row or
                      str(row.get("status", "")).startswith("ok") else {"status": row["status"]})
    try:
        fs_c = _fs_at_means(ls, variables)
    except InputError:
        fs_c = None
    return {"conditional_mean": used,
            "fs_at_means": fs_c,
            "note": ("the variables named use the conditional (simple-kriging) mean of their field at each slice "
                     "base, given the site data; their spread is the prior one (the data are not used to narrow "
                     "it: conservative); the spatial simulation is where the data reduce uncertainty"),
            "without_site_data": without}


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
                         interslice=case.analysis["interslice"],
                         site_data=_site_data(case, rp, theta_override))


def _site_data(case: Case, rp, theta_override=None) -> dict:
    """Gaussian-space site data of the random properties that have some (see slope.site_data).

    Under a θ override to infinity (the single-random-variable comparison of a
    run, a sweep's "inf") the properties are no longer fields and the data
    are left out: that comparison is unconditional.
    """
    readings = case.extras.get("site_data") or []
    if not readings:
        return {}
    from ..site_data import gaussian_site_data  # scipy.stats: half a second, only for cases with data

    return {p.key: gaussian_site_data([r for r in readings if r.key == p.key], p, case.section)
            for p in rp if any(r.key == p.key for r in readings)
            and not (theta_override is not None and p.single)}

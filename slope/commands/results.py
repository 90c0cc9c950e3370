"""Typed results of ``slipfield run`` and the one place they become JSON.

Every analysis of a run returns a dataclass here; figures and tables are
drawn from these objects, and :func:`results_json` turns them into the
``results.json`` layout documented in ``docs/results-json.md`` (the only
function that writes that layout). Each typed estimate knows its own key
path in that layout (``path``), so a table can print a number beside where
a reader finds it again.

Adding an estimate to the comparison table is one entry: a single-variable
reliability method is one line of :data:`SINGLE_VARIABLE_ROWS` (its label
and which keys of its block hold mean FS, σ FS, pf, interval, β and
evaluations); a further spatial estimate is one more :class:`Estimate` in
:attr:`SpatialResult.extra`.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..caution import CAUTION

__all__ = ["RESULTS_VERSION", "CAUTION", "PfCount", "DeterministicResult", "SingleVariableResult", "SimulationRun",
           "QuickEstimate", "SpatialResult", "RiskPoint", "RunResults", "Estimate", "SINGLE_VARIABLE_ROWS",
           "comparison_rows", "results_json", "jsonable", "value_at"]

RESULTS_VERSION = 1


def jsonable(v):
    """Plain JSON types; non-finite floats become null (JSON has no NaN)."""
    if isinstance(v, dict):
        return {str(k): jsonable(x) for k, x in v.items()}
    if isinstance(v, (list, tuple)):
        return [jsonable(x) for x in v]
    if isinstance(v, np.ndarray):
        return jsonable(v.tolist())
    if isinstance(v, (np.floating, float)):
        f = float(v)
        return f if math.isfinite(f) else None
    if isinstance(v, (np.integer,)):
        return int(v)
    if isinstance(v, np.bool_):
        return bool(v)
    return v


def value_at(doc: dict, path: tuple):
    """The value of ``results.json`` (as a dict) at a key path; list indices are ints."""
    for k in path:
        doc = doc[k]
    return doc


def _status(n, n_valid):
    if n_valid == n:
        return "ok"
    if n_valid == 0:
        return "no realisation gave a converged, admissible critical surface"
    return f"{n - n_valid} of {n} realisations without a converged, admissible surface excluded from pf"


# --------------------------------------------------------------------------- estimates
@dataclass
class PfCount:
    """pf counted over valid realisations (FS < 1), with its Wilson interval (Wilson 1927)."""

    pf: float
    interval: tuple[float, float]
    ci_method: str
    n_valid: int
    n_failed: int
    mean_fs: float
    std_fs: float
    beta_from_pf: float
    beta_normal: float
    beta_lognormal: float

    @classmethod
    def from_stats(cls, est) -> "PfCount":
        # The Wilson bounds at k = 0 or k = n are exactly pf in closed form; floating
        # point can put them a rounding error on the wrong side (2e-19 > 0 seen).
        lo, hi = (float(x) for x in est.ci)
        return cls(est.pf, (min(lo, est.pf), max(hi, est.pf)), est.ci_method, est.n_valid, est.n_fail,
                   est.mean_fs, est.std_fs, est.beta_from_pf, est.beta_normal, est.beta_lognormal)


@dataclass
class Estimate:
    """One row-cell of the comparison table: an estimate with the key path of each number.

    ``keys`` maps a quantity (``mean_fs``, ``std_fs``, ``pf``, ``pf_interval``,
    ``beta``, ``n``) to its key under ``path`` in results.json; ``values``
    holds the numbers themselves.
    """

    label: str
    path: tuple
    values: dict
    keys: dict
    status: str = "ok"

    def cells(self) -> dict:
        """quantity → (value, full key path); a key given as a tuple is already a full path.

        A non-finite number is None, as results.json writes it (null).
        """
        def clean(v):
            if isinstance(v, (list, tuple)):
                return [clean(x) for x in v]
            return None if isinstance(v, (float, np.floating)) and not math.isfinite(v) else v

        return {q: (clean(self.values[q]), self.keys[q] if isinstance(self.keys[q], tuple) else
                    self.path + (self.keys[q],)) for q in self.values}


def _estimate(label, path, block, keys, status=None) -> Estimate | None:
    """An Estimate from a JSON-ready block, taking the quantities it holds."""
    vals, used = {}, {}
    for q, ks in keys.items():
        for k in (ks if isinstance(ks, tuple) else (ks,)):
            if k in block and block[k] is not None:
                vals[q], used[q] = block[k], k
                break
    if not vals:
        return None
    return Estimate(label, tuple(path), vals, used, status or block.get("status", "ok"))


_COUNTED = {"mean_fs": "mean_fs", "std_fs": "std_fs", "pf": "pf", "pf_interval": "pf_interval_95",
            "beta": "beta_from_pf", "n": ("n_evaluations", "n")}

#: Comparison rows of each single-variable reliability method: (label, quantity → key(s) in its block).
#: A method not listed gets one row with whichever of the usual keys its block holds.
SINGLE_VARIABLE_ROWS: dict[str, list[tuple[str, dict]]] = {
    "monte-carlo": [("Monte Carlo, single random variables", _COUNTED)],
    "latin-hypercube": [("Latin hypercube, single random variables", _COUNTED)],
    "point-estimate": [("point estimates, pf of a normal FS", {"mean_fs": "mean_fs", "std_fs": "std_fs",
                                                               "pf": "pf_normal", "beta": "beta_normal",
                                                               "n": "n_evaluations"}),
                       ("point estimates, pf of a lognormal FS", {"mean_fs": "mean_fs", "std_fs": "std_fs",
                                                                  "pf": "pf_lognormal", "beta": "beta_lognormal",
                                                                  "n": "n_evaluations"})],
    "fosm": [("FOSM (first-order second-moment)", {"mean_fs": "mean_fs", "std_fs": "std_fs",
                                                  "pf": ("pf", "pf_normal"), "beta": ("beta", "beta_normal"),
                                                  "n": "n_evaluations"})],
    "form": [("FORM (Hasofer–Lind), β and design point", {"pf": "pf", "beta": "beta", "n": "n_evaluations"})],
    "subset": [("subset simulation, single random variables", _COUNTED | {"beta": ("beta", "beta_from_pf")})],
}
_GENERIC = _COUNTED | {"beta": ("beta", "beta_from_pf")}


# --------------------------------------------------------------------------- analyses
@dataclass
class DeterministicResult:
    """Critical surface and FS of one method under one hypothesis (all methods share one bank)."""

    hypothesis: str
    method: str
    search: str
    fs: float | None
    critical_index: int
    n_trials: int
    n_counted: int
    not_counted: dict
    status: str
    surface_xy: np.ndarray | None
    slices: dict | None = None  # slice table of the critical surface (columns → arrays)

    @classmethod
    def from_search(cls, hypothesis: str, block: dict) -> "DeterministicResult":
        xy = block.get("surface_xy_m")
        return cls(hypothesis, block["method"], block["search"], block["fs"], block["critical_index"],
                   block["n_trials"], block["n_counted"], dict(block["not_counted"]), block["status"],
                   None if xy is None else np.asarray(xy, float))

    @property
    def path(self) -> tuple:
        return ("deterministic", self.hypothesis, self.method)

    def to_json(self) -> dict:
        return {"method": self.method, "search": self.search, "fs": self.fs, "critical_index": self.critical_index,
                "n_trials": self.n_trials, "n_counted": self.n_counted, "not_counted": dict(self.not_counted),
                "status": self.status,
                "surface_xy_m": None if self.surface_xy is None else self.surface_xy.tolist()}

    def estimate(self) -> Estimate:
        return Estimate(f"{self.method}, deterministic FS", self.path, {"mean_fs": self.fs, "n": self.n_trials},
                        {"mean_fs": "fs", "n": "n_trials"}, self.status)


@dataclass
class SingleVariableResult:
    """Each random property as one random variable on the deterministic critical surface.

    ``blocks`` holds each method's JSON-ready block as the analysis made it
    (with its ``status``), in the order the case asked for them; ``samples``
    the FS samples of the sampling methods; ``tornado`` the tornado result.
    """

    hypothesis: str
    variables: list
    surface: str
    method: str
    blocks: dict
    tornado_block: dict
    tornado: Any
    samples: dict = field(default_factory=dict)
    site_data: dict | None = None  # which variables used conditional means; the analyses without the data

    @property
    def path(self) -> tuple:
        return ("single_variable_reliability", self.hypothesis)

    def to_json(self) -> dict:
        out = {"variables": self.variables, "surface": self.surface, "method": self.method, **self.blocks}
        if self.tornado_block is not None:
            out["tornado"] = self.tornado_block
        if self.site_data is not None:
            out["site_data"] = self.site_data
        return out

    def estimates(self) -> list[Estimate]:
        out = []
        for m, block in self.blocks.items():
            for label, keys in SINGLE_VARIABLE_ROWS.get(m, [(m, _GENERIC)]):
                e = _estimate(label, self.path + (m,), block, keys)
                if e is not None:
                    out.append(e)
        return out

    def site_data_sentence(self) -> str:
        """One sentence on how the site data entered the single-variable analyses ("" without data)."""
        sd = self.site_data
        if not sd:
            return ""
        fmt = lambda v, f: "n/a" if v is None else format(v, f)  # noqa: E731
        without = sd.get("without_site_data", {})
        bits = []
        for m, label in (("monte-carlo", "Monte Carlo pf"), ("latin-hypercube", "Latin hypercube pf"),
                         ("subset", "subset pf"), ("form", "FORM β")):
            now, then = self.blocks.get(m, {}), without.get(m, {})
            key = "beta" if m == "form" else "pf"
            if now.get(key) is not None and then.get(key) is not None:
                bits.append(f"{label} {fmt(now[key], '.3g')} (without the data {fmt(then[key], '.3g')})")
        bits.append(f"FS at the means {fmt(sd.get('fs_at_means'), '.3f')} (without the data "
                    f"{fmt(without.get('fs_at_means'), '.3f')})")
        return (f"Site data in the single-variable analyses: {', '.join(sd['conditional_mean'])} took the conditional "
                "mean of the data at each slice base, with the spread not narrowed by the data (conservative); "
                + "; ".join(bits) + ".")

    def most_influential(self) -> tuple[str, str] | None:
        """(variable, how it was judged): the largest FORM α², else the widest tornado swing."""
        imp = (self.blocks.get("form") or {}).get("importance")
        if imp:
            name = max(imp, key=imp.get)
            return name, f"FORM importance α² = {imp[name]:.2f}"
        if (self.tornado_block or {}).get("names"):
            return self.tornado_block["names"][0], f"widest tornado swing (mean ± {self.tornado_block['k']:g}σ)"
        return None


@dataclass
class SimulationRun:
    """One random limit-equilibrium simulation (``spatial`` or ``single_random_variable``)."""

    hypothesis: str
    run: str
    realisations: int
    seed: int
    wall_time_s: float
    method: str
    field_method: str | None
    averaging: str | None
    searched: PfCount
    fixed: PfCount | None
    n_nonconverged: int
    n_inadmissible: int
    n_no_valid: int
    refine: dict | None
    n_refined: int
    fs: np.ndarray
    fs_fixed: np.ndarray
    critical_index: np.ndarray
    problem: Any
    failed_area: np.ndarray
    failed_depth: np.ndarray
    shown: list = field(default_factory=list)
    mechanisms: Any = None  # MechanismSummary when other surface families or a per-realisation search ran
    result: Any = None      # the simulator's SimulationResult (mechanism maps and columns read it)
    governing: Any = None   # GoverningSurfaces of every realisation (failure map, area and depth, CSV columns)
    subset: dict | None = None  # subset-simulation block (spatial run only), when the estimator ran it

    @property
    def path(self) -> tuple:
        return ("spatial_simulation", self.hypothesis, self.run)

    @property
    def n_failed_geometry(self) -> int:
        return int(self.failed_area.size)

    @property
    def n_failed_on_searched_surface(self) -> int:
        """Failed realisations whose geometry is the per-realisation search's own polyline."""
        if self.governing is None:
            return 0
        return int(np.sum(self.governing.searched & np.isfinite(self.fs) & (self.fs < 1.0)))

    def to_json(self) -> dict:
        n, s = int(self.realisations), self.searched
        out = {"realisations": n, "seed": self.seed, "wall_time_s": self.wall_time_s, "method": self.method,
               "field_method": self.field_method, "averaging": self.averaging, "status": _status(n, int(s.n_valid)),
               "critical_surface_searched": {
                   "pf": s.pf, "pf_interval_95": list(s.interval), "ci_method": s.ci_method, "n_valid": s.n_valid,
                   "n_failed": s.n_failed, "n_without_admissible_surface": int(n - s.n_valid),
                   "mean_fs": s.mean_fs, "std_fs": s.std_fs, "beta_from_pf": s.beta_from_pf,
                   "beta_normal": s.beta_normal, "beta_lognormal": s.beta_lognormal}}
        f = self.fixed
        out["fixed_deterministic_surface"] = (
            {"pf": f.pf, "pf_interval_95": list(f.interval), "ci_method": f.ci_method, "n_valid": f.n_valid,
             "n_failed": f.n_failed, "mean_fs": f.mean_fs, "std_fs": f.std_fs, "status": _status(n, int(f.n_valid))}
            if f is not None else
            {"pf": None, "pf_interval_95": [None, None], "n_valid": 0, "mean_fs": None, "std_fs": None,
             "status": "no realisation gave a converged, admissible FS on this surface"})
        out.update({"n_nonconverged": self.n_nonconverged, "n_inadmissible": self.n_inadmissible,
                    "n_realisations_without_valid_surface": self.n_no_valid, "refine": self.refine,
                    "n_refined": self.n_refined})
        if self.mechanisms is not None:
            out["mechanisms"] = self.mechanisms.to_json()
        if getattr(self.result, "refine_functions", None):
            # realisations lowered by a path counted with another interslice function (slope.search.interslice_retry)
            out["refine_interslice_functions"] = dict(self.result.refine_functions)
        if getattr(self.result, "refine_rejected", None):
            # paths of the per-realisation search not accepted, by reason (slope.simulate.mechanisms,
            # refinement; the rigid-block rule of slope.search.path_acceptance among them)
            out["search_rejected"] = {str(k): int(v) for k, v in self.result.refine_rejected.items()}
        if getattr(self.result, "bank_rejected", None) is not None:
            # non-circular bank surfaces judged per realisation (slope.simulate.bank_checks)
            out["bank_checks"] = {"rejected": dict(self.result.bank_rejected),
                                  "retried": int(self.result.bank_retried)}
        out.update({"failure_geometry": {"n_failed": self.n_failed_geometry,
                                         "n_failed_on_searched_surface": self.n_failed_on_searched_surface,
                                         "sliding_mass_area": _spread(self.failed_area),
                                         "max_depth": _spread(self.failed_depth)}})
        if self.subset is not None:
            out["subset"] = self.subset
        if self.run == "spatial":
            out["realisations_shown"] = [dict(r) for r in self.shown]
        return out

    def estimates(self, label_searched: str, label_fixed: str | None) -> list[Estimate]:
        n = int(self.realisations)
        out = [Estimate(label_searched, self.path + ("critical_surface_searched",),
                        _pf_values(self.searched, n) | {"n": n}, dict(_PF_KEYS) | {"n": self.path + ("realisations",)},
                        _status(n, int(self.searched.n_valid)))]
        if label_fixed is not None and self.fixed is not None:
            v = _pf_values(self.fixed, n)
            v.pop("beta")
            keys = {k: _PF_KEYS[k] for k in v} | {"n": self.path + ("realisations",)}
            out.append(Estimate(label_fixed, self.path + ("fixed_deterministic_surface",), v | {"n": n}, keys,
                                _status(n, int(self.fixed.n_valid))))
        return out


_PF_KEYS = {"mean_fs": "mean_fs", "std_fs": "std_fs", "pf": "pf", "pf_interval": "pf_interval_95",
            "beta": "beta_from_pf"}


def _pf_values(c: PfCount, n: int) -> dict:
    return {"mean_fs": c.mean_fs, "std_fs": c.std_fs, "pf": c.pf, "pf_interval": list(c.interval),
            "beta": c.beta_from_pf}


def _spread(v):
    v = np.asarray(v, float)
    if v.size == 0:
        return None
    return {"median": float(np.median(v)), "mean": float(v.mean()), "p05": float(np.percentile(v, 5)),
            "p95": float(np.percentile(v, 95)), "min": float(v.min()), "max": float(v.max())}


@dataclass
class QuickEstimate:
    """Single variables with σ × √γ on the fixed deterministic critical surface."""

    hypothesis: str
    realisations: int
    seed: int
    wall_time_s: float
    method: str
    properties: list
    estimate: PfCount | None
    n_valid: int

    NOTE = ("each random property as one random variable with its point standard deviation × √γ, γ the "
            "variance reduction of its field averaged along the fixed deterministic critical surface "
            "(2D correlation at the surface's own lags; gamma_1d_theta_h is the 1D variance function "
            "along θh for comparison)")

    @property
    def path(self) -> tuple:
        return ("spatial_simulation", self.hypothesis, "analytic_variance_reduction")

    def to_json(self) -> dict:
        base = {"realisations": int(self.realisations), "seed": int(self.seed), "wall_time_s": self.wall_time_s,
                "method": self.method, "surface": "fixed deterministic critical surface",
                "status": _status(int(self.realisations), int(self.n_valid)), "properties": self.properties,
                "note": self.NOTE}
        e = self.estimate
        if e is None:
            return dict(base, pf=None, pf_interval_95=[None, None], ci_method="wilson", n_valid=0, mean_fs=None,
                        std_fs=None, beta_from_pf=None, beta_normal=None, beta_lognormal=None)
        return dict(base, pf=e.pf, pf_interval_95=list(e.interval), ci_method=e.ci_method, n_valid=e.n_valid,
                    mean_fs=e.mean_fs, std_fs=e.std_fs, beta_from_pf=e.beta_from_pf, beta_normal=e.beta_normal,
                    beta_lognormal=e.beta_lognormal)


@dataclass
class SpatialResult:
    """The spatial simulation of one hypothesis, its θ → ∞ twin and the quick estimate.

    ``extra`` holds further spatial estimates by results.json key (e.g. a
    subset-simulation estimate): each is ``(JSON-ready block, Estimate)``.
    """

    hypothesis: str
    spatial: SimulationRun
    single: SimulationRun
    quick: QuickEstimate
    extra: dict = field(default_factory=dict)
    site_data: Any = None  # SiteDataEffect when the case has [[site_data]] (pf with and without them)

    @property
    def variance_reduction_factor(self) -> float | None:
        a, b = self.spatial.searched.std_fs, self.single.searched.std_fs
        if b and b > 0:
            return (a / b) ** 2
        return None

    def to_json(self) -> dict:
        out = {"spatial": self.spatial.to_json(), "single_random_variable": self.single.to_json(),
               "analytic_variance_reduction": self.quick.to_json()}
        vr = self.variance_reduction_factor
        if vr is not None:
            out["variance_reduction_factor_of_fs"] = vr
        for k, (block, _) in self.extra.items():
            out[k] = block
        return out

    def estimates(self) -> list[Estimate]:
        out = self.spatial.estimates("spatial simulation, critical surface re-searched",
                                     "spatial simulation, fixed deterministic surface")
        out += self.single.estimates("θ → ∞ simulation (single variables), re-searched", None)
        sub = self.spatial.subset
        if sub and sub.get("ran") and sub.get("pf") is not None:
            e = _estimate("subset simulation (spatial, rare-event pf)", self.spatial.path + ("subset",), sub,
                          {"pf": "pf", "pf_interval": "pf_interval_95", "beta": ("beta", "beta_from_pf"),
                           "n": "n_evaluations"}, "ok")
            if e is not None:
                out.append(e)
        mech = self.spatial.mechanisms
        if mech is not None:
            d = mech.to_json()
            if d.get("pf_circles_only") is not None:
                out.append(Estimate("spatial simulation, circles alone (same realisations)",
                                    self.spatial.path + ("mechanisms",),
                                    {"pf": d["pf_circles_only"], "pf_interval": d["pf_circles_only_interval_95"]},
                                    {"pf": "pf_circles_only", "pf_interval": "pf_circles_only_interval_95"}))
        out += [e for _, e in self.extra.values() if e is not None]
        sd = self.site_data
        if sd is not None and sd.pf_unconditional is not None:
            path = ("spatial_simulation", self.hypothesis, "site_data")
            out.append(Estimate("spatial simulation without the site data (same seed)", path,
                                {"pf": sd.pf_unconditional, "pf_interval": list(sd.interval_unconditional)},
                                {"pf": "pf_unconditional", "pf_interval": "pf_interval_95_unconditional"}))
        q = self.quick
        if q.estimate is not None:
            out.append(Estimate("quick estimate: σ × √γ on the fixed surface", q.path,
                                _pf_values(q.estimate, q.realisations) | {"n": q.realisations},
                                dict(_PF_KEYS) | {"n": "realisations"},
                                _status(q.realisations, q.n_valid)))
        return out


@dataclass
class RiskPoint:
    """One point of the risk chart: annual pf = P(condition per year) × pf | condition."""

    hypothesis: str
    estimate: str
    source_path: tuple
    pf: float
    pf_interval: tuple | None
    annual_probability_of_condition: float
    condition: str
    consequence: float

    @property
    def annual_pf(self) -> float:
        return self.annual_probability_of_condition * self.pf

    @property
    def annual_interval(self) -> tuple | None:
        if self.pf_interval is None:
            return None
        return tuple(self.annual_probability_of_condition * v for v in self.pf_interval)

    @property
    def label(self) -> str:
        return f"{self.hypothesis}, {self.estimate}"

    def to_json(self) -> dict:
        return {"hypothesis": self.hypothesis, "estimate": self.estimate, "pf_from": ".".join(self.source_path),
                "pf_given_condition": self.pf,
                "pf_interval_95": None if self.pf_interval is None else list(self.pf_interval),
                "condition": self.condition,
                "annual_probability_of_condition": self.annual_probability_of_condition,
                "annual_pf": self.annual_pf,
                "annual_pf_interval_95": None if self.annual_interval is None else list(self.annual_interval),
                "consequence": self.consequence}


@dataclass
class RunResults:
    """Everything ``slipfield run`` computed, typed; :func:`results_json` is its JSON form."""

    case_path: str
    case_sha256: str
    title: str
    note: str
    version: str
    started_utc: str
    seed: int
    realisations: int
    deterministic: dict        # hypothesis → {method → DeterministicResult}
    single_variable: dict      # hypothesis → SingleVariableResult | None
    spatial: dict              # hypothesis → SpatialResult | None
    risk: dict | None = None   # {"consequence", "consequence_label", "points": [RiskPoint], "tolerability", "given"}
    analysis_time_s: float | None = None  # wall time until the figures are drawn (shown in the report)
    wall_time_s: float | None = None      # wall time of the whole run (results.json)
    files: list = field(default_factory=list)


def comparison_rows(res: RunResults) -> tuple[list[str], list[tuple[str, dict]]]:
    """The comparison table: hypotheses (columns) and rows (label → {hypothesis: Estimate}).

    Rows follow the order: deterministic FS per method, single-variable
    methods, spatial estimates, quick estimate; a row is present when at
    least one hypothesis has it.
    """
    hyps = list(res.deterministic)
    rows: dict[str, dict] = {}
    for h in hyps:
        for d in res.deterministic[h].values():
            rows.setdefault(d.estimate().label, {})[h] = d.estimate()
    for h in hyps:
        sv = res.single_variable.get(h)
        for e in (sv.estimates() if sv else []):
            rows.setdefault(e.label, {})[h] = e
    for h in hyps:
        sp = res.spatial.get(h)
        for e in (sp.estimates() if sp else []):
            rows.setdefault(e.label, {})[h] = e
    return hyps, list(rows.items())


def results_json(res: RunResults) -> dict:
    """``results.json`` of a run (layout: ``docs/results-json.md``), plain JSON types."""
    doc = {
        "slipfield_results_version": RESULTS_VERSION,
        "case": {"path": res.case_path, "title": res.title, "note": res.note, "sha256": res.case_sha256},
        "slipfield_version": res.version,
        "started_utc": res.started_utc,
        "units": {"length": "m", "stress": "kPa", "unit_weight": "kN/m3", "angle": "degree",
                  "fs": "-", "pf": "-", "beta": "-"},
        "caution": CAUTION,
        "deterministic": {h: {m: d.to_json() for m, d in ms.items()} for h, ms in res.deterministic.items()},
        "single_variable_reliability": {h: (r.to_json() if r else None) for h, r in res.single_variable.items()},
        "spatial_simulation": {h: (s.to_json() if s else None) for h, s in res.spatial.items()},
    }
    if res.risk is not None:
        doc["risk"] = {"consequence": res.risk["consequence"], "consequence_label": res.risk["consequence_label"],
                       "points": [p.to_json() for p in res.risk["points"]],
                       "given_annual_pf": res.risk.get("given"),
                       "tolerability": [{"label": t["label"], "source": t["source"], "points": t["points"]}
                                        for t in res.risk["tolerability"]]}
    if res.wall_time_s is not None:
        doc["wall_time_s"] = res.wall_time_s
    doc["files"] = list(res.files)
    return jsonable(doc)

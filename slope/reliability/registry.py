"""Registry of the reliability estimators: name → runner.

Every estimator a case file may name in ``[reliability] methods`` is one
entry here, and the case schema, the command line and the documentation take
their lists from :data:`ESTIMATORS`. A runner takes the limit state, the
random vector and the run's settings and returns one result row (a dict of
plain numbers, JSON-ready) and the arrays the figures need:

>>> row, arrays = run_estimator("form", ls, variables, Settings(samples=5000, seed=1))

Rows of the sampling estimators carry ``pf`` with a 95 % interval; the
moment methods (``point-estimate``, ``fosm``) carry ``mean_fs``, ``std_fs``
and β, pf under a normal and a lognormal FS; ``form`` carries β and pf;
``subset`` carries ``pf`` with its coefficient of variation. Every row has
``n_evaluations``.

Adding an estimator: a function ``run(ls, variables, settings) -> (row,
arrays)`` and one :func:`register_estimator` line, plus a test that runs it
through a case (``tests/test_registries.py`` walks every name).
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

from .form import form
from .fosm import fosm
from .pem import hong, rosenblueth
from .sampling import latin_hypercube, monte_carlo
from .sensitivity import rank_correlations
from .subset import subset_simulation

__all__ = ["Estimator", "Settings", "ESTIMATORS", "ESTIMATOR_NAMES", "register_estimator", "run_estimator",
           "pf_row"]


@dataclass(frozen=True)
class Settings:
    """What a case says about the estimators.

    Attributes
    ----------
    samples : int
        Monte Carlo and Latin hypercube samples; samples per level of subset
        simulation (rounded down to a multiple of 10, as p0 = 0.1 needs).
    seed : int
        Run seed (streams of :mod:`fields.seeding`).
    n_jobs : int
        Worker processes of the sampling estimators.
    """

    samples: int
    seed: int
    n_jobs: int = 1
    #: subset simulation's level probability and samples per level when the case sets
    #: ``[simulation] estimator`` to subset or auto (slope.simulate.rare.SubsetSettings)
    level_probability: float = 0.1
    samples_per_level: int | None = None


@dataclass(frozen=True)
class Estimator:
    """One reliability estimator of the registry.

    Attributes
    ----------
    name : str
        The name a case file writes.
    run : callable
        ``run(limit_state, variables, settings) -> (row, arrays)``.
    doc : str
        One line for the documentation.
    """

    name: str
    run: Callable
    doc: str = ""


#: name -> Estimator
ESTIMATORS: dict[str, Estimator] = {}


def register_estimator(est: Estimator) -> Estimator:
    """Add an estimator to the registry (one line per estimator)."""
    ESTIMATORS[est.name] = est
    return est


def pf_row(est) -> dict:
    """Row of a :class:`~.stats.PfEstimate` (pf a fraction, FS dimensionless)."""
    return {"pf": float(est.pf), "pf_interval_95": [float(est.ci[0]), float(est.ci[1])],
            "ci_method": est.ci_method, "n": int(est.n), "n_valid": int(est.n_valid),
            "n_failed": int(est.n_fail), "n_nonconverged": int(est.n_nonconverged),
            "n_inadmissible": int(est.n_inadmissible), "mean_fs": float(est.mean_fs),
            "std_fs": float(est.std_fs), "beta_from_pf": float(est.beta_from_pf),
            "beta_normal": float(est.beta_normal), "beta_lognormal": float(est.beta_lognormal)}


def _sampling(fn):
    def run(ls, variables, settings):
        res = fn(ls, variables, int(settings.samples), seed=int(settings.seed), n_jobs=int(settings.n_jobs))
        row = pf_row(res.main.estimate) | {"n_evaluations": int(res.n_evaluations)}
        if res.X is not None:
            rc = rank_correlations(res.X, res.fs, list(variables.names))
            row["spearman"] = {k: float(v) if np.isscalar(v) else v for k, v in rc.items()}
        return row, {"fs": res.fs, "history": res.main.history}
    return run


def _moments(res) -> dict:
    return {"mean_fs": float(res.mean_fs), "std_fs": float(res.std_fs),
            "beta_normal": float(res.beta_normal), "pf_normal": float(res.pf_normal),
            "beta_lognormal": float(res.beta_lognormal), "pf_lognormal": float(res.pf_lognormal),
            "n_evaluations": int(res.n_evaluations), "n_nonconverged": int(res.n_nonconverged),
            "n_inadmissible": int(res.n_inadmissible)}


def _point_estimate(ls, variables, settings):
    # Rosenblueth's 2^n points up to six variables, Hong's 2n + 1 beyond (cost)
    pe = rosenblueth(ls, variables) if variables.n <= 6 else hong(ls, variables)
    return {"scheme": pe.method} | _moments(pe), {}


def _fosm(ls, variables, settings):
    res = fosm(ls, variables)
    return _moments(res) | {"variance_share": {k: float(v) for k, v in res.variance_share.items()},
                            "notes": list(res.notes)}, {}


def _form(ls, variables, settings):
    fr = form(ls, variables)
    names = list(variables.names)
    return {"beta": fr.beta, "pf": fr.pf, "converged": bool(fr.converged),
            "design_point": dict(zip(names, map(float, fr.design_point_x))),
            "importance": {k: float(v) for k, v in fr.importance.items()},
            "n_evaluations": int(fr.n_evaluations)}, {}


def _subset(ls, variables, settings):
    p0 = float(settings.level_probability)
    n = (int(settings.samples_per_level) if settings.samples_per_level is not None else
         max(10, int(settings.samples) - int(settings.samples) % 10))
    res = subset_simulation(ls, variables, seed=int(settings.seed), n_per_level=n, p0=p0,
                            n_jobs=int(settings.n_jobs))
    return {"pf": float(res.pf), "cov_pf": float(res.cov_pf), "cov_pf_upper": float(res.cov_pf_upper),
            "beta_from_pf": float(res.beta_from_pf), "n_per_level": n, "p0": p0,
            "n_levels": len(res.level_probabilities),
            "thresholds": [float(t) for t in res.thresholds],
            "level_probabilities": [float(p) for p in res.level_probabilities],
            "n_evaluations": int(res.n_evaluations),
            "mc_equivalent_evaluations": float(res.mc_equivalent_evaluations),
            "n_nonconverged": int(res.n_nonconverged), "n_inadmissible": int(res.n_inadmissible),
            "notes": list(res.notes)}, {"fs": res.fs_final}


register_estimator(Estimator("monte-carlo", _sampling(monte_carlo), "crude Monte Carlo sampling"))
register_estimator(Estimator("latin-hypercube", _sampling(latin_hypercube), "Latin hypercube sampling"))
register_estimator(Estimator("point-estimate", _point_estimate,
                             "point estimate method (Rosenblueth 1975 up to six variables, Hong 1998 beyond)"))
register_estimator(Estimator("fosm", _fosm, "first-order second-moment, mean-value form"))
register_estimator(Estimator("form", _form, "first-order reliability method (Hasofer-Lind, Rackwitz-Fiessler)"))
register_estimator(Estimator("subset", _subset, "subset simulation (Au & Beck 2001), p0 = 0.1"))

#: Every estimator's name, in registry order.
ESTIMATOR_NAMES = tuple(ESTIMATORS)


def run_estimator(name: str, limit_state, variables, settings: Settings):
    """Run one estimator of the registry by name; returns ``(row, arrays)``."""
    return ESTIMATORS[name].run(limit_state, variables, settings)

"""θ sweeps with subset simulation at each grid point (:func:`theta_sweep_rare`)."""
from __future__ import annotations

import math

import numpy as np

from .driver import simulate
from .estimators import AUTO_MIN_FAILURES

__all__ = ["theta_sweep_rare"]


def theta_sweep_rare(problem, theta_h, theta_v, n, seed, settings, estimator="subset", *, n_jobs=1, batch=100,
                     scheduler=None, refine=None) -> list:
    """:func:`slope.simulate.theta_sweep` with subset simulation at each grid point.

    Same grid rules and common random numbers (the same seed and streams at
    every point). ``estimator="auto"``: Monte Carlo with ``n`` realisations
    at a point whose first ``batch`` realisations see at least
    :data:`AUTO_MIN_FAILURES` failures, subset simulation elsewhere.

    Returns
    -------
    list of dict rows as :func:`theta_sweep`'s (``lo``/``hi`` the 95 %
    interval of the estimator used), plus ``estimator``, ``cov`` (-),
    ``status`` and ``n`` = FS evaluations.
    """
    from .rare import subset_simulate
    from .studies import _summary, _with_thetas

    rows, done = [], {}
    for th in theta_h:
        for tv in theta_v:
            th, tv = float(th), float(tv)
            eff = (math.inf, math.inf) if math.isinf(th) or math.isinf(tv) else (th, tv)
            if eff not in done:
                prob = _with_thetas(problem, [eff] * len(problem.properties))
                use = estimator
                if estimator == "auto":
                    first = simulate(prob, batch, seed, n_jobs=n_jobs, batch=batch, scheduler=scheduler,
                                     refine=refine)
                    k = int((np.isfinite(first.fs) & (first.fs < 1.0)).sum())
                    use = "subset" if k < AUTO_MIN_FAILURES else "monte-carlo"
                if use == "subset":
                    r = subset_simulate(prob, settings, seed, n_jobs=n_jobs, batch=batch, scheduler=scheduler,
                                        refine=refine)
                    lo, hi = r.interval_95
                    f0 = r.level0_fs[np.isfinite(r.level0_fs)]  # level 0: N Monte Carlo realisations
                    done[eff] = {"estimator": "subset", "pf": r.pf, "lo": lo, "hi": hi, "cov": r.cov,
                                 "status": r.status, "mean_fs": float(f0.mean()) if f0.size else float("nan"),
                                 "std_fs": float(f0.std(ddof=1)) if f0.size > 1 else float("nan"),
                                 "n": r.n_evaluations, "n_valid": r.n_evaluations - r.counts["none"],
                                 "n_nonconverged": r.counts["nonconv"], "n_inadmissible": r.counts["inadm"],
                                 "n_no_valid_surface": r.counts["none"]}
                else:
                    res = simulate(prob, n, seed, n_jobs=n_jobs, batch=batch, scheduler=scheduler, refine=refine)
                    s = _summary(res)
                    done[eff] = {"estimator": "monte-carlo", "pf": s["pf"], "lo": s["lo"], "hi": s["hi"],
                                 "cov": (math.sqrt((1 - s["pf"]) / (s["pf"] * res.n)) if s["pf"] else float("nan")),
                                 "status": "ok", "mean_fs": s["mean_fs"], "std_fs": s["std_fs"], "n": res.n,
                                 "n_valid": int(np.isfinite(res.fs).sum()), "n_nonconverged": res.n_nonconverged,
                                 "n_inadmissible": res.n_inadmissible, "n_no_valid_surface": res.n_no_valid}
            rows.append({"theta_h": th, "theta_v": tv, "theta_h_run": eff[0], "theta_v_run": eff[1],
                         **done[eff]})
    return rows

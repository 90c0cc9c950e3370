"""Helpers shared by the ``simulate``, ``sweep`` and export commands (options, the case's problem, JSON)."""
from __future__ import annotations

import json
import math
import re
from pathlib import Path

import numpy as np

from ..case.preflight import check_option
from ..errors import InputError
from .results import RESULTS_VERSION, jsonable

__all__ = ["parse_theta_list", "RESULTS_VERSION"]


def write_json(path: Path, obj) -> None:
    from ..report import atomic_write_text

    atomic_write_text(path, json.dumps(jsonable(obj), indent=2, allow_nan=False))


def slug(key: str) -> str:
    return re.sub(r"[^A-Za-z0-9]+", "_", key).strip("_") or "field"


def parse_theta_list(text, option: str) -> list[float]:
    """Scales of fluctuation from a comma-separated option value.

    Parameters
    ----------
    text : str or sequence
        e.g. ``"5,10,20,inf"`` (m); ``inf`` means a single random variable.
    option : str
        Option name used in error messages (e.g. ``"--theta-h"``).

    Returns
    -------
    list of float
        Distinct values in ascending order (``inf`` last), m.

    Raises
    ------
    InputError
        A value that is not a number, is <= 0 or NaN, or an empty list.
    """
    items = [s.strip() for s in text.split(",")] if isinstance(text, str) else list(text)
    out = []
    for s in items:
        if isinstance(s, str) and s.lower() in ("inf", "+inf", "infinity", "∞"):
            out.append(math.inf)
            continue
        try:
            v = float(s)
        except (TypeError, ValueError):
            raise InputError(f"{option}: {s!r} is not a number; give scales of fluctuation in m separated by "
                             f"commas, e.g. {option} 5,10,20,inf") from None
        if not v > 0 or math.isnan(v):
            raise InputError(f"{option}: {s!r} is not > 0; scales of fluctuation must be positive lengths in m "
                             "('inf' for a single random variable)")
        out.append(v)
    if not out or (isinstance(text, str) and not text.strip()):
        raise InputError(f"{option}: no values given; give e.g. {option} 5,10,20,inf (m)")
    return sorted(set(out))


def problem_of(case, hypothesis, theta_override=None):
    """Search the case's bank once (run method only) and build its RandomProblem."""
    from ..case.analyses import random_problem, trial_surfaces

    hyps = list(case.analysis["hypotheses"])
    hyp = hypothesis or hyps[0]
    if hyp not in ("drained", "undrained"):
        raise InputError(f"--hypothesis: {hyp!r} is not known; use drained or undrained")
    # only the bank of the run method is needed (deterministic() would search every method)
    det = {hyp: {"bank": trial_surfaces(case, hyp, case.analysis["method"])}}
    prob = random_problem(case, det, hyp, theta_override=theta_override)
    if prob is None:
        raise InputError(f"--hypothesis {hyp}: no [[random]] property of {case.path} is used under the {hyp} "
                         "hypothesis; add one or choose the other hypothesis")
    return hyp, det, prob


def _option(value, option, lo):
    """``None`` (not given) or a whole number of at least ``lo`` (one check for every command)."""
    return None if value is None else check_option(value, option, lo)


def settings(case, realisations, jobs, batch, seed, default_n=None):
    sim = case.simulation
    n = _option(realisations, "--realisations", 1) or int(default_n or sim["realisations"])
    n_jobs = _option(jobs, "--jobs", 1) or int(sim["jobs"])
    from ..simulate.executors import limit_threads

    limit_threads(n_jobs)  # --jobs N: N cores in all, this process's kernel threads included
    return (n, n_jobs,
            _option(batch, "--batch", 1) or int(sim["batch"]),
            int(sim["seed"]) if seed is None else _option(seed, "--seed", 0))


def summary(res) -> dict:
    """Counts and estimates of one SimulationResult (FS dimensionless, pf a fraction)."""
    d = res.to_dict()
    d["n_valid"] = int(np.isfinite(res.fs).sum())
    d["n_failed"] = int((np.isfinite(res.fs) & (res.fs < 1.0)).sum())
    return d

"""Per-realisation search that follows the realisation's own weak zones.

After the bank (every family re-searched with the realisation's strengths),
the lowest clean surfaces of *different families* (the best circle, the best
block, the best non-circular surface of the bank) start a dynamic-programming
search (:mod:`slope.search.dynamic_programming`, after Baker 1980) whose segment strengths come
from the realisation's fields by the same mapping as the bank's
(:func:`slope.simulate.refinement.realisation_overrides`), so the path moves
toward the realisation's weak cells. Every path and every start surface is
then judged by the method of slices (``method``), and only clean solutions
count: converged and no flag at all, the rule of the Nelder-Mead refinement
(:func:`slope.simulate.refinement.refine_realisation`). A path below the starts must also be
at least as critical as its own start surface as a mechanism of rigid blocks with the
realisation's strengths (:mod:`slope.search.path_acceptance`; the lowest such path is judged
first, and a refused one is counted and the next judged). The realisation's FS is the lower
of the bank's and the search's.

The first band of each start surface depends on the geometry only, so its
segment terms are kept per process and reused by every realisation that
starts from that surface (unless unit weights are random).
"""
from __future__ import annotations

from collections import OrderedDict
from dataclasses import dataclass

import numpy as np

from ..bank import section_with_unit_weights
from ..errors import InputError
from ..search import evaluate_surfaces
from ..search.dynamic_programming import DP_FAMILY, DPSettings, _spencer, _start_xy, dp_surface, first_band
from ..surfaces import family_of
from .refinement import START_UNUSABLE, _grid_values, realisation_overrides, rejection_counts

__all__ = ["MECHANISM_SEARCH", "mechanism_search", "surface_families"]

MECHANISM_SEARCH = DP_FAMILY
_CACHE: OrderedDict = OrderedDict()
_CACHE_SIZE = 64


def surface_families(problem) -> list:
    """Family of every surface of a problem's bank (kept on the problem)."""
    fam = getattr(problem, "_families", None)
    if fam is None or len(fam) != len(problem.surfaces):
        fam = [family_of(s) for s in problem.surfaces]
        problem._families = fam
    return fam


def _family_codes(problem) -> np.ndarray:
    """Family of every bank surface as a small integer (kept on the problem, as the names)."""
    codes = getattr(problem, "_family_codes", None)
    if codes is None or codes.size != len(problem.surfaces):
        fam = surface_families(problem)
        number = {f: j for j, f in enumerate(dict.fromkeys(fam))}
        codes = problem._family_codes = np.array([number[f] for f in fam], dtype=np.int64)
    return codes


def _starts(problem, fs_row, ok_row, n_families):
    """Bank indices of the lowest clean surface of each family, lowest first, at most n_families.

    Ties keep the bank's order (stable sort). Array operations only: this runs
    once per searched realisation over the whole bank (a Python loop over it
    cost about 2 ms each time).
    """
    codes = _family_codes(problem)
    good = np.where(ok_row & np.isfinite(fs_row), fs_row, np.inf)
    order = np.argsort(good, kind="stable")
    order = order[np.isfinite(good[order])]
    _, first = np.unique(codes[order], return_index=True)  # where each family first appears, lowest FS first
    return [int(i) for i in order[np.sort(first)[:n_families]]]


def _key(problem):
    k = getattr(problem, "_mechanism_key", None)
    if k is None:
        k = problem.fingerprint()
        problem._mechanism_key = k
    return k


def _start_data(problem, section, index, st, reuse):
    """First band of a start surface and Spencer's θ on it with the mean strengths (kept per process)."""
    def build():
        surf = problem.surfaces[index]
        _, theta = _spencer(section, _start_xy(section, surf), problem.hypothesis, None, problem.n_slices)
        return first_band(section, surf, st), (theta if np.isfinite(theta) else 0.0)

    if not reuse:
        return build()
    key = (_key(problem), index, st)
    data = _CACHE.get(key)
    if data is None:
        data = _CACHE[key] = build()
        while len(_CACHE) > _CACHE_SIZE:
            _CACHE.popitem(last=False)
    else:
        _CACHE.move_to_end(key)
    return data


def mechanism_search(problem, seed, k, fs_row, ok_row, settings, measured: dict | None = None):
    """Search realisation k from the lowest surfaces of different families.

    Parameters
    ----------
    problem : RandomProblem
    seed, k : int
        Run seed and realisation number.
    fs_row, ok_row : ndarray (n_surfaces,)
        The realisation's bank FS and which of them are clean.
    settings : RefineSettings
        ``families`` start surfaces, ``columns``, ``nodes``, ``passes`` of
        the grids, ``method`` of the final judgement.
    measured : dict, optional
        Filled with the geometry of the returned surface (key ``geometry``:
        :func:`.failure_geometry.measure` of the slices it was judged on, so
        it costs no second slicing) and, when the accepted path's first
        solution was refused, the Morgenstern-Price interslice function whose
        solution it counted with (key ``interslice_function``,
        :mod:`slope.search.interslice_retry`).

    Returns
    -------
    fs : float
        Lowest clean FS among the paths found (by ``settings.method``);
        NaN when none was clean. The caller keeps the bank's FS when it is
        lower.
    surface : Polyline or Circle or None
        The surface of that FS.
    rejected : ndarray of int, shape (len(REFINE_REASONS),)
        Paths not accepted (and starts the grids could not follow), by reason.
    """
    starts = _starts(problem, np.asarray(fs_row, float), np.asarray(ok_row, bool), settings.families)
    if not starts:
        return float("nan"), None, rejection_counts({})
    section = problem.section
    values = _grid_values(problem, seed, k)
    weights = {z: float(v.ravel()[0]) for (i, z), v in values.items()
               if problem.properties[i].prop == "unit_weight"}
    if weights:
        section = section_with_unit_weights(section, weights)
    overrides = realisation_overrides(problem, seed, k, section, values)
    # the grid's segments take the value at their midpoint (the search only needs to find the weak
    # cells); the paths are judged with the problem's own averaging
    grid_overrides = realisation_overrides(problem, seed, k, section, values, n_per_base=1)
    st = DPSettings(columns=settings.columns, nodes=settings.nodes, passes=settings.passes, theta_rounds=1)
    candidates, origin = [], []
    thetas, unusable = [], 0
    for i in starts:
        start = problem.surfaces[i]
        try:
            # θ of the start with the mean strengths: Baker's (1980) fixed-θ recursion needs only a
            # fair value; the paths are judged below by the full method
            terms, theta = _start_data(problem, section, i, st, reuse=not weights)
            paths = dp_surface(section, start, hypothesis=problem.hypothesis, overrides=grid_overrides, settings=st,
                               n_slices=problem.n_slices, first_terms=terms, start_solution=(fs_row[i], theta))
        except InputError:
            unusable += 1  # a start the grid cannot follow (no depth): the others still run
            continue
        candidates += paths  # the start is the bank's own surface: its FS is already in the bank
        origin += [i] * len(paths)
        thetas.append(theta)
    if not candidates:
        return float("nan"), None, rejection_counts({START_UNUSABLE: max(unusable, 1)})
    opts = {}
    if settings.method in ("spencer", "morgenstern-price"):  # start the iteration near the answer
        opts = dict(F_start=float(np.min(np.asarray(fs_row)[starts])), lam_start=float(np.tan(thetas[0])))
    # clean solutions only, as the Nelder-Mead refinement: converged and no flag at all (a Spencer root
    # with negative base normals or a thrust line outside the mass is not a minimum to accept)
    res = evaluate_surfaces(section, candidates, hypothesis=problem.hypothesis, method=settings.method,
                            n_slices=problem.n_slices, overrides=overrides, search=MECHANISM_SEARCH, tolerate=(),
                            **opts)
    refused = _judge_kinematically(problem, section, res, origin, float(np.min(np.asarray(fs_row)[starts])),
                                   overrides)
    rej = (rejection_counts(res.rejected) + rejection_counts(refused)
           + rejection_counts({START_UNUSABLE: unusable} if unusable else {}))
    if res.critical is None or not np.isfinite(res.fs_min):
        return float("nan"), None, rej
    if measured is not None:
        from .failure_geometry import measure

        measured["geometry"] = measure(res.bank, res.critical_index)
        if res.interslice_function is not None:
            measured["interslice_function"] = str(res.interslice_function[res.critical_index])
    return float(res.fs_min), res.critical, rej


def _judge_kinematically(problem, section, res, origin, fs_start, overrides) -> dict:
    """Refuse, lowest first, the counted paths below the starts that are less critical than their own
    start as a mechanism of rigid blocks with the realisation's strengths
    (:mod:`slope.search.path_acceptance`); updates ``res`` (counted, critical) in place.

    Only paths that could lower the realisation's FS are judged (limit-equilibrium FS below the
    lowest start's): a path above it changes nothing, so it costs nothing. Returns the refusals by
    reason.
    """
    from ..search.path_acceptance import StartBound, kinematic_reasons

    refused, bounds = {}, {}
    fs = np.where(res.counted, res.fs, np.inf)
    for j in np.argsort(fs, kind="stable"):
        if not fs[j] < fs_start:
            break
        i = origin[j]
        if i not in bounds:
            bounds[i] = StartBound(section, problem.surfaces[i], hypothesis=problem.hypothesis, overrides=overrides)
        why = kinematic_reasons(section, [res.surfaces[j]], problem.surfaces[i], hypothesis=problem.hypothesis,
                                overrides=overrides, bound=bounds[i])[0]
        if not why:
            break
        res.counted[j] = False
        refused[why] = refused.get(why, 0) + 1
    left = np.where(res.counted, res.fs, np.inf)
    if np.isfinite(left).any():
        res.critical_index = int(np.argmin(left))
        res.fs_min = float(left[res.critical_index])
        res.critical = res.surfaces[res.critical_index]
        res.critical_flags = int(res.flags[res.critical_index])
    else:
        res.critical_index, res.fs_min, res.critical = -1, float("nan"), None
    return refused

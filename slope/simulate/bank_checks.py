"""The checks of non-circular solutions, applied to the bank's polylines in every realisation.

A bank may hold non-circular surfaces besides circles: the case file's
``[search.block]`` and ``[search.dynamic_programming]`` families. The
deterministic searches judge a Spencer or Morgenstern-Price solution on such
a surface by the interslice shear-strength check
(:mod:`slope.search.interslice_strength`), retrying another interslice
function before refusing it (:mod:`slope.search.interslice_retry`). The
simulator's batch factor of safety (:func:`slope.simulate.engine.batch_fs`)
solves every surface of the bank at once and does not: here each
realisation's lowest admissible surface, when it is non-circular, is judged
the same way with that realisation's fields (on the slice boundaries too,
through :func:`slope.simulate.refinement.realisation_overrides`). A surface
that fails is no longer admissible in that realisation (the next lowest is
judged in turn, until a circle or a passing polyline is the lowest), and is
counted by reason; one that passes only with another interslice function
keeps that solution's factor of safety, and is counted too.

Only the lowest surface is judged: the others never set the realisation's
factor of safety (nor start its per-realisation search, which takes the
lowest admissible surface of each family, :mod:`slope.simulate.mechanisms`,
and judges its own paths). Banks of circles alone, and methods other than
Spencer and Morgenstern-Price, are left as they are, at no cost.
"""
from __future__ import annotations

import numpy as np

__all__ = ["bank_checks_apply", "check_bank_polylines", "BANK_CHECK_METHODS"]

#: Methods whose solutions carry the interslice forces the checks judge.
BANK_CHECK_METHODS = ("spencer", "morgenstern-price")


def _polyline_rows(problem) -> np.ndarray:
    """Which bank rows are non-circular (kept on the problem)."""
    rows = getattr(problem, "_polyline_rows", None)
    if rows is None or rows.size != len(problem.surfaces):
        from .mechanisms import surface_families

        rows = np.array([f != "circle" for f in surface_families(problem)], bool)
        problem._polyline_rows = rows
    return rows


def bank_checks_apply(problem) -> bool:
    """Whether the checks judge this problem's bank: non-circular surfaces solved by Spencer or M-P."""
    from ..methods import method_spec

    return method_spec(problem.method).name in BANK_CHECK_METHODS and bool(_polyline_rows(problem).any())


def check_bank_polylines(problem, seed, start, fs, conv, adm):
    """Judge each realisation's lowest non-circular surface; update ``fs`` and ``adm`` in place.

    Parameters
    ----------
    problem : RandomProblem
    seed, start : int
        Run seed and the number of the first realisation of the rows.
    fs, conv, adm : ndarray (s, m)
        :func:`slope.simulate.engine.batch_fs` of realisations ``start ..
        start + s - 1``.

    Returns
    -------
    rejected : ndarray of int (s, len(REFINE_REASONS))
        Surfaces no longer admissible, by reason (the reasons of the
        per-realisation search, :data:`slope.simulate.refinement.REFINE_REASONS`).
    retried : ndarray of int (s,)
        Surfaces counted with another interslice function's solution.
    """
    from ..bank import section_with_unit_weights
    from ..methods import method_spec
    from ..search import evaluate_surfaces
    from .engine import stencil
    from .refinement import REFINE_REASONS, _grid_values, realisation_overrides, rejection_counts

    s = fs.shape[0]
    rejected = np.zeros((s, len(REFINE_REASONS)), np.int64)
    retried = np.zeros(s, np.int64)
    poly = _polyline_rows(problem)
    opts = {"interslice": problem.interslice} if method_spec(problem.method).name == "morgenstern-price" else {}
    for r in range(s):
        done = np.zeros(fs.shape[1], bool)
        overrides = section = None
        while True:
            good = np.where(conv[r] & adm[r] & np.isfinite(fs[r]), fs[r], np.inf)
            i = int(np.argmin(good))
            if not np.isfinite(good[i]) or not poly[i] or done[i]:
                break
            done[i] = True
            if overrides is None:
                k = start + r
                held = None
                values = _grid_values(problem, seed, k)
                weights = {z: float(v.ravel()[0]) for (j, z), v in values.items()
                           if problem.properties[j].prop == "unit_weight"}
                section = section_with_unit_weights(problem.section, weights) if weights else problem.section
                overrides = realisation_overrides(problem, seed, k, section, values)
                if not weights:    # the simulator's own slice bank of the surface (unit weights as built)
                    st = stencil(problem)
                    held = (st.bank, st.rows)
            one = None if held is None else held[0].subset([int(np.searchsorted(held[1], i))])
            # the bank's tolerance (engine._scatter): a negative normal force and the line of thrust; the
            # iteration starts from the bank's root (no Bishop start to compute)
            res = evaluate_surfaces(section, [problem.surfaces[i]], hypothesis=problem.hypothesis,
                                    method=problem.method, n_slices=problem.n_slices, overrides=overrides, bank=one,
                                    tolerate=("negative-normal", "thrust-outside"), F_start=float(fs[r, i]), **opts)
            if res.counted[0]:
                if res.retried:   # counted with another interslice function: that solution's F
                    fs[r, i] = res.fs[0]
                    retried[r] += 1
                continue
            adm[r, i] = False
            rejected[r] += rejection_counts(res.rejected)
    return rejected, retried

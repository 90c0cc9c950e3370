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

Cost: what depends on the surface alone is computed once per surface and
kept on the problem (:func:`_surface_parts`): its row of the simulator's
slice bank and that bank's terms, the geometry of its slice boundaries
(integration points, zones, stresses and pore pressures) and where its bases
and boundary points read the grid (bilinear cells and weights), so a
realisation pays for its own strengths and solutions only. Where the unit
weights are random the section differs per realisation and nothing is kept.
``KEEP_SURFACE_GEOMETRY = False`` computes everything per realisation, as
before (the benchmark ``scripts/bench_bank_checks.py`` compares the two;
the results are the same bits).
"""
from __future__ import annotations

import numpy as np

__all__ = ["bank_checks_apply", "check_bank_polylines", "BANK_CHECK_METHODS"]

#: Keep what depends on a surface alone between realisations (False: the old per-realisation path).
KEEP_SURFACE_GEOMETRY = True

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


def _surface_parts(problem, i):
    """(slice bank of surface ``i``, its geometry cache, where its points read the grid), computed once and kept.

    The slice bank is the row of the simulator's own (unit weights as
    built); the geometry cache is filled by
    :func:`slope.search.evaluate_surfaces` (``boundary_cache``) and the grid
    cache by :func:`slope.simulate.refinement.realisation_overrides`
    (``kept``) on the first check of the surface. Without
    :data:`KEEP_SURFACE_GEOMETRY`, a fresh bank row and nothing kept.
    """
    from .engine import stencil

    st = stencil(problem)
    if not KEEP_SURFACE_GEOMETRY:
        return st.bank.subset([int(np.searchsorted(st.rows, i))]), None, None
    kept = getattr(problem, "_bank_check_parts", None)
    if kept is None:
        kept = problem._bank_check_parts = {}
    if i not in kept:
        kept[i] = (st.bank.subset([int(np.searchsorted(st.rows, i))]), {}, {})
    return kept[i]


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
    from .refinement import REFINE_REASONS, _grid_values, realisation_overrides, rejection_counts

    s = fs.shape[0]
    rejected = np.zeros((s, len(REFINE_REASONS)), np.int64)
    retried = np.zeros(s, np.int64)
    poly = _polyline_rows(problem)
    opts = {"interslice": problem.interslice} if method_spec(problem.method).name == "morgenstern-price" else {}
    for r in range(s):
        done = np.zeros(fs.shape[1], bool)
        values = section = None
        while True:
            good = np.where(conv[r] & adm[r] & np.isfinite(fs[r]), fs[r], np.inf)
            i = int(np.argmin(good))
            if not np.isfinite(good[i]) or not poly[i] or done[i]:
                break
            done[i] = True
            if values is None:
                k = start + r
                values = _grid_values(problem, seed, k)
                weights = {z: float(v.ravel()[0]) for (j, z), v in values.items()
                           if problem.properties[j].prop == "unit_weight"}
                section = section_with_unit_weights(problem.section, weights) if weights else problem.section
                held = not weights    # the simulator's own slice bank of the surface (unit weights as built)
            one, kept, grid_kept = _surface_parts(problem, i) if held else (None, None, None)
            overrides = realisation_overrides(problem, seed, k, section, values, kept=grid_kept)
            # the bank's tolerance (engine._scatter): a negative normal force and the line of thrust; the
            # iteration starts from the bank's root (no Bishop start to compute)
            res = evaluate_surfaces(section, [problem.surfaces[i]], hypothesis=problem.hypothesis,
                                    method=problem.method, n_slices=problem.n_slices, overrides=overrides, bank=one,
                                    boundary_cache=kept,
                                    tolerate=("negative-normal", "thrust-outside"), F_start=float(fs[r, i]), **opts)
            if res.counted[0]:
                if res.retried:   # counted with another interslice function: that solution's F
                    fs[r, i] = res.fs[0]
                    retried[r] += 1
                continue
            adm[r, i] = False
            rejected[r] += rejection_counts(res.rejected)
    return rejected, retried

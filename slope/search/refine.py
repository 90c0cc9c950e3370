"""``refine``: a start surface (usually the critical circle) turned into a polyline
whose vertices are moved by scipy optimisation, keeping the surface kinematically
admissible (base inclination never increasing in the direction of motion, so
the mass can slide without internal locking)."""
from __future__ import annotations

from collections import Counter

import numpy as np

from ..errors import InputError
from ..surfaces import Circle, Polyline
from .evaluate import SearchResult, evaluate_surfaces

def _polyline_from(section, surface, n_vertices):
    from ..surfaces import cut_ground

    x1, x2 = cut_ground(section, surface)
    xs = np.linspace(x1, x2, n_vertices)
    if isinstance(surface, Circle):
        ys = surface.yc - np.sqrt(np.maximum(surface.radius ** 2 - (xs - surface.xc) ** 2, 0.0))
    else:
        ys = surface.y(xs)
    ys[0], ys[-1] = section.ground_y(x1), section.ground_y(x2)
    return xs, ys


def kinematic_reason(section, xs, ys) -> str:
    """Why a polyline (section frame, ends on the ground) cannot slide; '' if it can.

    Checks: x strictly increasing; every interior vertex below the ground;
    the base inclination in the direction of motion never increases (no
    upward kink that would lock the mass).
    """
    if np.any(np.diff(xs) <= 0):
        return "vertices out of order"
    if np.any(ys[1:-1] >= section.ground_y(xs[1:-1])):
        return "a vertex lies above the ground line"
    d = 1 if section.ground_y(xs[0]) > section.ground_y(xs[-1]) else -1
    slope = np.diff(ys) / np.diff(xs)  # section frame
    descent = -d * slope  # descent rate toward the direction of motion, ordered along +x
    if d < 0:
        descent = descent[::-1]
    if np.any(np.diff(descent) > 1e-9):
        return "base inclination increases in the direction of motion"
    return ""


#: why a trial shape of ``refine`` was not accepted, besides the method flags
SHAPE_REJECTED = "shape not kinematically admissible or outside the section"


def refine(section, start, *, n_vertices=8, method="spencer", hypothesis="drained", n_slices=40,
           overrides=None, max_evaluations=600, tolerate=(), **method_opts) -> SearchResult:
    """``refine`` search: optimise a polyline starting from ``start``.

    The ends slide along the ground line and the interior vertices move
    vertically; scipy's Nelder–Mead minimises the factor of safety, with
    kinematically inadmissible shapes (see :func:`kinematic_reason`) and
    inadmissible solutions given a penalty so the optimiser steps away.

    Parameters
    ----------
    section : Section
    start : Circle or Polyline
        Start surface (e.g. ``centre_lattice(...).critical``).
    n_vertices : int
        Vertices of the polyline (>= 3), ends included.
    method : str
        A method valid for non-circular surfaces (``spencer``,
        ``morgenstern-price``, ``janbu``; ``bishop`` uses a moment point).
    max_evaluations : int
        Budget of factor-of-safety evaluations.
    tolerate : sequence of str
        Method flags that do not exclude a trial (default none: a refined
        minimum must be a clean solution, converged with no flag; Spencer
        roots with negative base normals or a line of thrust outside the mass
        on an optimised polyline are how a spurious low FS would enter).
        Rejected trials are counted by reason in ``trials_rejected``.

    Returns
    -------
    SearchResult
        ``surfaces`` holds the start polyline, the refined one and, when
        ``start`` is not itself that polyline (a circle), ``start`` too, so
        ``critical`` is never worse than the start surface: a polyline of a
        few chords inscribed in a circle lies above the arc and starts with
        a higher FS than the circle (about 1 % with 6 vertices), which a
        small optimisation budget may not win back.  The refined polyline is
        a candidate only when it is at least as critical as ``start`` as a
        mechanism of rigid blocks (:mod:`slope.search.path_acceptance`); if
        not it is counted in ``rejected`` under that reason.  ``history``
        holds the best FS of the polyline after each improvement.
    """
    from scipy.optimize import minimize

    if int(n_vertices) < 3:
        raise InputError(f"n_vertices must be >= 3, got {n_vertices}")
    xs0, ys0 = _polyline_from(section, start, int(n_vertices))
    span = xs0[-1] - xs0[0]
    depth0 = section.ground_y(xs0[1:-1]) - ys0[1:-1]
    scale = np.r_[0.05 * span, 0.05 * span, np.maximum(depth0, 0.05 * span) * 0.5]
    opts = dict(hypothesis=hypothesis, method=method, n_slices=n_slices, overrides=overrides,
                tolerate=tolerate, **method_opts)
    history = []
    best = {"fs": np.inf, "p": None}
    trials_rejected = Counter()

    def shape(p):
        q = p * scale
        x1, x2 = xs0[0] + q[0], xs0[-1] + q[1]
        t = (xs0 - xs0[0]) / span
        xs = x1 + (x2 - x1) * t
        ys = section.ground_y(xs)
        ys[1:-1] = ys[1:-1] - (depth0 + q[2:])
        return xs, ys

    def objective(p):
        xs, ys = shape(p)
        if xs[0] < section.x_min or xs[-1] > section.x_max or kinematic_reason(section, xs, ys):
            trials_rejected[SHAPE_REJECTED] += 1
            return 10.0 + np.sum(p * p)  # outside the admissible shapes: push back
        r = evaluate_surfaces(section, Polyline(np.c_[xs, ys]), **opts)
        if not r.counted[0]:
            trials_rejected.update(r.rejected)
            return 10.0 + np.sum(p * p)
        f = float(r.fs[0])
        if f < best["fs"]:
            best["fs"], best["p"] = f, p.copy()
            history.append(f)
        return f

    p0 = np.zeros(len(scale))
    objective(p0)   # the start surface: sets best and rejects a start with no clean solution
    if not np.isfinite(best["fs"]):
        why = ", ".join(f"{k}" for k in sorted(trials_rejected)) or "no factor of safety"
        raise InputError(
            f"refine: the start surface has no clean {method} solution ({why}); start from a surface "
            "whose factor of safety converged with no flag"
        )
    minimize(objective, p0, method="Nelder-Mead",
             options={"maxfev": int(max_evaluations), "xatol": 1e-3, "fatol": 1e-5, "initial_simplex": None})
    from .path_acceptance import accepted_paths, add_refused

    xs, ys = shape(best["p"])
    start_poly = Polyline(np.c_[xs0, ys0])
    final = Polyline(np.c_[xs, ys])
    # the optimised polyline replaces the start only if it is at least as critical as a mechanism of
    # rigid blocks (slope.search.path_acceptance); the start polyline is its start's own chords
    kept, refused = accepted_paths(section, [final], start, hypothesis=hypothesis, overrides=overrides) \
        if best["p"] is not None and np.any(best["p"] != 0) else ([final], {})
    candidates = [start_poly] + kept + ([start] if isinstance(start, Circle) else [])
    res = add_refused(evaluate_surfaces(section, candidates, search="refine", **opts), refused)
    res.history = history
    res.trials_rejected = dict(trials_rejected)
    return res


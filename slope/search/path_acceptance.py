"""Which free non-circular paths count: the rigid-block upper bound ranks a path against its start.

A path found by dynamic programming or by the Nelder-Mead refinement is a
polyline whose limit-equilibrium factor of safety can fall below that of the
surface it started from for two different reasons: it follows a mechanism
that really is more critical (a weak layer, a weak zone of a realisation),
or it exploits the statical freedom of the method of slices (the interslice
force inclination), which on a homogeneous φ = 0 slope of 2H:1V gives paths
11 % below the best circle while every kinematically admissible mechanism
through them is less critical than the circle (measured: paths 1.55-1.58,
the circle as a chain of as many rigid blocks 1.457; Taylor's chart puts the
true factor near 1.38-1.40).

The rule, and why it needs no tolerance: the kinematic factor of safety
(:func:`slope.search.upper_bound.upper_bound_fs`) is a bound on the true
one for every mechanism, whatever the statical assumptions, so it can rank
two surfaces by what the soil could actually do. A path replaces its start
surface only when, judged by the same rigid-block evaluation with the same
strengths and the same number of blocks, it is at least as critical:

    F_kin(path) <= F_kin(start)

The same evaluation for both: every polyline is a chain of rigid blocks, one
per segment of its own. A circle has no vertices, so it becomes as many
chords as the path has segments (:func:`slope.search.upper_bound.mechanism_xy`):
the same number of blocks. A polyline start (a block along a weak layer,
the start polyline of a refinement) keeps its own vertices: adding collinear
vertices would give its blocks a freedom its shape does not have (an extra
vertex in a layered soil splits one base into parts of different friction,
whose jumps then differ), and measured on a thin seam under a stiffer cover
it raised the block's kinematic factor by 2-6 %, which would favour the
paths. A path with no admissible mechanism (F_kin infinite) is refused. A
refused path is counted under :data:`KINEMATIC_REASON`, never silently
dropped.

What the rule does not do: it does not make the limit-equilibrium factor
of an accepted path an upper bound; it only keeps a path whose lower
limit-equilibrium factor is not backed by a mechanism at least as critical
as the start's. The kinematic factors themselves are never reported as the
factor of safety. Both factors come from the same table-based optimisation
of the interfaces, whose own error (a fraction of a percent, see
:mod:`slope.search.upper_bound`) decides near-ties either way.

The rule only refuses paths: the start surface is always kept, so a search
under it never ends above its start.
"""
from __future__ import annotations

import numpy as np

from ..surfaces import Circle
from .upper_bound import KINEMATIC_REASON, Refinement, mechanism_xy

__all__ = ["KINEMATIC_REASON", "UNSUPPORTED_REASON", "RULE_ID", "kinematic_reasons", "accepted_paths", "StartBound"]

def _rule_id() -> str:
    from . import upper_bound as ub

    tables = "; ".join(f"{t[0]:g}..{t[-1]:g} in {len(t)}" for t in ub._TABLES)
    return (f"rigid-block rule: F_kin(path) <= F_kin(start), circle as chords of the path's count; "
            f"inclination tables {tables}, normals {ub._NORMAL_TABLE[0]:g}..{ub._NORMAL_TABLE[-1]:g} in "
            f"{len(ub._NORMAL_TABLE)}; {ub._LINE_PARTS} x 3 Gauss points per line")


#: What a stored result of a search under this rule is tied to (its settings change which paths count).
RULE_ID = _rule_id()

#: Reason under which a path is not counted on a section the rigid-block evaluation does not model.
UNSUPPORTED_REASON = "no rigid-block evaluation with a tension crack"


class StartBound:
    """Kinematic factor of safety of one start surface, kept per number of blocks (refined as far as
    the paths judged against it needed, :class:`slope.search.upper_bound.Refinement`)."""

    def __init__(self, section, start, *, hypothesis, overrides=None):
        self.section, self.start, self.hypothesis, self.overrides = section, start, hypothesis, overrides
        self._ref = {}

    def xy(self, n):
        if isinstance(self.start, Circle):
            return mechanism_xy(self.section, self.start, n)
        return np.asarray(self.start.points, float)

    def refinement(self, n) -> Refinement:
        if not isinstance(self.start, Circle):
            n = 0                      # a polyline is its own mechanism, whatever the path's count
        if n not in self._ref:
            self._ref[n] = Refinement(self.section, self.xy(n), hypothesis=self.hypothesis,
                                      overrides=self.overrides)
        return self._ref[n]

    def fs(self, n) -> float:
        """The start's least F (fully refined) as a chain of ``n`` blocks (a circle) or of its own."""
        r = self.refinement(n)
        while not r.done:
            r.step()
        return r.fs


def _as_critical(path: Refinement, start: Refinement) -> bool:
    """F(path) <= F(start), both fully refined, F(path) finite: each refined only as far as the answer needs.

    Refining never raises F, so the path is at least as critical once its F is not above a fully
    refined start's, and less critical once a fully refined path's F is above the start's F so far.
    """
    while True:
        if path.level == 0 or (path.fs > start.fs and not path.done):
            path.step()           # the path may still come down to the start
        elif path.done and not np.isfinite(path.fs):
            return False          # no admissible mechanism through the path
        elif path.fs <= start.fs:
            if start.done:
                return True
            start.step()          # the start may still go below the path
        else:
            return False          # fully refined path above the start so far


def kinematic_reasons(section, paths, start, *, hypothesis, overrides=None, bound: StartBound | None = None):
    """Why each path may not replace its start ('' where it may).

    Parameters
    ----------
    section : Section
    paths : sequence of Polyline
    start : Circle or Polyline
        The surface the paths started from.
    hypothesis : {"drained", "undrained"}
    overrides : callable or dict, optional
        Strengths (a realisation's fields), as for :func:`upper_bound_fs`;
        the same for the paths and the start.
    bound : StartBound, optional
        The start's kinematic factors when already computed (same strengths).

    Returns
    -------
    list of str
        '' (accepted), :data:`KINEMATIC_REASON`, or :data:`UNSUPPORTED_REASON`
        (a section with a tension crack, which the mechanism does not model:
        paths are refused there, the start is kept) per path.
    """
    if section.loads is not None and section.loads.crack is not None:
        return [UNSUPPORTED_REASON] * len(paths)   # the mechanism has no crack: refuse, do not guess
    bound = StartBound(section, start, hypothesis=hypothesis, overrides=overrides) if bound is None else bound
    out = []
    for p in paths:
        xy = np.asarray(p.points, float)
        start_ref = bound.refinement(len(xy) - 1)
        path = Refinement(section, xy, hypothesis=hypothesis, overrides=overrides)
        # the path and its start are each refined only as far as the comparison needs: finer tables
        # never raise F, so the decision is the one the full refinement of both would give
        out.append("" if _as_critical(path, start_ref) else KINEMATIC_REASON)
    return out


def accepted_paths(section, paths, start, *, hypothesis, overrides=None):
    """The paths that may replace ``start`` and the count of the others by reason: (list, dict)."""
    reasons = kinematic_reasons(section, paths, start, hypothesis=hypothesis, overrides=overrides)
    kept = [p for p, r in zip(paths, reasons) if not r]
    refused = {}
    for r in reasons:
        if r:
            refused[r] = refused.get(r, 0) + 1
    return kept, refused


def add_refused(result, refused: dict):
    """Add refused paths to a SearchResult's ``rejected`` counts (in place) and return it."""
    for k, v in refused.items():
        result.rejected[k] = result.rejected.get(k, 0) + int(v)
        result.n_trials += int(v)
    return result

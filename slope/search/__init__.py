"""Surface banks and searches for the critical slip surface.

Searches (plain names of our own):

- ``centre-lattice``: circles over a rectangular lattice of centres, each with
  a sweep of radii set by the elevation of the circle's lowest point;
- ``window``: circles through an entry point in an upslope window and an exit
  point in a downslope window of the ground line, with a sweep of radii;
- ``refine``: a start surface (usually the critical circle) turned into a
  polyline whose vertices are moved by scipy optimisation, keeping the
  surface kinematically admissible (base inclination never increasing in the
  direction of motion, so the mass can slide without internal locking);
- ``block``: sliding blocks whose base runs along a weak zone or layer, with
  an active wedge from an entry range (Rankine, 45° + φ/2 to the horizontal)
  and a passive wedge to an exit range (45° − φ/2);
- ``dynamic-programming``: non-circular surfaces by dynamic programming over
  grids of nodes (Baker 1980).

Every search returns a :class:`SearchResult` with the critical surface, its
factor of safety, the factor of safety of every trial and the counts of
rejected trials by reason. A trial counts toward the critical surface when its
bank geometry is valid, the method converged, and no *intolerable* flag is
raised; by default a negative effective normal force at a few slices or a
line of thrust outside a slice (common under the crest of cohesive slopes)
is tolerated but counted, while m_α ≤ 0.2 and non-positive F are not.

Units: m, kPa, degrees at the user level.

Modules: ``evaluate`` (counting a set of trial surfaces), ``circles``
(centre-lattice, window), ``refine``, ``block`` and
``dynamic_programming`` (with ``dp_grid``): the families a bank may hold,
``families`` (a case's bank of every family) and ``registry`` (name → search,
the one dispatcher of case files).
"""
from .block import block_polylines, block_search
from .circles import centre_lattice, lattice_circles, window, window_circles
from .evaluate import MIN_DEPTH_REASON, SearchResult, evaluate_surfaces, surface_depth
from .refine import SHAPE_REJECTED, kinematic_reason, refine
from .registry import (SEARCHES, SearchKind, case_search_names, critical_surface, register_search,
                       search_from_case)

__all__ = [
    "SearchResult", "evaluate_surfaces", "centre_lattice", "window", "refine",
    "critical_surface", "SEARCHES", "SearchKind", "register_search", "case_search_names",
    "search_from_case", "MIN_DEPTH_REASON", "SHAPE_REJECTED", "lattice_circles", "window_circles",
    "block_search", "block_polylines", "surface_depth", "kinematic_reason",
]

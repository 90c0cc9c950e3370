"""Refinement of a realisation's critical surface into a polyline.

The bank search finds the lowest FS among precomputed candidates; in a
spatially variable soil the true critical surface bends towards weak zones,
which a bank of circles cannot follow. For realisations whose bank FS is
below a threshold, :func:`refine_realisation` starts
:func:`slope.search.refine` from the bank's critical surface with the
realisation's own fields: every trial polyline gets its slice-base
strengths from the same grid values and the same mapping (bilinear
interpolation at the base's points, then their mean) as the bank, so a
refined FS is directly comparable with the bank FS. ``refine`` keeps the
start circle among its candidates, so refinement never raises the FS.
"""
from __future__ import annotations

import math
from dataclasses import asdict, dataclass

import numpy as np

from ..bank import section_with_unit_weights
from ..errors import InputError
from ..methods import POLYLINE_METHOD_NAMES
from ..search import refine
from ..surfaces import Circle
from .engine import _correlated, bilinear_weights, deterministic_value, strength_overrides
from .problem import AVERAGING
from .refine_names import (DEFAULT_REFINE_BELOW, DEFAULT_REFINE_SEARCH, FAILURE_FS, REFINE_OFF,
                           REFINE_SEARCHES)

__all__ = ["RefineSettings", "REFINE_SEARCHES", "realisation_overrides", "refine_realisation", "search_region",
           "REFINE_REASONS"]

START_UNUSABLE = "start surface has no clean solution by the refinement method"


def _reasons():
    from ..methods import FLAG_NAMES
    from ..search import SHAPE_REJECTED
    from ..search.interslice_strength import INTERSLICE_REASON
    from ..search.path_acceptance import KINEMATIC_REASON, UNSUPPORTED_REASON

    return ((SHAPE_REJECTED, START_UNUSABLE, "not converged") + tuple(FLAG_NAMES.values())
            + (INTERSLICE_REASON, KINEMATIC_REASON, UNSUPPORTED_REASON, "other geometry"))


#: reasons a refinement trial or candidate is rejected, in the order of the
#: per-realisation count arrays (``refine_rejected`` of the simulation)
REFINE_REASONS = _reasons()


def rejection_counts(rejected: dict) -> np.ndarray:
    """A reason -> count dict as a vector over :data:`REFINE_REASONS`."""
    out = np.zeros(len(REFINE_REASONS), dtype=np.int64)
    for k, v in rejected.items():
        out[REFINE_REASONS.index(k) if k in REFINE_REASONS else len(REFINE_REASONS) - 1] += int(v)
    return out


@dataclass(frozen=True)
class RefineSettings:
    """Which realisations are refined, and how.

    Parameters
    ----------
    below : float, -
        Refine realisations whose critical bank FS is below this value
        (e.g. 1.2; realisations above it keep their bank FS). pf can only
        change through realisations with 1 <= bank FS < ``below``.
    above : float, -
        ... and at or above this one (default 0: every realisation below
        ``below``). Case files and the command line use 1 (the failure
        threshold): the search only lowers FS, so searching a realisation
        that already fails cannot change pf (:mod:`.refine_names`).
    method : str
        Method of slices for the polylines (``spencer``, default, or
        ``morgenstern-price``, ``janbu``): Bishop's and the Ordinary method's
        moment equilibrium about a point is not suited to non-circular
        surfaces. The start circle is re-evaluated by the same method.
    n_vertices : int
        Polyline vertices (ends included).
    max_evaluations : int
        FS evaluations per refined realisation (``nelder-mead``).
    search : {"nelder-mead", "dynamic-programming"}
        ``nelder-mead``: the bank's critical surface bent into a polyline
        of ``n_vertices`` by the simplex method of Nelder & Mead (1965);
        ``dynamic-programming``: paths over grids of nodes after Baker
        (1980) from the lowest surfaces of ``families`` different families
        of the bank (:mod:`slope.simulate.mechanisms`).
    families, columns, nodes, passes : int
        ``dynamic-programming`` only: start surfaces (of different
        families), columns and nodes per column of the grids, grids per
        start (each a narrower band about the previous path).
    """

    below: float
    above: float = 0.0
    method: str = "spencer"
    n_vertices: int = 8
    max_evaluations: int = 300
    search: str = "nelder-mead"
    families: int = 2
    columns: int = 20
    nodes: int = 13
    passes: int = 2

    def __post_init__(self):
        b = float(self.below)
        if not (math.isfinite(b) and b > 0):
            raise InputError(f"refine below (--refine-below): {self.below!r}; give a factor of safety > 0, e.g. 1.2")
        object.__setattr__(self, "below", b)
        a = float(self.above)
        if not (math.isfinite(a) and 0 <= a < b):
            raise InputError(f"refine below (simulation.refine_below, --refine-below): {b!r} leaves no realisation "
                             f"to search: realisations are searched when their bank FS is in [{a:g}, refine_below); "
                             f"give a value above {a:g} (default {DEFAULT_REFINE_BELOW:g}) or switch the search off "
                             f"(refine_search = \"{REFINE_OFF}\", --refine-search {REFINE_OFF})")
        object.__setattr__(self, "above", a)
        m = str(self.method).lower()
        if m not in POLYLINE_METHOD_NAMES:
            raise InputError(f"refine method (--refine-method): {self.method!r}; polylines need one of "
                             f"{', '.join(POLYLINE_METHOD_NAMES)}")
        object.__setattr__(self, "method", m)
        if int(self.n_vertices) < 3:
            raise InputError(f"refine n_vertices: {self.n_vertices!r}; give at least 3")
        if int(self.max_evaluations) < 10:
            raise InputError(f"refine max_evaluations: {self.max_evaluations!r}; give at least 10")
        object.__setattr__(self, "n_vertices", int(self.n_vertices))
        object.__setattr__(self, "max_evaluations", int(self.max_evaluations))
        if self.search not in REFINE_SEARCHES:
            raise InputError(f"refine search (simulation.refine_search): {self.search!r}; use one of "
                             f"{', '.join(REFINE_SEARCHES)}")
        for name, lo in (("families", 1), ("columns", 3), ("nodes", 3), ("passes", 1)):
            v = getattr(self, name)
            if isinstance(v, bool) or int(v) != v or int(v) < lo:
                raise InputError(f"refine {name}: {v!r}; give a whole number >= {lo}")
            object.__setattr__(self, name, int(v))

    def describe(self) -> dict:
        d = asdict(self)
        if not d["above"]:  # the library's default window (and older stores lack it)
            d.pop("above")
        if self.search == "nelder-mead":  # the grid sizes do nothing then (and older stores lack them)
            for k in ("search", "families", "columns", "nodes", "passes"):
                d.pop(k)
        else:
            for k in ("n_vertices", "max_evaluations"):
                d.pop(k)
        return d

    @classmethod
    def from_case(cls, simulation: dict, *, search=None, below=None, method=None):
        """Settings of a case's ``[simulation]`` table, with command-line overrides; None when off.

        The per-realisation search is on unless ``refine_search`` (or the
        ``search`` override, ``--refine-search``) is ``"off"``: by default
        dynamic programming for realisations with bank FS in
        [1, ``refine_below``), ``refine_below`` 1.10 (:mod:`.refine_names`
        says why). ``below`` and ``method`` override ``refine_below`` and
        ``refine_method`` (``--refine-below``, ``--refine-method``).
        """
        chosen = search if search is not None else simulation.get("refine_search", DEFAULT_REFINE_SEARCH)
        if chosen == REFINE_OFF:
            for opt, v in (("--refine-below", below), ("--refine-method", method)):
                if v is not None:
                    raise InputError(f"{opt}: the per-realisation search is off (--refine-search {REFINE_OFF} or "
                                     f"simulation.refine_search = \"{REFINE_OFF}\"), so {opt} would do nothing; "
                                     f"remove it or name a search ({', '.join(REFINE_SEARCHES)})")
            return None
        if chosen not in REFINE_SEARCHES:
            raise InputError(f"refine search (--refine-search, simulation.refine_search): {chosen!r}; use one of "
                             f"{', '.join(REFINE_SEARCHES + (REFINE_OFF,))}")
        return cls(below=simulation.get("refine_below", DEFAULT_REFINE_BELOW) if below is None else below,
                   above=FAILURE_FS,
                   method=simulation.get("refine_method", "spencer") if method is None else method,
                   search=chosen)


def search_region(problem, settings) -> tuple | None:
    """Box of the section (section frame, m) whose cells the per-realisation search may read.

    For field generators that build only part of the grid: a realisation's
    search reads its fields (through :func:`realisation_overrides`) only
    inside ``(x_min, x_max, y_min, y_max)``. ``dynamic-programming``: the
    first bands of every bank surface that can start it (each start's
    horizontal extent plus ``margin`` of it on each side, from ``band`` of
    its greatest depth below it up to the ground; later passes stay within
    a band plus two node spacings), padded by one cell for the bilinear
    interpolation; ``nelder-mead`` may move a polyline anywhere, so the
    whole section. None without a search.
    """
    if settings is None:
        return None
    sec = problem.section
    whole = (float(sec.x_min), float(sec.x_max), float(sec.base_y), float(np.max(sec.ground[:, 1])))
    if settings.search != "dynamic-programming":
        return whole
    from ..search.dp_grid import start_xy
    from ..search.dynamic_programming import DPSettings

    st = DPSettings(columns=settings.columns, nodes=settings.nodes, passes=settings.passes)
    lo_x, hi_x, lo_y = np.inf, -np.inf, np.inf
    for surf in problem.surfaces:
        try:
            xy = start_xy(sec, surf, 40)
        except InputError:
            continue  # a surface that does not cut the ground twice never starts a search
        x1, x2 = xy[0, 0], xy[-1, 0]
        depth = float(np.max(sec.ground_y(xy[:, 0]) - xy[:, 1]))
        if not depth > 0:
            continue
        half = st.band * depth * (1.0 + 4.0 / max(st.nodes - 1, 1))
        lo_x, hi_x = min(lo_x, x1 - st.margin * (x2 - x1)), max(hi_x, x2 + st.margin * (x2 - x1))
        lo_y = min(lo_y, float(np.min(xy[:, 1])) - half)
    if not np.isfinite(lo_x):
        return whole
    pad = problem.cell
    return (float(max(whole[0], lo_x - pad)), float(min(whole[1], hi_x + pad)), float(max(whole[2], lo_y - pad)),
            whole[3])


def _grid_values(problem, seed, k):
    """Physical values of realisation k on the whole grid: {(i, z): (nx, ny) or (1, 1)}."""
    out = {}
    for z in range(len(problem.section.zones)):
        members = [i for i, p in enumerate(problem.properties) if z in problem.zones_of(i)]
        if not members:
            continue
        zs = _correlated(problem, seed, [k], z, members)
        for i in members:
            out[(i, z)] = np.asarray(problem.properties[i].marginal.from_standard_normal(zs[i]), float)
    return out


def realisation_overrides(problem, seed, k, section=None, values=None, n_per_base=None, kept=None):
    """Strength overrides of realisation k for any slice bank.

    ``section``: the section the banks are built from (default the
    problem's; a copy with the realisation's unit weights has other
    material names). ``values``: the realisation's grid values if already
    generated (``_grid_values``). ``n_per_base``: points averaged along a
    base (default the problem's averaging; a search grid may take fewer).
    ``kept``: a dict of the caller's that keeps, for each bank it is called
    with, where its bases read the grid (points, zones, bilinear cells and
    weights: geometry only), so a caller that passes the same bank again in
    other realisations (:mod:`slope.simulate.bank_checks`) computes them once.

    Returns
    -------
    callable
        ``f(bank) -> dict`` of per-base overrides (``c``, ``phi``, ``su``,
        ``su_ratio``; shape ``(m, n)``) for :func:`slope.strength.base_strength`,
        as :func:`slope.simulate.engine.batch_fs` maps them onto its bank.
    """
    values = _grid_values(problem, seed, k) if values is None else values
    grid = problem.grid
    npb = AVERAGING[problem.averaging] if n_per_base is None else int(n_per_base)
    mats = (problem.section if section is None else section).materials

    def overrides(bank):
        # bases of zero length (points on lines, slope.search.upper_bound) have npb equal points: their
        # cells are read at one and the value repeated npb times before the mean (the same numbers)
        same = getattr(bank, "zero_length", False)
        where = _where_bases_read(bank, grid, 1 if same else npb, kept)
        zone = where["zone"]
        per_key = {p.key: np.full(zone.shape, np.nan) for p in problem.properties}
        for (i, z), v in values.items():
            mask, cells, w = where.get(z) or where.setdefault(z, _zone_cells(where, z, grid))
            if not mask.any():
                continue
            p = problem.properties[i]
            if v.size == 1:
                per_key[p.key][mask] = float(v.ravel()[0])
            else:
                # engine.bilinear with the kept cells and weights (the same operations, the same bits)
                at = (np.asarray(v).reshape(v.shape[0], -1)[:, cells] * w).sum(axis=-1)
                per_key[p.key][mask] = (np.repeat(at, npb, axis=-1) if same else at)[0].mean(axis=-1)
        # unit weights are in the section's materials, not strengths (skipped here)
        return strength_overrides(problem, per_key, lambda prop: _deterministic(where, bank, mats, prop))

    return overrides


def _where_bases_read(bank, grid, npb, kept):
    """The points of ``bank``'s bases and their zones, kept in ``kept`` for that bank object (or computed).

    Without ``kept``, a bank that offers its own dict (``reads_kept``: an object kept across
    realisations, as the rigid-block rule's line points, :mod:`slope.search.upper_bound`) keeps them
    there (without a reference back to itself).
    """
    own = kept is None and getattr(bank, "reads_kept", None) is not None
    if own:
        kept = bank.reads_kept
    key = (grid, npb) if own else (id(bank), grid, npb)    # a grid is a value (frozen dataclass)
    got = None if kept is None else kept.get(key)
    if got is not None and (own or got["bank"] is bank):  # a caller's dict holds the bank: its id is not reused
        return got
    xb, yb = bank.base_points_section_frame(npb)
    got = {"zone": np.asarray(bank.zone), "xb": xb, "yb": yb}
    if kept is not None:
        if not own:
            got["bank"] = bank
        kept[key] = got
    return got


def _deterministic(where, bank, mats, prop):
    """:func:`deterministic_value` of ``bank``, kept with its points (it depends on the bank and materials only)."""
    key = ("deterministic", prop, id(mats))
    if key not in where or where[key][0] is not mats:
        where[key] = (mats, deterministic_value(bank, mats, prop))
    return where[key][1]


def _zone_cells(where, z, grid):
    """(bases in zone z, bilinear cells and weights of their points) of :func:`_where_bases_read`."""
    mask = where["zone"] == z
    cells, w = bilinear_weights(grid, where["xb"][mask], where["yb"][mask]) if mask.any() else (None, None)
    return mask, cells, w


def refine_realisation(problem, seed, k, start, settings: RefineSettings):
    """Refine realisation k's critical surface.

    Parameters
    ----------
    problem : RandomProblem
    seed, k : int
        Run seed and realisation number.
    start : int
        Bank index of the realisation's critical surface.
    settings : RefineSettings

    Returns
    -------
    fs : float
        Lowest FS of the refinement's candidates (the start circle included),
        by ``settings.method``, among clean solutions only (converged, no
        flag: a Spencer root with negative base normals or a line of thrust
        outside the mass is not a minimum); NaN when none was usable.
    surface : Polyline or Circle or None
    rejected : ndarray of int, shape (len(REFINE_REASONS),)
        Trials and final candidates rejected, by reason.
    """
    surf = problem.surfaces[int(start)]
    section = problem.section
    values = _grid_values(problem, seed, k)
    weights = {z: float(v.ravel()[0]) for (i, z), v in values.items()
               if problem.properties[i].prop == "unit_weight"}
    if weights:  # the realisation's unit weights, as the bank's terms had them
        section = section_with_unit_weights(section, weights)
    try:
        res = refine(section, surf, n_vertices=settings.n_vertices, method=settings.method,
                     hypothesis=problem.hypothesis, n_slices=problem.n_slices,
                     overrides=realisation_overrides(problem, seed, k, section, values),
                     max_evaluations=settings.max_evaluations, tolerate=())
    except InputError:
        # the start surface has no clean solution by the refinement's method
        return float("nan"), None, rejection_counts({START_UNUSABLE: 1})
    rej = rejection_counts(res.trials_rejected) + rejection_counts(res.rejected)
    if res.critical is None or not np.isfinite(res.fs_min):
        return float("nan"), None, rej
    return float(res.fs_min), (res.critical if not isinstance(res.critical, Circle) else surf), rej

"""The surface that governs each realisation, and the geometry of its sliding mass (issue 15).

Where the per-realisation search lowered a realisation's FS with a polyline
of its own, that polyline governs the realisation, not the bank surface the
search started from. The simulator keeps its vertices (for those
realisations only: :meth:`SimulationResult.searched_surfaces`) and measures
it with the same functions as every bank surface, :func:`sliding_mass_geometry`
and :func:`surface_ends`, on the slices the search's method of slices judged
(:func:`measure`; no second slicing). :func:`governing_surfaces` gathers the
surface and its geometry for every realisation.

:func:`surface_columns` / :func:`read_surface_columns` write and read back
the governing surface of each realisation in the per-realisation CSV files
(``realisations.csv`` of an export, ``fs_realisations.csv`` of ``run`` and
``simulate``): a circle by its centre and radius, a polyline by its vertices,
both at full float precision.

Units: m (section frame), m² per metre run.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..errors import InputError
from ..surfaces import Circle, Polyline

__all__ = ["failure_cells", "sliding_mass_geometry", "surface_ends", "surface_xy", "GoverningSurfaces", "governing_surfaces",
           "governing_families", "gather_governing",
           "SURFACE_HEADER", "surface_columns", "read_surface_columns", "SurfaceGroup", "FailureMap", "failure_map",
           "slice_searched", "measure", "GEOMETRY_DTYPE", "VERTEX_DTYPE", "vertex_rows"]


#: the simulator's sparse rows of the searched surfaces: one per vertex, and one per realisation for the geometry
VERTEX_DTYPE = np.dtype([("realisation", np.int64), ("x", float), ("y", float)])
GEOMETRY_DTYPE = np.dtype([("realisation", np.int64), ("area", float), ("depth", float), ("x_upslope", float),
                           ("x_downslope", float)])


def vertex_rows(found) -> np.ndarray:
    """[(realisation, (m, 2) vertices), ...] as rows of :data:`VERTEX_DTYPE`, one per vertex."""
    rows = np.zeros(sum(len(xy) for _, xy in found), dtype=VERTEX_DTYPE)
    i = 0
    for k, xy in found:
        j = i + len(xy)
        rows["realisation"][i:j], rows["x"][i:j], rows["y"][i:j] = k, xy[:, 0], xy[:, 1]
        i = j
    return rows


def _indices(bank, index) -> np.ndarray:
    idx = np.asarray(index, dtype=int).ravel()
    if idx.size and (idx.min() < 0 or idx.max() >= bank.n_surfaces):
        raise ValueError(f"index: surface indices must lie in [0, {bank.n_surfaces}); got "
                         f"{idx.min()}..{idx.max()} (realisations without a valid surface have -1; drop them)")
    return idx


def sliding_mass_geometry(bank, index):
    """Cross-sectional area and greatest depth of the sliding mass above bank surfaces.

    Parameters
    ----------
    bank : slope.slices.SliceBank
        The surface bank.
    index : array_like of int
        Surfaces of the bank (one per failed realisation, repeats allowed).

    Returns
    -------
    area : ndarray
        Area between the ground line and each surface, m² per metre run,
        by Simpson's rule on every slice (sides and midpoint), which is
        exact for a straight base under a straight ground within a slice
        (a polyline's slices have a side at every vertex of the surface and
        of the ground, :func:`slope.bank.polyline_sides`, while they have
        fewer vertices than slices).
    depth : ndarray
        Greatest vertical depth of each surface below the ground line, m,
        over slice sides and midpoints.
    """
    idx = _indices(bank, index)
    h_l = np.clip(bank.y_top_left[idx] - bank.y_base_left[idx], 0.0, None)
    h_m = np.clip(bank.y_top[idx] - bank.y_base[idx], 0.0, None)
    h_r = np.clip(bank.y_top_right[idx] - bank.y_base_right[idx], 0.0, None)
    area = (bank.width[idx] * (h_l + 4.0 * h_m + h_r) / 6.0).sum(axis=1)
    depth = np.maximum(np.maximum(h_l, h_r), h_m).max(axis=1)
    return area, depth


def surface_ends(bank, index):
    """Abscissae (section frame, m) of the upslope and downslope ends of bank surfaces.

    The sliding frame runs in the direction of sliding, so a surface's first
    slice side is its upslope end (where it leaves the ground behind the
    crest) and its last its downslope end (where it comes out).
    """
    idx = _indices(bank, index)
    d = bank.direction[idx]
    return d * bank.x_left[idx, 0], d * bank.x_right[idx, -1]


def measure(bank, i: int) -> tuple:
    """(area m² per m, greatest depth m, x upslope end m, x downslope end m) of bank surface ``i``."""
    (a,), (d,) = sliding_mass_geometry(bank, [i])
    (u,), (w,) = surface_ends(bank, [i])
    return float(a), float(d), float(u), float(w)


def surface_xy(bank, i: int) -> np.ndarray:
    """Slip surface ``i`` of a bank as [x, y] points (slice sides) in the section frame (m)."""
    d = bank.direction[i]
    x = np.r_[bank.x_left[i], bank.x_right[i, -1]] * d
    y = np.r_[bank.y_base_left[i], bank.y_base_right[i, -1]]
    return np.c_[x, y]


@dataclass
class GoverningSurfaces:
    """The surface that governs each realisation of a simulation, with its geometry.

    Attributes (one entry per realisation; NaN / -1 / ``"none"`` where no
    surface qualified)
    ----------
    family : ndarray of str
        ``circle``, ``block``, …, or the per-realisation search's own
        (e.g. ``dynamic-programming (per realisation)``).
    searched : ndarray of bool
        The surface is a polyline the per-realisation search found.
    bank_index : ndarray of int
        The bank surface (for a searched surface: the bank's critical surface
        of that realisation, the search's lowest start).
    area : ndarray, m² per metre run
        Sliding-mass area between the ground and the surface.
    depth : ndarray, m
        Greatest depth of the surface below the ground.
    x_upslope, x_downslope : ndarray, m
        Where the surface leaves and meets the ground (section frame).
    vertices : dict int -> ndarray (m, 2)
        The searched polylines' vertices, by realisation.
    problem : RandomProblem
    """

    family: np.ndarray
    searched: np.ndarray
    bank_index: np.ndarray
    area: np.ndarray
    depth: np.ndarray
    x_upslope: np.ndarray
    x_downslope: np.ndarray
    vertices: dict = field(default_factory=dict)
    problem: Any = None

    @property
    def n(self) -> int:
        return int(self.family.size)

    def surface(self, k: int):
        """The governing surface of realisation k: Circle, Polyline or None."""
        if k in self.vertices:
            return Polyline(self.vertices[k], family=str(self.family[k]))
        i = int(self.bank_index[k])
        return None if i < 0 else self.problem.surfaces[i]

    def xy(self, k: int):
        """Realisation k's governing surface as [x, y] points (section frame, m) for drawing; None if none."""
        if k in self.vertices:
            return self.vertices[k]
        i = int(self.bank_index[k])
        return None if i < 0 else surface_xy(self.problem.bank, i)


def slice_searched(problem, vertices):
    """Slice bank of searched polylines (section frame vertices, m), sliced as the search judged them.

    :func:`slope.bank.build_bank` with the problem's section and number of
    slices (a side at every bend of the surface, the ground and the zones
    while there are fewer bends than slices, :func:`slope.bank.polyline_sides`;
    Simpson's rule of :func:`sliding_mass_geometry` is then exact).
    """
    from ..bank import build_bank

    return build_bank(problem.section, [Polyline(xy) for xy in vertices], problem.n_slices)


def failure_cells(problem, bank_index, searched, x_edges, y_edges) -> np.ndarray:
    """How many failures pass through each cell of a grid (a cell counts once per failure).

    A failure passes through a cell when a slice-base midpoint of its
    governing surface lies in it.

    Parameters
    ----------
    problem : RandomProblem
    bank_index : array_like of int
        Bank surface of each failure that a bank surface governs.
    searched : list of ndarray (m, 2)
        Vertices (section frame, m) of each failure's own searched polyline,
        sliced as :func:`slice_searched` measures it.
    x_edges, y_edges : ndarray, m
        Cell edges (section frame).

    Returns
    -------
    ndarray (len(x_edges)-1, len(y_edges)-1)
        Counts (divide by the number of samples for a density).
    """
    out = np.zeros((x_edges.size - 1, y_edges.size - 1))
    groups = [(problem.bank, *np.unique(np.asarray(bank_index, int), return_counts=True))]
    if len(searched):
        groups.append((slice_searched(problem, searched), np.arange(len(searched)), np.ones(len(searched), int)))
    for bank, idx, counts in groups:
        for j, cnt in zip(idx, counts):
            # slice positions are in the sliding frame (x' = direction * x): back to the section frame, or
            # the map is mirrored for slopes facing -x
            h, _, _ = np.histogram2d(bank.direction[j] * bank.x_mid[j], bank.y_base[j], bins=[x_edges, y_edges])
            out += (h > 0) * cnt
    return out


def governing_surfaces(result, which=None) -> GoverningSurfaces:
    """The governing surface of every realisation of a :class:`SimulationResult`, with its geometry.

    Parameters
    ----------
    result : SimulationResult
        With its problem attached (as :func:`slope.simulate.simulate` returns it).
    which : sequence of int, optional
        Realisations whose geometry is measured (default all); the others
        keep NaN geometry (e.g. the failures only, for the failure figures).
    """
    prob = result.problem
    if prob is None:
        raise InputError("governing_surfaces needs the result of simulate() (problem attached)")
    return gather_governing(prob, result.critical_index, result.searched_surfaces(), result.searched_geometry,
                            result.governing_families(), which)


def governing_families(problem, critical_index, searched, searched_family) -> np.ndarray:
    """Family that governed each sample: its bank surface's, or ``searched_family`` at ``searched`` (positions).

    ``"none"`` where no surface qualified (``critical_index`` -1).
    """
    from ..surfaces import family_of

    crit = np.asarray(critical_index, int)
    fam = np.array([family_of(s) for s in problem.surfaces] + ["none"], dtype=object)
    out = fam[np.where(crit >= 0, crit, len(fam) - 1)]
    searched = list(searched)
    if searched:
        out[searched] = searched_family
    return out


def gather_governing(problem, critical_index, found, geometry, families, which=None) -> GoverningSurfaces:
    """:class:`GoverningSurfaces` of samples from their bank surfaces and searched polylines.

    Parameters
    ----------
    problem : RandomProblem
    critical_index : array_like of int (n,)
        Each sample's bank surface (-1: none qualified).
    found : dict int -> ndarray (m, 2)
        The searched polylines' vertices (section frame, m), by sample.
    geometry : structured ndarray or None
        Their measured geometry, rows of :data:`GEOMETRY_DTYPE` by sample.
    families : array_like of str (n,)
        :func:`governing_families`.
    which : sequence of int, optional
        Samples whose geometry is measured (default all).
    """
    prob = problem
    crit = np.asarray(critical_index, int)
    n = crit.size
    want = np.zeros(n, bool)
    want[np.arange(n) if which is None else np.asarray(which, int)] = True
    searched = np.zeros(n, bool)
    searched[list(found)] = True
    geo = {k: np.full(n, np.nan) for k in ("area", "depth", "x_upslope", "x_downslope")}

    rows = np.flatnonzero(want & ~searched & (crit >= 0))
    if rows.size:  # each bank surface measured once, however many realisations it governs
        uniq, inv = np.unique(crit[rows], return_inverse=True)
        g = {}
        g["area"], g["depth"] = sliding_mass_geometry(prob.bank, uniq)
        g["x_upslope"], g["x_downslope"] = surface_ends(prob.bank, uniq)
        for key, v in g.items():
            geo[key][rows] = v[inv]
    m = geometry
    if m is not None and m.size:  # measured by the simulator on the slices the search judged
        ks = m["realisation"]
        keep = want[ks]
        for key in geo:
            geo[key][ks[keep]] = m[key][keep]
    return GoverningSurfaces(family=np.asarray(families, dtype=object), searched=searched,
                             bank_index=crit, vertices=found, problem=prob, **geo)


#: columns of the governing surface in the per-realisation CSV files (after the caller's own)
SURFACE_HEADER = ["governing family", "governing surface from the per-realisation search",
                  "x upslope end (m)", "x downslope end (m)", "sliding-mass area (m2 per m)",
                  "greatest depth (m)", "circle centre x (m)", "circle centre y (m)", "circle radius (m)",
                  "polyline vertices x y (m)"]


def _vertex_text(xy) -> str:
    """Vertices as ``x y; x y; ...`` at full precision (``repr``: read back exactly)."""
    return "; ".join(f"{float(x)!r} {float(y)!r}" for x, y in np.asarray(xy, float))


def surface_columns(gov: GoverningSurfaces, k: int) -> list:
    """Realisation k's values of :data:`SURFACE_HEADER` (None where a column does not apply)."""
    f = lambda v: None if not np.isfinite(v) else float(v)  # noqa: E731
    s = gov.surface(k)
    circle = [s.xc, s.yc, s.radius] if isinstance(s, Circle) else [None] * 3
    return [str(gov.family[k]), bool(gov.searched[k]), f(gov.x_upslope[k]), f(gov.x_downslope[k]),
            f(gov.area[k]), f(gov.depth[k]), *circle, _vertex_text(s.points) if isinstance(s, Polyline) else None]


def read_surface_columns(row: dict):
    """The governing surface of one CSV row (a dict by column name, e.g. from csv.DictReader).

    Returns
    -------
    Circle, Polyline or None
        None where no surface qualified.

    Raises
    ------
    InputError
        A row without the surface columns, or with values that are not numbers.
    """
    missing = [c for c in SURFACE_HEADER if c not in row]
    if missing:
        raise InputError(f"per-realisation table: columns {missing} are missing; read a realisations.csv or "
                         "fs_realisations.csv written by slipfield with the governing surface")
    try:
        if row["circle radius (m)"]:
            return Circle(float(row["circle centre x (m)"]), float(row["circle centre y (m)"]),
                          float(row["circle radius (m)"]))
        text = row["polyline vertices x y (m)"]
        if text:
            xy = np.array([[float(v) for v in pt.split()] for pt in text.split(";")], float)
            return Polyline(xy, family=row["governing family"])
    except ValueError as exc:
        raise InputError(f"per-realisation table: the governing surface cannot be read ({exc}); the "
                         "circle columns take numbers and the vertices 'x y; x y; ...' in m") from None
    return None


@dataclass
class SurfaceGroup:
    """Failed realisations of one kind on the failure map, with the surfaces to draw.

    Attributes
    ----------
    kind : {"bank", "search"}
        Governed by a bank surface, or by a polyline the per-realisation
        search found.
    label : str
        Legend text in plain words, with the count.
    realisations : ndarray of int
        The failed realisations of the group.
    surfaces : list of ndarray (m, 2)
        Surfaces drawn (section frame, m): each distinct bank surface once,
        the most frequent first; every searched polyline in realisation
        order; at most ``max_drawn`` of either.
    """

    kind: str
    label: str
    realisations: np.ndarray
    surfaces: list


@dataclass
class FailureMap:
    """Where the governing surfaces of the failed realisations lie (typed input of the failure-map figure).

    Attributes
    ----------
    x_edges, y_edges : ndarray, m
    density : ndarray (nx, ny)
        Share of the failed realisations whose governing surface crosses each cell.
    n_failed, n_total : int
    groups : list of SurfaceGroup
        Failures on bank surfaces and failures on searched polylines (only
        the groups that have failures).
    """

    x_edges: np.ndarray
    y_edges: np.ndarray
    density: np.ndarray
    n_failed: int
    n_total: int
    groups: list


def failure_map(gov: GoverningSurfaces, fs, x_edges, y_edges, *, max_drawn: int = 60,
                threshold: float = 1.0) -> FailureMap:
    """The failure map of a simulation from its governing surfaces (FS < ``threshold`` fails, 1 for pf).

    Parameters
    ----------
    gov : GoverningSurfaces
        Of the simulation (measured at least at the failures).
    fs : array_like (n,)
        FS per realisation.
    x_edges, y_edges : array_like, m
        Cell edges of the map.
    max_drawn : int
        Surfaces drawn per group at most.
    threshold : float, -
        FS below which a sample failed (a subset simulation's threshold).
    """
    from .mechanism_results import _density

    fs = np.asarray(fs, float)
    failed = np.isfinite(fs) & (fs < threshold) & (gov.bank_index >= 0)
    ks = np.flatnonzero(failed)
    xe, ye = np.asarray(x_edges, float), np.asarray(y_edges, float)
    groups = []
    bank = ks[~gov.searched[ks]]
    found = ks[gov.searched[ks]]
    # each bank surface once, weighted by the failures it governs; each searched polyline once
    idx, counts = np.unique(gov.bank_index[bank], return_counts=True)
    shapes = [surface_xy(gov.problem.bank, int(i)) for i in idx]
    dens = _density(shapes + [gov.xy(int(k)) for k in found], np.r_[counts, np.ones(found.size, int)], xe, ye)
    if bank.size:
        order = np.argsort(-counts, kind="stable")[:max_drawn]
        fams = ", ".join(dict.fromkeys(str(gov.family[k]) for k in bank))
        groups.append(SurfaceGroup("bank", f"failed on a bank surface ({fams}): {bank.size}", bank,
                                   [shapes[j] for j in order]))
    if found.size:
        groups.append(SurfaceGroup("search", f"failed on a surface of the per-realisation search: {found.size}",
                                   found, [gov.xy(int(k)) for k in found[:max_drawn]]))
    return FailureMap(xe, ye, dens / max(ks.size, 1), int(ks.size), gov.n, groups)

"""Typed results of the failure mechanisms of a simulation (issue 15).

- :class:`MechanismSummary`: which family governed how many realisations,
  pf with circles alone beside pf with every family and the per-realisation
  search (the mechanism effect, next to the spatial-averaging effect);
- :func:`accepted_surfaces`: the surface that governs each realisation, as
  vertices (section frame, m), for drawing and export;
- :func:`mechanism_maps`: failure maps with circles alone and with the free
  search, from the same realisations (common random numbers).

Units: m; FS and pf dimensionless.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError

__all__ = ["MechanismSummary", "mechanism_summary", "accepted_surfaces", "mechanism_maps"]


@dataclass
class MechanismSummary:
    """Mechanisms of one simulation.

    Attributes
    ----------
    n : int
        Realisations.
    families : dict str -> int
        Realisations each family governed (``dynamic-programming (per
        realisation)`` where the per-realisation search lowered the FS).
    pf, pf_interval : float, (float, float)
        pf with every family and the per-realisation search (95 % Wilson).
    pf_circles, pf_circles_interval : float, (float, float)
        pf with the bank's circles alone, same realisations.
    n_refined : int
        Realisations whose FS the per-realisation search lowered.
    search : str or None
        The per-realisation search (``RefineSettings.search``), None without.
    n_searched : int
        Realisations the search ran on (bank FS inside ``window``).
    window : (float, float) or None
        Bank FS window [low, high) of the realisations searched. pf with the
        free search counts the search's lowering of realisations inside it
        only (case files: [1, 1.10), :mod:`slope.simulate.refine_names`).
    """

    n: int
    families: dict
    pf: float
    pf_interval: tuple
    pf_circles: float
    pf_circles_interval: tuple
    n_refined: int
    search: str | None
    n_searched: int = 0
    window: tuple | None = None

    @property
    def mechanism_effect(self) -> float | None:
        """pf with every family over pf with circles alone (None when the latter is 0)."""
        return self.pf / self.pf_circles if self.pf_circles > 0 else None

    def to_json(self) -> dict:
        f = lambda v: None if v is None or not np.isfinite(v) else float(v)  # noqa: E731
        return {"realisations": int(self.n), "governing_family": {k: int(v) for k, v in self.families.items()},
                "pf": f(self.pf), "pf_interval_95": [f(v) for v in self.pf_interval],
                "pf_circles_only": f(self.pf_circles), "pf_circles_only_interval_95": [f(v) for v in self.pf_circles_interval],
                "pf_ratio_to_circles_only": f(self.mechanism_effect), "n_refined": int(self.n_refined),
                "per_realisation_search": self.search, "n_searched": int(self.n_searched),
                "search_window_bank_fs": None if self.window is None else [float(v) for v in self.window]}


def mechanism_summary(result) -> MechanismSummary | None:
    """The mechanisms of a SimulationResult; None when its bank holds circles only and no search ran."""
    search = None if result.refine is None else result.refine.get("search", "nelder-mead")
    if result.fs_circles is None and search is None:
        return None
    lo, hi = result.pf_interval
    clo, chi = result.pf_circles_interval
    return MechanismSummary(n=result.n, families=result.family_counts(), pf=float(result.pf),
                            pf_interval=(float(lo), float(hi)), pf_circles=float(result.pf_circles),
                            pf_circles_interval=(float(clo), float(chi)), n_refined=int(result.n_refined),
                            search=search, n_searched=result.n_searched,
                            window=None if search is None else (float(result.refine.get("above", 0.0)),
                                                                float(result.refine["below"])))


def accepted_surfaces(result, which="free") -> list:
    """The surface of each realisation as [x, y] vertices (section frame, m); None where none qualified.

    Parameters
    ----------
    which : {"free", "circles"}
        ``free``: the surface that governs (the per-realisation search's
        polyline where it lowered FS, else the bank's critical surface);
        ``circles``: the critical circle of the bank's circles alone.
    """
    from .failure_geometry import surface_xy

    if which not in ("free", "circles"):
        raise InputError(f"accepted_surfaces: which={which!r}; use 'free' or 'circles'")
    if result.problem is None:
        raise InputError("accepted_surfaces needs the result of simulate() (problem attached)")
    bank = result.problem.bank
    if which == "circles":
        crit = result.crit_circles if result.crit_circles is not None else result.critical_index
    else:
        crit = result.critical_index
    searched = result.searched_surfaces() if which == "free" else {}
    cache, out = {}, []
    for k in range(result.n):
        if k in searched:
            out.append(searched[k])
            continue
        i = int(crit[k])
        if i < 0:
            out.append(None)
            continue
        if i not in cache:
            cache[i] = surface_xy(bank, i)
        out.append(cache[i])
    return out


def _density(surfaces, fail, x_edges, y_edges):
    """Cells each surface crosses, summed with the weights ``fail`` (bool: counted or not; int: how many times)."""
    dens = np.zeros((len(x_edges) - 1, len(y_edges) - 1))
    t = np.linspace(0.0, 1.0, 8, endpoint=False)
    for xy, f in zip(surfaces, fail):
        if not f or xy is None:
            continue
        # densified: a cell the surface crosses between two vertices still counts
        pts = np.vstack([xy[:-1] + (xy[1:] - xy[:-1]) * u for u in t] + [xy[-1:]])
        H, _, _ = np.histogram2d(pts[:, 0], pts[:, 1], bins=[x_edges, y_edges])
        dens += (H > 0) * f
    return dens


def mechanism_maps(result, x_edges, y_edges):
    """Failure maps with the free search and with circles alone.

    Returns
    -------
    free, circles : ndarray (len(x_edges)-1, len(y_edges)-1)
        Share of the failed realisations (FS < 1) whose surface crosses each cell.
    n_failed_free, n_failed_circles : int
    """
    fs = np.asarray(result.fs, float)
    fc = np.asarray(result.fs_circles_only, float)
    ff = np.isfinite(fs) & (fs < 1.0)
    fcirc = np.isfinite(fc) & (fc < 1.0)
    free = _density(accepted_surfaces(result, "free"), ff, x_edges, y_edges)
    circ = _density(accepted_surfaces(result, "circles"), fcirc, x_edges, y_edges)
    nf, nc = int(ff.sum()), int(fcirc.sum())
    return free / max(nf, 1), circ / max(nc, 1), nf, nc

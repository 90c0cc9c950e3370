"""The surfaces the per-realisation search found for subset simulation's samples (issue 15).

With the per-realisation search on, a sample whose FS the search lowered is
governed by the search's own polyline, not by the bank surface it started
from (:mod:`.failure_geometry`). Monte Carlo keeps those polylines as sparse
rows per realisation; subset simulation keeps them per *sample* and carries
them along its Markov chains: a chain that rejects a candidate stays in its
state and so keeps that state's surface, a chain that accepts one takes the
candidate's surface (or none, where a bank surface governs the candidate).
The seeds of each level carry theirs into the next level and into the level
checkpoints (:mod:`.rare_store`), so the failures of the last level are
measured and drawn on the surfaces that actually governed them.

A sample's searched surface is ``(xy, geometry)``: the vertices (m, 2) in
the section frame (m) and the tuple (area m² per m, greatest depth m,
x upslope end m, x downslope end m) the simulator measured on the slices the
search judged. A set of them is a dict {sample: (xy, geometry)}; on disk and
in results they are the simulator's sparse rows
(:data:`~.failure_geometry.VERTEX_DTYPE`, :data:`~.failure_geometry.GEOMETRY_DTYPE`)
with the sample's number in the field ``realisation``.
"""
from __future__ import annotations

import numpy as np

from .driver import SEARCHED_GEOMETRY, SEARCHED_VERTICES
from .failure_geometry import GEOMETRY_DTYPE, VERTEX_DTYPE, vertex_rows

__all__ = ["surfaces_of_rows", "rows_of_surfaces", "shift_rows", "take", "empty_rows"]
_GEO = ("area", "depth", "x_upslope", "x_downslope")


def surfaces_of_rows(vertices, geometry) -> dict:
    """{sample: (xy (m, 2), (area, depth, x_up, x_down))} of sparse rows (None or empty: {})."""
    if vertices is None or geometry is None or len(geometry) == 0:
        return {}
    v = np.asarray(vertices)
    cut = np.flatnonzero(np.diff(v["realisation"])) + 1
    xy = {int(g["realisation"][0]): np.c_[g["x"], g["y"]] for g in np.split(v, cut)}
    return {int(r["realisation"]): (xy[int(r["realisation"])], tuple(float(r[k]) for k in _GEO))
            for r in np.asarray(geometry)}


def rows_of_surfaces(surfaces: dict) -> tuple[np.ndarray, np.ndarray]:
    """The sparse rows (vertices, geometry) of {sample: (xy, geometry)}, in sample order."""
    keys = sorted(surfaces)
    vert = vertex_rows([(k, surfaces[k][0]) for k in keys])
    geo = np.array([(k, *surfaces[k][1]) for k in keys], dtype=GEOMETRY_DTYPE)
    return vert, geo


def shift_rows(ev: dict, offset: int) -> dict:
    """``ev`` (a block of the simulator's results) with its sparse rows' realisation numbers moved by ``offset``."""
    for key in (SEARCHED_VERTICES, SEARCHED_GEOMETRY):
        if key in ev and offset:
            rows = ev[key].copy()
            rows["realisation"] += offset
            ev[key] = rows
    return ev


def take(surfaces: dict, samples) -> dict:
    """{position in ``samples``: surface} of the samples that have a searched surface."""
    return {i: surfaces[int(k)] for i, k in enumerate(np.asarray(samples, int).tolist()) if int(k) in surfaces}


def empty_rows() -> tuple[np.ndarray, np.ndarray]:
    """No searched surface: empty sparse rows of both kinds."""
    return np.zeros(0, VERTEX_DTYPE), np.zeros(0, GEOMETRY_DTYPE)

"""Several search families in one bank: circles, sliding blocks, dynamic programming.

A case's ``[search]`` table asks for circles (its ``kind``); ``[[search.block]]``
tables add sliding-block surfaces along weak zones
(:mod:`slope.search_block`), and a ``[search.dynamic_programming]`` table adds
non-circular surfaces found by dynamic programming after Baker (1980)
(:mod:`slope.search.dynamic_programming`), started from the best circle and the best block.
The bank then holds every family; the simulator re-searches all of them in
each realisation, and :func:`slope.surfaces.family_of` tells them apart.

Units: m, degrees.
"""
from __future__ import annotations

import numpy as np

from ..errors import InputError
from ..methods import POLYLINE_METHOD_NAMES
from .evaluate import evaluate_surfaces
from .block import BLOCK_FAMILY, block_polylines
from .dynamic_programming import DP_FAMILY, DPSettings, dp_surface
from .path_acceptance import accepted_paths, add_refused
from ..surfaces import Circle, family_of

__all__ = ["FAMILY_NAMES", "family_tables", "add_families", "family_counts", "best_of_families",
           "POLYLINE_METHODS"]

#: the families a bank can hold, in report order
FAMILY_NAMES = ("circle", BLOCK_FAMILY, DP_FAMILY)
#: methods that judge non-circular surfaces by full or force equilibrium (not moments about a point)
POLYLINE_METHODS = POLYLINE_METHOD_NAMES


def family_tables(table: dict) -> tuple[list, dict | None]:
    """The ``[[search.block]]`` tables and the ``[search.dynamic_programming]`` table of a checked ``[search]``."""
    return list(table.get("block", []) or []), table.get("dynamic_programming")


def dp_settings(spec: dict) -> DPSettings:
    """DPSettings of a checked ``[search.dynamic_programming]`` table."""
    return DPSettings(columns=int(spec.get("columns", 25)), nodes=int(spec.get("nodes", 21)),
                      passes=int(spec.get("passes", 3)))


def _surface_list(surfaces):
    if hasattr(surfaces, "xc"):
        return [Circle(float(x), float(y), float(r)) for x, y, r in zip(surfaces.xc, surfaces.yc, surfaces.radius)]
    return list(surfaces)


def best_of_families(result, families=None) -> dict:
    """Index of the lowest counted surface of each family of a SearchResult: {family: index}."""
    out = {}
    fam = [family_of(s) for s in _surface_list(result.surfaces)]
    fs = np.where(result.counted, result.fs, np.inf)
    for f in dict.fromkeys(fam):
        if families is not None and f not in families:
            continue
        idx = [i for i, g in enumerate(fam) if g == f]
        i = idx[int(np.argmin(fs[idx]))]
        if np.isfinite(fs[i]):
            out[f] = i
    return out


def add_families(section, circles, table: dict, *, hypothesis, method, n_slices, **evaluate_opts):
    """The bank of a case: its circles plus the block and dynamic-programming families it asks for.

    Parameters
    ----------
    section : Section
    circles : SearchResult
        The case's circle search (``[search] kind``), by ``method``.
    table : dict
        The checked ``[search]`` table.
    hypothesis, method, n_slices, **evaluate_opts
        As for :func:`slope.search.evaluate_surfaces`.

    Returns
    -------
    SearchResult
        ``circles`` itself when the case asks for no other family; else
        every surface of every family evaluated together (``search`` names
        the families joined by " + ").

    Raises
    ------
    InputError
        A block table whose zone or ranges do not fit the section, or a
        method that cannot judge non-circular surfaces.
    """
    blocks_spec, dp_spec = family_tables(table)
    if not blocks_spec and dp_spec is None:
        return circles
    if method not in POLYLINE_METHODS:
        raise InputError(f"analysis.method = {method!r} takes moments about a point, which does not judge block "
                         f"or non-circular surfaces; use one of {', '.join(POLYLINE_METHODS)} with "
                         "[[search.block]] or [search.dynamic_programming]")
    opts = dict(hypothesis=hypothesis, method=method, n_slices=n_slices, **evaluate_opts)
    surfaces = _surface_list(circles.surfaces)
    names = [circles.search]
    blocks = []
    for i, spec in enumerate(blocks_spec):
        blocks += block_polylines(section, spec["zone"], spec["entry"], spec["exit"], points=spec.get("points", 10),
                                  lift=spec.get("lift", 0.25), hypothesis=hypothesis, key=f"search.block[{i}]")
    if blocks:
        names.append(BLOCK_FAMILY)
    first = evaluate_surfaces(section, surfaces + blocks, search=" + ".join(names), **opts)
    if dp_spec is None:
        return first
    st = dp_settings(dp_spec)
    paths, refused = [], {}
    ov = evaluate_opts.get("overrides")
    for fam, i in best_of_families(first).items():
        found = dp_surface(section, first.surfaces[i], hypothesis=hypothesis, settings=st, n_slices=n_slices)
        # a path joins the bank only if it is at least as critical as its start as a mechanism of rigid
        # blocks (slope.search.path_acceptance); the others are counted under their reason
        found, why = accepted_paths(section, found, first.surfaces[i], hypothesis=hypothesis, overrides=ov)
        paths += found
        for k, v in why.items():
            refused[k] = refused.get(k, 0) + v
    if not paths:
        return add_refused(first, refused)
    names.append(DP_FAMILY)
    res = evaluate_surfaces(section, list(first.surfaces) + paths, search=" + ".join(names), **opts)
    return add_refused(res, refused)


def family_counts(surfaces, index) -> dict:
    """How many realisations each family governed: {family: count} over valid indices (-1 skipped)."""
    fam = [family_of(s) for s in surfaces]
    idx = np.asarray(index)
    out = {f: 0 for f in FAMILY_NAMES if f in fam}
    for i, n in zip(*np.unique(idx[idx >= 0], return_counts=True)):
        out[fam[int(i)]] = out.get(fam[int(i)], 0) + int(n)
    return out

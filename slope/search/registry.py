"""The registry of searches (name → library call, case-file builder, keys read)
and the one dispatcher of case files (:func:`search_from_case`)."""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from ..errors import InputError
from ..surfaces import Circle, Polyline
from .block import block_search
from .circles import centre_lattice, window
from .dynamic_programming import dynamic_programming
from .evaluate import SearchResult, evaluate_surfaces
from .refine import refine

@dataclass(frozen=True)
class SearchKind:
    """One search of the registry.

    Attributes
    ----------
    name : str
        The name users write (``[search] kind`` of a case file, :func:`critical_surface`).
    search : callable
        ``search(section, **opts) -> SearchResult``: the library call.
    from_case : callable or None
        ``from_case(section, table, **evaluate_opts) -> SearchResult``: the
        search as a case file's ``[search]`` table states it (``table`` is the
        checked table with its defaults); None when case files cannot ask for it.
    keys : tuple of str
        ``[search]`` keys this search reads besides ``kind`` and ``min_depth``
        (a key given for another kind is refused, as it would do nothing).
    doc : str
        One line for the documentation.
    """

    name: str
    search: Callable
    from_case: Callable | None = None
    keys: tuple = ()
    doc: str = ""


#: name -> SearchKind; the case schema and :func:`critical_surface` read it.
SEARCHES: dict[str, SearchKind] = {}


def register_search(kind: SearchKind) -> SearchKind:
    """Add a search to the registry (one line per search)."""
    SEARCHES[kind.name] = kind
    return kind


def case_search_names() -> tuple:
    """Searches a case file may name in ``[search] kind``."""
    return tuple(n for n, k in SEARCHES.items() if k.from_case is not None)


def _per_axis(trials, n_radii=10):
    return max(3, int(round(math.sqrt(int(trials) / n_radii))))


def _lattice_from_case(section, table, **opts):
    n = _per_axis(table["trials"])
    return centre_lattice(section, x_range=tuple(table["x_range"]) if "x_range" in table else None,
                          y_range=tuple(table["y_range"]) if "y_range" in table else None,
                          nx=n, ny=n, n_radii=10, **opts)


def _window_from_case(section, table, **opts):
    n = _per_axis(table["trials"])
    return window(section, upslope=tuple(table["entry"]), downslope=tuple(table["exit"]),
                  n_up=n, n_down=n, n_radii=10, **opts)


def _given(section, *, surfaces, **opts):
    return evaluate_surfaces(section, surfaces, search="fixed", **opts)


def _fixed_from_case(section, table, **opts):
    if "circle" in table:
        c = table["circle"]
        surf = Circle(float(c["x"]), float(c["y"]), float(c["r"]))
    else:
        surf = Polyline(np.asarray(table["polyline"], float))
    return _given(section, surfaces=[surf], **opts)


def _refine_search(section, **opts):
    if "start" not in opts:
        keys = ("hypothesis", "n_slices", "overrides", "tolerate")
        first = centre_lattice(section, **{k: opts[k] for k in keys if k in opts})
        if first.critical is None:
            raise InputError("refine: the centre-lattice search found no usable circle to start from")
        opts["start"] = first.critical
    return refine(section, opts.pop("start"), **opts)


register_search(SearchKind("centre-lattice", centre_lattice, _lattice_from_case, ("trials", "x_range", "y_range"),
                           "circles over a lattice of centres, each with a sweep of radii"))
register_search(SearchKind("window", window, _window_from_case, ("trials", "entry", "exit"),
                           "circles from an upslope entry window to a downslope exit window"))
register_search(SearchKind("fixed", _given, _fixed_from_case, ("circle", "polyline"),
                           "one given surface: a circle {x, y, r} or a polyline"))
register_search(SearchKind("refine", _refine_search, None, (),
                           "a start surface turned into a polyline and optimised"))
# issue 15's families: a case adds them to its bank with [[search.block]] and
# [search.dynamic_programming] (slope.search.families), whatever its kind
register_search(SearchKind("block", block_search, None, (),
                           "sliding blocks on a weak zone: Rankine active and passive wedges from entry and exit ranges"))
register_search(SearchKind("dynamic-programming", dynamic_programming, None, (),
                           "non-circular surfaces by dynamic programming over grids of nodes (Baker 1980)"))


def _kind(name) -> SearchKind:
    if name not in SEARCHES:
        raise InputError(f"search: unknown search {name!r}; choose one of {', '.join(SEARCHES)}")
    return SEARCHES[name]


def search_from_case(section, table: dict, **evaluate_opts) -> SearchResult:
    """Run the search a case's checked ``[search]`` table asks for (the one dispatcher of case files).

    ``min_depth`` of the table drops shallower surfaces (see :func:`evaluate_surfaces`).
    """
    kind = _kind(table.get("kind", "centre-lattice"))
    if kind.from_case is None:
        raise InputError(f"search.kind = {kind.name!r} cannot be asked for in a case file; use one of "
                         f"{', '.join(case_search_names())}")
    return kind.from_case(section, table, min_depth=table.get("min_depth"), **evaluate_opts)


def critical_surface(section, search="centre-lattice", **opts) -> SearchResult:
    """Run a search of the registry by name (see :data:`SEARCHES`).

    ``refine`` without a ``start`` runs a ``centre-lattice`` search first
    (with the same hypothesis and strengths, Bishop) and refines its critical
    circle; ``fixed`` takes ``surfaces``.
    """
    return _kind(search).search(section, **opts)

"""Every check a run makes before it computes or writes anything.

``slipfield check`` and ``slipfield run`` (and ``simulate``/``sweep``) call
:func:`preflight` on a loaded case, so "ok" from ``check`` means the run will
start: the schema and the section (by :func:`~.build.load_case`), the random
properties (marginals, negative values, correlations), the sizes the run
would need against the memory of this machine, and the search of every
hypothesis producing a usable critical surface. The searches are kept in
``case.extras`` so the run does not repeat them.

Every problem is a :class:`~.schema.CaseError` naming the case file, the
key and the fix.
"""
from __future__ import annotations

import math
import os

import numpy as np

from .build import Case, theta_value
from .schema import CaseError
from ..errors import InputError

__all__ = ["preflight", "check_option", "memory_estimate", "physical_memory", "NEGATIVE_VALUES_EXPECTED_MAX",
           "MEMORY_SHARE"]

#: Largest expected number of negative values a run may draw from a marginal
#: that allows them. With an expected count of 1e-3 the chance of meeting even
#: one negative strength in the whole run is below 0.1 %, so a run is never
#: stopped half-way by a value its inputs made possible (a negative strength
#: stops the methods of slices); a larger expected count is refused up front.
NEGATIVE_VALUES_EXPECTED_MAX = 1e-3

#: Share of this machine's physical memory a run may plan to use.
MEMORY_SHARE = 0.5

_FLOAT = 8  # bytes
#: float arrays per (surface, slice) of a slice bank and its prepared terms
_BANK_ARRAYS = 60
#: float arrays per (realisation, surface, slice) while the methods of slices run
_KERNEL_ARRAYS = 12
#: floats per (realisation, cell, property) while fields are generated (FFT embedding: 4 cells, complex)
_FIELD_FLOATS = 8
#: floats kept per realisation (FS, fixed-surface FS, indices, flags) and per reliability sample and variable
_PER_REALISATION = 16
_PER_SAMPLE = 8


def check_option(value, option: str, lo: int) -> int:
    """A whole-number option (``--realisations``, ``--jobs``) of at least ``lo``.

    Raises
    ------
    InputError
        Not a whole number, or below ``lo``.
    """
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
        raise InputError(f"{option}: {value!r} is not a whole number; give a whole number >= {lo}")
    if int(value) < lo:
        raise InputError(f"{option}: {value} is too small; give a whole number >= {lo}")
    return int(value)


def physical_memory() -> int:
    """Physical memory of this machine (bytes); 8 GiB when it cannot be read."""
    try:
        return int(os.sysconf("SC_PAGE_SIZE")) * int(os.sysconf("SC_PHYS_PAGES"))
    except (ValueError, OSError, AttributeError):
        return 8 * 1024 ** 3


def _grid_cells(case: Case) -> tuple[int, int]:
    sec = case.section
    g = np.asarray(sec.ground, float)
    cell = float(case.simulation["cell"])
    nx = max(1, math.ceil((g[:, 0].max() - g[:, 0].min()) / cell))
    ny = max(1, math.ceil((g[:, 1].max() - float(sec.base_y)) / cell))
    return nx, ny


def memory_estimate(case: Case, realisations: int | None = None, batch: int | None = None) -> dict:
    """Bytes the run of a case would hold at once, by the key that sets each part.

    The estimate is an order of magnitude (it counts the large arrays, not
    Python's overhead): enough to refuse a size that cannot fit before it
    exhausts the machine.

    Returns
    -------
    dict
        ``{key path: bytes}`` for ``search.trials`` (slice bank),
        ``simulation.cell`` (fields of one batch), ``simulation.batch``
        (methods of slices on one batch), ``simulation.realisations``
        (per-realisation results) and ``reliability.samples``.
    """
    sim, ana = case.simulation, case.analysis
    n = int(sim["realisations"] if realisations is None else realisations)
    trials = int(case.data["search"].get("trials", 1)) if case.data["search"].get("kind") != "fixed" else 1
    slices = int(ana["slices"])
    nx, ny = _grid_cells(case)
    n_props = max(1, len(case.randoms))
    batch = int(sim["batch"] if batch is None else batch)
    samples = int(case.data["reliability"]["samples"])
    research = bool(case.data["reliability"].get("research_surface"))
    out = {
        "search.trials × analysis.slices": float(trials) * slices * _BANK_ARRAYS * _FLOAT,
        "simulation.cell": float(min(batch, n)) * nx * ny * n_props * _FIELD_FLOATS * _FLOAT,
        "simulation.batch × search.trials × analysis.slices":
            float(min(batch, n)) * trials * slices * _KERNEL_ARRAYS * _FLOAT,
        "simulation.realisations": float(n) * _PER_REALISATION * _FLOAT,
        "reliability.samples": float(samples) * (n_props * _PER_SAMPLE
                                                 + (trials * slices * _KERNEL_ARRAYS if research else 0)) * _FLOAT,
    }
    if "sweep" in case.data:
        sw = case.data["sweep"]
        pts = len(sw.get("theta_h", [1])) * len(sw.get("theta_v", [1]))
        out["sweep.realisations"] = float(pts) * int(sw.get("realisations", n)) * _PER_REALISATION * _FLOAT
    return out


def _gib(b: float) -> str:
    return f"{b / 1024 ** 3:.3g} GiB"


def _check_memory(case: Case, realisations, batch, problems: list[str]) -> None:
    limit = MEMORY_SHARE * physical_memory()
    est = memory_estimate(case, realisations, batch)
    fixes = {
        "search.trials × analysis.slices": "give fewer trials or slices",
        "simulation.cell": "give a larger cell (m) or a smaller simulation.batch",
        "simulation.batch × search.trials × analysis.slices": "give a smaller batch, fewer trials or fewer slices",
        "simulation.realisations": "give fewer realisations (or run them in parts with slipfield simulate --resume)",
        "reliability.samples": "give fewer samples",
        "sweep.realisations": "give fewer realisations per grid point or fewer θ values",
    }
    total = sum(est.values())
    if total > limit:  # one message: the part that dominates, with its key and fix
        key = max(est, key=est.get)
        where = key
        if realisations is not None:
            where = where.replace("simulation.realisations", "--realisations")
        if batch is not None:
            where = where.replace("simulation.batch", "--batch")
        problems.append(f"{where}: this size needs about {_gib(est[key])} at once ({_gib(total)} for the whole run), "
                        f"more than the {_gib(limit)} a run may use ({MEMORY_SHARE:.0%} of this machine's memory); "
                        f"{fixes[key]}")
        return
    method = case.simulation["field_method"]
    if any(not (math.isinf(theta_value(r["theta_h"])) and math.isinf(theta_value(r["theta_v"])))
           for r in case.randoms):
        from slipfield.fields.generators import generator_options
        from slipfield.fields.generators._dense import MAX_POINTS
        nx, ny = _grid_cells(case)
        if "max_points" in generator_options(method) and nx * ny > MAX_POINTS:  # a dense generator
            problems.append(f"simulation.field_method = {method!r} factorises a matrix of every cell pair and takes "
                            f"at most {MAX_POINTS} cells; simulation.cell = {case.simulation['cell']:g} m gives "
                            f"{nx * ny}: use field_method = \"fft\" or a cell of at least "
                            f"{_cell_for(case, MAX_POINTS):.3g} m")


def _cell_for(case, n_max):
    sec = case.section
    g = np.asarray(sec.ground, float)
    area = (g[:, 0].max() - g[:, 0].min()) * (g[:, 1].max() - float(sec.base_y))
    return math.sqrt(area / n_max) * 1.05


def _check_randoms(case: Case, realisations, problems: list[str]) -> None:
    from .analyses import marginal_of

    n = int(case.simulation["realisations"] if realisations is None else realisations)
    nx, ny = _grid_cells(case)
    samples = int(case.data["reliability"]["samples"])
    for i, r in enumerate(case.randoms):
        key = f"{r['material']}.{r['property']}"
        try:
            m = marginal_of(case, r)
        except InputError as exc:
            problems.append(f"random[{i}] ({key}): {exc}")
            continue
        p_neg = float(m.cdf(0.0)) if m.lower < 0 else 0.0
        if p_neg <= 0:
            continue
        one_value = math.isinf(theta_value(r["theta_h"])) and math.isinf(theta_value(r["theta_v"]))
        draws = float(n) * (1 if one_value else nx * ny) + samples
        if p_neg * draws > NEGATIVE_VALUES_EXPECTED_MAX:
            problems.append(
                f"random[{i}].distribution ({key}): a {r['distribution']} marginal gives a negative value with "
                f"probability {p_neg:.2g}; over the {draws:.3g} values this run draws about {p_neg * draws:.3g} "
                f"would be negative, which no strength or weight can be (at most "
                f"{NEGATIVE_VALUES_EXPECTED_MAX:g} is accepted). Use distribution = \"lognormal\", or "
                f"\"truncated-normal\" with lower = 0, or a smaller cov")


def _check_searches(case: Case, problems: list[str]) -> None:
    from .analyses import random_problem, trial_surfaces

    method = case.analysis["method"]
    empty = []
    for hyp in case.analysis["hypotheses"]:
        try:
            res = trial_surfaces(case, hyp, method)
        except InputError as exc:  # a search that cannot be built fails alike for every hypothesis: one message
            problems.append(f"[search]: {exc}")
            return
        if res.critical_index < 0:
            why = ", ".join(f"{k}: {v}" for k, v in sorted(res.rejected.items())) or "none tried"
            empty.append(f"{hyp} ({why})")
            continue
        try:
            random_problem(case, {hyp: {"bank": res}}, hyp)
        except InputError as exc:
            problems.append(f"[[random]]/[[cross_correlation]] ({hyp}): {exc}")
            return
    if empty:
        problems.append(f"[search]: none of the trial surfaces gave a converged, admissible factor of safety by "
                        f"analysis.method = {method!r} under {'; '.join(empty)}; widen or move the search "
                        "(search.x_range/y_range, entry/exit, min_depth, or the fixed surface)")


def preflight(case: Case, *, realisations: int | None = None, batch: int | None = None,
              search: bool = True) -> Case:
    """Run every check of a run on a loaded case; raise one CaseError listing the problems.

    Parameters
    ----------
    case : Case
        From :func:`~.build.load_case`.
    realisations, batch : int, optional
        The run's number of realisations and batch size when they override the case's.
    search : bool
        Also run the search of every hypothesis (kept in ``case.extras``).

    Returns
    -------
    Case
        The same case.

    Raises
    ------
    CaseError
        Listing every problem, each naming its key and the fix.
    """
    problems: list[str] = []
    from ..simulate import RefineSettings

    try:
        RefineSettings.from_case(case.simulation)
    except InputError as exc:
        problems.append(f"[simulation] refine_search/refine_below/refine_method: {exc}")
    _check_memory(case, realisations, batch, problems)
    if not problems:
        _check_randoms(case, realisations, problems)
    if not problems and search:
        _check_searches(case, problems)
    if problems:
        raise CaseError(case.path, problems)
    return case

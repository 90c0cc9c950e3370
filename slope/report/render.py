"""The figures of a run drawn and written, in this process alone or with the run's pool of workers.

Each entry of :data:`~slope.report.figures.catalogue.CATALOGUE` is one task:
it draws its figures from the typed results and writes each to
``figures/<stem>.png`` (and ``.svg`` when asked) at once, so neither this
process nor a worker holds more than one entry's figures. With ``n_jobs`` ≥ 2
the case and the typed results are written once to a private temporary file
that each worker reads once; the tasks run on the run's pool and in this
process (:func:`slope.simulate.executors.run_tasks`, as the simulations),
and each process draws with matplotlib's Agg renderer (figures are made as
:class:`matplotlib.figure.Figure`, never through pyplot). The files are the
same whichever way they are drawn; the items come back in catalogue order.
"""
from __future__ import annotations

import pickle
from pathlib import Path

from .figures.catalogue import CATALOGUE, Drawn
from .html import save_figure

__all__ = ["render_figures", "render_entry"]

# Longest entries first, so that two workers finish together (measured on the demos: the random fields
# regenerate realisations and draw several panels; the section figure and the FS distributions follow).
_FIRST = ("field", "section", "fs_single_variable", "fs_spatial", "variance_reduction")


def render_entry(case, res, index: int, fig_dir: Path, formats) -> list[Drawn]:
    """Draw catalogue entry ``index`` and write its figures; the items keep their text, not the figures."""
    entry = CATALOGUE[index]
    out = []
    for d in entry.draw(case, res):
        d.group = entry.group
        if d.figure is not None:
            save_figure(d.figure, fig_dir, d.stem, formats=formats)
            d.figure, d.saved = None, True  # written: let the figure's memory go
        out.append(d)
    return out


def render_figures(case, res, fig_dir, formats=("png",), *, n_jobs: int = 1) -> list[Drawn]:
    """Every figure of a run written to ``fig_dir``; the report's items, in catalogue order.

    Parameters
    ----------
    case, res
        The checked case and the run's typed results
        (:class:`~slope.commands.results.RunResults`).
    fig_dir : path-like
        Folder of the figure files (created).
    formats : sequence of str
        ``"png"`` and optionally ``"svg"``.
    n_jobs : int
        Worker processes; 1 draws in this process, one entry after the other.

    Returns
    -------
    list of Drawn
        Each with ``saved`` True when its figure file was written, or the sentence that replaces it.
    """
    fig_dir = Path(fig_dir)
    fig_dir.mkdir(parents=True, exist_ok=True)
    formats = tuple(formats)
    if int(n_jobs) <= 1:
        return [d for i in range(len(CATALOGUE)) for d in render_entry(case, res, i, fig_dir, formats)]
    from ..simulate.executors import _unship, run_tasks

    order = sorted(range(len(CATALOGUE)),
                   key=lambda i: (_FIRST.index(CATALOGUE[i].name) if CATALOGUE[i].name in _FIRST else len(_FIRST), i))
    path = _ship_for_figures((case, res, _built_banks(res)))
    try:
        done = dict(zip(order, run_tasks(_render_in_worker, [(path, i, str(fig_dir), formats) for i in order],
                                         n_jobs=int(n_jobs),
                                         here=lambda _path, i, d, f: render_entry(case, res, i, Path(d), f))))
    finally:
        _unship(path)
    return [d for i in range(len(CATALOGUE)) for d in done[i]]


def _problems(res):
    """The simulations' random problems of a run's results, in a fixed order: (hypothesis, run, problem)."""
    for h in sorted(res.spatial):
        sp = res.spatial[h]
        for run in ("spatial", "single") if sp is not None else ():
            r = getattr(sp, run, None)
            if r is not None and getattr(r, "problem", None) is not None:
                yield h, run, r.problem


def _built_banks(res) -> list:
    """The slice banks the problems already hold in this process, to go with the results to the workers.

    A pickled problem leaves its bank behind (the simulation's workers read the stencil instead), so
    every worker drawing a figure that needs it (fields, failure maps, mechanisms) built it again:
    0.3 s of CPU per hypothesis and worker on the levee demo. The banks are the same arrays either way.
    """
    return [(h, run, prob._bank) for h, run, prob in _problems(res) if getattr(prob, "_bank", None) is not None]


def _restore_banks(res, banks) -> None:
    held = {(h, run): bank for h, run, bank in banks}
    for h, run, prob in _problems(res):
        if getattr(prob, "_bank", None) is None and (h, run) in held:
            prob._bank = held[(h, run)]


#: What the simulation alone reads, left out of what the figure workers get: a problem's stencil and
#: strength map (with the problem's slice terms, 10-15 MB each on the levee demo) and the case's kept
#: searches (``case.extras["trial_surfaces"]``, 12 MB). No figure reads them (the fields are drawn from the
#: problem's generators and field boxes, the surfaces from its bank); the file was 46 MB with them, 8 MB
#: without, read by every worker.
_NOT_FOR_FIGURES = {"problem": ("_stencil", "_strength_map", "_terms"), "case": ("trial_surfaces",)}


def _bare(cls):
    """An instance of ``cls`` without ``__init__``: its state follows (unpickling a slimmed object)."""
    return cls.__new__(cls)


class _FigurePickler(pickle.Pickler):
    """Pickles a run's case and results for the figure workers without :data:`_NOT_FOR_FIGURES`.

    Only the pickled copies leave them out (the caches stay on this process's objects); an object
    referenced from several places is still written once (the pickler's memo comes first).
    """

    def reducer_override(self, obj):
        from ..case.build import Case
        from ..simulate.problem import RandomProblem

        if type(obj) is RandomProblem:
            state = dict(obj.__dict__)
            for k in _NOT_FOR_FIGURES["problem"]:
                if k in state:
                    state[k] = None  # the attributes stay (read as "not built yet")
            return _bare, (RandomProblem,), state
        if type(obj) is Case and any(k in obj.extras for k in _NOT_FOR_FIGURES["case"]):
            state = dict(obj.__dict__)
            state["extras"] = {k: v for k, v in obj.extras.items() if k not in _NOT_FOR_FIGURES["case"]}
            return _bare, (Case,), state
        return NotImplemented


def _ship_for_figures(payload):
    """:func:`slope.simulate.executors._ship` of the figures' (case, results, banks), slimmed."""
    from ..simulate.executors import _ship

    return _ship(payload, pickler=_FigurePickler)


_LOADED: tuple = (None, None)  # in a worker: (file, (case, results)) read once per run


def _render_in_worker(path, index, fig_dir, formats):
    global _LOADED
    if _LOADED[0] != path:
        _LOADED = (None, None)  # the previous run's results go before this run's are read
        with open(path, "rb") as fh:
            case, res, banks = pickle.load(fh)
        _restore_banks(res, banks)
        _LOADED = (path, (case, res))
    case, res = _LOADED[1]
    return render_entry(case, res, index, Path(fig_dir), formats)

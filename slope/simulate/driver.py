"""Monte Carlo over random fields: ``simulate`` and its result."""
from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from .bank_checks import bank_checks_apply, check_bank_polylines
from .engine import batch_fs, prepare
from .problem import RandomProblem
from .executors import (SCHEDULER_TIMEOUT_S, SchedulerLost, _await_workers, _ship, _unship,  # noqa: F401
                        _unship_orphans, connect_scheduler, run_tasks, start_workers)
from .store import BLOCK, BlockStore, StoreRepairWarning, open_existing, take_realisations

__all__ = ["SimulationResult", "simulate", "realise_fields", "store_header", "load_store", "BLOCK", "start_workers",
           "connect_scheduler", "SchedulerLost"]


def _plain(v) -> float | None:
    """A plain float, or None for a non-finite one (JSON has no NaN)."""
    v = float(v)
    return v if math.isfinite(v) else None


@dataclass
class SimulationResult:
    """Outcome of :func:`simulate`.

    Attributes
    ----------
    fs : ndarray (n,)
        Critical FS per realisation: minimum over converged, admissible
        surfaces of the bank (NaN where none qualified).
    critical_index : ndarray of int (n,)
        Index of that surface (-1 where none qualified).
    fs_fixed : ndarray (n,)
        FS on the fixed (deterministic critical) surface.
    fixed_ok : ndarray of bool (n,)
        The fixed surface converged and was admissible.
    n_nonconverged, n_inadmissible : int
        Realisations whose lowest-FS surface was excluded because it did not
        converge / was inadmissible.
    n_no_valid : int
        Realisations where no surface qualified (excluded from pf, reported).
    fs_bank : ndarray (n,) or None
        With refinement: the critical FS of the bank before it (``fs`` is
        then the lower of the two, and ``critical_index`` the bank surface
        the refinement started from).
    n_refined : int
        Realisations whose FS the refinement lowered.
    refine : dict or None
        The refinement settings.
    refine_rejected : dict or None
        With refinement: trial shapes and candidates the refinement did not
        accept as a minimum (only clean solutions are), counted by reason
        over all refined realisations.
    flags : dict key -> ndarray of bool (n,)
        Per realisation: ``nonconv``, ``inadm`` (the lowest-FS surface was
        excluded and why), ``none`` (no surface qualified) and, with
        refinement, ``refined``.
    store_notices : list of str
        Stored blocks that were unusable and recomputed (name and reason).
    fs_circles : ndarray (n,) or None
        For banks holding other families besides circles: the least clean
        FS over the bank's circles alone (pf with circles only, common
        random numbers with ``fs``).
    crit_circles : ndarray of int (n,) or None
        The bank index of that circle (-1 where none qualified).
    searched_vertices : structured ndarray or None
        With a per-realisation search: the vertices (section frame, m) of
        the polyline it found, for each realisation where that polyline
        lowered the FS, one row per vertex (fields ``realisation``, ``x``,
        ``y``, in realisation order; see :meth:`searched_surfaces`). Only
        those realisations hold rows, so memory grows with them, not with n.
    searched_geometry : structured ndarray or None
        One row per such realisation: ``realisation``, sliding-mass
        ``area`` (m² per m), greatest ``depth`` (m), ``x_upslope``,
        ``x_downslope`` (m), measured on the slices the search judged
        (:mod:`.failure_geometry`).
    bank_rejected : dict or None
        For banks holding non-circular surfaces solved by Spencer or
        Morgenstern-Price: the surfaces that were the lowest of a realisation
        and failed the checks of the searches with its fields, by reason,
        over all realisations (:mod:`slope.simulate.bank_checks`); None for
        other banks.
    bank_retried : int
        Those surfaces counted with another interslice function's solution.
    refine_functions : dict
        With the dynamic-programming search: realisations whose lowered FS
        is a Morgenstern-Price solution with another interslice function
        (the path's first solution was refused), by method and function.
    """

    fs: np.ndarray
    critical_index: np.ndarray
    fs_fixed: np.ndarray
    fixed_ok: np.ndarray
    n_nonconverged: int
    n_inadmissible: int
    n_no_valid: int
    seed: int
    problem: RandomProblem | None = None
    fs_bank: np.ndarray | None = None
    n_refined: int = 0
    refine: dict | None = None
    refine_rejected: dict | None = None
    flags: dict | None = None
    store_notices: list = field(default_factory=list)
    fs_circles: np.ndarray | None = None
    searched_vertices: np.ndarray | None = None
    crit_circles: np.ndarray | None = None
    searched_geometry: np.ndarray | None = None
    bank_rejected: dict | None = None
    bank_retried: int = 0
    refine_functions: dict = field(default_factory=dict)

    @property
    def n(self) -> int:
        return int(self.fs.size)

    @property
    def fs_circles_only(self) -> np.ndarray:
        """Per-realisation FS with circles alone: the bank's circles, before any per-realisation search."""
        if self.fs_circles is not None:
            return self.fs_circles
        return self.fs_bank if self.fs_bank is not None else self.fs

    @property
    def pf_circles(self) -> float:
        return self._pf(self.fs_circles_only)[0]

    @property
    def pf_circles_interval(self):
        return self._pf(self.fs_circles_only)[1]

    @property
    def n_searched(self) -> int:
        """Realisations the per-realisation search was run on: bank FS in its window [above, below)."""
        if self.refine is None or self.fs_bank is None:
            return 0
        fb = self.fs_bank
        lo = float(self.refine.get("above", 0.0))
        return int(np.sum(np.isfinite(fb) & (fb >= lo) & (fb < float(self.refine["below"]))
                          & (self.critical_index >= 0)))

    def searched_surfaces(self) -> dict:
        """{realisation: vertices (m, 2), section frame, m} of the polylines the per-realisation search found.

        Only realisations whose FS the search lowered with a polyline of its
        own; every other realisation is governed by its bank surface
        (``critical_index``).
        """
        v = self.searched_vertices
        if v is None or v.size == 0:
            return {}
        cut = np.flatnonzero(np.diff(v["realisation"])) + 1
        return {int(g["realisation"][0]): np.c_[g["x"], g["y"]] for g in np.split(v, cut)}

    @property
    def searched_family(self) -> str | None:
        """Family name of the surfaces the per-realisation search found (None without a search)."""
        return None if self.refine is None else f"{self.refine.get('search', 'nelder-mead')} (per realisation)"

    def governing_families(self) -> np.ndarray:
        """Family that governed each realisation (its critical surface's; the search's where its polyline lowered FS)."""
        from .failure_geometry import governing_families

        if self.problem is None:
            raise InputError("governing_families needs the result of simulate() (problem attached)")
        return governing_families(self.problem, self.critical_index, self.searched_surfaces(), self.searched_family)

    def family_counts(self) -> dict:
        """{family: realisations it governed}, in order of first appearance."""
        fams = self.governing_families()
        return {str(f): int(np.sum(fams == f)) for f in dict.fromkeys(fams.tolist())}

    def _pf(self, fs):
        ok = np.isfinite(fs)
        nv = int(ok.sum())
        if nv == 0:
            return float("nan"), (float("nan"), float("nan")), 0
        k = int((fs[ok] < 1.0).sum())
        from ..reliability.stats import binomial_interval  # scipy.stats: not in the workers

        lo, hi = binomial_interval(k, nv, 0.95, "wilson")
        return k / nv, (float(lo), float(hi)), nv  # plain floats: to_dict and messages show no numpy types

    @property
    def pf(self) -> float:
        return self._pf(self.fs)[0]

    @property
    def pf_interval(self):
        return self._pf(self.fs)[1]

    @property
    def pf_fixed(self) -> float:
        return self._pf(np.where(self.fixed_ok, self.fs_fixed, np.nan))[0]

    @property
    def pf_fixed_interval(self):
        return self._pf(np.where(self.fixed_ok, self.fs_fixed, np.nan))[1]

    @property
    def beta(self) -> dict:
        f = self.fs[np.isfinite(self.fs)]
        if f.size < 2:
            return {"normal": float("nan"), "lognormal": float("nan")}
        m, s = float(f.mean()), float(f.std(ddof=1))
        from ..reliability.stats import beta_lognormal, beta_normal

        return {"normal": float(beta_normal(m, s)), "lognormal": float(beta_lognormal(m, s))}

    def to_dict(self) -> dict:
        """JSON-ready summary (FS dimensionless, pf as a fraction): plain Python numbers, and None
        where an estimate does not exist (no valid realisation; JSON has no NaN)."""
        f = self.fs[np.isfinite(self.fs)]
        lo, hi = map(_plain, self.pf_interval)
        flo, fhi = map(_plain, self.pf_fixed_interval)
        return {"n": self.n, "seed": self.seed,
                "pf": _plain(self.pf), "pf_interval_95_wilson": [lo, hi],
                "pf_fixed_surface": _plain(self.pf_fixed), "pf_fixed_interval_95_wilson": [flo, fhi],
                "beta_normal": _plain(self.beta["normal"]), "beta_lognormal": _plain(self.beta["lognormal"]),
                "mean_fs": float(f.mean()) if f.size else None,
                "std_fs": float(f.std(ddof=1)) if f.size > 1 else None,
                "n_nonconverged": self.n_nonconverged, "n_inadmissible": self.n_inadmissible,
                "n_no_valid_surface": self.n_no_valid,
                "refine": self.refine, "n_refined": self.n_refined, "n_searched": self.n_searched,
                "refine_rejected": self.refine_rejected,
                **({"refine_interslice_functions": dict(self.refine_functions)} if self.refine_functions else {}),
                **({"bank_checks": {"rejected": self.bank_rejected, "retried": self.bank_retried}}
                   if self.bank_rejected is not None else {}),
                **self._mechanism_dict(),
                "units": {"fs": "-", "pf": "probability (fraction)"}}

    def _mechanism_dict(self) -> dict:
        """pf with circles alone and the governing families: only when the bank or the search has other shapes."""
        dp = self.refine is not None and self.refine.get("search") == "dynamic-programming"
        if self.fs_circles is None and not dp:
            return {}
        lo, hi = map(_plain, self.pf_circles_interval)
        out = {"pf_circles_only": _plain(self.pf_circles), "pf_circles_only_interval_95_wilson": [lo, hi]}
        if self.problem is not None:
            out["governing_family"] = self.family_counts()
        return out

    def failure_map(self, x_edges, y_edges):
        """Density of the governing surfaces of failed realisations.

        Fraction of realisations (over all n) whose governing surface has
        FS < 1 and passes through each cell (a cell counts once per
        realisation when any slice-base midpoint of that surface lies in it):
        the per-realisation search's own polyline where it lowered FS
        (:meth:`searched_surfaces`, sliced as
        :func:`.failure_geometry.slice_searched` measures it), else the bank's
        critical surface. ``x_edges``, ``y_edges`` in the section frame (m).

        Returns
        -------
        ndarray (len(x_edges)-1, len(y_edges)-1)
        """
        from .failure_geometry import failure_cells

        if self.problem is None:
            raise InputError("failure_map needs the result of simulate() (problem attached)")
        failed = np.isfinite(self.fs) & (self.fs < 1.0)
        searched = self.searched_surfaces()
        own = [k for k in sorted(searched) if failed[k]]
        failed[own] = False
        counts = failure_cells(self.problem, self.critical_index[failed], [searched[k] for k in own],
                               np.asarray(x_edges, float), np.asarray(y_edges, float))
        return counts / max(self.n, 1)


def _reduce(problem, fs, conv, adm):
    ok = conv & adm & np.isfinite(fs)
    good = np.where(ok, fs, np.inf)
    crit = np.argmin(good, axis=1)
    fs_c = good[np.arange(fs.shape[0]), crit]
    none = ~np.isfinite(fs_c)
    crit = np.where(none, -1, crit)
    fs_c = np.where(none, np.nan, fs_c)
    # the lowest surface ignoring the status: was it excluded, and why?
    # a non-positive FS is a diverged iteration (values like -4e16 occur), not a lower surface
    anyf = np.where(np.isfinite(fs) & (fs > 0), fs, np.inf)
    low = np.argmin(anyf, axis=1)
    r = np.arange(fs.shape[0])
    excluded = ~ok[r, low] & np.isfinite(anyf[r, low])
    nonconv = excluded & ~conv[r, low]
    inadm = excluded & conv[r, low] & ~adm[r, low]
    fx = problem.fixed_index
    return {"fs": fs_c, "crit": crit, "fs_fixed": fs[:, fx], "fixed_ok": ok[:, fx],
            "nonconv": nonconv, "inadm": inadm, "none": none}


#: sparse store arrays of the per-realisation search: the vertices of each polyline it found where it
#: lowered FS, and their geometry (rows of failure_geometry.VERTEX_DTYPE / GEOMETRY_DTYPE, for those
#: realisations only: memory grows with them, not with n)
SEARCHED_VERTICES, SEARCHED_GEOMETRY = "sparse_searched_vertices", "sparse_searched_geometry"


def _run_block(problem, seed, start, stop, refine=None):
    fs, conv, adm = batch_fs(problem, seed, range(start, stop))
    checked = None
    if bank_checks_apply(problem):
        # the bank's non-circular surfaces pass the checks of the searches before they count
        checked = check_bank_polylines(problem, seed, start, fs, conv, adm)
    out = _reduce(problem, fs, conv, adm)
    if checked is not None:
        from .refinement import REFINE_REASONS

        out["bank_rejected"] = np.zeros(fs.shape[0], dtype=[("n", np.int64, (len(REFINE_REASONS),))])
        out["bank_rejected"]["n"] = checked[0]
        out["bank_retried"] = checked[1]
    if refine is not None:
        from ..surfaces import Polyline
        from .refinement import REFINE_REASONS, refine_realisation

        fs_c = out["fs"]
        out["fs_bank"] = fs_c.copy()
        out["refined"] = np.zeros(fs_c.size, bool)
        dp = getattr(refine, "search", "nelder-mead") == "dynamic-programming"
        if dp:
            from .mechanisms import mechanism_search
        from .failure_geometry import GEOMETRY_DTYPE, measure, slice_searched, vertex_rows

        found = []  # (realisation, vertices, geometry) of the searched surfaces that lowered FS

        # one record per realisation (stores hold 1-D arrays): rejections by reason
        out["refine_rejected"] = np.zeros(fs_c.size, dtype=[("n", np.int64, (len(REFINE_REASONS),))])
        # the window [above, below): below ``above`` (1 for case files) a realisation already fails
        near = np.isfinite(fs_c) & (fs_c < refine.below) & (fs_c >= refine.above) & (out["crit"] >= 0)
        if dp:
            from ..search.interslice_retry import RETRY_FUNCTIONS

            # which interslice function gave a lowered realisation's FS when the path's first solution was
            # refused (0: the first solution; i + 1: RETRY_FUNCTIONS[i])
            out["refine_function"] = np.zeros(fs_c.size, np.int8)
        for r in np.flatnonzero(near):
            measured = {}
            if dp:
                f, surf, rej = mechanism_search(problem, seed, start + int(r), fs[r], conv[r] & adm[r], refine,
                                                measured=measured)
            else:
                f, surf, rej = refine_realisation(problem, seed, start + int(r), int(out["crit"][r]), refine)
            out["refine_rejected"]["n"][r] = rej
            if np.isfinite(f) and f < fs_c[r]:
                fs_c[r] = f
                out["refined"][r] = True
                if isinstance(surf, Polyline):  # a bank circle re-judged by the search's method is no new shape
                    geo = measured.get("geometry") or measure(slice_searched(problem, [surf.points]), 0)
                    found.append((start + int(r), surf.points, geo))
                if measured.get("interslice_function"):
                    out["refine_function"][r] = RETRY_FUNCTIONS.index(measured["interslice_function"]) + 1
        out[SEARCHED_VERTICES] = vertex_rows([(k, xy) for k, xy, _ in found])
        out[SEARCHED_GEOMETRY] = np.array([(k, *geo) for k, _, geo in found], dtype=GEOMETRY_DTYPE)
    _circles_only(problem, fs, conv, adm, out)
    return out


def _refine_rejected(allr, key="refine_rejected"):
    if key not in allr:
        return None
    from .refinement import REFINE_REASONS

    tot = np.asarray(allr[key]["n"]).reshape(-1, len(REFINE_REASONS)).sum(axis=0)
    return {k: int(v) for k, v in zip(REFINE_REASONS, tot) if v}


def _refine_functions(allr):
    """{method and interslice function: realisations whose lowered FS came from it after a retry}."""
    if "refine_function" not in allr:
        return {}
    from ..search.interslice_retry import RETRY_FUNCTIONS, retry_label

    code = np.asarray(allr["refine_function"])
    return {retry_label(f): int(np.sum(code == i + 1)) for i, f in enumerate(RETRY_FUNCTIONS) if np.any(code == i + 1)}


def _circles_only(problem, fs, conv, adm, out):
    """pf with circles alone beside the free search: the least clean circle FS per realisation.

    Only for banks that hold other families; a circles-only bank's is ``fs_bank``
    (with a per-realisation search) or ``fs`` itself.
    """
    from .mechanisms import surface_families

    circ = np.array([f == "circle" for f in surface_families(problem)])
    if circ.all() or not circ.any():
        return
    good = np.where(conv & adm & np.isfinite(fs), fs, np.inf)[:, circ]
    fc = good.min(axis=1)
    out["fs_circles"] = np.where(np.isfinite(fc), fc, np.nan)
    out["crit_circles"] = np.where(np.isfinite(fc), np.flatnonzero(circ)[good.argmin(axis=1)], -1)


def _concat(parts):
    keys = parts[0].keys()
    return {k: np.concatenate([p[k] for p in parts]) for k in keys}


def store_header(problem, seed, refine=None, extra: dict | None = None) -> dict:
    """Identity of a store of ``simulate(problem, …, seed, refine=…)``.

    A run resumes only from a store with an equal identity (same problem
    fingerprint, seed, refinement settings and whatever ``extra`` the
    caller ties the run to, e.g. the case's fingerprint); see
    :class:`slope.simulate.store.BlockStore`.
    """
    ident = {"problem": problem.fingerprint(), "seed": int(seed)}
    if refine is not None:
        from .refinement import REFINE_REASONS

        ident["refine"] = _refine_settings(refine).describe()
        # the acceptance rules of the search (each has its reason; the stored counts are per reason):
        # a store written before the interslice shear-strength check existed is not continued with it
        from ..search.interslice_retry import RETRY_FUNCTIONS

        # and the interslice functions a refused path is solved again with before it is refused
        from ..search.path_acceptance import RULE_ID

        ident["refine"]["acceptance"] = list(REFINE_REASONS) + [f"retried: {', '.join(RETRY_FUNCTIONS)}", RULE_ID]
    if bank_checks_apply(problem):
        from ..search.interslice_retry import RETRY_FUNCTIONS
        from .refinement import REFINE_REASONS

        # the bank's non-circular surfaces are judged per realisation (slope.simulate.bank_checks):
        # a store written before, or with other rules, is not continued
        ident["bank_checks"] = {"reasons": list(REFINE_REASONS), "retry": list(RETRY_FUNCTIONS)}
    if extra:
        ident.update(extra)
    return ident


def load_store(store) -> dict:
    """Per-realisation arrays of a store, concatenated in realisation order.

    Returns
    -------
    dict key -> ndarray (n_stored,)
        ``fs``, ``crit``, ``fs_fixed``, ``fixed_ok``, ``nonconv``, ``inadm``,
        ``none`` (and ``fs_bank``, ``refined`` with refinement; and the
        sparse ``sparse_searched_vertices``, one row per vertex of the
        searched surfaces), from realisation 0 up to the first missing or
        rejected block; empty dict for an empty or missing store. Blocks are
        checked as on resume.

    Raises
    ------
    InputError
        The store was written in another store format version.
    """
    st = open_existing(store)
    return {} if st is None else st.load()


def _refine_settings(refine):
    from .refinement import RefineSettings

    if refine is None or isinstance(refine, RefineSettings):
        return refine
    if isinstance(refine, dict):
        return RefineSettings(**refine)
    return RefineSettings(below=refine)


def _blocks(lo, hi, size):
    out, a = [], lo
    while a < hi:
        b = min(hi, (a // size + 1) * size)
        out.append((a, b))
        a = b
    return out


def _execute(problem, seed, ranges, n_jobs, scheduler, refine=None):
    """Results of ``_run_block`` for each range, yielded in order as they complete.

    One stream of tasks for the whole run (:func:`~.executors.run_tasks`, not
    one parallel call per stored block), so workers never wait for each other
    at block boundaries.
    """
    if scheduler is not None or n_jobs == 1 or len(ranges) == 1:
        yield from run_tasks(_run_block, [(problem, seed, a, b, refine) for a, b in ranges],
                             n_jobs=1, scheduler=scheduler)
        return
    # the problem (stencil, slice terms, generators: ~20 MB for the levee demo) goes to
    # each worker once through a file, not pickled with every task; this process runs blocks too
    path = _ship(problem)
    try:
        yield from run_tasks(_run_shipped_block, [(path, seed, a, b, refine) for a, b in ranges], n_jobs=n_jobs,
                             here=lambda _path, *args: _run_block(problem, *args))
    finally:
        _unship(path)


_WORKER_PROBLEM = {}  # in a worker process: the path of the problem it holds -> that problem


def _run_shipped_block(path, seed, start, stop, refine=None):
    """:func:`_run_block` in a worker, loading the shipped problem on the worker's first task."""
    problem = _WORKER_PROBLEM.get(path)
    if problem is None:
        import pickle

        with open(path, "rb") as fh:
            problem = pickle.load(fh)
        _WORKER_PROBLEM.clear()  # one problem held per worker: memory stays bounded over a run
        _WORKER_PROBLEM[path] = problem
        # the workers already use every core: compiled kernels run single-threaded in them
        # (results do not depend on the thread count)
        import numba

        numba.set_num_threads(1)
    return _run_block(problem, seed, start, stop, refine)


def simulate(problem, n, seed, *, n_jobs=1, batch=100, store=None, resume=False, progress=False,
             scheduler=None, scheduler_timeout=SCHEDULER_TIMEOUT_S, refine=None,
             store_identity=None) -> SimulationResult:
    """Random limit-equilibrium Monte Carlo.

    Parameters
    ----------
    problem : RandomProblem
    n : int
        Realisations.
    seed : int
        Run seed; realisation k uses streams ``(seed, k, property, zone)``.
    n_jobs : int
        joblib workers (results identical for any value).
    batch : int
        Realisations evaluated together (memory ~ batch × m × n floats).
    store : str, optional
        Folder of a :class:`~slope.simulate.store.BlockStore`: one checked
        NPZ per block of 100 realisations plus ``header.json``. Unusable
        blocks are reported (:class:`StoreRepairWarning`) and recomputed.
    resume : bool
        Continue a stored run up to n (the store identity must match).
    progress : bool or str
        Show a tqdm bar; a text names what it counts (e.g. "undrained · spatial simulation").
    scheduler : dask.distributed.Client or str, optional
        Run blocks through ``Client.map``; a string is a scheduler address
        (``tcp://host:port``), connected before any work starts.
    scheduler_timeout : float, s
        How long to wait for a scheduler given by address.
    refine : float, dict or RefineSettings, optional
        Refine the critical surface of every realisation whose bank FS is
        below a threshold into a polyline with that realisation's fields
        (:mod:`slope.simulate.refinement`); a number is the threshold.
    store_identity : dict, optional
        More identity for the store (e.g. the case fingerprint): a resume
        is refused when any of it differs.

    Raises
    ------
    SchedulerLost
        The scheduler stopped answering; finished blocks are in the store.

    Returns
    -------
    SimulationResult
    """
    if not isinstance(problem, RandomProblem):
        raise InputError("simulate: problem must be a RandomProblem")
    n, batch, n_jobs = int(n), int(batch), int(n_jobs)
    if n < 1:
        raise InputError(f"simulate: n must be >= 1 realisations, got {n}")
    if batch < 1:
        raise InputError(f"simulate: batch must be >= 1, got {batch}")
    if n_jobs < 1:
        raise InputError(f"simulate: n_jobs must be >= 1, got {n_jobs}")
    if int(seed) < 0:
        raise InputError(f"simulate: seed must be >= 0, got {seed}")
    seed = int(seed)
    refine = _refine_settings(refine)
    if isinstance(scheduler, str):
        client = connect_scheduler(scheduler, float(scheduler_timeout), option="scheduler")
        try:
            return simulate(problem, n, seed, n_jobs=n_jobs, batch=batch, store=store, resume=resume,
                            progress=progress, scheduler=client, refine=refine, store_identity=store_identity)
        finally:
            client.close()
    prepare(problem)  # geometry, base mapping and strength map built once, before pickling to workers
    parts = {}
    st = None
    if store is not None:
        st = BlockStore(store, store_header(problem, seed, refine, store_identity), block=BLOCK)
        st.open(resume=resume)
        for b, (stop, arrays) in st.read_blocks(n).items():
            parts[b] = dict(arrays, _stop=stop)
        for msg in st.notices:
            warnings.warn(msg, StoreRepairWarning, stacklevel=2)
    # work units: blocks of BLOCK (store) subdivided into batches
    todo = []
    for b in range(0, n, BLOCK):
        have = parts.get(b)
        lo = b if have is None else have["_stop"]
        hi = min(b + BLOCK, n)
        if lo < hi:  # a stored block past n is truncated at the end, never recomputed
            todo.append((b, lo, hi))
    bar = None
    if progress:
        from tqdm import tqdm

        # A text progress names what is counted: "undrained · spatial simulation · 523/1000 realisations".
        label = progress if isinstance(progress, str) else "simulation"
        bar = tqdm(total=n, initial=n - sum(hi - lo for _, lo, hi in todo), desc=label, unit="realisations",
                   bar_format="{desc} · {n_fmt}/{total_fmt} realisations |{bar:20}| {elapsed}<{remaining}",
                   mininterval=0.5)
    plan = [(b, lo, hi, _blocks(lo, hi, batch) if batch < hi - lo else [(lo, hi)]) for b, lo, hi in todo]
    stream = _execute(problem, seed, [r for *_, rs in plan for r in rs], n_jobs, scheduler, refine)
    done = sum(p["_stop"] - b for b, p in parts.items())
    try:
        for b, lo, hi, ranges in plan:
            res = _concat([next(stream) for _ in ranges])
            old = parts.get(b)
            if old is not None:
                res = _concat([{k: v for k, v in old.items() if k != "_stop"}, res])
            res["_stop"] = hi
            parts[b] = res
            done += hi - lo
            if st is not None:
                st.write_block(b, {k: v for k, v in res.items() if k != "_stop"})
            if bar is not None:
                bar.update(hi - lo)
    except SchedulerLost as exc:
        if st is None:
            raise SchedulerLost(f"{exc} after {done} of {n} realisations; nothing was stored: run again, "
                                "without --scheduler to run locally") from None
        raise SchedulerLost(f"{exc} after {done} of {n} realisations; those are kept in {store}: run again "
                            "with --resume (resume=True) and without --scheduler to continue locally") from None
    finally:
        stream.close()  # an interrupted run stops its workers; written blocks stay
        if bar is not None:
            bar.close()
    allr = _concat([{k: v for k, v in parts[b].items() if k != "_stop"} for b in sorted(parts)])
    allr = take_realisations(allr, 0, n)
    flags = {k: allr[k].astype(bool) for k in ("nonconv", "inadm", "none", "refined") if k in allr}
    return SimulationResult(fs=allr["fs"], critical_index=allr["crit"].astype(int), fs_fixed=allr["fs_fixed"],
                            fixed_ok=allr["fixed_ok"].astype(bool), n_nonconverged=int(allr["nonconv"].sum()),
                            n_inadmissible=int(allr["inadm"].sum()), n_no_valid=int(allr["none"].sum()),
                            seed=seed, problem=problem,
                            fs_bank=allr.get("fs_bank"),
                            n_refined=int(allr["refined"].sum()) if "refined" in allr else 0,
                            refine_rejected=_refine_rejected(allr),
                            bank_rejected=_refine_rejected(allr, "bank_rejected"),
                            refine_functions=_refine_functions(allr),
                            bank_retried=int(allr["bank_retried"].sum()) if "bank_retried" in allr else 0,
                            refine=None if refine is None else refine.describe(), flags=flags,
                            store_notices=list(st.notices) if st is not None else [],
                            fs_circles=allr.get("fs_circles"), crit_circles=allr.get("crit_circles"),
                            searched_vertices=allr.get(SEARCHED_VERTICES),
                            searched_geometry=allr.get(SEARCHED_GEOMETRY))


def realise_fields(problem, seed, k):
    """Fields of realisation k on the problem's grid.

    Returns
    -------
    grid : RegularGrid
    fields : dict key -> ndarray (nx, ny)
        Physical values (factor for multiplier properties); NaN at cell
        centres outside the property's material zones, and outside the zone's
        field box (:func:`.field_box.field_box`: the cells the simulator
        generates, where the bank and the per-realisation searches read), so
        an export holds exactly the fields the simulation used.
    """
    from matplotlib.path import Path

    grid = problem.grid
    pts = grid.points()
    out = {}
    for i, p in enumerate(problem.properties):
        arr = np.full(grid.shape, np.nan)
        for z in problem.zones_of(i):
            members = [j for j, q in enumerate(problem.properties) if z in problem.zones_of(j)]
            from .engine import _correlated

            zs = _correlated(problem, seed, [k], z, members, outside="nan")[i][0]
            val = np.broadcast_to(np.asarray(p.marginal.from_standard_normal(zs), float), grid.shape)
            inside = Path(np.asarray(problem.section.zones[z].polygon)).contains_points(pts, radius=1e-9)
            inside = grid.reshape(inside[None].astype(float))[0] > 0.5
            arr[inside] = val[inside]
        out[p.key] = arr
    return grid, out

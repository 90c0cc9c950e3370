"""Monte Carlo over random fields: ``simulate`` and its result."""
from __future__ import annotations

import json
import os
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..reliability.stats import beta_lognormal, beta_normal, binomial_interval
from .engine import batch_fs, stencil
from .problem import RandomProblem

__all__ = ["SimulationResult", "simulate", "realise_fields", "store_header", "load_store", "BLOCK"]

BLOCK = 100  # realisations per on-disk block (fixed, independent of `batch`)


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

    @property
    def n(self) -> int:
        return int(self.fs.size)

    def _pf(self, fs):
        ok = np.isfinite(fs)
        nv = int(ok.sum())
        if nv == 0:
            return float("nan"), (float("nan"), float("nan")), 0
        k = int((fs[ok] < 1.0).sum())
        return k / nv, binomial_interval(k, nv, 0.95, "wilson"), nv

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
        return {"normal": float(beta_normal(m, s)), "lognormal": float(beta_lognormal(m, s))}

    def to_dict(self) -> dict:
        """JSON-ready summary (FS dimensionless, pf as a fraction)."""
        f = self.fs[np.isfinite(self.fs)]
        lo, hi = self.pf_interval
        flo, fhi = self.pf_fixed_interval
        return {"n": self.n, "seed": self.seed,
                "pf": self.pf, "pf_interval_95_wilson": [lo, hi],
                "pf_fixed_surface": self.pf_fixed, "pf_fixed_interval_95_wilson": [flo, fhi],
                "beta_normal": self.beta["normal"], "beta_lognormal": self.beta["lognormal"],
                "mean_fs": float(f.mean()) if f.size else None,
                "std_fs": float(f.std(ddof=1)) if f.size > 1 else None,
                "n_nonconverged": self.n_nonconverged, "n_inadmissible": self.n_inadmissible,
                "n_no_valid_surface": self.n_no_valid,
                "refine": self.refine, "n_refined": self.n_refined,
                "units": {"fs": "-", "pf": "probability (fraction)"}}

    def failure_map(self, x_edges, y_edges):
        """Density of failed critical surfaces.

        Fraction of realisations (over all n) whose critical surface has
        FS < 1 and passes through each cell (a cell counts once per
        realisation when any slice-base midpoint of that surface lies in it).

        Returns
        -------
        ndarray (len(x_edges)-1, len(y_edges)-1)
        """
        if self.problem is None:
            raise InputError("failure_map needs the result of simulate() (problem attached)")
        bank = self.problem.bank
        xe, ye = np.asarray(x_edges, float), np.asarray(y_edges, float)
        out = np.zeros((xe.size - 1, ye.size - 1))
        failed = np.isfinite(self.fs) & (self.fs < 1.0)
        idx, counts = np.unique(self.critical_index[failed], return_counts=True)
        for j, cnt in zip(idx, counts):
            h, _, _ = np.histogram2d(bank.x_mid[j], bank.y_base[j], bins=[xe, ye])
            out += (h > 0) * cnt
        return out / max(self.n, 1)


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


def _run_block(problem, seed, start, stop, refine=None):
    fs, conv, adm = batch_fs(problem, seed, range(start, stop))
    out = _reduce(problem, fs, conv, adm)
    if refine is not None:
        from .refinement import refine_realisation

        fs_c = out["fs"]
        out["fs_bank"] = fs_c.copy()
        out["refined"] = np.zeros(fs_c.size, bool)
        for r in np.flatnonzero(np.isfinite(fs_c) & (fs_c < refine.below) & (out["crit"] >= 0)):
            f, _ = refine_realisation(problem, seed, start + int(r), int(out["crit"][r]), refine)
            if np.isfinite(f) and f < fs_c[r]:
                fs_c[r] = f
                out["refined"][r] = True
    return out


def _concat(parts):
    keys = parts[0].keys()
    return {k: np.concatenate([p[k] for p in parts]) for k in keys}


def store_header(problem, seed, refine=None) -> dict:
    """What a store of ``simulate(problem, …, seed, refine=…)`` records in ``header.json``.

    A run resumes only from a store with an equal header (same problem
    fingerprint, seed, block size and refinement settings).
    """
    head = {"format": "slipfield-rlem-store", "version": 1, "fingerprint": problem.fingerprint(),
            "seed": int(seed), "block": BLOCK}
    if refine is not None:
        head["refine"] = _refine_settings(refine).describe()
    return head


def _block_paths(store):
    import glob

    return sorted(glob.glob(os.path.join(str(store), "block_*.npz")))


def load_store(store) -> dict:
    """Per-realisation arrays of a store, concatenated in realisation order.

    Returns
    -------
    dict key -> ndarray (n_stored,)
        ``fs``, ``crit``, ``fs_fixed``, ``fixed_ok``, ``nonconv``, ``inadm``,
        ``none`` (and ``fs_bank``, ``refined`` with refinement); empty dict
        for an empty or missing store. Unreadable blocks raise InputError.
    """
    parts = []
    for f in _block_paths(store):
        try:
            with np.load(f) as d:
                parts.append({k: d[k] for k in d.files if k not in ("start", "stop")})
        except (OSError, ValueError) as exc:
            raise InputError(f"store {store}: block {os.path.basename(f)} is unreadable ({exc}); "
                             "start a new run in an empty folder") from None
    return _concat(parts) if parts else {}


def _refine_settings(refine):
    from .refinement import RefineSettings

    if refine is None or isinstance(refine, RefineSettings):
        return refine
    if isinstance(refine, dict):
        return RefineSettings(**refine)
    return RefineSettings(below=refine)


def _atomic_write_npz(path, arrays):
    tmp = path + ".tmp.npz"
    np.savez(tmp, **arrays)
    os.replace(tmp, path)


def _blocks(lo, hi, size):
    out, a = [], lo
    while a < hi:
        b = min(hi, (a // size + 1) * size)
        out.append((a, b))
        a = b
    return out


def _execute(problem, seed, ranges, n_jobs, scheduler, refine=None):
    """Results of ``_run_block`` for each range, yielded in order as they complete.

    One stream of tasks for the whole run (not one parallel call per stored
    block), so workers never wait for each other at block boundaries.
    """
    if scheduler is not None:
        futs = scheduler.map(_run_block, [problem] * len(ranges), [seed] * len(ranges),
                             [a for a, _ in ranges], [b for _, b in ranges], [refine] * len(ranges),
                             pure=False)
        try:
            for f in futs:
                yield f.result()
        finally:
            scheduler.cancel(futs)  # after an interruption, no orphaned work on the cluster
        return
    if n_jobs == 1 or len(ranges) == 1:
        for a, b in ranges:
            yield _run_block(problem, seed, a, b, refine)
        return
    from joblib import Parallel, delayed

    yield from Parallel(n_jobs=n_jobs, return_as="generator")(
        delayed(_run_block)(problem, seed, a, b, refine) for a, b in ranges)


def _connect(address, timeout):
    """dask.distributed Client for a scheduler address, failing fast with a clear message."""
    try:
        from dask.distributed import Client
    except ImportError:
        raise InputError("simulate: scheduler= needs dask.distributed (pip install distributed)") from None
    try:
        return Client(address, timeout=timeout, set_as_default=False)
    except (OSError, TimeoutError) as exc:
        raise InputError(f"simulate: scheduler {address!r} did not answer within {timeout:g} s ({exc}); "
                         "check the address (tcp://host:port) and that the scheduler is running, or "
                         "omit scheduler to run locally") from None


def simulate(problem, n, seed, *, n_jobs=1, batch=100, store=None, resume=False, progress=False,
             scheduler=None, scheduler_timeout=5.0, refine=None) -> SimulationResult:
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
        Directory: one NPZ per block of 100 realisations plus ``header.json``.
    resume : bool
        Continue a stored run up to n (the header must match).
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
        client = _connect(scheduler, float(scheduler_timeout))
        try:
            return simulate(problem, n, seed, n_jobs=n_jobs, batch=batch, store=store, resume=resume,
                            progress=progress, scheduler=client, refine=refine)
        finally:
            client.close()
    stencil(problem)  # geometry and base mapping built once, before pickling to workers
    parts = {}
    if store is not None:
        os.makedirs(store, exist_ok=True)
        hpath = os.path.join(store, "header.json")
        head = store_header(problem, seed, refine)
        if os.path.exists(hpath):
            if not resume:
                raise InputError(f"simulate: store {store!r} already holds a run; pass resume=True to "
                                 "continue it or give an empty directory")
            with open(hpath) as fh:
                old = json.load(fh)
            if old != head:
                why = ("seed differs" if old.get("seed") != seed else
                       "the refinement settings differ" if old.get("refine") != head.get("refine") else
                       "the problem differs (hash mismatch)")
                raise InputError(f"simulate: cannot resume from {store!r}: {why}; use a new store directory")
        else:
            with open(hpath + ".tmp", "w") as fh:
                json.dump(head, fh)
            os.replace(hpath + ".tmp", hpath)
        for b in range(0, n, BLOCK):
            p = os.path.join(store, f"block_{b // BLOCK:06d}.npz")
            if os.path.exists(p):
                with np.load(p) as d:
                    parts[b] = {k: d[k] for k in d.files if k not in ("start", "stop")}
                    parts[b]["_stop"] = int(d["stop"])
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
    try:
        for b, lo, hi, ranges in plan:
            res = _concat([next(stream) for _ in ranges])
            old = parts.get(b)
            if old is not None:
                res = _concat([{k: v for k, v in old.items() if k != "_stop"}, res])
            res["_stop"] = hi
            parts[b] = res
            if store is not None:
                arrays = {k: v for k, v in res.items() if k != "_stop"}
                _atomic_write_npz(os.path.join(store, f"block_{b // BLOCK:06d}.npz"),
                                  dict(arrays, start=b, stop=hi))
            if bar is not None:
                bar.update(hi - lo)
    finally:
        stream.close()  # an interrupted run stops its workers; written blocks stay
    if bar is not None:
        bar.close()
    allr = _concat([{k: v for k, v in parts[b].items() if k != "_stop"} for b in sorted(parts)])
    allr = {k: v[:n] for k, v in allr.items()}
    return SimulationResult(fs=allr["fs"], critical_index=allr["crit"].astype(int), fs_fixed=allr["fs_fixed"],
                            fixed_ok=allr["fixed_ok"].astype(bool), n_nonconverged=int(allr["nonconv"].sum()),
                            n_inadmissible=int(allr["inadm"].sum()), n_no_valid=int(allr["none"].sum()),
                            seed=seed, problem=problem,
                            fs_bank=allr.get("fs_bank"),
                            n_refined=int(allr["refined"].sum()) if "refined" in allr else 0,
                            refine=None if refine is None else refine.describe())


def realise_fields(problem, seed, k):
    """Fields of realisation k on the problem's grid.

    Returns
    -------
    grid : RegularGrid
    fields : dict key -> ndarray (nx, ny)
        Physical values (factor for multiplier properties); NaN at cell
        centres outside the property's material zones.
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

            zs = _correlated(problem, seed, [k], z, members)[i][0]
            val = np.broadcast_to(np.asarray(p.marginal.from_standard_normal(zs), float), grid.shape)
            inside = Path(np.asarray(problem.section.zones[z].polygon)).contains_points(pts, radius=1e-9)
            inside = grid.reshape(inside[None].astype(float))[0] > 0.5
            arr[inside] = val[inside]
        out[p.key] = arr
    return grid, out

"""Run realisations in blocks: fields → strengths → FS of every bank surface."""
from __future__ import annotations

import numpy as np

from ..methods import factor_of_safety
from ..strength import base_strength
from .mapping import Mapper

_CACHE = {}


def _block(problem, seed, start, stop):
    key = id(problem)
    mp = _CACHE.get(key)
    if mp is None:
        mp = _CACHE[key] = Mapper(problem)
    idx = list(range(start, stop))
    ov = mp.overrides(seed, idx)
    c, t = base_strength(problem.bank, problem.materials, problem.hypothesis, overrides=ov)
    c = np.broadcast_to(c, (len(idx),) + problem.bank.zone.shape)
    t = np.broadcast_to(t, c.shape)
    r = factor_of_safety(problem.bank, c, t, method=problem.method)
    fs = np.asarray(r.fs, float)
    ok = np.asarray(r.converged, bool) & np.asarray(r.admissible, bool) & problem.bank.valid[None, :]
    fsm = np.where(ok, fs, np.inf)
    crit = fsm.argmin(axis=1)
    fi = problem.fixed_index if problem.fixed_index is not None else 0
    return dict(fs_crit=fsm[np.arange(len(idx)), crit], crit=crit, fs_fixed=fs[:, fi],
                fixed_ok=ok[:, fi], n_flagged=(~ok).sum(axis=1))


def simulate(problem, n, seed=0, *, block_size=100, n_jobs=1, store=None, resume=False):
    """Simulate ``n`` realisations; identical for any ``block_size`` and ``n_jobs``.

    Returns
    -------
    dict of arrays (n,)
        ``fs_crit`` (minimum FS over converged, admissible surfaces), ``crit``
        (bank row), ``fs_fixed`` (FS on the fixed surface), ``fixed_ok``,
        ``n_flagged`` (surfaces non-converged/inadmissible/invalid, counted).
    """
    tasks = [(s, min(s + block_size, n)) for s in range(0, n, block_size)]
    ds = None
    if store is not None:
        from .backends import DiskStore
        ds = DiskStore(store, problem, seed, resume=resume)
    todo = [t for t in tasks if ds is None or not ds.has(*t)]
    if n_jobs == 1:
        gen = (_block(problem, seed, a, b) for a, b in todo)
    else:
        from joblib import Parallel, delayed
        gen = Parallel(n_jobs=n_jobs, return_as="generator")(delayed(_block)(problem, seed, a, b) for a, b in todo)
    done = {}
    for t, r in zip(todo, gen):
        if ds is not None:
            ds.write(*t, r)  # block by block, so an interruption loses at most the blocks in flight
        done[t] = r
    res = [done[t] if t in done else ds.read(*t) for t in tasks]
    return {k: np.concatenate([r[k] for r in res]) for k in res[0]}

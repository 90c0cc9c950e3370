"""Reproducible sample streams and batch evaluation across processes.

Random numbers are drawn per fixed *block* of ``BLOCK`` samples: block ``b``
of a run with seed ``s`` uses ``fields.seeding.realisation_rng(s, b, tag)``
where ``tag`` identifies the method's stream. A batch (the unit of work sent
to a process) is any contiguous range of sample indices; it regenerates the
blocks it overlaps and keeps its rows. The physical transform is applied per
whole block, so floating-point results do not depend on the batch size
either. Hence the same seed gives identical numbers for any ``n_jobs`` and
``batch_size``, provided the limit state treats rows independently.
"""
from __future__ import annotations

import math

import numpy as np
from scipy import special

from slipfield.fields.seeding import realisation_rng

from ..errors import InputError

__all__ = ["BLOCK", "block_rng", "normal_rows", "uniform_rows", "batch_ranges",
           "map_batches", "check_jobs"]

#: Samples per random-number block (fixed: changing it changes every result).
BLOCK = 1024

# Stream tags keep the methods' random numbers apart for one seed.
STREAM_MC = 11
STREAM_LHS_JITTER = 12
STREAM_LHS_PERM = 13
STREAM_IS = 14
STREAM_SUBSET = 15


def block_rng(seed: int, block: int, tag: int, *more: int) -> np.random.Generator:
    """Generator of block ``block`` of stream ``tag`` (see module doc)."""
    return realisation_rng(seed, block, tag, *more)


def _rows(seed, start, stop, dim, tag, draw):
    b0, b1 = start // BLOCK, (stop - 1) // BLOCK
    blocks = [draw(block_rng(seed, b, tag), (BLOCK, dim)) for b in range(b0, b1 + 1)]
    out = np.concatenate(blocks, axis=0)
    return out[start - b0 * BLOCK: stop - b0 * BLOCK], b0 * BLOCK


def normal_rows(seed: int, start: int, stop: int, dim: int, tag: int = STREAM_MC):
    """Independent standard normals for sample indices ``start .. stop-1`` → ``(stop-start, dim)``."""
    if stop <= start:
        return np.zeros((0, dim))
    return _rows(seed, start, stop, dim, tag, lambda g, s: g.standard_normal(s))[0]


def uniform_rows(seed: int, start: int, stop: int, dim: int, tag: int):
    """Independent U(0, 1) for sample indices ``start .. stop-1``."""
    if stop <= start:
        return np.zeros((0, dim))
    return _rows(seed, start, stop, dim, tag, lambda g, s: g.random(s))[0]


def lhs_permutations(seed: int, n: int, dim: int) -> np.ndarray:
    """Whole-design Latin hypercube strata ``(n, dim)``: column j is a permutation of 0..n-1.

    Column ``j`` comes from its own stream ``realisation_rng(seed, 0,
    STREAM_LHS_PERM, j)``, so the design depends only on ``seed``, ``n`` and
    ``dim``.
    """
    cols = [block_rng(seed, 0, STREAM_LHS_PERM, j).permutation(n) for j in range(dim)]
    return np.column_stack(cols) if cols else np.zeros((n, 0), int)


def lhs_normal_rows(seed: int, perms: np.ndarray, start: int, stop: int) -> np.ndarray:
    """Standard normals of Latin hypercube rows ``start .. stop-1``.

    Row i, variable j lies in stratum ``perms[i, j]`` of n equiprobable strata,
    uniformly placed within it (McKay, Beckman & Conover 1979).
    """
    n, dim = perms.shape
    jit = uniform_rows(seed, start, stop, dim, STREAM_LHS_JITTER)
    p = (perms[start:stop] + jit) / n
    return special.ndtri(np.clip(p, 1e-300, 1 - 1e-16))


def check_jobs(n_jobs, batch_size):
    """Validate ``n_jobs`` (int ≠ 0; −1 for all cores) and ``batch_size`` (≥ 1)."""
    if not isinstance(n_jobs, (int, np.integer)) or n_jobs == 0:
        raise InputError(f"n_jobs must be a non-zero integer (-1 = all cores), got {n_jobs!r}")
    if batch_size is not None and (not isinstance(batch_size, (int, np.integer)) or batch_size < 1):
        raise InputError(f"batch_size must be a positive integer, got {batch_size!r}")


def batch_ranges(n: int, batch_size: int):
    """Contiguous ``(start, stop)`` ranges covering ``0 .. n-1``."""
    return [(a, min(a + batch_size, n)) for a in range(0, n, batch_size)]


def map_batches(func, ranges, n_jobs: int = 1):
    """``[func(a, b) for a, b in ranges]``, across processes with joblib when ``n_jobs != 1``.

    Results keep the order of ``ranges``.
    """
    if n_jobs == 1 or len(ranges) <= 1:
        return [func(a, b) for a, b in ranges]
    from joblib import Parallel, delayed

    return Parallel(n_jobs=n_jobs)(delayed(func)(a, b) for a, b in ranges)


def evaluate_rows(limit_state, X, surface="fixed", n_jobs=1, batch_size=None):
    """Evaluate a limit state on the rows of ``X``, split across processes if asked."""
    from .limit_state import Evaluation

    n = X.shape[0]
    if n_jobs == 1 or n == 0:
        return limit_state.evaluate(X, surface)
    bs = batch_size or max(1, math.ceil(n / (2 * abs(n_jobs) if n_jobs > 0 else 4)))
    parts = map_batches(lambda a, b: limit_state.evaluate(X[a:b], surface),
                        batch_ranges(n, bs), n_jobs)
    return Evaluation.concatenate(parts)

"""Morgenstern-Price over a bank on threads: the same bits whatever the number of threads.

The kernel is serial over a range of surfaces and runs parts of the bank on
Python threads (``methods.surface_threads``); each surface is computed by
the same code in any part, so the thread count (``--jobs``, one thread
beside a worker pool) must not change a result, as the project's rule on
reproducibility asks of the number of jobs.
"""
from pathlib import Path

import numba
import numpy as np
import pytest

from slipfield.slope.bank import build_bank
from slipfield.slope.case.build import load_case
from slipfield.slope.methods import gle, prepare_bank
from slipfield.slope.methods.interslice import interslice_function
from slipfield.slope.methods.surface_threads import MIN_SURFACES_PER_PART, over_surfaces
from slipfield.slope.search import lattice_circles
from slipfield.slope.strength import base_strength


_LEVEE = Path(__file__).resolve().parents[2] / "cases" / "levee_soft_clay.toml"


@pytest.fixture(scope="module")
def bank_strengths():
    """The demo levee's centre lattice (its [search]), drained, with strengths scattered about the
    demo's (invented, as the demo): some cells need the continuation and the lam scan."""
    sec = load_case(str(_LEVEE)).section
    circles = lattice_circles(sec, x_range=(0.0, 20.0), y_range=(6.0, 20.0), nx=11, ny=11, n_radii=10)
    bank = build_bank(sec, circles, n_slices=30)
    bank = bank.subset(np.nonzero(bank.valid)[0])
    c, tp = base_strength(bank, sec.materials, "drained")
    rng = np.random.default_rng(5)
    shape = (3,) + np.shape(c)
    return prepare_bank(bank), np.asarray(c) * rng.lognormal(0.0, 0.3, shape), np.asarray(tp) * rng.lognormal(0.0, 0.1, shape)


class _Recorder:
    """A kernel that records the ranges it is called with (and passes them to the real one)."""

    def __init__(self, kernel):
        self.kernel, self.ranges = kernel, []

    @property
    def signatures(self):
        return self.kernel.signatures

    def __call__(self, m0, m1, *args):
        self.ranges.append((int(m0), int(m1)))
        self.kernel(m0, m1, *args)


def _solve(terms, c, tp, threads):
    before = numba.get_num_threads()
    numba.set_num_threads(threads)
    try:
        return gle.morgenstern_price(terms, c, tp, interslice_function(terms.x_bound, "half-sine"))
    finally:
        numba.set_num_threads(before)


def test_the_thread_count_changes_no_bit(bank_strengths, monkeypatch):
    if numba.config.NUMBA_NUM_THREADS < 2:
        pytest.skip("one numba thread on this machine")
    terms, c, tp = bank_strengths
    assert c.shape[1] >= 4 * MIN_SURFACES_PER_PART  # enough surfaces for several parts
    # on reverse circles Newton's roots keep their flags (NEGATIVE_STRENGTH, or no root): solved
    # as any other circle below, they take the continuation, then the lam scan
    left = _solve(terms, c, tp, 1)["flags"]
    assert ((left & 40) != 0).any()
    monkeypatch.setattr(gle, "reverse_circles", lambda terms: np.zeros(terms.n_surfaces, bool))
    scans = []
    real_scan = gle.bracketed_roots
    monkeypatch.setattr(gle, "bracketed_roots", lambda *a, **k: (scans.append(len(a[4][0])), real_scan(*a, **k))[1])
    one = _solve(terms, c, tp, 1)
    rec = _Recorder(gle._gle_kernel)
    monkeypatch.setattr(gle, "_gle_kernel", rec)
    two = _solve(terms, c, tp, 2)
    assert len(rec.ranges) > 1  # the bank was really split
    for key in ("fs", "lam", "flags", "iterations", "converged"):
        np.testing.assert_array_equal(one[key], two[key], err_msg=key)
    assert scans and scans[0] == scans[1] > 0  # cells the lam scan was asked to rescue
    assert np.isfinite(one["fs"]).sum() > 0.9 * one["fs"].size


@pytest.mark.parametrize("threads, surfaces", [(1, 500), (2, 10), (2, 500), (3, 257)])
def test_parts_cover_every_surface_once(threads, surfaces):
    seen = np.zeros(surfaces, dtype=int)

    class Kernel:
        signatures = ["compiled"]

        def __call__(self, m0, m1):
            seen[m0:m1] += 1

    before = numba.get_num_threads()
    numba.set_num_threads(min(threads, numba.config.NUMBA_NUM_THREADS))
    try:
        over_surfaces(Kernel(), surfaces)
    finally:
        numba.set_num_threads(before)
    np.testing.assert_array_equal(seen, 1)


def test_a_part_that_fails_fails_the_call():
    # an error in a thread is raised in the caller, not lost with the thread
    if numba.config.NUMBA_NUM_THREADS < 2:
        pytest.skip("one numba thread on this machine")

    class Kernel:
        signatures = ["compiled"]

        def __call__(self, m0, m1):
            if m0 > 0:
                raise ValueError(f"part {m0}..{m1}")

    before = numba.get_num_threads()
    numba.set_num_threads(2)
    try:
        with pytest.raises(ValueError, match="part"):
            over_surfaces(Kernel(), 500)
    finally:
        numba.set_num_threads(before)

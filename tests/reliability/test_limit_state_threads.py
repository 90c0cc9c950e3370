"""Small limit-state calls (FORM, point estimates, tornado) run the kernel on one thread.

The factor of safety of a sample on a surface is solved on its own (Bishop
1955: one equation per surface and strength set), so it cannot depend on how
many samples share a kernel call nor on how many threads solve them: the
check is that the one-thread path of small calls gives the same bits as one
large multi-threaded call, and that FS stays exactly proportional to su on an
undrained (φ = 0) circle (Bishop's m_α = cos α when φ = 0; Duncan, Wright &
Brandon 2014, *Soil Strength and Slope Stability*, 2nd ed., ch. 6).
"""
import numba
import numpy as np
import pytest

from slipfield.slope import limit_state
from slipfield.slope.examples import simple_slope
from slipfield.slope.limit_state import PARALLEL_MIN_PAIRS, SliceBankLimitState
from slipfield.slope.search import centre_lattice
from slipfield.slope.strength import Material


@pytest.fixture(scope="module")
def undrained_circle():
    """2H:1V undrained slope, H = 10 m, su = 40 kPa (invented), its critical circle alone."""
    m = Material("clay", unit_weight=20.0, su_model="constant", su=40.0)
    sec = simple_slope(height=10.0, cot_beta=2.0, depth_factor=2.0, material=m)
    r = centre_lattice(sec, method="bishop", hypothesis="undrained", n_slices=40, nx=6, ny=5, n_radii=5)
    bank = r.bank.subset([r.critical_index])
    return SliceBankLimitState(bank, sec.materials, {0: ("soil", "su_factor")}, hypothesis="undrained"), r.fs_min


def test_small_calls_run_on_one_thread_with_the_same_bits(undrained_circle, monkeypatch):
    ls, fs0 = undrained_circle
    rng = np.random.default_rng(7)
    X = rng.lognormal(0.0, 0.3, size=(PARALLEL_MIN_PAIRS, 1))  # one surface: samples = pairs
    threads_set = []
    real = numba.set_num_threads
    monkeypatch.setattr(numba, "set_num_threads", lambda n: (threads_set.append(n), real(n))[1])

    big = ls(X)[0][:, 0]  # samples × surfaces at the threshold: the kernel's threads are used
    assert threads_set == []
    small = np.concatenate([ls(X[a:a + 7])[0][:, 0] for a in range(0, 70, 7)])  # as FORM calls it
    assert threads_set[:2] == [1, numba.get_num_threads()]  # one thread inside, the count restored after
    assert np.array_equal(small, big[:70])
    np.testing.assert_allclose(big, fs0 * X[:, 0], rtol=1e-9)  # FS ∝ su on a φ = 0 circle


def test_threads_restored_when_the_kernel_call_fails(undrained_circle, monkeypatch):
    ls, _ = undrained_circle
    before = numba.get_num_threads()

    def fail(*args, **kwargs):
        raise ArithmeticError("kernel failed")

    monkeypatch.setattr(limit_state, "factor_of_safety", fail)
    with pytest.raises(ArithmeticError):
        ls(np.ones((3, 1)))
    assert numba.get_num_threads() == before

"""Scaling out without changing answers: jobs, batches, resume, dask.

Contract (DEVELOPERS.md, "Seeds"): realisation k uses only
``realisation_rng(seed, k, ...)``, so the FS of every realisation is the same
for any number of workers, batch size, interruption or scheduler. These are
exact (bit-for-bit) comparisons, not statistical ones.
"""
import math

import numpy as np
import pytest

from slipfield.fields.marginals import make_marginal
from slipfield.slope.errors import InputError
from slipfield.slope.examples import simple_slope
from slipfield.slope.search import lattice_circles
from slipfield.slope.simulate import RandomProblem, RandomProperty, simulate
from slipfield.slope.strength import Material
from slipfield.slope.surfaces import Circle

N = 60


def _problem(theta=10.0, mean=50.0):
    # invented demo slope: 10 m high 2H:1V, lognormal su, a 4x4x3 circle lattice
    mat = Material("clay", unit_weight=20.0, su_model="constant", su=mean)
    sec = simple_slope(height=10.0, material=mat)
    c = lattice_circles(sec, nx=4, ny=4, n_radii=3)
    surfaces = [Circle(float(x), float(y), float(r)) for x, y, r in zip(c.xc, c.yc, c.radius)]
    prop = RandomProperty("clay", "su", make_marginal("lognormal", mean=mean, cov=0.3), theta, theta)
    return RandomProblem(sec, "undrained", "bishop", [prop], surfaces, 0, n_slices=20, cell=1.0)


@pytest.fixture(scope="module")
def problem():
    return _problem()


@pytest.fixture(scope="module")
def reference(problem):
    return simulate(problem, N, seed=9, batch=N)


def _same(a, b):
    np.testing.assert_array_equal(a.fs, b.fs)
    np.testing.assert_array_equal(a.critical_index, b.critical_index)
    np.testing.assert_array_equal(a.fs_fixed, b.fs_fixed)
    assert (a.n_nonconverged, a.n_inadmissible, a.n_no_valid) == (b.n_nonconverged, b.n_inadmissible,
                                                                  b.n_no_valid)


@pytest.mark.parametrize("n_jobs,batch", [(1, 7), (2, 13), (2, 60)])
def test_jobs_and_batch_do_not_change_results(problem, reference, n_jobs, batch):
    _same(reference, simulate(problem, N, seed=9, n_jobs=n_jobs, batch=batch))


def test_block_boundaries_do_not_change_results(problem, reference):
    # n not a multiple of the 100-realisation store block: prefix of a longer run
    long = simulate(problem, 130, seed=9, batch=50)
    np.testing.assert_array_equal(long.fs[:N], reference.fs)


def test_resume_after_interruption_equals_uninterrupted(problem, tmp_path):
    full = simulate(problem, 130, seed=9, batch=40)
    store = tmp_path / "run"
    # interrupted inside the second store block (realisation 117 of 130)
    simulate(problem, 117, seed=9, batch=40, store=store)
    res = simulate(problem, 130, seed=9, batch=25, store=store, resume=True)
    _same(full, res)
    # resuming a finished run to the same n recomputes nothing and agrees again
    _same(full, simulate(problem, 130, seed=9, store=store, resume=True))


def test_resume_refuses_other_case_and_other_seed(problem, tmp_path):
    store = tmp_path / "run"
    simulate(problem, 20, seed=9, store=store)
    with pytest.raises(InputError, match="problem differs.*new store directory"):
        simulate(_problem(mean=60.0), 40, seed=9, store=store, resume=True)
    with pytest.raises(InputError, match="seed differs"):
        simulate(problem, 40, seed=10, store=store, resume=True)
    with pytest.raises(InputError, match="resume=True"):
        simulate(problem, 40, seed=9, store=store)


def test_dask_local_cluster_equals_local_run(problem, reference):
    distributed = pytest.importorskip("dask.distributed")
    # loopback only, threads in this process: nothing leaves the machine
    with distributed.LocalCluster(n_workers=1, threads_per_worker=2, processes=False,
                                  dashboard_address=None, host="127.0.0.1",
                                  protocol="tcp://") as cluster, \
            distributed.Client(cluster) as client:
        _same(reference, simulate(problem, N, seed=9, batch=20, scheduler=client))
        # by address, as a user would give it
        _same(reference, simulate(problem, N, seed=9, batch=20, scheduler=cluster.scheduler_address))


def test_scheduler_that_does_not_answer_fails_fast_and_loses_nothing(problem, reference, tmp_path):
    pytest.importorskip("dask.distributed")
    import socket

    # a port on loopback with nobody listening: bind, read the number, close
    s = socket.socket()
    s.bind(("127.0.0.1", 0))
    port = s.getsockname()[1]
    s.close()
    store = tmp_path / "run"
    simulate(problem, 30, seed=9, store=store)
    # how long the refusal takes is measured by scripts/bench_scheduler_refusal.py (no timed tests)
    with pytest.raises(InputError, match="answered within 2 s.*omit scheduler"):
        simulate(problem, N, seed=9, store=store, resume=True, scheduler=f"tcp://127.0.0.1:{port}",
                 scheduler_timeout=2.0)
    # the stored realisations are intact: resuming locally completes the run
    _same(reference, simulate(problem, N, seed=9, store=store, resume=True))

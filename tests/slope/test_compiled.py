"""The kernels compile once: warm-up inputs have the types of real calls.

A worker compiles the methods' kernels ahead of the command (``methods.compiled.warm_up``)
and the simulator loads Bishop's through ``simulate.fused.warm_up``; if a real call
passed arrays of another layout (read-only, broadcast, non-contiguous), numba would
compile a second specialisation -- seconds of CPU in every fresh process. These tests
count the compiled specialisations before and after real calls of every layout the
package makes.
"""
import numpy as np
import pytest

from slipfield.slope.bank import build_bank
from slipfield.slope.examples import two_zone_section
from slipfield.slope.methods import bishop, factor_of_safety, gle, prepare_bank
from slipfield.slope.methods.compiled import warm_up
from slipfield.slope.search import lattice_circles
from slipfield.slope.strength import base_strength


def _bank():
    sec = two_zone_section()
    bank = build_bank(sec, lattice_circles(sec, nx=4, ny=3, n_radii=2), n_slices=20)
    return sec, bank.subset(np.nonzero(bank.valid)[0][::2])  # a subset: views of the bank's arrays


def test_real_calls_reuse_the_warmed_up_kernels():
    from slipfield.slope.simulate import fused

    warm_up(["morgenstern-price", "spencer", "bishop"])
    fused.warm_up()
    kernels = (gle._gle_kernel, gle._forces_kernel, gle._rescue_kernel, bishop._single_equation_kernel)
    before = [len(k.signatures) for k in kernels]
    assert all(n >= 1 for n in before)
    sec, bank = _bank()
    c, tp = base_strength(bank, sec.materials)          # (m, n) arrays
    frozen = np.broadcast_to(tp, (3,) + tp.shape)       # read-only, broadcast over samples
    for cc, tt in ((c, tp), (c[None], frozen), (np.ascontiguousarray(c.T).T, tp)):
        for forces in (False, True):
            factor_of_safety(bank, cc, tt, method="morgenstern-price", interslice="half-sine",
                             return_forces=forces)
        factor_of_safety(prepare_bank(bank), cc, tt, method="bishop")
        m = bank.n_surfaces
        gle.bracketed_roots(prepare_bank(bank), np.broadcast_to(cc, tt.shape if tt.ndim == 3 else (1,) + tt.shape), tt,
                            np.ones((m, bank.n_slices + 1)), (np.zeros(1, int), np.zeros(1, int)), np.ones(1))
    assert [len(k.signatures) for k in kernels] == before




def _load_kernel(src):
    """Kernel ``k`` of module ``kmod`` loaded from the source file ``src`` (a fresh module object each time)."""
    import importlib.util

    spec = importlib.util.spec_from_file_location("kmod", src)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod.k


def _source_in(folder):
    folder.mkdir()
    src = folder / "kmod.py"
    src.write_text("from numba import njit\n\n\n@njit\ndef k(x):\n    return x + 1.0\n")
    return src


def test_two_installations_do_not_share_a_compile_lock(tmp_path, monkeypatch):
    # The lock was named after module and function only: a run of one installation waited for another
    # installation's compilation of the same kernel into a cache it never reads (numba keeps its cache
    # per source file; numba documentation, "Notes on caching").
    from slipfield.slope.methods.compiled import lock_path

    monkeypatch.delenv("NUMBA_CACHE_DIR", raising=False)
    src_a, src_b = _source_in(tmp_path / "tree_a"), _source_in(tmp_path / "tree_b")
    a, b = _load_kernel(src_a), _load_kernel(src_b)
    assert (a.py_func.__module__, a.py_func.__qualname__) == (b.py_func.__module__, b.py_func.__qualname__)
    assert lock_path(a) != lock_path(b)
    assert lock_path(_load_kernel(src_a)) == lock_path(a)  # the same source: the same cache, the same lock
    before = lock_path(a)
    monkeypatch.setenv("NUMBA_CACHE_DIR", str(tmp_path / "elsewhere"))
    assert lock_path(a) != before


def test_a_warm_up_skips_a_kernel_another_process_is_compiling(tmp_path, monkeypatch):
    # A warm-up step that reached a kernel another process was compiling waited for its lock, idle on
    # its core; within skipping_busy first_call gives up at once instead (the real call still waits).
    import fcntl

    from slipfield.slope.methods.compiled import CompilingElsewhere, first_call, lock_path, skipping_busy

    monkeypatch.setenv("NUMBA_CACHE_DIR", str(tmp_path / "cache"))
    k = _load_kernel(_source_in(tmp_path / "tree"))
    assert not k.signatures
    with open(lock_path(k), "a") as other:  # another open file: its lock conflicts as another process's
        fcntl.flock(other, fcntl.LOCK_EX)
        with skipping_busy():
            with pytest.raises(CompilingElsewhere):
                with first_call(k):
                    k(1.0)
        assert not k.signatures  # nothing was compiled
        fcntl.flock(other, fcntl.LOCK_UN)
    with skipping_busy():
        with first_call(k):  # free: compiled here
            assert k(1.0) == 2.0


_SAME_BITS_CHILD = r"""
import hashlib, numpy as np
from slipfield.slope.examples import two_zone_section
from slipfield.slope.bank import build_bank
from slipfield.slope.search import lattice_circles
from slipfield.slope.methods import prepare_bank, factor_of_safety
sec = two_zone_section()
terms = prepare_bank(build_bank(sec, lattice_circles(sec, nx=6, ny=5, n_radii=4), n_slices=20))
rng = np.random.default_rng(5)
shape = (40,) + terms.x_bound.shape[:1] + (20,)
c = rng.lognormal(np.log(8.0), 0.3, shape)
tp = np.tan(np.radians(rng.uniform(18.0, 34.0, shape)))
h = hashlib.sha256()
for m in ("morgenstern-price", "spencer", "bishop"):
    fs = factor_of_safety(terms, c, tp, m).fs
    assert np.isfinite(fs).sum() > 1000
    h.update(np.ascontiguousarray(fs).tobytes())
print(h.hexdigest())
"""


def test_a_first_run_and_a_later_run_give_the_same_bits(tmp_path):
    # The first process compiles every kernel (an empty numba cache, as after installing); the second
    # loads them from the cache. Stored and resumed results are compared with ==, so the compiled code
    # must not depend on which kernels a process compiled itself: with fastmath's reassoc/contract in
    # the general-limit-equilibrium kernels, LLVM's inlining of callees compiled in the same process
    # changed Morgenstern-Price's and Spencer's FS in the last bit (this test failed so).
    import os
    import subprocess
    import sys

    env = dict(os.environ, NUMBA_CACHE_DIR=str(tmp_path / "numba"))
    runs = [subprocess.run([sys.executable, "-c", _SAME_BITS_CHILD], env=env, capture_output=True, text=True,
                           check=True).stdout.split()[-1] for _ in range(2)]
    assert len(runs[0]) == 64 and runs[0] == runs[1]

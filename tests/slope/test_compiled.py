"""The kernels compile once: warm-up inputs have the types of real calls.

A worker compiles the methods' kernels ahead of the command (``methods.compiled.warm_up``)
and the simulator loads Bishop's through ``simulate.fused.warm_up``; if a real call
passed arrays of another layout (read-only, broadcast, non-contiguous), numba would
compile a second specialisation -- seconds of CPU in every fresh process. These tests
count the compiled specialisations before and after real calls of every layout the
package makes.
"""
import numpy as np

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


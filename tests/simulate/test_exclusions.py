"""Exclusions of surfaces do not bias pf (issue 17, "Exclusions").

In the levee demo (undrained) the lowest-FS surface of 42 % of the
realisations was excluded as inadmissible (m_alpha <= 0.2): circles centred
on the axis of the symmetric levee, whose loads have no moment about their
centre, so that Bishop's F is a ratio over a round-off driving moment
(values about 1 as often as 1e17). Those circles are now rejected once when
the bank is built. The check: pf and every realisation's FS are the same
whether such circles are in the bank or removed from it up front -- they
are found here from the section itself (the levee is symmetric about x = 0,
so a circle centred on x = 0 has no driving moment), not from the bank's
rejection.
"""
from pathlib import Path

import numpy as np

from slipfield.slope.case.analyses import deterministic, random_problem
from slipfield.slope.case.build import load_case
from slipfield.slope.simulate import RandomProblem, simulate

LEVEE = Path(__file__).resolve().parents[2] / "cases" / "levee_soft_clay.toml"


def test_pf_unchanged_with_circles_without_driving_moment_removed_up_front():
    case = load_case(str(LEVEE))
    g = case.section.ground
    # the demo levee is symmetric about x = 0 (what makes the axis circles balance)
    np.testing.assert_allclose(g[:, 0], -g[::-1, 0])
    np.testing.assert_allclose(g[:, 1], g[::-1, 1])
    case.analysis["hypotheses"] = ["undrained"]
    p = random_problem(case, deterministic(case), "undrained")
    on_axis = np.array([abs(s.xc) < 1e-9 for s in p.surfaces])
    assert on_axis.sum() >= 10
    keep = np.flatnonzero(~on_axis)
    fixed = int(np.flatnonzero(keep == p.fixed_index)[0])
    q = RandomProblem(p.section, p.hypothesis, p.method, p.properties, [p.surfaces[i] for i in keep], fixed,
                      cross_correlation=p.cross_correlation, n_slices=p.n_slices, cell=p.cell,
                      field_method=p.field_method, averaging=p.averaging, interslice=p.interslice)
    a = simulate(p, 60, seed=11)
    b = simulate(q, 60, seed=11)
    np.testing.assert_array_equal(a.fs, b.fs)
    assert a.pf == b.pf
    # and the excluded-lowest count no longer holds those circles
    assert a.n_inadmissible == b.n_inadmissible

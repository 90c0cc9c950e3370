import math

import numpy as np

from slipfield.slope.bank import build_bank
from slipfield.slope.examples import simple_slope
from slipfield.slope.search import lattice_circles
from slipfield.slope.simulate import RandomProblem, RandomProperty, simulate
from slipfield.slope.strength import Material
from slipfield.slope.surfaces import Circle
from slipfield.fields.marginals import make_marginal


def _problem(theta):
    mat = Material("clay", unit_weight=20.0, su_model="constant", su=50.0)
    sec = simple_slope(height=10.0, material=mat)
    circles = lattice_circles(sec, nx=4, ny=4, n_radii=3)
    surfaces = [Circle(float(x), float(y), float(r)) for x, y, r in zip(circles.xc, circles.yc, circles.radius)]
    prop = RandomProperty("clay", "su", make_marginal("lognormal", mean=50.0, cov=0.3), theta, theta)
    return RandomProblem(sec, "undrained", "bishop", [prop], surfaces, 0, n_slices=20, cell=1.0)


def test_block_size_and_jobs_do_not_change_results():
    # DEVELOPERS.md seeding contract: realisation k depends only on (seed, k)
    p = _problem(10.0)
    a = simulate(p, 24, seed=3, batch=24)
    b = simulate(p, 24, seed=3, batch=5, n_jobs=2)
    np.testing.assert_array_equal(a.fs, b.fs)


def test_single_variable_scales_fs():
    # theta -> inf, constant su, phi = 0: every base carries the same su_k, and
    # FS of a phi = 0 slope is linear in su (closed form of Bishop with
    # tan phi = 0), so FS_crit,k = FS_det(su = 1) * su_k exactly; su_k is the
    # lognormal (mean 50, COV 0.3) of realisation_rng(seed, k, 0, 0)
    from slipfield.fields.marginals import make_marginal
    from slipfield.fields.seeding import realisation_rng
    from slipfield.slope.methods import factor_of_safety
    p = _problem(math.inf)
    r = simulate(p, 10, seed=1)
    unit = factor_of_safety(p.bank, np.ones(p.bank.zone.shape), 0.0, method="bishop")
    # the simulator tolerates the flags the search tolerates (negative-normal 1, thrust-outside 4)
    ok = np.asarray(unit.converged & ((unit.flags & ~5) == 0))[0] & p.bank.valid
    fs1 = np.where(ok, unit.fs[0], np.inf).min()
    z = np.array([realisation_rng(1, k, 0, 0).standard_normal() for k in range(10)])
    su = make_marginal("lognormal", mean=50.0, cov=0.3).from_standard_normal(z)
    np.testing.assert_allclose(r.fs, fs1 * su, rtol=1e-5)


def test_resume_equals_uninterrupted_and_refuses_other_problem(tmp_path):
    # resume contract ("up to n"): a run stopped after 10 realisations and
    # resumed to 20 equals one uninterrupted run of 20
    import pytest
    from slipfield.slope.errors import InputError
    p = _problem(10.0)
    full = simulate(p, 20, seed=2, batch=5)
    simulate(p, 10, seed=2, batch=5, store=tmp_path / "s")
    res = simulate(p, 20, seed=2, batch=5, store=tmp_path / "s", resume=True)
    np.testing.assert_array_equal(full.fs, res.fs)
    with pytest.raises(InputError, match="problem differs"):
        simulate(_problem(20.0), 20, seed=2, batch=5, store=tmp_path / "s", resume=True)


def _plain_types(v, path="result"):
    """Paths in a nested dict/list whose values are not plain Python JSON types."""
    if isinstance(v, dict):
        return [p for k, x in v.items() for p in _plain_types(x, f"{path}.{k}")]
    if isinstance(v, list):
        return [p for i, x in enumerate(v) for p in _plain_types(x, f"{path}[{i}]")]
    return [] if type(v) in (int, float, str, bool, type(None)) else [f"{path}: {type(v).__name__}"]


def test_to_dict_is_plain_json(tmp_path):
    # issue noticed last session: the pf interval held numpy floats (printed as np.float64(...))
    import copy
    import json

    from support.problems import gf_problem

    p, _ = gf_problem(5.0, 0.3, nx=3, ny=3, n_radii=2)
    r = simulate(p, 12, 3)
    d = r.to_dict()
    assert _plain_types(d) == []
    assert json.loads(json.dumps(d, allow_nan=False))["pf_interval_95_wilson"] == list(r.pf_interval)
    none_valid = copy.copy(r)                         # no valid realisation: no estimate, and no NaN in JSON
    none_valid.fs = np.full_like(r.fs, np.nan)
    none_valid.fixed_ok = np.zeros_like(r.fixed_ok)
    d = none_valid.to_dict()
    assert d["pf"] is None and d["pf_interval_95_wilson"] == [None, None] and d["pf_fixed_surface"] is None
    json.dumps(d, allow_nan=False)

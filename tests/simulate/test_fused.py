"""The compiled base-strength pass (slope.simulate.fused) against the array path it replaces.

The array path maps each property onto every base with ``scipy.sparse``
and applies :func:`slope.strength.base_strength` (the strength law, checked
against published cases in tests/slope); the fused pass must give the same
bits, because stored runs and baselines compare results with ``==``.
"""
import math

import numpy as np
import pytest

import slipfield.slope.simulate.engine as engine
from slipfield.fields.marginals import make_marginal
from slipfield.slope.errors import InputError
from slipfield.slope.examples import two_zone_section
from slipfield.slope.search import lattice_circles
from slipfield.slope.simulate import RandomProblem, RandomProperty
from slipfield.slope.surfaces import Circle


def _surfaces(sec):
    circ = lattice_circles(sec, nx=4, ny=3, n_radii=3)
    return [Circle(float(x), float(y), float(r)) for x, y, r in zip(circ.xc, circ.yc, circ.radius)]


def _both_paths(problem, seed, indices, monkeypatch):
    new = engine.batch_fs(problem, seed, indices)
    with monkeypatch.context() as m:
        m.setattr(engine, "strength_map", lambda *a: None)
        old = engine.batch_fs(problem, seed, indices)
    return new, old


@pytest.mark.parametrize("hypothesis", ["drained", "undrained"])
def test_fused_pass_is_bit_identical_to_the_array_path(hypothesis, monkeypatch):
    sec = two_zone_section()  # clay with su (depth law), fill without: undrained mixes both laws
    ln = lambda mean, cov: make_marginal("lognormal", mean=mean, cov=cov)  # noqa: E731
    props = [RandomProperty("fill", "phi", ln(sec.materials["fill"].phi, 0.1), 15.0, 1.5),
             RandomProperty("clay", "c", ln(sec.materials["clay"].c, 0.3), 20.0, 2.0),
             RandomProperty("clay", "phi", ln(sec.materials["clay"].phi, 0.1), 20.0, 2.0),
             # a single variable (θ = inf) and a multiplier acting beside the fields
             RandomProperty("fill", "c", ln(1.0, 0.2), math.inf, math.inf, multiplier=True)]
    if hypothesis == "undrained":
        props.append(RandomProperty("clay", "su", ln(1.0, 0.3), 20.0, 2.0, multiplier=True))
    p = RandomProblem(sec, hypothesis, "bishop", props, _surfaces(sec), 0,
                      cross_correlation=[(1, 2, -0.4)], n_slices=12, cell=1.0)
    assert engine.strength_map(p, engine.stencil(p), lambda prop: engine._det_value(p, prop)) is not None
    new, old = _both_paths(p, 5, range(3, 23), monkeypatch)
    for a, b in zip(new, old):
        np.testing.assert_array_equal(a, b)
    # the comparison is not vacuous: realisations differ, and the fields change FS
    assert np.isfinite(new[0]).any() and np.unique(new[0][:, engine.stencil(p).rows[0]]).size > 1


def test_negative_strengths_are_still_refused(monkeypatch):
    # a normal marginal can go below zero: the strength law refuses it with the
    # same message as before (the compiled pass hands such batches back)
    sec = two_zone_section()
    prop = RandomProperty("clay", "c", make_marginal("normal", mean=1.0, cov=2.0), 20.0, 2.0)
    p = RandomProblem(sec, "drained", "bishop", [prop], _surfaces(sec), 0, n_slices=12, cell=1.0)
    with pytest.raises(InputError, match="strengths must be >= 0"):
        engine.batch_fs(p, 1, range(20))


def test_fixed_surface_problem_keeps_fs_fixed_bit_for_bit():
    # the quick σ√γ estimate evaluates only the fixed surface: its FS per realisation must be the
    # one the whole bank gives there (noise depends on seed, realisation, property, zone only)
    from slipfield.slope.simulate import simulate
    from slipfield.slope.simulate.studies import fixed_surface_problem, reduced_variance_problem
    sec = two_zone_section()
    props = [RandomProperty("clay", "c", make_marginal("lognormal", mean=12.0, cov=0.3), 20.0, 2.0),
             RandomProperty("fill", "phi", make_marginal("lognormal", mean=32.0, cov=0.1), 15.0, 1.5)]
    surfaces = _surfaces(sec)
    valid = RandomProblem(sec, "drained", "bishop", props, surfaces, 0, n_slices=12, cell=1.0).bank.valid
    p = RandomProblem(sec, "drained", "bishop", props, surfaces, int(np.flatnonzero(valid)[2]),
                      n_slices=12, cell=1.0)
    red, _ = reduced_variance_problem(p)
    red1, _ = reduced_variance_problem(p, fixed_only=True)
    for whole, alone in ((p, fixed_surface_problem(p)), (red, red1)):
        a, b = simulate(whole, 12, seed=4), simulate(alone, 12, seed=4)
        assert len(alone.surfaces) == 1
        np.testing.assert_array_equal(a.fs_fixed, b.fs_fixed)
        np.testing.assert_array_equal(a.fixed_ok, b.fixed_ok)
        assert np.unique(a.fs_fixed).size > 1

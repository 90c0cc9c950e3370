"""One way to build cross-correlated property fields (issue 12).

The simulator and the library's ``fields.correlated_properties`` draw each
property's independent field from the same stream (``field_stream``) and mix
them by the same intrinsic coregionalisation (``coregionalise``), so on the
same grid, seed and statistics they give the same realisations. Checked
against each other to round-off, and the correlation at a point against the
target by the Fisher-z standard error of the sample correlation.
"""
import math

import numpy as np
import pytest

from slipfield.fields import get_model
from slipfield.fields.marginals import make_marginal
from slipfield.fields.properties import PropertyField, correlated_properties
from slipfield.fields.errors import InputError
from slipfield.slope.examples import simple_slope
from slipfield.slope.simulate import RandomProblem, RandomProperty, realise_fields
from slipfield.slope.strength import Material
from slipfield.slope.surfaces import Circle

RHO = -0.5


def _problem(theta_phi=8.0):
    mat = Material("soil", unit_weight=19.0, c=10.0, phi=30.0)
    sec = simple_slope(height=8.0, cot_beta=2.0, material=mat, crest=10.0, toe=10.0)
    c = RandomProperty("soil", "c", make_marginal("lognormal", mean=10.0, cov=0.3), 8.0, 2.0)
    phi = RandomProperty("soil", "phi", make_marginal("lognormal", mean=30.0, cov=0.1), theta_phi, 2.0)
    return RandomProblem(sec, "drained", "bishop", [c, phi], [Circle(14.0, 14.0, 12.0)], 0,
                         cross_correlation=[(0, 1, RHO)], cell=1.0, field_method="fft")


def test_simulator_and_library_give_the_same_correlated_fields():
    problem = _problem()
    model = get_model("exponential", theta_h=8.0, theta_v=2.0)
    specs = [PropertyField("c", make_marginal("lognormal", mean=10.0, cov=0.3), model),
             PropertyField("phi", make_marginal("lognormal", mean=30.0, cov=0.1), model)]
    library = correlated_properties(specs, [[1.0, RHO], [RHO, 1.0]], method="fft", grid=problem.grid)
    for k in (0, 5):
        grid, sim = realise_fields(problem, 21, k)
        lib = library.sample(21, [k])
        inside = np.isfinite(sim["soil.c"])
        assert inside.sum() > 100
        np.testing.assert_allclose(sim["soil.c"][inside], lib["c"][0][inside], rtol=1e-12)
        np.testing.assert_allclose(sim["soil.phi"][inside], lib["phi"][0][inside], rtol=1e-12)


def test_point_correlation_is_the_target():
    library = correlated_properties(
        [PropertyField("c", make_marginal("lognormal", mean=10.0, cov=0.3), get_model("exponential", theta_h=4.0)),
         PropertyField("phi", make_marginal("lognormal", mean=30.0, cov=0.1), get_model("exponential", theta_h=4.0))],
        [[1.0, RHO], [RHO, 1.0]], method="cholesky", points=[[0.0, 0.0]])
    n = 4000
    x = library.sample(3, range(n))
    r = np.corrcoef(x["c"][:, 0], x["phi"][:, 0])[0, 1]
    # Fisher z of a sample correlation has standard error 1/sqrt(n - 3)
    assert abs(math.atanh(r) - math.atanh(RHO)) < 4 / math.sqrt(n - 3)


def test_correlated_properties_with_different_models_are_refused_by_both():
    # mixing fields of two models would give each property a correlation structure that is neither
    with pytest.raises(InputError, match="different correlation models"):
        _problem(theta_phi=20.0)
    specs = [PropertyField("c", make_marginal("lognormal", mean=10.0, cov=0.3), get_model("exponential", theta_h=8.0)),
             PropertyField("phi", make_marginal("lognormal", mean=30.0, cov=0.1), get_model("exponential", theta_h=20.0))]
    with pytest.raises(InputError, match="different correlation models"):
        correlated_properties(specs, [[1.0, RHO], [RHO, 1.0]], method="fft", points=None,
                              grid=_problem().grid)

"""Bad input raises slope.errors.InputError naming the input and the fix (issue 4)."""
import numpy as np
import pytest

from slipfield.slope.errors import InputError
from slipfield.slope.reliability import (LimitState, form, hong, monte_carlo, random_vector,
                               rosenblueth, subset_simulation, tornado)

OK = [dict(name="c", dist="normal", mean=10.0, cov=0.2),
      dict(name="phi", dist="normal", mean=30.0, cov=0.1),
      dict(name="g", dist="normal", mean=19.0, cov=0.05)]


@pytest.mark.parametrize("spec,msg", [
    (dict(name="c", dist="gumbel", mean=10.0, cov=0.2), r"variable 'c'.*unknown distribution"),
    (dict(name="c", dist="lognormal", mean=10.0, cov=0.0), r"variable 'c'.*cov must be > 0"),
    (dict(name="c", dist="uniform", lower=5.0, upper=1.0), r"variable 'c'.*inverted"),
    (dict(name="c", dist="beta", mean=1.0, cov=0.1, lower=2.0, upper=5.0), "outside the bounds"),
    (dict(name="c", dist="normal", mean=10.0), "spread"),
    (dict(name="c", dist="normal", mean=10.0, cov=0.1, sigma=2), r"variable 'c'"),
    (dict(dist="normal", mean=10.0, cov=0.1), "lacks 'name'"),
])
def test_bad_variable(spec, msg):
    with pytest.raises(InputError, match=msg):
        random_vector([spec])


def test_non_positive_definite_names_the_pair():
    R = np.array([[1.0, 0.9, 0.9], [0.9, 1.0, -0.9], [0.9, -0.9, 1.0]])
    with pytest.raises(InputError, match=r"not positive definite.*pair \('\w+', '\w+'\)") as e:
        random_vector(OK, R)
    assert isinstance(e.value, InputError)
    with pytest.raises(InputError, match="unknown variable"):
        random_vector(OK, {("c", "cohesion"): 0.3})
    with pytest.raises(InputError, match="deterministic and cannot be correlated"):
        random_vector([OK[0], dict(name="d", dist="deterministic", mean=1.0)],
                      {("c", "d"): 0.3})


def test_method_arguments():
    v = random_vector(OK)
    g = lambda X: X[:, 0] / 10  # noqa: E731
    with pytest.raises(InputError, match=r"2n\+1"):
        rosenblueth(g, v, max_runs=4)
    with pytest.raises(InputError, match="searched"):
        monte_carlo(g, v, 100, seed=1, surface="both")
    with pytest.raises(InputError, match="surface must be"):
        monte_carlo(LimitState(g, g), v, 100, seed=1, surface="all")
    with pytest.raises(InputError, match="positive integer"):
        monte_carlo(g, v, 0, seed=1)
    with pytest.raises(InputError, match="seed"):
        monte_carlo(g, v, 10, seed=-1)
    with pytest.raises(InputError, match="n_jobs"):
        monte_carlo(g, v, 10, seed=1, n_jobs=0)
    with pytest.raises(InputError, match="vectorised"):
        monte_carlo(lambda X: 1.0, v, 10, seed=1)
    with pytest.raises(InputError, match="p0"):
        subset_simulation(g, v, seed=1, p0=0.7)
    with pytest.raises(InputError, match="integers"):
        subset_simulation(g, v, seed=1, n_per_level=1005)
    with pytest.raises(InputError, match="k"):
        tornado(g, v, k=0)
    with pytest.raises(InputError, match="method"):
        form(g, v, method="newton")
    with pytest.raises(InputError, match="RandomVector"):
        hong(g, OK)

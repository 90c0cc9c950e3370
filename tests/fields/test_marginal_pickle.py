"""A pickled marginal (how a simulation problem reaches the worker processes) computes what the
original does, and unpickling it needs no ``scipy.stats``: that import was a second of start-up
in every worker, whose lognormal and normal marginals never call it.

Reference values: the scipy.stats distributions themselves (the marginals' own frozen
distributions, before pickling), compared bit for bit.
"""
from __future__ import annotations

import math
import os
import pickle
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from slipfield.fields.marginals import make_marginal

KINDS = [("normal", dict(mean=5.0, cov=0.2)), ("lognormal", dict(mean=25.0, cov=0.3)),
         ("truncated-normal", dict(mean=1.0, cov=0.5, lower=0.0)),
         ("beta", dict(mean=30.0, cov=0.1, lower=20.0, upper=40.0)), ("uniform", dict(lower=2.0, upper=7.0)),
         ("triangular", dict(lower=1.0, mode=2.0, upper=5.0))]


@pytest.mark.parametrize("name,kw", KINDS, ids=[k for k, _ in KINDS])
def test_unpickled_marginal_gives_the_same_values(name, kw):
    m = make_marginal(name, **kw)
    back = pickle.loads(pickle.dumps(m, protocol=pickle.HIGHEST_PROTOCOL))
    assert back == m
    z = np.linspace(-7.0, 7.0, 57)
    x = m.from_standard_normal(z)
    assert np.array_equal(back.from_standard_normal(z), x)
    assert np.array_equal(back.to_standard_normal(x), m.to_standard_normal(x))
    # the rebuilt distribution is scipy's own, with the marginal's parameters
    ref = _scipy_distribution(m)
    assert np.array_equal(back._dist.cdf(x), ref.cdf(x))
    assert back._dist.stats(moments="mv") == ref.stats(moments="mv")


def _scipy_distribution(m):
    """Reference: the scipy.stats frozen distribution of a marginal, built here from its parameters."""
    from scipy import stats

    p = m.params
    return {"normal": lambda: stats.norm(p["mu"], p["sigma"]),
            "lognormal": lambda: stats.lognorm(p["sigma_ln"], scale=math.exp(p["mu_ln"])),
            "uniform": lambda: stats.uniform(p["lower"], p["upper"] - p["lower"]),
            "triangular": lambda: stats.triang((p["mode"] - p["lower"]) / (p["upper"] - p["lower"]),
                                               loc=p["lower"], scale=p["upper"] - p["lower"]),
            "beta": lambda: stats.beta(p["alpha"], p["beta"], loc=p["lower"], scale=p["upper"] - p["lower"]),
            "truncated-normal": lambda: stats.truncnorm((p["lower"] - p["parent_mean"]) / p["parent_std"],
                                                        (p["upper"] - p["parent_mean"]) / p["parent_std"],
                                                        loc=p["parent_mean"], scale=p["parent_std"]),
            }[m.name]()


def test_unpickling_a_lognormal_marginal_does_not_import_scipy_stats(tmp_path):
    path = tmp_path / "m.pickle"
    m = make_marginal("lognormal", mean=25.0, cov=0.3)
    path.write_bytes(pickle.dumps(m, protocol=pickle.HIGHEST_PROTOCOL))
    code = ("import pickle, sys; import numpy as np; "
            f"m = pickle.loads(open({str(path)!r}, 'rb').read()); "
            "x = m.from_standard_normal(np.array([0.0, 1.0])); "
            "print('scipy.stats' in sys.modules, repr(float(x[1])))")
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join(p for p in sys.path if p)  # this checkout's packages
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env,
                         cwd=Path(__file__).resolve().parent, check=True).stdout.split()
    assert out == ["False", repr(float(m.from_standard_normal(np.array([1.0]))[0]))]

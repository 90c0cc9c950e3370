"""Reliability analysis with soil properties as single random variables.

Methods take a vectorised limit state ``g(X (n, n_vars)) -> FS (n,)`` (see
:mod:`.limit_state`) and a :class:`RandomVector`; pf = P(FS < 1).
"""
from .fosm import FOSMResult, fosm
from .form import FORMResult, form
from .importance import ImportanceResult, importance_sampling
from .infinite_slope import InfiniteSlope
from .limit_state import Evaluation, LimitState, as_limit_state
from .pem import PointEstimate, hong, hong_points, rosenblueth
from .sampling import (SamplingResult, SurfaceResult, latin_hypercube, monte_carlo,
                       sample_variables)
from .sensitivity import TornadoResult, first_order_indices, rank_correlations, tornado
from .stats import (PfEstimate, beta_from_pf, beta_lognormal, beta_normal,
                    binomial_interval, convergence_history, estimate_pf, fs_distribution,
                    pf_lognormal, pf_normal)
from .subset import SubsetResult, subset_simulation
from .variables import RandomVariable, RandomVector, random_variable, random_vector

__all__ = [
    "Evaluation", "LimitState", "as_limit_state",
    "RandomVariable", "RandomVector", "random_variable", "random_vector",
    "monte_carlo", "latin_hypercube", "sample_variables", "SamplingResult", "SurfaceResult",
    "rosenblueth", "hong", "hong_points", "PointEstimate",
    "fosm", "FOSMResult", "form", "FORMResult",
    "importance_sampling", "ImportanceResult", "subset_simulation", "SubsetResult",
    "tornado", "TornadoResult", "rank_correlations", "first_order_indices",
    "binomial_interval", "beta_normal", "beta_lognormal", "beta_from_pf", "pf_normal",
    "pf_lognormal", "estimate_pf", "PfEstimate", "convergence_history", "fs_distribution",
    "InfiniteSlope",
]

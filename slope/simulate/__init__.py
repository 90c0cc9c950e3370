"""Random limit-equilibrium simulator: random fields → slice bases → FS.

Public API: RandomProperty, RandomProblem, simulate, realise_fields,
averaging_report, theta_sweep, SimulationResult.
"""
from .problem import RandomProblem, RandomProperty
from .run import SimulationResult, realise_fields, simulate
from .studies import averaging_report, theta_sweep

__all__ = ["RandomProperty", "RandomProblem", "simulate", "SimulationResult", "realise_fields",
           "averaging_report", "theta_sweep"]

"""Random limit-equilibrium simulator: random fields → slice bases → FS.

Public API: RandomProperty, RandomProblem, simulate, realise_fields,
averaging_report, theta_sweep, SimulationResult.
"""
from .problem import RandomProblem, RandomProperty
from .refinement import RefineSettings
from .driver import (SchedulerLost, SimulationResult, connect_scheduler, load_store, realise_fields, simulate,
                     store_header)
from .store import BlockStore, StoreRepairWarning
from .studies import averaging_report, theta_sweep

__all__ = ["RandomProperty", "RandomProblem", "simulate", "SimulationResult", "realise_fields",
           "RefineSettings", "load_store", "store_header", "BlockStore", "StoreRepairWarning",
           "connect_scheduler", "SchedulerLost",
           "averaging_report", "theta_sweep"]

"""Random limit-equilibrium simulator: random fields → slice bases → FS.

Public API: RandomProperty, RandomProblem, simulate, realise_fields,
averaging_report, theta_sweep, SimulationResult.
"""
from .problem import RandomProblem, RandomProperty
from .refinement import RefineSettings
from .driver import (SimulationResult, load_store, realise_fields, simulate,
                     store_header)
from .executors import SchedulerLost, connect_scheduler, run_tasks
from .store import BlockStore, StoreRepairWarning
from .studies import averaging_report, theta_sweep

__all__ = ["RandomProperty", "RandomProblem", "simulate", "SimulationResult", "realise_fields",
           "RefineSettings", "load_store", "store_header", "BlockStore", "StoreRepairWarning",
           "connect_scheduler", "SchedulerLost", "run_tasks",
           "averaging_report", "theta_sweep"]

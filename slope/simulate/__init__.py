"""Random limit-equilibrium simulator: random fields → slice bases → FS.

Public API: RandomProperty, RandomProblem, simulate, realise_fields,
averaging_report, theta_sweep, SimulationResult. Names are imported on first
use (the simulator's compiled kernels take seconds to load; a command that
only parses its options or reads a case must not pay for them).
"""
from slipfield.fields._lazy import lazy_exports

_WHERE = {
    "RandomProblem": "problem", "RandomProperty": "problem",
    "RefineSettings": "refinement",
    "SimulationResult": "driver", "load_store": "driver", "realise_fields": "driver", "simulate": "driver",
    "store_header": "driver",
    "SchedulerLost": "executors", "connect_scheduler": "executors", "run_tasks": "executors",
    "BlockStore": "store", "StoreRepairWarning": "store",
    "averaging_report": "studies", "theta_sweep": "studies",
}

__all__ = ["RandomProperty", "RandomProblem", "simulate", "SimulationResult", "realise_fields",
           "RefineSettings", "load_store", "store_header", "BlockStore", "StoreRepairWarning",
           "connect_scheduler", "SchedulerLost", "run_tasks",
           "averaging_report", "theta_sweep"]


__getattr__, __dir__ = lazy_exports(globals(), _WHERE)

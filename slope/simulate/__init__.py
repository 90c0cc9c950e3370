"""Random limit-equilibrium simulator: random fields → slice bases → FS.

Public API: RandomProperty, RandomProblem, simulate, realise_fields,
averaging_report, theta_sweep, SimulationResult. Names are imported on first
use (the simulator's compiled kernels take seconds to load; a command that
only parses its options or reads a case must not pay for them).
"""
import importlib

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


def __getattr__(name):
    if name in _WHERE:
        value = getattr(importlib.import_module(f".{_WHERE[name]}", __name__), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | set(__all__))

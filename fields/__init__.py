"""slipfield random fields: anisotropic Gaussian fields parametrised by the
scale of fluctuation θ, their generators and local averaging.

Imports nothing from ``slope``. Names are imported on first use (PEP 562
``__getattr__``): importing the package costs no scipy import, which would
otherwise be most of a short ``slipfield fields sample`` run.
"""
from ._compile_cache import choose_cache_dir as _choose_cache_dir
from ._lazy import lazy_exports

# before any module of slipfield imports numba: a read-only install must still import
_choose_cache_dir(__path__[0])  # slope/ is installed beside fields/, with the same permissions

from .errors import InputError
from .grid import RegularGrid
from .seeding import realisation_rng, realisation_rngs

_LAZY = {
    "CorrelationModel": ".models", "get_model": ".models", "MODEL_NAMES": ".models",
    "FieldGenerator": ".generators", "make_generator": ".generators", "generator_names": ".generators",
    "variance_function": ".averaging", "variance_function_2d": ".averaging",
    "grid_cell_covariance": ".averaging", "cell_average_covariance": ".averaging",
    "PropertyField": ".properties", "DepthTrend": ".properties", "correlated_properties": ".properties",
    "ConditionalGenerator": ".conditioning", "to_gaussian": ".conditioning", "from_gaussian": ".conditioning",
}

__all__ = [
    "InputError",
    "CorrelationModel",
    "get_model",
    "MODEL_NAMES",
    "RegularGrid",
    "FieldGenerator",
    "make_generator",
    "generator_names",
    "variance_function",
    "variance_function_2d",
    "grid_cell_covariance",
    "cell_average_covariance",
    "realisation_rng",
    "realisation_rngs",
    "PropertyField",
    "DepthTrend",
    "correlated_properties",
    "ConditionalGenerator",
    "to_gaussian",
    "from_gaussian",
]


__getattr__, __dir__ = lazy_exports(globals(), _LAZY)

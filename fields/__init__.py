"""slipfield random fields: anisotropic Gaussian fields parametrised by the
scale of fluctuation θ, their generators and local averaging.

Imports nothing from ``slope``.
"""
from .averaging import (cell_average_covariance, grid_cell_covariance, variance_function,
                        variance_function_2d)
from .conditioning import ConditionalGenerator, from_gaussian, to_gaussian
from .errors import InputError
from .generators import FieldGenerator, generator_names, make_generator
from .grid import RegularGrid
from .models import MODEL_NAMES, CorrelationModel, get_model
from .properties import DepthTrend, PropertyField, correlated_properties
from .seeding import realisation_rng, realisation_rngs

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

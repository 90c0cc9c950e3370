"""Random-field generators behind one interface (see :mod:`.base`).

The method modules are imported on first use (``make_generator`` imports
them itself): scipy.linalg and gstools are not loaded for an FFT run.
"""
import importlib

from .base import (FieldGenerator, generator_names, generator_options, make_generator, noise_generator_names,
                   register)

_LAZY = {"CholeskyGenerator": ".cholesky", "CirculantGenerator": ".circulant", "KLGenerator": ".kl",
         "SpectralGenerator": ".spectral", "gstools_seed": ".spectral"}

__all__ = ["FieldGenerator", "make_generator", "register", "generator_names", "generator_options",
           "noise_generator_names",
           "CholeskyGenerator", "KLGenerator", "CirculantGenerator", "SpectralGenerator",
           "gstools_seed"]


def __getattr__(name):
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(importlib.import_module(module, __name__), name)
    globals()[name] = value
    return value


def __dir__():
    return sorted(set(globals()) | set(__all__))

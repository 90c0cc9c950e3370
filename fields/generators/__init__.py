"""Random-field generators behind one interface (see :mod:`.base`).

The method modules are imported on first use (``make_generator`` imports
them itself): scipy.linalg and gstools are not loaded for an FFT run.
"""
from .._lazy import lazy_exports

from .base import (FieldGenerator, generator_names, generator_options, make_generator, noise_generator_names,
                   register)

_LAZY = {"CholeskyGenerator": ".cholesky", "CirculantGenerator": ".circulant", "KLGenerator": ".kl",
         "SpectralGenerator": ".spectral", "gstools_seed": ".spectral"}

__all__ = ["FieldGenerator", "make_generator", "register", "generator_names", "generator_options",
           "noise_generator_names",
           "CholeskyGenerator", "KLGenerator", "CirculantGenerator", "SpectralGenerator",
           "gstools_seed"]


__getattr__, __dir__ = lazy_exports(globals(), _LAZY)

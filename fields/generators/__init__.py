"""Random-field generators behind one interface (see :mod:`.base`)."""
from .base import FieldGenerator, generator_names, generator_options, make_generator, noise_generator_names, register
from .cholesky import CholeskyGenerator
from .circulant import CirculantGenerator
from .kl import KLGenerator
from .spectral import SpectralGenerator, gstools_seed

__all__ = ["FieldGenerator", "make_generator", "register", "generator_names", "generator_options",
           "noise_generator_names",
           "CholeskyGenerator", "KLGenerator", "CirculantGenerator", "SpectralGenerator",
           "gstools_seed"]

"""Random-field generators behind one interface (see :mod:`.base`)."""
from .base import FieldGenerator, generator_names, generator_options, make_generator, register
from .cholesky import CholeskyGenerator
from .circulant import CirculantGenerator
from .kl import KLGenerator
from .spectral import SpectralGenerator, gstools_seed

__all__ = ["FieldGenerator", "make_generator", "register", "generator_names", "generator_options",
           "CholeskyGenerator", "KLGenerator", "CirculantGenerator", "SpectralGenerator",
           "gstools_seed"]

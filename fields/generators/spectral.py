"""Spectral randomisation method through GSTools (approximate, any points).

GSTools' ``SRF`` with its ``RandMeth`` generator sums ``mode_no`` random
Fourier modes drawn from the model's spectral density; the field is
Gaussian only as the number of modes grows, but its covariance is exact in
expectation.  It suits large or unstructured point sets.

Seeding limitation: GSTools draws its modes from its own seed (NumPy
``RandomState``, 32-bit).  Realisation ``k`` uses the GSTools seed
``SeedSequence(seed, spawn_key=(k, *stream)).generate_state(1)[0]``, so it
is reproducible and independent of batching, but (i) only 2**32 distinct
seeds exist and (ii) GSTools internally derives sub-seeds from only 65,535
values, so among many thousands of realisations two may coincide; and the
noise is not shared with the other generators (no common random numbers
across methods).
"""
from __future__ import annotations

import numpy as np

from ..errors import InputError
from .base import FieldGenerator, register

__all__ = ["SpectralGenerator", "gstools_seed"]


def gstools_seed(seed, k, *stream) -> int:
    """GSTools seed of realisation ``k`` (see module notes)."""
    ss = np.random.SeedSequence(int(seed), spawn_key=(int(k), *map(int, stream)))
    return int(ss.generate_state(1, dtype=np.uint32)[0])


@register("spectral")
class SpectralGenerator(FieldGenerator):
    """Randomisation-method field via ``gstools.SRF``.

    Options
    -------
    mode_no : int
        Number of Fourier modes (GSTools default 1000).
    sampling : str
        GSTools' spectrum sampling (``'auto'``, ``'inversion'``, ``'mcmc'``).
    """

    method = "spectral"
    block = 1

    def __init__(self, model, *, grid=None, points=None, mode_no=1000, sampling="auto"):
        super().__init__(model, grid=grid, points=points)
        import gstools as gs

        mode_no = int(mode_no)
        if mode_no < 1:
            raise InputError(f"mode_no must be >= 1, got {mode_no}")
        self._srf = gs.SRF(model.to_gstools(), generator="RandMeth", mode_no=mode_no,
                           sampling=sampling)
        self.info.update(mode_no=mode_no, gstools_version=gs.__version__)

    def _sample_block(self, rngs, seed, ks, stream):
        out = np.empty((len(ks), self.n_points))
        g = self.grid
        for i, k in enumerate(ks):
            gseed = gstools_seed(seed, k, *stream)
            if g is not None:
                f = self._srf.structured((g.x, g.y), seed=gseed, store=False)
            else:
                f = self._srf((self.points[:, 0], self.points[:, 1]), seed=gseed,
                              store=False)
            out[i] = np.asarray(f).reshape(-1)
        return out

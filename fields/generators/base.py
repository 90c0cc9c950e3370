"""Common interface and name registry of the random-field generators.

Every generator turns a correlation model and a set of points (or a regular
grid) into standard-normal realisations.  ``gen.sample(seed, indices)``
returns an array ``(len(indices), n_points)`` whose row ``i`` is realisation
``indices[i]``, drawn from ``fields.seeding.field_noise_rng(seed, k,
*stream)``: a realisation is the same whatever batch it is generated in.
Generators hold no random state; ``gen.info`` reports the numerical
compromises made at set-up (jitter, truncation, clipping).
"""
from __future__ import annotations

import inspect
import operator
from abc import ABC, abstractmethod

import numpy as np

from ..errors import InputError
from ..grid import RegularGrid
from ..models import CorrelationModel
from ..seeding import field_noise_rng

__all__ = ["FieldGenerator", "make_generator", "register", "generator_names", "generator_options"]

_REGISTRY: dict[str, type] = {}

#: Where each method's class lives (module of this package that registers it). The
#: names are known without importing the modules, so a command line can list them in
#: a fraction of a second; tests check that the modules register exactly these names.
METHOD_MODULES = {"cholesky": "cholesky", "fft": "circulant", "circulant": "circulant", "kl": "kl",
                  "spectral": "spectral"}


def _generator_class(method) -> tuple[str, type]:
    """``(name, class)`` of a method, importing only the module that defines it."""
    import importlib

    key = str(method).strip().lower()
    if key not in METHOD_MODULES:
        raise InputError(f"unknown generator method {method!r}: choose one of " + ", ".join(sorted(METHOD_MODULES)))
    importlib.import_module(f".{METHOD_MODULES[key]}", __package__)
    return key, _REGISTRY[key]


def register(*names):
    """Class decorator adding a generator under one or more method names."""
    def deco(cls):
        for n in names:
            _REGISTRY[n] = cls
        return cls
    return deco


class FieldGenerator(ABC):
    """Base class of the generators (see module docstring).

    Attributes
    ----------
    model : CorrelationModel
    grid : RegularGrid or None
    points : numpy.ndarray, shape (n_points, 2)
        Where the field is generated (cell centres for a grid, C order).
    n_points : int
    info : dict
        Set-up report (method-specific keys, always ``method``).
    """

    method = "abstract"
    #: realisations generated together internally (memory per block is
    #: O(block × cells)); results do not depend on it.
    block = 64

    def __init__(self, model, *, grid=None, points=None):
        if not isinstance(model, CorrelationModel):
            raise InputError("model must be a CorrelationModel, e.g. "
                             "fields.get_model('exponential', theta_h=20, theta_v=2)")
        self.model = model
        if grid is not None and not isinstance(grid, RegularGrid):
            raise InputError("grid must be a fields.RegularGrid(x0, y0, nx, ny, dx, dy)")
        if grid is not None and points is not None:
            raise InputError("give either grid= or points=, not both")
        if grid is None and points is None:
            raise InputError(f"the {self.method!r} generator needs grid= (a RegularGrid) "
                             "or points= (array of shape (n, 2), m)")
        self.grid = grid
        if grid is not None:
            self.points = grid.points()
        else:
            p = np.asarray(points, dtype=float)
            if p.ndim != 2 or p.shape[1] != 2 or p.shape[0] < 1:
                raise InputError(f"points must have shape (n, 2) with n >= 1, got {p.shape}")
            if not np.all(np.isfinite(p)):
                raise InputError("points contain NaN or infinite coordinates; remove them")
            self.points = p
        self.n_points = int(self.points.shape[0])
        self.info = {"method": self.method, "n_points": self.n_points}

    # ------------------------------------------------------------------ API
    def sample(self, seed, indices, stream=()):
        """Standard-normal realisations.

        Parameters
        ----------
        seed : int
            Seed of the run (>= 0).
        indices : sequence of int
            Realisation numbers (>= 0), e.g. ``range(n)``.
        stream : tuple of int, optional
            Sub-stream key (e.g. ``(property, zone)``) so that several
            fields of one realisation use independent noise.

        Returns
        -------
        numpy.ndarray, shape (len(indices), n_points)
            Row ``i`` is realisation ``indices[i]`` (unit variance, zero mean).
        """
        seed, idx, stream = _check_call(seed, indices, stream)
        out = np.empty((idx.size, self.n_points))
        for s in range(0, idx.size, self.block):
            ks = idx[s:s + self.block]
            rngs = [field_noise_rng(seed, int(k), *stream) for k in ks]
            out[s:s + ks.size] = self._sample_block(rngs, seed, ks, stream)
        return out

    def sample_grid(self, seed, indices, stream=()):
        """Like :meth:`sample` but shaped ``(len(indices), nx, ny)`` (grid only)."""
        if self.grid is None:
            raise InputError("sample_grid needs a generator built with grid=; use sample()")
        return self.grid.reshape(self.sample(seed, indices, stream))

    def iter_batches(self, seed, indices, batch_size=64, stream=()):
        """Yield ``(indices_batch, values)`` in batches, to stream large runs.

        Realisations are identical to those of :meth:`sample` (batching does
        not change them); memory is O(batch_size × n_points).
        """
        seed, idx, stream = _check_call(seed, indices, stream)
        bs = int(batch_size)
        if bs < 1:
            raise InputError(f"batch_size must be >= 1, got {batch_size!r}")
        for s in range(0, idx.size, bs):
            ks = idx[s:s + bs]
            yield ks, self.sample(seed, ks, stream)

    # ------------------------------------------------------ white noise
    # The standard-normal noise a generator turns into a field, exposed for
    # methods that work in that space (subset simulation moves it by Markov
    # chains, slope.simulate.rare). fields_from_noise(noise(seed, idx)) is
    # sample(seed, idx) bit for bit.
    noise_size = None
    """Length of one realisation's white noise (None: drawn internally, not available)."""

    def noise(self, seed, indices, stream=()):
        """The white noise of realisations ``indices``: array ``(len(indices), noise_size)``.

        Drawn from ``field_noise_rng(seed, k, *stream)`` exactly as
        :meth:`sample` draws it; i.i.d. standard normal.
        """
        if self.noise_size is None:
            raise InputError(f"the {self.method!r} generator draws its noise internally, so its fields "
                             "cannot be moved in standard-normal space; use 'fft', 'cholesky' or 'kl'")
        seed, idx, stream = _check_call(seed, indices, stream)
        out = np.empty((idx.size, self.noise_size))
        for i, k in enumerate(idx):
            field_noise_rng(seed, int(k), *stream).standard_normal(out=out[i])
        return out

    def fields_from_noise(self, noise, keys=None):
        """Fields ``(b, n_points)`` from white noise ``(b, noise_size)`` (a linear map).

        ``keys``: one non-negative integer per row that fixes where the row
        sits in the generator's internal block (dense generators: BLAS sums
        depend on it), so a row gives the same bits in any batch; the
        realisation number for noise from :meth:`noise` (default
        ``0 .. b-1``).
        """
        if self.noise_size is None:
            self.noise(0, [0])  # raises the explanation
        z = np.asarray(noise, dtype=float)
        if z.ndim != 2 or z.shape[1] != self.noise_size:
            raise InputError(f"noise must have shape (b, {self.noise_size}), got {z.shape}")
        ks = np.arange(z.shape[0]) if keys is None else np.asarray(keys, dtype=np.int64)
        return self._from_noise_rows(z, ks)

    def _from_noise_rows(self, z, ks):
        raise NotImplementedError

    @abstractmethod
    def _sample_block(self, rngs, seed, ks, stream) -> np.ndarray:
        """Realisations for one block; ``rngs[i]`` is realisation ``ks[i]``'s stream."""

    def __repr__(self):
        where = (f"grid={self.grid.nx}x{self.grid.ny}" if self.grid is not None
                 else f"points={self.n_points}")
        return f"<{type(self).__name__} {self.model!r} {where}>"


def _check_call(seed, indices, stream):
    try:
        seed = operator.index(seed)
    except TypeError:
        raise InputError(f"seed must be a non-negative integer, got {seed!r}") from None
    if seed < 0:
        raise InputError(f"seed must be a non-negative integer, got {seed}")
    if np.isscalar(indices):
        raise InputError("indices must be a sequence of realisation numbers, e.g. range(n) "
                         f"or [k]; got the scalar {indices!r}")
    idx = np.asarray(list(indices) if not isinstance(indices, np.ndarray) else indices)
    if idx.size == 0:
        idx = idx.astype(np.int64)
    if idx.ndim != 1 or not np.issubdtype(idx.dtype, np.integer):
        raise InputError("indices must be a 1D sequence of integers (realisation numbers)")
    if np.any(idx < 0):
        raise InputError("realisation indices must be >= 0")
    if isinstance(stream, (int, np.integer)):
        stream = (int(stream),)
    try:
        stream = tuple(operator.index(s) for s in stream)
    except TypeError:
        raise InputError(f"stream must be a tuple of non-negative integers, got {stream!r}") from None
    if any(s < 0 for s in stream):
        raise InputError(f"stream keys must be non-negative integers, got {stream!r}")
    return seed, idx.astype(np.int64), stream


def _options_of(cls):
    sig = inspect.signature(cls.__init__)
    return [p.name for p in sig.parameters.values()
            if p.kind is inspect.Parameter.KEYWORD_ONLY and p.name not in ("grid", "points")]


def make_generator(method, model, *, grid=None, points=None, **opts) -> FieldGenerator:
    """Build a generator by method name.

    Parameters
    ----------
    method : str
        ``cholesky``, ``kl`` (truncated Karhunen–Loève), ``fft`` (alias
        ``circulant``; regular grids only) or ``spectral`` (GSTools
        randomisation method).
    model : CorrelationModel
    grid : RegularGrid, optional
    points : array_like, shape (n, 2), optional
        Exactly one of ``grid`` and ``points``.
    **opts
        Method options (see each class); unknown options raise
        :class:`InputError`.

    Returns
    -------
    FieldGenerator
    """
    key, cls = _generator_class(method)
    allowed = _options_of(cls)
    unknown = sorted(set(opts) - set(allowed))
    if unknown:
        raise InputError(f"unknown option(s) {', '.join(unknown)} for method {key!r}; "
                         f"allowed: {', '.join(allowed) or 'none'}")
    return cls(model, grid=grid, points=points, **opts)


def generator_options(method) -> tuple:
    """Keyword options of a generator method (e.g. ``max_points`` of the dense ones)."""
    return tuple(_options_of(_generator_class(method)[1]))


def generator_names():
    """Method names accepted by :func:`make_generator`."""
    return tuple(sorted(METHOD_MODULES))


def noise_generator_names():
    """Method names whose generators expose their white noise (:meth:`FieldGenerator.noise`)."""
    return tuple(sorted(n for n in METHOD_MODULES if _generator_class(n)[1].noise_size is not None))


"""Conditional simulation on measured points by simple kriging.

Works in standard-normal (Gaussian) space with known mean 0 and unit
variance.  A conditional realisation is (Journel & Huijbregts 1978, Mining
Geostatistics, conditional simulation chapter (recalled from memory))

    Z_c(x) = Z*_data(x) + [Z_u(x) − Z*_u(x)],

with ``Z_u`` an unconditional realisation generated jointly at the target
and the data points, ``Z*_data`` the simple-kriging estimate from the data
and ``Z*_u`` the same estimate from ``Z_u`` at the data points.  The
realisations then have the conditional covariance
``C_tt − C_td C_dd⁻¹ C_dt`` (not only the kriging variance at each point).

Measurement error: with ``nugget = σ²_e > 0`` the data are taken as
``z_d = Z(x_d) + e``, ``e ~ N(0, σ²_e)`` independent; ``C_dd`` gets ``σ²_e``
on its diagonal and the unconditional data values get simulated noise, so
the realisations are of the true field ``Z`` and do not pass exactly
through the data.

Measured values of a property are mapped to Gaussian space and back through
its marginal with :func:`to_gaussian` and :func:`from_gaussian`.

Seeds: the unconditional field of realisation ``k`` uses the generator's
stream ``(k, *stream)``; the simulated measurement noise uses
``realisation_rng(seed, k, *stream, NOISE_STREAM)``.
"""
from __future__ import annotations

import math

import numpy as np
from numba import njit
from scipy import linalg

from .errors import InputError
from .generators import FieldGenerator, make_generator
from .generators.base import _check_call
from .marginals import Marginal
from .models import CorrelationModel
from .seeding import realisation_rng

__all__ = ["ConditionalGenerator", "to_gaussian", "from_gaussian", "NOISE_STREAM",
           "DataCovariance", "add_kriged_residuals"]

#: last sub-stream key of the simulated measurement noise (an arbitrary tag
#: unlikely to clash with property/zone keys).
NOISE_STREAM = 0xC0DA
_GRID_ONLY = ("fft", "circulant")


def to_gaussian(marginal, values, *, name="data_values"):
    """Standard-normal equivalents ``Φ⁻¹(F(x))`` of measured values.

    Parameters
    ----------
    marginal : Marginal
        The property's marginal distribution.
    values : array_like
        Measured values (property units).
    name : str
        Name used in error messages.

    Returns
    -------
    numpy.ndarray
        Gaussian-space values, same shape.

    Raises
    ------
    InputError
        A value is not finite or lies outside (or on the bound of) the
        marginal's support, where the Gaussian value would be infinite.
    """
    if not isinstance(marginal, Marginal):
        raise InputError("marginal must be a fields.marginals.Marginal (make_marginal)")
    if marginal.name == "deterministic":
        raise InputError(f"{name}: a deterministic property cannot be conditioned")
    x = np.asarray(values, dtype=float)
    if not np.all(np.isfinite(x)):
        raise InputError(f"{name} contain NaN or infinite values; remove them")
    z = marginal.to_standard_normal(x)
    bad = ~np.isfinite(z)
    if np.any(bad):
        i = int(np.flatnonzero(bad.ravel())[0])
        raise InputError(f"{name}[{i}] = {x.ravel()[i]:g} lies outside or on the bound of the "
                         f"{marginal.name} support [{marginal.lower:g}, {marginal.upper:g}]: "
                         "check the measurement or widen the marginal")
    return z


def from_gaussian(marginal, z):
    """Physical values ``F⁻¹(Φ(z))`` of Gaussian-space values (property units)."""
    if not isinstance(marginal, Marginal):
        raise InputError("marginal must be a fields.marginals.Marginal (make_marginal)")
    return marginal.from_standard_normal(z)



def _factor_data_covariance(C_dd, d):
    """Cholesky factor of the data covariance; a singular one names the two closest data."""
    try:
        cho = linalg.cho_factor(C_dd, lower=True, check_finite=False)
        ok = np.all(np.diag(cho[0]) > 1e-7)
    except linalg.LinAlgError:
        ok = False
    if not ok:
        dist = np.hypot(*(d[:, None, :] - d[None, :, :]).transpose(2, 0, 1))
        np.fill_diagonal(dist, np.inf)
        i, j = np.unravel_index(np.argmin(dist), dist.shape)
        raise InputError(f"the data covariance matrix is singular: data points {min(i, j)} "
                         f"and {max(i, j)} are {dist[i, j]:.3g} m apart; merge them or give "
                         "nugget > 0 (measurement-error variance)")
    return cho

class DataCovariance:
    """Factor of the data covariance ``C_dd + diag(σ²_e)`` and kriging weights.

    The piece of simple kriging shared by :class:`ConditionalGenerator` and
    by callers that generate the unconditional field themselves (the slope
    simulator conditions only the grid cells its slice bases touch).

    Parameters
    ----------
    model : CorrelationModel
        Unit-variance model of the field.
    data_points : array_like, shape (n_data, 2)
        Data locations (m).
    nugget : float or array_like, shape (n_data,)
        Measurement-error variance of each datum (standard-normal units, >= 0).
    """

    def __init__(self, model, data_points, nugget=0.0):
        d = np.asarray(data_points, dtype=float)
        nug = np.broadcast_to(np.asarray(nugget, dtype=float), (d.shape[0],)).copy()
        if not (np.all(np.isfinite(nug)) and np.all(nug >= 0)):
            raise InputError("nugget must be variance(s) >= 0 (standard-normal units)")
        self.model, self.data_points, self.nugget = model, d, nug
        self.cho = _factor_data_covariance(model.covariance_matrix(d) + np.diag(nug), d)

    def weights(self, targets):
        """Simple-kriging weights ``C_td C_dd⁻¹``, shape (n_targets, n_data)."""
        C_td = self.model.covariance_matrix(np.asarray(targets, dtype=float), self.data_points)
        return linalg.cho_solve(self.cho, C_td.T, check_finite=False).T

    def noise(self, seed, indices, stream=()):
        """Simulated measurement errors ``(len(indices), n_data)`` (zero where σ²_e = 0)."""
        nd = self.data_points.shape[0]
        if not np.any(self.nugget > 0):
            return np.zeros((len(indices), nd))
        e = np.stack([realisation_rng(seed, int(k), *stream, NOISE_STREAM).standard_normal(nd)
                      for k in indices]) if len(indices) else np.empty((0, nd))
        return e * np.sqrt(self.nugget)


def add_kriged_residuals(out, resid, weights):
    """``out += resid @ weights.T`` with a fixed order of summation (in place).

    Each value is accumulated datum by datum in a compiled loop instead of a
    BLAS product, so that a realisation's values do not depend on how many
    rows are computed together (BLAS kernels change with the number of rows
    and threads) and stay bit-identical for any batch size or worker count.

    Parameters
    ----------
    out : ndarray (s, n_targets), float64, C order
    resid : ndarray (s, n_data)
    weights : ndarray (n_targets, n_data)
    """
    _accumulate(out, np.ascontiguousarray(resid, dtype=float), np.ascontiguousarray(weights, dtype=float))
    return out


@njit(cache=True)
def _accumulate(out, resid, weights):  # pragma: no cover - compiled
    s, nt = out.shape
    nd = resid.shape[1]
    for r in range(s):
        for t in range(nt):
            acc = out[r, t]
            for j in range(nd):
                acc += resid[r, j] * weights[t, j]
            out[r, t] = acc


class ConditionalGenerator:
    """Gaussian random field conditioned on point data by simple kriging.

    Parameters
    ----------
    generator_or_model : FieldGenerator or CorrelationModel
        The unconditional generator (its points/grid are the targets), or a
        model with ``grid=``/``points=`` and ``method=``.
    data_points : array_like, shape (n_data, 2)
        Measurement locations (m).
    data_values : array_like, shape (n_data,)
        Measured values in standard-normal space (see :func:`to_gaussian`).
    nugget : float, optional
        Measurement-error variance σ²_e in standard-normal units (>= 0).
    grid, points, method, **opts
        Used only with a model: targets and generator (see
        :func:`fields.make_generator`).

    Notes
    -----
    The unconditional field must be known at the data points.  When every
    data point coincides (within 1e-9 m) with a target point, the given
    generator is used as it is; otherwise one generator of the same method is
    built on targets + data points (with ``**opts`` when a model is given,
    default options when a generator is given), which is refused for
    grid-only methods (``fft``): put the data at cell centres or use
    ``cholesky``/``kl``.  Realisations are therefore reproducible for a given
    set of targets and data, not across different data sets.
    """

    def __init__(self, generator_or_model, data_points, data_values, nugget=0.0, *,
                 grid=None, points=None, method="cholesky", **opts):
        g = generator_or_model
        if isinstance(g, CorrelationModel):
            if (grid is None) == (points is None):
                raise InputError("with a model, give exactly one of grid= (a RegularGrid) or "
                                 "points= (array (n, 2), m) for the targets")
            model = g
            targets = grid.points() if grid is not None else np.asarray(points, dtype=float)
        elif isinstance(g, FieldGenerator):
            if grid is not None or points is not None or opts:
                raise InputError("with a generator, give no grid=, points= or options: they "
                                 "are the generator's")
            model, targets, grid, method = g.model, g.points, g.grid, g.method
        else:
            raise InputError("generator_or_model must be a FieldGenerator (make_generator) or "
                             "a CorrelationModel (get_model)")
        self.model = model
        self.grid = grid
        d = np.asarray(data_points, dtype=float)
        if d.ndim != 2 or d.shape[1] != 2 or d.shape[0] < 1:
            raise InputError(f"data_points must have shape (n_data, 2) with n_data >= 1, got "
                             f"{d.shape}")
        if not np.all(np.isfinite(d)):
            raise InputError("data_points contain NaN or infinite coordinates; remove them")
        v = np.asarray(data_values, dtype=float)
        if v.shape != (d.shape[0],):
            raise InputError(f"data_values must have shape ({d.shape[0]},) to match data_points, "
                             f"got {v.shape}")
        if not np.all(np.isfinite(v)):
            raise InputError("data_values contain NaN or infinite values; remove them")
        try:
            nug = float(nugget)
        except (TypeError, ValueError):
            raise InputError(f"nugget must be a variance >= 0 (standard-normal units), got "
                             f"{nugget!r}") from None
        if not (math.isfinite(nug) and nug >= 0):
            raise InputError(f"nugget must be a variance >= 0 (standard-normal units), got "
                             f"{nugget!r}")
        self.data_points, self.data_values, self.nugget = d, v, nug

        self._cho = _factor_data_covariance(self.model.covariance_matrix(d) + nug * np.eye(d.shape[0]), d)
        # where the unconditional field is known at the data points
        tp = np.asarray(targets, dtype=float)
        if tp.ndim != 2 or tp.shape[1] != 2:
            raise InputError(f"points must have shape (n, 2), got {tp.shape}")
        gap = np.hypot(*(d[:, None, :] - tp[None, :, :]).transpose(2, 0, 1))
        nearest = np.argmin(gap, axis=1)
        if np.all(gap[np.arange(d.shape[0]), nearest] <= 1e-9):
            if not isinstance(g, FieldGenerator):
                g = make_generator(method, model, grid=grid, points=points, **opts)
            self._joint, self._data_idx = g, nearest
        else:
            if str(method).lower() in _GRID_ONLY:
                raise InputError(f"data points are not at cell centres and the {method!r} "
                                 "generator works on the grid only: move the data to cell "
                                 "centres or use method 'cholesky' or 'kl'")
            # one generator on targets + data, so that Z_u is jointly right
            # at both (options of a given generator are not carried over)
            self._joint = make_generator(method, model, points=np.vstack([tp, d]),
                                         **({} if isinstance(g, FieldGenerator) else opts))
            self._data_idx = tp.shape[0] + np.arange(d.shape[0])
        self.generator = self._joint
        self.points = tp
        C_td = self.model.covariance_matrix(tp, d)
        # W = C_td C_dd^-1 (n_targets, n_data)
        self.weights = linalg.cho_solve(self._cho, C_td.T, check_finite=False).T
        self._C_td = C_td

    @property
    def n_points(self) -> int:
        """Number of target points."""
        return int(self.points.shape[0])

    def kriged_mean(self) -> np.ndarray:
        """Simple-kriging estimate at the targets, shape (n_points,) (standard-normal units)."""
        return self.weights @ self.data_values

    def kriging_variance(self) -> np.ndarray:
        """Simple-kriging variance ``1 − Σ w_i C(x, x_i)`` at the targets, shape (n_points,)."""
        return np.maximum(1.0 - np.einsum("td,td->t", self.weights, self._C_td), 0.0)

    def conditional_covariance(self, idx=None) -> np.ndarray:
        """Conditional covariance ``C_tt − C_td C_dd⁻¹ C_dt`` over target indices ``idx``."""
        idx = np.arange(self.n_points) if idx is None else np.asarray(idx)
        p = self.points[idx]
        return self.model.covariance_matrix(p) - self.weights[idx] @ self._C_td[idx].T

    def sample(self, seed, indices, stream=()):
        """Conditional realisations in standard-normal space.

        Parameters
        ----------
        seed : int
            Seed of the run (>= 0).
        indices : sequence of int
            Realisation numbers.
        stream : tuple of int, optional
            Sub-stream key (as for :meth:`FieldGenerator.sample`).

        Returns
        -------
        numpy.ndarray, shape (len(indices), n_points)
            Row ``i`` is realisation ``indices[i]``.
        """
        seed, idx, stream = _check_call(seed, indices, stream)
        zu = self._joint.sample(seed, idx, stream)
        zu_t = zu[:, :self.n_points]
        zu_d = zu[:, self._data_idx]
        if self.nugget > 0:
            nd = self.data_points.shape[0]
            noise = np.stack([realisation_rng(seed, int(k), *stream, NOISE_STREAM)
                              .standard_normal(nd) for k in idx]) if idx.size else \
                np.empty((0, nd))
            zu_d = zu_d + math.sqrt(self.nugget) * noise
        resid = self.data_values[None, :] - zu_d
        return add_kriged_residuals(np.array(zu_t, dtype=float), resid, self.weights)

    def sample_grid(self, seed, indices, stream=()):
        """Like :meth:`sample`, shaped ``(len(indices), nx, ny)`` (grid targets only)."""
        if self.grid is None:
            raise InputError("sample_grid needs a generator built with grid=; use sample()")
        return self.grid.reshape(self.sample(seed, indices, stream))

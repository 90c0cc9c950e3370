"""Random variables of a reliability analysis and the map to standard space.

Each soil property treated as *one* random variable (no spatial variation)
has a name and a marginal distribution (:mod:`fields.marginals`). Variables
are joined by a Gaussian copula: independent standard normals ``u`` are
correlated by the Cholesky factor ``L`` of the Nataf-adjusted matrix
(``z = L u``) and mapped to physical values ``x_i = F_i⁻¹(Φ(z_i))``. The
reliability methods work in ``u``; the limit state sees ``x``.

Deterministic variables take no dimension of ``u``: ``u`` has
``n_random`` columns, ``x`` has ``n`` columns in the order given.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from slipfield.fields.errors import InputError as _FieldsInputError
from slipfield.fields.marginals import Marginal, make_marginal, nataf_matrix

from ..errors import InputError

__all__ = ["RandomVariable", "RandomVector", "random_variable", "random_vector"]


@dataclass(frozen=True)
class RandomVariable:
    """A named random variable.

    Attributes
    ----------
    name : str
        Name used in reports and error messages (e.g. ``"c"`` for c' in kPa).
    marginal : fields.marginals.Marginal
        Its distribution (physical units).
    """

    name: str
    marginal: Marginal

    @property
    def mean(self) -> float:
        return self.marginal.mean

    @property
    def std(self) -> float:
        return self.marginal.std

    @property
    def is_random(self) -> bool:
        return self.marginal.name != "deterministic"


def random_variable(name: str, dist: str, **params) -> RandomVariable:
    """Build a :class:`RandomVariable` from a distribution name and parameters.

    Parameters
    ----------
    name : str
        Variable name.
    dist : str
        Distribution name accepted by :func:`fields.marginals.make_marginal`.
    **params
        ``mean``, ``cov``, ``std``, ``lower``, ``upper``, ``mode`` as
        :func:`fields.marginals.make_marginal` takes them (property units).
    """
    if not isinstance(name, str) or not name:
        raise InputError(f"random variable name must be a non-empty string, got {name!r}")
    try:
        return RandomVariable(name, make_marginal(dist, **params))
    except TypeError as exc:
        raise InputError(f"variable {name!r}: {exc}") from None
    except _FieldsInputError as exc:
        raise InputError(f"variable {name!r}: {exc}") from None


@dataclass
class RandomVector:
    """Correlated random variables joined by a Gaussian (Nataf) copula.

    Parameters
    ----------
    variables : sequence of RandomVariable
    correlation : array_like (n, n), optional
        Target correlation matrix of the *physical* values (default identity).
        Rows of deterministic variables must be zero off the diagonal.

    Attributes
    ----------
    names : list of str
    n : int
        Number of variables (columns of ``x``).
    n_random : int
        Number of non-deterministic variables (columns of ``u``).
    R0 : ndarray (n_random, n_random)
        Nataf-adjusted correlation of the standard normals.
    L : ndarray (n_random, n_random)
        Lower Cholesky factor of ``R0``.
    """

    variables: list
    correlation: np.ndarray | None = None
    names: list = field(init=False)
    R0: np.ndarray = field(init=False, repr=False)
    L: np.ndarray = field(init=False, repr=False)

    def __post_init__(self):
        self.variables = list(self.variables)
        if not self.variables:
            raise InputError("give at least one random variable")
        for v in self.variables:
            if not isinstance(v, RandomVariable):
                raise InputError(
                    f"variables must be RandomVariable objects (see random_variable), got {v!r}"
                )
        self.names = [v.name for v in self.variables]
        dup = {n for n in self.names if self.names.count(n) > 1}
        if dup:
            raise InputError(f"variable names must be unique; repeated: {sorted(dup)}")
        n = len(self.variables)
        R = np.eye(n) if self.correlation is None else np.asarray(self.correlation, float)
        self._active = np.array([v.is_random for v in self.variables])
        if R.shape == (n, n):
            fixed = ~self._active
            off = R[np.ix_(fixed, self._active)] if fixed.any() else np.zeros((0, 0))
            if off.size and np.any(off != 0):
                i = np.flatnonzero(fixed)[np.argwhere(off != 0)[0][0]]
                raise InputError(
                    f"variable {self.names[i]!r} is deterministic and cannot be correlated; "
                    "set its correlations to 0"
                )
        try:
            R0 = nataf_matrix([v.marginal for v in self.variables], R, names=self.names)
        except _FieldsInputError as exc:
            raise InputError(str(exc)) from None
        self.correlation = R
        act = np.flatnonzero(self._active)
        self.R0 = R0[np.ix_(act, act)]
        self.L = np.linalg.cholesky(self.R0) if act.size else np.zeros((0, 0))
        self._Linv = np.linalg.inv(self.L) if act.size else np.zeros((0, 0))

    # ------------------------------------------------------------------
    @property
    def n(self) -> int:
        return len(self.variables)

    @property
    def n_random(self) -> int:
        return int(self._active.sum())

    @property
    def random_names(self) -> list:
        return [n for n, a in zip(self.names, self._active) if a]

    @property
    def active(self) -> np.ndarray:
        """Boolean mask over variables: True for non-deterministic ones."""
        return self._active.copy()

    @property
    def means(self) -> np.ndarray:
        return np.array([v.mean for v in self.variables])

    @property
    def stds(self) -> np.ndarray:
        return np.array([v.std for v in self.variables])

    @property
    def is_correlated(self) -> bool:
        return bool(np.any(self.R0 != np.eye(self.n_random)))

    def to_physical(self, u) -> np.ndarray:
        """Physical values ``x (k, n)`` of independent standard normals ``u (k, n_random)``."""
        u = np.atleast_2d(np.asarray(u, dtype=float))
        if u.shape[1] != self.n_random:
            raise InputError(
                f"u must have {self.n_random} columns (random variables), got {u.shape[1]}"
            )
        z = u @ self.L.T
        x = np.empty((u.shape[0], self.n))
        j = 0
        for i, v in enumerate(self.variables):
            if v.is_random:
                x[:, i] = v.marginal.from_standard_normal(z[:, j])
                j += 1
            else:
                x[:, i] = v.mean
        return x

    def to_standard(self, x) -> np.ndarray:
        """Independent standard normals ``u (k, n_random)`` of physical values ``x (k, n)``."""
        x = np.atleast_2d(np.asarray(x, dtype=float))
        if x.shape[1] != self.n:
            raise InputError(f"x must have {self.n} columns (variables), got {x.shape[1]}")
        z = np.column_stack([v.marginal.to_standard_normal(x[:, i])
                             for i, v in enumerate(self.variables) if v.is_random])
        return z @ self._Linv.T

    def at_mean(self) -> np.ndarray:
        """The mean point as a ``(1, n)`` array (physical units)."""
        return self.means[None, :]


def random_vector(specs, correlation=None) -> RandomVector:
    """Build a :class:`RandomVector` from plain specifications.

    Parameters
    ----------
    specs : sequence of dict or RandomVariable
        Each dict has ``name``, ``dist`` and the marginal's parameters, e.g.
        ``{"name": "c", "dist": "lognormal", "mean": 10.0, "cov": 0.3}``.
    correlation : array_like (n, n) or dict, optional
        Full matrix, or a dict ``{("c", "phi"): -0.5, ...}`` of pairs.
    """
    variables = []
    for s in specs:
        if isinstance(s, RandomVariable):
            variables.append(s)
            continue
        s = dict(s)
        try:
            name, dist = s.pop("name"), s.pop("dist")
        except KeyError as exc:
            raise InputError(f"random variable spec {s!r} lacks {exc.args[0]!r}") from None
        variables.append(random_variable(name, dist, **s))
    if isinstance(correlation, dict):
        names = [v.name for v in variables]
        R = np.eye(len(variables))
        for pair, rho in correlation.items():
            try:
                a, b = pair
                i, j = names.index(a), names.index(b)
            except ValueError:
                raise InputError(
                    f"correlation pair {pair!r} names an unknown variable; known: {names}"
                ) from None
            if i == j:
                raise InputError(f"correlation pair {pair!r} pairs a variable with itself")
            R[i, j] = R[j, i] = float(rho)
        correlation = R
    return RandomVector(variables, correlation)

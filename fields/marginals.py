"""Marginal distributions of soil properties and the Nataf correlation map.

Engineers state a property by its mean and coefficient of variation (COV),
or by bounds; :func:`make_marginal` turns that statement into a small object
that maps standard-normal values to physical values and back. Random fields
and the reliability layer both build non-Gaussian variables as
``x = F⁻¹(Φ(z))`` of a standard-normal ``z`` (a Gaussian copula), so the
correlation between two such variables is not the correlation of their
Gaussians. :func:`nataf_correlation` gives the Gaussian correlation that
produces the asked-for correlation of the physical values (Nataf 1962;
Liu & Der Kiureghian 1986, Probab. Eng. Mech. 1(2):105-112).

Parameter conventions (all in the property's own units)
-------------------------------------------------------
``normal``
    ``mean`` and ``cov`` (or ``std``).
``lognormal``
    ``mean`` and ``cov`` (or ``std``) of the property itself (not of its
    logarithm): σ²ln = ln(1 + V²), μln = ln μ − σ²ln / 2.
``truncated-normal``
    ``mean`` and ``cov`` (or ``std``) **of the truncated distribution** (what
    an engineer measures), with ``lower`` and/or ``upper``; the parent normal's
    parameters are solved for. If no parent reproduces the stated mean and
    COV within the bounds, an :class:`InputError` says so.
``beta``
    ``mean`` and ``cov`` (or ``std``) on ``[lower, upper]``.
``uniform``
    ``lower`` and ``upper``, or ``mean`` and ``cov`` (or ``std``).
``triangular``
    ``lower``, ``mode`` and ``upper``.
``deterministic``
    ``mean`` only; ``std`` is 0 and every z maps to the mean.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import scipy  # submodules load on first use: the command parser reads MARGINAL_NAMES from here

from .errors import InputError, finite_float

__all__ = [
    "Marginal",
    "MARGINAL_NAMES",
    "MARGINAL_FORMS",
    "marginal_form",
    "make_marginal",
    "scaled_spread",
    "nataf_correlation",
    "nataf_matrix",
]

MARGINAL_NAMES = (
    "normal",
    "lognormal",
    "truncated-normal",
    "beta",
    "uniform",
    "triangular",
    "deterministic",
)

#: How each distribution may be stated: the alternative sets of parameters
#: :func:`make_marginal` takes for it ("spread" is ``cov`` or ``std``).
MARGINAL_FORMS = {
    "normal": (frozenset({"mean", "spread"}),),
    "lognormal": (frozenset({"mean", "spread"}),),
    "truncated-normal": (frozenset({"mean", "spread", "lower"}), frozenset({"mean", "spread", "upper"}),
                         frozenset({"mean", "spread", "lower", "upper"})),
    "beta": (frozenset({"mean", "spread", "lower", "upper"}),),
    "uniform": (frozenset({"lower", "upper"}), frozenset({"mean", "spread"})),
    "triangular": (frozenset({"lower", "mode", "upper"}),),
    "deterministic": (frozenset({"mean"}),),
}
assert tuple(MARGINAL_FORMS) == MARGINAL_NAMES


def marginal_form(name: str, given, implied=()) -> frozenset | None:
    """The form of ``name`` that the parameters ``given`` state, or None.

    Parameters
    ----------
    name : str
        A distribution of :data:`MARGINAL_NAMES`.
    given : set of str
        Parameters stated (``mean``, ``spread``, ``lower``, ``upper``, ``mode``).
    implied : set of str
        Parameters that may be filled in when a form needs them (e.g. a
        mean taken from elsewhere).

    Returns
    -------
    frozenset or None
        The first form holding every given parameter and needing no other
        than ``implied`` ones.
    """
    given, implied = set(given), set(implied)
    for form in MARGINAL_FORMS.get(name, ()):
        if given <= form and form - given <= implied:
            return form
    return None


_ALIASES = {
    "gaussian": "normal",
    "log-normal": "lognormal",
    "truncnorm": "truncated-normal",
    "truncated_normal": "truncated-normal",
    "constant": "deterministic",
}


class _DistRecipe:
    """A scipy.stats frozen distribution, rebuilt from its name and arguments on first use.

    What a pickled :class:`Marginal` carries instead of the frozen
    distribution: unpickling one then needs no ``scipy.stats`` (a second of
    import in every simulation worker, whose lognormal and normal marginals
    never call it). The rebuilt distribution is the same object
    (``getattr(scipy.stats, name)(*args, **kwds)``), so its values are too.
    """

    def __init__(self, name, args, kwds):
        self.recipe = (str(name), tuple(args), dict(kwds))

    def __getattr__(self, attr):
        if attr.startswith("__") or attr in ("recipe", "frozen"):
            raise AttributeError(attr)
        frozen = self.__dict__.get("frozen")
        if frozen is None:
            import scipy.stats

            name, args, kwds = self.recipe
            frozen = self.__dict__["frozen"] = getattr(scipy.stats, name)(*args, **kwds)
        return getattr(frozen, attr)

    def __reduce__(self):
        return (_DistRecipe, self.recipe)


def _recipe(dist):
    """:class:`_DistRecipe` of a frozen scipy.stats distribution, or the distribution itself
    when it is not one of scipy.stats' named distributions."""
    if dist is None or isinstance(dist, _DistRecipe):
        return dist
    named = getattr(getattr(dist, "dist", None), "name", None)
    stats = getattr(scipy, "stats", None)
    if named is None or stats is None or type(getattr(stats, named, None)) is not type(dist.dist):
        return dist
    return _DistRecipe(named, getattr(dist, "args", ()), getattr(dist, "kwds", {}))


@dataclass(frozen=True)
class Marginal:
    """A univariate distribution of a physical property.

    Build it with :func:`make_marginal`. All methods are vectorised and take
    and return plain numpy arrays (physical units of the property).

    Attributes
    ----------
    name : str
        Distribution name (one of :data:`MARGINAL_NAMES`).
    mean, std : float
        Mean and standard deviation of the property (property units).
    params : dict
        The parameters that define the distribution (e.g. ``mu_ln``,
        ``sigma_ln`` for the lognormal; ``parent_mean``, ``parent_std`` for the
        truncated normal).
    lower, upper : float
        Support of the distribution (``-inf``/``inf`` when unbounded).
    """

    name: str
    mean: float
    std: float
    params: dict = field(default_factory=dict)
    lower: float = -math.inf
    upper: float = math.inf
    _dist: object = field(default=None, repr=False, compare=False)

    def __getstate__(self):
        # the frozen distribution travels as its recipe (see _DistRecipe)
        state = dict(self.__dict__)
        state["_dist"] = _recipe(state.get("_dist"))
        return state

    @property
    def cov(self) -> float:
        """Coefficient of variation std/mean (nan when the mean is 0)."""
        return self.std / abs(self.mean) if self.mean != 0 else math.nan

    # -- the Gaussian-copula maps ------------------------------------------
    def from_standard_normal(self, z):
        """Physical value ``F⁻¹(Φ(z))`` of standard-normal values ``z``.

        Upper-tail values use the survival function so that ``z`` of 6 or
        more (subset simulation, FORM) keeps full precision.
        """
        z = np.asarray(z, dtype=float)
        if self.name == "normal":
            return self.mean + self.std * z
        if self.name == "lognormal":
            return np.exp(self.params["mu_ln"] + self.params["sigma_ln"] * z)
        if self.name == "deterministic":
            return np.full_like(z, self.mean)
        lo = self._dist.ppf(scipy.special.ndtr(np.minimum(z, 0.0)))
        hi = self._dist.isf(scipy.special.ndtr(-np.maximum(z, 0.0)))
        return np.where(z < 0.0, lo, hi)

    def to_standard_normal(self, x):
        """Standard-normal value ``Φ⁻¹(F(x))`` of physical values ``x``.

        For ``deterministic`` every value maps to 0.
        """
        x = np.asarray(x, dtype=float)
        if self.name == "normal":
            return (x - self.mean) / self.std
        if self.name == "lognormal":
            with np.errstate(divide="ignore", invalid="ignore"):
                return (np.log(x) - self.params["mu_ln"]) / self.params["sigma_ln"]
        if self.name == "deterministic":
            return np.zeros_like(x)
        p = self._dist.cdf(x)
        q = self._dist.sf(x)
        return np.where(p < 0.5, scipy.special.ndtri(p), -scipy.special.ndtri(q))

    # -- distribution functions --------------------------------------------
    def ppf(self, p):
        """Quantile ``F⁻¹(p)`` for probabilities ``p`` in [0, 1]."""
        p = np.asarray(p, dtype=float)
        if self.name == "deterministic":
            return np.full_like(p, self.mean)
        return self._dist.ppf(p)

    def cdf(self, x):
        """Cumulative probability ``F(x)``."""
        x = np.asarray(x, dtype=float)
        if self.name == "deterministic":
            return (x >= self.mean).astype(float)
        return self._dist.cdf(x)

    def pdf(self, x):
        """Probability density ``f(x)`` (1/property units).

        ``deterministic`` has no density; it returns 0 everywhere.
        """
        x = np.asarray(x, dtype=float)
        if self.name == "deterministic":
            return np.zeros_like(x)
        return self._dist.pdf(x)

    def sample(self, rng: np.random.Generator, size) -> np.ndarray:
        """Draw values with a caller-owned generator (see ``fields.seeding``)."""
        return self.from_standard_normal(rng.standard_normal(size))


# ---------------------------------------------------------------------------
def _finite(value, what, name):
    return finite_float(value, f"{name}: {what}")


def _spread(name, mean, cov, std, *, positive_mean=False):
    """Standard deviation from either ``cov`` or ``std`` (not both)."""
    if cov is not None and std is not None:
        raise InputError(f"{name}: give either 'cov' or 'std', not both")
    if cov is None and std is None:
        raise InputError(f"{name}: give the spread as 'cov' (e.g. cov=0.2) or 'std'")
    if cov is not None:
        cov = _finite(cov, "cov", name)
        if cov <= 0:
            raise InputError(
                f"{name}: cov must be > 0, got {cov}; use 'deterministic' for a "
                "fixed value"
            )
        if mean == 0:
            raise InputError(f"{name}: cov is undefined for mean 0; give 'std' instead")
        return cov * abs(mean)
    std = _finite(std, "std", name)
    if std <= 0:
        raise InputError(
            f"{name}: std must be > 0, got {std}; use 'deterministic' for a fixed value"
        )
    return std


def _need(name, **kw):
    for key, val in kw.items():
        if val is None:
            raise InputError(f"{name}: '{key}' is required")


def _bounds(name, lower, upper):
    lo = _finite(lower, "lower", name) if lower is not None else -math.inf
    hi = _finite(upper, "upper", name) if upper is not None else math.inf
    if not lo < hi:
        raise InputError(
            f"{name}: bounds inverted or empty (lower={lo}, upper={hi}); "
            "lower must be smaller than upper"
        )
    return lo, hi


def _inside(name, mean, lo, hi):
    if not lo < mean < hi:
        raise InputError(
            f"{name}: mean {mean} lies outside the bounds ({lo}, {hi}); "
            "move the mean inside or widen the bounds"
        )


def _solve_truncated_parent(mean, std, lo, hi):
    """Parent (μp, σp) whose truncation to [lo, hi] has the given mean, std."""

    def moments(mu_p, s_p):
        a, b = (lo - mu_p) / s_p, (hi - mu_p) / s_p
        d = scipy.stats.truncnorm(a, b, loc=mu_p, scale=s_p)
        return d.mean(), d.std()

    def resid(u):
        m, s = moments(u[0] * std + mean, std * math.exp(u[1]))
        return [(m - mean) / std, math.log(s / std)]

    best = None
    # A few starts: near-untruncated, and wider parents shifted away from a
    # nearby bound (strongly truncated cases need σp > σ).
    for u0 in ([0.0, 0.0], [-1.0, 0.7], [1.0, 0.7], [0.0, 1.5]):
        with np.errstate(all="ignore"):
            sol = scipy.optimize.root(resid, u0, method="hybr", options={"xtol": 1e-12})
        if np.all(np.isfinite(sol.x)):
            r = np.max(np.abs(resid(sol.x)))
            if best is None or r < best[0]:
                best = (r, sol.x)
        if best is not None and best[0] < 1e-9:
            break
    if best is None or best[0] > 1e-7:
        return None
    return best[1][0] * std + mean, std * math.exp(best[1][1])


def make_marginal(
    name: str,
    *,
    mean: float | None = None,
    cov: float | None = None,
    std: float | None = None,
    lower: float | None = None,
    upper: float | None = None,
    mode: float | None = None,
) -> Marginal:
    """Build a marginal distribution from the way engineers state it.

    Parameters
    ----------
    name : str
        ``normal``, ``lognormal``, ``truncated-normal``, ``beta``,
        ``uniform``, ``triangular`` or ``deterministic`` (see module doc for
        which parameters each needs).
    mean : float, optional
        Mean of the property (property units, e.g. kPa for c').
    cov : float, optional
        Coefficient of variation std/mean (dimensionless, > 0).
    std : float, optional
        Standard deviation (property units, > 0); alternative to ``cov``.
    lower, upper : float, optional
        Bounds of the support (property units).
    mode : float, optional
        Most likely value (``triangular`` only).

    Returns
    -------
    Marginal

    Raises
    ------
    InputError
        Unknown name, missing parameter, COV or std ≤ 0, inverted bounds,
        mean outside the bounds, or a mean/COV that the distribution cannot
        have on the given bounds.
    """
    if not isinstance(name, str):
        raise InputError(f"distribution name must be a string, got {name!r}")
    key = name.strip().lower()
    key = _ALIASES.get(key, key)
    if key not in MARGINAL_NAMES:
        raise InputError(
            f"unknown distribution {name!r}; choose one of: " + ", ".join(MARGINAL_NAMES)
        )
    nm = key
    if mean is not None:
        mean = _finite(mean, "mean", nm)

    if key == "deterministic":
        _need(nm, mean=mean)
        if (cov not in (None, 0)) or (std not in (None, 0)):
            raise InputError("deterministic: a fixed value has no spread; drop 'cov'/'std'")
        return Marginal("deterministic", mean, 0.0, {"value": mean}, mean, mean)

    if key == "normal":
        _need(nm, mean=mean)
        s = _spread(nm, mean, cov, std)
        return Marginal("normal", mean, s, {"mu": mean, "sigma": s},
                        _dist=_DistRecipe("norm", (mean, s), {}))

    if key == "lognormal":
        _need(nm, mean=mean)
        if mean <= 0:
            raise InputError(
                f"lognormal: mean must be > 0, got {mean}; a lognormal property is positive"
            )
        s = _spread(nm, mean, cov, std)
        v = s / mean
        s2 = math.log1p(v * v)
        mu_ln = math.log(mean) - 0.5 * s2
        sig_ln = math.sqrt(s2)
        return Marginal("lognormal", mean, s, {"mu_ln": mu_ln, "sigma_ln": sig_ln},
                        0.0, math.inf, _DistRecipe("lognorm", (sig_ln,), {"scale": math.exp(mu_ln)}))

    if key == "uniform":
        if lower is not None or upper is not None:
            if mean is not None or cov is not None or std is not None:
                raise InputError(
                    "uniform: give either lower/upper or mean with cov/std, not both"
                )
            _need(nm, lower=lower, upper=upper)
            lo, hi = _bounds(nm, lower, upper)
        else:
            _need(nm, mean=mean)
            s = _spread(nm, mean, cov, std)
            lo, hi = mean - math.sqrt(3.0) * s, mean + math.sqrt(3.0) * s
        return Marginal("uniform", 0.5 * (lo + hi), (hi - lo) / math.sqrt(12.0),
                        {"lower": lo, "upper": hi}, lo, hi, _DistRecipe("uniform", (lo, hi - lo), {}))

    if key == "triangular":
        _need(nm, lower=lower, mode=mode, upper=upper)
        lo, hi = _bounds(nm, lower, upper)
        md = _finite(mode, "mode", nm)
        if not lo <= md <= hi:
            raise InputError(f"triangular: mode {md} must lie within [{lo}, {hi}]")
        if mean is not None or cov is not None or std is not None:
            raise InputError("triangular: give lower, mode and upper only")
        m = (lo + md + hi) / 3.0
        var = (lo * lo + md * md + hi * hi - lo * md - lo * hi - md * hi) / 18.0
        d = _DistRecipe("triang", ((md - lo) / (hi - lo),), {"loc": lo, "scale": hi - lo})
        return Marginal("triangular", m, math.sqrt(var),
                        {"lower": lo, "mode": md, "upper": hi}, lo, hi, d)

    if key == "beta":
        _need(nm, mean=mean, lower=lower, upper=upper)
        lo, hi = _bounds(nm, lower, upper)
        _inside(nm, mean, lo, hi)
        s = _spread(nm, mean, cov, std)
        m = (mean - lo) / (hi - lo)
        v = (s / (hi - lo)) ** 2
        if v >= m * (1.0 - m):
            smax = math.sqrt(m * (1.0 - m)) * (hi - lo)
            raise InputError(
                f"beta: std {s:g} is too large for mean {mean:g} on [{lo:g}, {hi:g}]; "
                f"it must be below {smax:g} (reduce cov or widen the bounds)"
            )
        k = m * (1.0 - m) / v - 1.0
        a, b = m * k, (1.0 - m) * k
        return Marginal("beta", mean, s, {"alpha": a, "beta": b, "lower": lo, "upper": hi},
                        lo, hi, _DistRecipe("beta", (a, b), {"loc": lo, "scale": hi - lo}))

    # truncated-normal
    _need(nm, mean=mean)
    if lower is None and upper is None:
        raise InputError(
            "truncated-normal: give 'lower' and/or 'upper' (e.g. lower=0); "
            "without bounds use 'normal'"
        )
    lo, hi = _bounds(nm, lower, upper)
    _inside(nm, mean, lo, hi)
    s = _spread(nm, mean, cov, std)
    parent = _solve_truncated_parent(mean, s, lo, hi)
    if parent is None:
        raise InputError(
            f"truncated-normal: no normal truncated to [{lo:g}, {hi:g}] has mean "
            f"{mean:g} and std {s:g}; reduce cov or move the mean away from the bound"
        )
    mu_p, s_p = parent
    d = scipy.stats.truncnorm((lo - mu_p) / s_p, (hi - mu_p) / s_p, loc=mu_p, scale=s_p)
    return Marginal("truncated-normal", mean, s,
                    {"parent_mean": mu_p, "parent_std": s_p, "lower": lo, "upper": hi},
                    lo, hi, d)


def scaled_spread(marginal: Marginal, factor: float) -> Marginal:
    """The same distribution family with the same mean and ``factor`` × its std.

    Used for the quick spatial-averaging estimate, where a point distribution
    is replaced by that of a local average (std × √γ).

    Parameters
    ----------
    marginal : Marginal
    factor : float
        Ratio of standard deviations, 0 < factor <= 1.

    Returns
    -------
    Marginal
        ``normal``, ``lognormal``: the same family with the new std;
        ``truncated-normal``, ``beta``: the same bounds and the new std;
        ``uniform``, ``triangular`` (fixed by their bounds): bounds and mode
        moved towards the mean by ``factor`` (an affine map, which keeps the
        family); ``deterministic``: unchanged.
    """
    k = float(factor)
    if not (0.0 < k <= 1.0):
        raise InputError(f"scaled_spread: factor must be in (0, 1], got {factor!r}")
    m = marginal
    if k == 1.0 or m.name == "deterministic":
        return m
    if m.name in ("normal", "lognormal"):
        return make_marginal(m.name, mean=m.mean, std=m.std * k)
    if m.name in ("truncated-normal", "beta"):
        lo = None if math.isinf(m.lower) else m.lower
        hi = None if math.isinf(m.upper) else m.upper
        return make_marginal(m.name, mean=m.mean, std=m.std * k, lower=lo, upper=hi)

    def shrink(v):
        return m.mean + k * (v - m.mean)

    if m.name == "uniform":
        return make_marginal("uniform", lower=shrink(m.lower), upper=shrink(m.upper))
    return make_marginal("triangular", lower=shrink(m.lower), mode=shrink(m.params["mode"]),
                         upper=shrink(m.upper))


# ---------------------------------------------------------------------------
# Nataf correlation
_GH_ORDER = 64
_gh_x, _gh_w = np.polynomial.hermite_e.hermegauss(_GH_ORDER)
_gh_w = _gh_w / math.sqrt(2.0 * math.pi)  # weights of a standard normal


def _physical_correlation(m1: Marginal, m2: Marginal, rho0: float) -> float:
    """Correlation of x1, x2 when their Gaussians have correlation ``rho0``.

    Two-dimensional Gauss–Hermite quadrature (64² nodes) over independent
    standard normals u, w with z1 = u, z2 = ρ0 u + √(1 − ρ0²) w.
    """
    u = _gh_x[:, None]
    w = _gh_x[None, :]
    z2 = rho0 * u + math.sqrt(max(0.0, 1.0 - rho0 * rho0)) * w
    x1 = (m1.from_standard_normal(u) - m1.mean) / m1.std
    x2 = (m2.from_standard_normal(z2) - m2.mean) / m2.std
    return float(np.sum(_gh_w[:, None] * _gh_w[None, :] * x1 * x2))


def nataf_correlation(m1: Marginal, m2: Marginal, rho_target: float) -> float:
    """Correlation of the underlying standard normals for a target correlation.

    Parameters
    ----------
    m1, m2 : Marginal
        The two marginals.
    rho_target : float
        Desired (Pearson) correlation of the physical values, in [-1, 1].

    Returns
    -------
    float
        ρ0, the correlation to impose on the Gaussians z1, z2 so that
        ``x_i = F_i⁻¹(Φ(z_i))`` have correlation ``rho_target``.
        Closed forms for normal/lognormal pairs (e.g. Der Kiureghian & Liu
        1986): normal–lognormal ρ0 = ρ V/ζ; lognormal–lognormal
        ρ0 = ln(1 + ρ V1 V2)/(ζ1 ζ2), with ζ² = ln(1 + V²). Other pairs are
        solved by Gauss–Hermite quadrature and Brent's root finder. A pair
        with a deterministic variable returns 0.

    Raises
    ------
    InputError
        ``rho_target`` outside [-1, 1], or outside the range of correlations
        the two marginals can reach.
    """
    r = _finite(rho_target, "rho_target", "nataf_correlation")
    if not -1.0 <= r <= 1.0:
        raise InputError(f"nataf_correlation: rho_target must be in [-1, 1], got {r}")
    if m1.name == "deterministic" or m2.name == "deterministic":
        return 0.0
    if r == 0.0:
        return 0.0
    n1, n2 = m1.name, m2.name
    if n1 == "normal" and n2 == "normal":
        return r
    if {n1, n2} == {"normal", "lognormal"}:
        ln = m1 if n1 == "lognormal" else m2
        v, z = ln.std / ln.mean, ln.params["sigma_ln"]
        r0 = r * v / z
        if abs(r0) > 1.0:
            raise InputError(
                f"nataf_correlation: a normal and a lognormal with COV {v:g} cannot "
                f"have correlation {r}; the reachable range is ±{z / v:.4f}"
            )
        return r0
    if n1 == "lognormal" and n2 == "lognormal":
        v1, v2 = m1.std / m1.mean, m2.std / m2.mean
        z1, z2 = m1.params["sigma_ln"], m2.params["sigma_ln"]
        arg = 1.0 + r * v1 * v2
        r0 = math.log(arg) / (z1 * z2) if arg > 0 else -math.inf
        if not -1.0 <= r0 <= 1.0:
            lo = math.expm1(-z1 * z2) / (v1 * v2)
            hi = math.expm1(z1 * z2) / (v1 * v2)
            raise InputError(
                f"nataf_correlation: these two lognormals cannot have correlation {r}; "
                f"the reachable range is [{lo:.4f}, {hi:.4f}]"
            )
        return r0
    edge = 1.0 - 1e-12
    f_lo = _physical_correlation(m1, m2, -edge)
    f_hi = _physical_correlation(m1, m2, edge)
    if not f_lo <= r <= f_hi:
        raise InputError(
            f"nataf_correlation: {n1} and {n2} marginals cannot have correlation {r}; "
            f"the reachable range is [{f_lo:.4f}, {f_hi:.4f}]"
        )
    return scipy.optimize.brentq(lambda q: _physical_correlation(m1, m2, q) - r,
                           -edge, edge, xtol=1e-12)


def _check_pd(R, names, what):
    """Raise InputError naming the pair most involved if R is not PD."""
    w, v = np.linalg.eigh(R)
    if w[0] > 1e-12:
        return
    vec = np.abs(v[:, 0])
    i, j = sorted(np.argsort(vec)[-2:])
    raise InputError(
        f"{what} is not positive definite (smallest eigenvalue {w[0]:.3g}); the "
        f"pair ({names[i]!r}, {names[j]!r}) with rho = {R[i, j]:.3f} is the most "
        "involved: reduce the correlations involving these variables"
    )


def nataf_matrix(marginals, R, names=None) -> np.ndarray:
    """Gaussian correlation matrix that gives the target correlations ``R``.

    Parameters
    ----------
    marginals : sequence of Marginal
        One marginal per variable.
    R : array_like, shape (n, n)
        Target correlation matrix of the physical values (symmetric, unit
        diagonal, positive definite).
    names : sequence of str, optional
        Variable names used in error messages (default ``x0, x1, ...``).

    Returns
    -------
    numpy.ndarray, shape (n, n)
        Adjusted correlation matrix R0 of the standard normals. Rows and
        columns of deterministic variables are zero off the diagonal.

    Raises
    ------
    InputError
        Wrong shape, not symmetric, diagonal not 1, entries outside [-1, 1],
        or R or the adjusted R0 not positive definite (naming a pair).
    """
    n = len(marginals)
    names = list(names) if names is not None else [f"x{i}" for i in range(n)]
    R = np.asarray(R, dtype=float)
    if R.shape != (n, n):
        raise InputError(
            f"correlation matrix must have shape ({n}, {n}) for {n} variables, got {R.shape}"
        )
    if not np.all(np.isfinite(R)):
        raise InputError("correlation matrix has non-finite entries")
    if not np.allclose(R, R.T, atol=1e-12):
        i, j = np.argwhere(np.abs(R - R.T) > 1e-12)[0]
        raise InputError(
            f"correlation matrix is not symmetric: ({names[i]!r}, {names[j]!r}) has "
            f"{R[i, j]} but the transposed entry is {R[j, i]}"
        )
    if not np.allclose(np.diag(R), 1.0):
        raise InputError("correlation matrix must have 1 on the diagonal")
    if np.any(np.abs(R) > 1.0):
        i, j = np.argwhere(np.abs(R) > 1.0)[0]
        raise InputError(
            f"correlation ({names[i]!r}, {names[j]!r}) = {R[i, j]} is outside [-1, 1]"
        )
    live = [k for k, m in enumerate(marginals) if m.name != "deterministic"]
    sub = R[np.ix_(live, live)]
    _check_pd(sub, [names[k] for k in live], "correlation matrix")
    R0 = np.eye(n)
    for a in range(len(live)):
        for b in range(a + 1, len(live)):
            i, j = live[a], live[b]
            if R[i, j] != 0.0:
                try:
                    r0 = nataf_correlation(marginals[i], marginals[j], R[i, j])
                except InputError as exc:
                    raise InputError(f"pair ({names[i]!r}, {names[j]!r}): {exc}") from None
                R0[i, j] = R0[j, i] = r0
    _check_pd(R0[np.ix_(live, live)], [names[k] for k in live],
              "Nataf-adjusted correlation matrix")
    return R0

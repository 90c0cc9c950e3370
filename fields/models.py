"""Correlation models parametrised by the scale of fluctuation.

Every model is a small class that defines only its normalised 1D correlation
``rho(u)`` of the *scaled* lag ``u = tau / theta``, where ``theta`` is
Vanmarcke's (1983) scale of fluctuation, ``theta = integral of rho over the
whole line``.  Hence every ``rho`` satisfies ``integral rho(u) du = 1`` over
``(-inf, inf)``.  The base class derives the rest:

* geometric (elliptical) anisotropy with ``theta_h`` along the major axis,
  ``theta_v`` across it and a rotation ``angle`` (degrees, counter-clockwise
  positive, from +x to the direction of ``theta_h``; a stratum dipping down to
  the right by 10 degrees has ``angle = -10``);
* correlation at lags ``(dx, dy)`` and covariance matrices between point sets;
* the conversion to a GSTools model (written once, through GSTools'
  ``integral_scale``, which is ``theta / 2``).

All fields here have unit variance: scale by the standard deviation later.
"""
from __future__ import annotations

import math

import numpy as np

from .errors import InputError

__all__ = [
    "CorrelationModel",
    "Exponential",
    "Gaussian",
    "SecondOrderMarkov",
    "Spherical",
    "Matern",
    "get_model",
    "MODEL_NAMES",
]


class CorrelationModel:
    """Stationary, unit-variance correlation model with elliptical anisotropy.

    Parameters
    ----------
    theta_h : float
        Scale of fluctuation along the major axis (m), normally horizontal.
    theta_v : float, optional
        Scale of fluctuation across the major axis (m), normally vertical.
        Defaults to ``theta_h`` (isotropic).
    angle : float, optional
        Angle (degrees, counter-clockwise positive) from the +x axis to the
        direction of ``theta_h``.  Default 0.

    Notes
    -----
    Subclasses set ``name`` and implement :meth:`rho`.  The anisotropic
    correlation is ``rho(sqrt(s1**2 + s2**2))`` with ``s1``, ``s2`` the lag
    components along the rotated axes divided by ``theta_h`` and ``theta_v``:
    along either principal axis the 1D scale of fluctuation is exactly the
    one given.
    """

    name = "abstract"
    #: GSTools class name used by :meth:`to_gstools`.
    _gstools_class = None

    def __init__(self, *, theta_h, theta_v=None, angle=0.0):
        self.theta_h = _positive("theta_h", theta_h)
        self.theta_v = self.theta_h if theta_v is None else _positive("theta_v", theta_v)
        try:
            self.angle = float(angle)
        except (TypeError, ValueError):
            raise InputError(f"angle must be a number of degrees, got {angle!r}") from None
        if not math.isfinite(self.angle):
            raise InputError(f"angle must be finite (degrees), got {angle!r}")

    # ------------------------------------------------------------------ core
    def rho(self, u):
        """Normalised correlation of the scaled lag ``u = tau / theta`` (>= 0)."""
        raise NotImplementedError

    @property
    def params(self) -> dict:
        """Model-specific parameters beyond θ and angle (e.g. ``nu``)."""
        return {}

    def scaled_distance(self, dx, dy):
        """Lag length in units of θ after rotation and anisotropic scaling.

        Parameters
        ----------
        dx, dy : array_like
            Lag components (m), broadcast against each other.

        Returns
        -------
        numpy.ndarray
            ``sqrt((l1/theta_h)**2 + (l2/theta_v)**2)`` (dimensionless), with
            ``l1`` along the θh direction and ``l2`` across it.
        """
        dx = np.asarray(dx, dtype=float)
        dy = np.asarray(dy, dtype=float)
        a = math.radians(self.angle)
        c, s = math.cos(a), math.sin(a)
        l1 = (c * dx + s * dy) / self.theta_h
        l2 = (-s * dx + c * dy) / self.theta_v
        return np.hypot(l1, l2)

    def correlation(self, dx, dy=0.0):
        """Correlation at lag ``(dx, dy)``.

        Parameters
        ----------
        dx, dy : array_like
            Horizontal and vertical lag components (m), broadcast.

        Returns
        -------
        numpy.ndarray
            Correlation coefficient(s) in [-1, 1], shape of the broadcast lags.
        """
        return self.rho(self.scaled_distance(dx, dy))

    def covariance_matrix(self, pts_a, pts_b=None):
        """Correlation (unit-variance covariance) matrix between point sets.

        Parameters
        ----------
        pts_a : array_like, shape (n, 2)
            Point coordinates ``(x, y)`` (m).
        pts_b : array_like, shape (m, 2), optional
            Second point set; defaults to ``pts_a``.

        Returns
        -------
        numpy.ndarray, shape (n, m)
            ``C[i, j] = rho(pts_a[i] - pts_b[j])``.
        """
        a = _points("pts_a", pts_a)
        b = a if pts_b is None else _points("pts_b", pts_b)
        return self.correlation(a[:, None, 0] - b[None, :, 0], a[:, None, 1] - b[None, :, 1])

    def theta_along(self, direction_deg):
        """1D scale of fluctuation (m) along a line at ``direction_deg`` from +x."""
        b = math.radians(float(direction_deg) - self.angle)
        return 1.0 / math.hypot(math.cos(b) / self.theta_h, math.sin(b) / self.theta_v)

    # ------------------------------------------------------------- spectra
    #: scaled lag beyond which rho is exactly zero (finite-support models)
    _support = math.inf

    def spectral_density(self, omega, direction_deg=None):
        """One-sided spectral density G(ω) of the 1D process along a line.

        Vanmarcke's (1983) convention: G(ω) = (2/π) ∫₀^∞ ρ(τ) cos(ωτ) dτ for
        ω ≥ 0, so that ∫₀^∞ G dω = 1 (unit variance) and θ = π G(0).  Derived
        numerically from ``rho`` (Fourier integral by QUADPACK's QAWF), so
        a new model needs nothing more than its correlation function.

        Parameters
        ----------
        omega : array_like
            Circular wavenumbers (rad/m), ≥ 0.
        direction_deg : float, optional
            Direction of the line (degrees from +x); default the θh axis.

        Returns
        -------
        numpy.ndarray
            G(ω) in m/rad, the shape of ``omega``.
        """
        from scipy import integrate

        theta = self.theta_h if direction_deg is None else self.theta_along(direction_deg)
        w = np.asarray(omega, dtype=float)
        if np.any(w < 0) or not np.all(np.isfinite(w)):
            raise InputError("omega must be finite and >= 0 (rad/m): G is one-sided")
        out = np.empty(w.shape)
        f = lambda u: float(self.rho(u))
        for i, wi in np.ndenumerate(w):
            # in scaled lag u = τ/θ:  ∫ ρ(τ) cos(ωτ) dτ = θ ∫ ρ(u) cos(ωθ u) du
            k = wi * theta
            if math.isfinite(self._support):
                val = integrate.quad(f, 0.0, self._support, weight="cos", wvar=k, limit=200)[0]
            elif k == 0.0:
                val = integrate.quad(f, 0.0, math.inf, limit=200)[0]
            else:
                val = integrate.quad(f, 0.0, math.inf, weight="cos", wvar=k, limlst=100)[0]
            out[i] = 2.0 / math.pi * theta * val
        return out

    # -------------------------------------------------------------- gstools
    def to_gstools(self, dim: int = 2):
        """Equivalent GSTools covariance model (unit variance).

        The conversion is made through GSTools' ``integral_scale`` (the
        integral of the correlation over the half line), which equals θ/2 for
        every model; the anisotropy ratio is ``theta_v / theta_h`` and the
        rotation angle is passed in radians (GSTools also rotates
        counter-clockwise from +x to the main axis).

        Returns
        -------
        gstools.CovModel
        """
        import gstools as gs

        if dim != 2:
            raise InputError(f"dim={dim} is not supported: slipfield fields are 2D (use dim=2)")
        cls = getattr(gs, self._gstools_class)
        gm = cls(dim=2, var=1.0, len_scale=1.0, **self._gstools_kwargs())
        # integral_scale's setter rescales len_scale for the model's own shape
        gm.integral_scale = 0.5 * self.theta_h
        gm.anis = [self.theta_v / self.theta_h]
        gm.angles = [math.radians(self.angle)]
        return gm

    def _gstools_kwargs(self) -> dict:
        return {}

    # ------------------------------------------------------------- helpers
    def with_theta(self, *, theta_h=None, theta_v=None, angle=None):
        """Copy of the model with some of θh, θv, angle replaced."""
        return type(self)(
            theta_h=self.theta_h if theta_h is None else theta_h,
            theta_v=self.theta_v if theta_v is None else theta_v,
            angle=self.angle if angle is None else angle,
            **self.params,
        )

    def __repr__(self):
        extra = "".join(f", {k}={v!r}" for k, v in self.params.items())
        return (f"{type(self).__name__}(theta_h={self.theta_h!r}, theta_v={self.theta_v!r}, "
                f"angle={self.angle!r}{extra})")

    def __eq__(self, other):
        return (type(self) is type(other) and self.theta_h == other.theta_h
                and self.theta_v == other.theta_v and self.angle == other.angle
                and self.params == other.params)

    def __hash__(self):
        return hash((type(self), self.theta_h, self.theta_v, self.angle,
                     tuple(sorted(self.params.items()))))


class Exponential(CorrelationModel):
    """Markov (exponential) model, ρ(τ) = exp(-2|τ|/θ) (Vanmarcke 1983)."""

    name = "exponential"
    _gstools_class = "Exponential"

    def rho(self, u):
        return np.exp(-2.0 * np.abs(u))


class Gaussian(CorrelationModel):
    """Squared-exponential model, ρ(τ) = exp(-π τ²/θ²) (Vanmarcke 1983)."""

    name = "gaussian"
    _gstools_class = "Gaussian"

    def rho(self, u):
        return np.exp(-math.pi * np.square(u))


class SecondOrderMarkov(CorrelationModel):
    """Second-order Markov model, ρ = (1 + |τ|/b) exp(-|τ|/b), b = θ/4.

    Identical to the Whittle–Matérn model with ν = 3/2, which is how it is
    passed to GSTools.
    """

    name = "second-order-markov"
    _gstools_class = "Matern"

    def rho(self, u):
        a = 4.0 * np.abs(u)
        return (1.0 + a) * np.exp(-a)

    def _gstools_kwargs(self):
        return {"nu": 1.5}


class Spherical(CorrelationModel):
    """Spherical model with range a_s = 4θ/3 (zero correlation beyond a_s).

    ρ(τ) = 1 - 1.5 (τ/a_s) + 0.5 (τ/a_s)³ for τ < a_s.  The 1D scale of
    fluctuation of this form is θ = 3 a_s / 4.  The form is positive
    definite in up to three dimensions, so it is valid for 2D fields.
    """

    name = "spherical"
    _gstools_class = "Spherical"

    _support = 4.0 / 3.0

    def rho(self, u):
        t = np.minimum(np.abs(u) * 0.75, 1.0)  # tau / a_s
        return 1.0 - 1.5 * t + 0.5 * t ** 3

    @property
    def range_h(self):
        """Range along the major axis, a_s = 4θh/3 (m)."""
        return 4.0 * self.theta_h / 3.0


class Matern(CorrelationModel):
    """Whittle–Matérn model with smoothness ``nu``.

    ρ(τ) = 2^(1-ν)/Γ(ν) (√(2ν) τ/ℓ)^ν K_ν(√(2ν) τ/ℓ), with ℓ chosen so that
    the scale of fluctuation is θ: integrating (Gradshteyn & Ryzhik 6.561.16)
    gives θ = ℓ √(2π/ν) Γ(ν + 1/2)/Γ(ν).  ν = 1/2 is the Markov model and
    ν = 3/2 the second-order Markov model.

    Parameters
    ----------
    nu : float
        Smoothness (> 0, at most 50; for larger ν use ``gaussian``).
    """

    name = "matern"
    _gstools_class = "Matern"

    def __init__(self, *, theta_h, theta_v=None, angle=0.0, nu):
        super().__init__(theta_h=theta_h, theta_v=theta_v, angle=angle)
        self.nu = _positive("nu", nu)
        if self.nu > 50:
            raise InputError(f"nu={nu} is too large for the Matern model (ν ≤ 50); "
                             "use the 'gaussian' model, its limit as ν → ∞")
        nu_ = self.nu
        # ℓ/θ from θ = ℓ √(2π/ν) Γ(ν+½)/Γ(ν), in log form to avoid overflow
        log_ratio = 0.5 * math.log(2 * math.pi / nu_) + math.lgamma(nu_ + 0.5) - math.lgamma(nu_)
        self._k = math.sqrt(2 * nu_) * math.exp(log_ratio)  # √(2ν) τ/ℓ = k·u
        self._log_c = (1 - nu_) * math.log(2) - math.lgamma(nu_)

    @property
    def params(self):
        return {"nu": self.nu}

    def rho(self, u):
        x = self._k * np.abs(np.asarray(u, dtype=float))
        out = np.ones_like(x)
        pos = x > 0
        xp = x[pos]
        from scipy import special  # here, not at import: scipy.special is slow to import

        with np.errstate(over="ignore", under="ignore", invalid="ignore"):
            # kve = kv·e^x keeps large-x values finite
            val = np.exp(self._log_c + self.nu * np.log(xp) - xp) * special.kve(self.nu, xp)
        out[pos] = np.where(np.isfinite(val), val, 0.0)
        return np.minimum(out, 1.0)

    def _gstools_kwargs(self):
        return {"nu": self.nu}


_REGISTRY = {
    "exponential": Exponential,
    "markov": Exponential,
    "gaussian": Gaussian,
    "squared-exponential": Gaussian,
    "second-order-markov": SecondOrderMarkov,
    "spherical": Spherical,
    "matern": Matern,
}

#: Names accepted by :func:`get_model` (aliases included).
MODEL_NAMES = tuple(_REGISTRY)


def get_model(name, *, theta_h, theta_v=None, angle=0.0, **params) -> CorrelationModel:
    """Build a correlation model by name.

    Parameters
    ----------
    name : str
        ``exponential`` (alias ``markov``), ``gaussian`` (alias
        ``squared-exponential``), ``second-order-markov``, ``spherical`` or
        ``matern`` (needs ``nu``).  Case and underscores are ignored.
    theta_h : float
        Scale of fluctuation along the major axis (m), > 0.
    theta_v : float, optional
        Scale of fluctuation across it (m), > 0; default ``theta_h``.
    angle : float, optional
        Degrees counter-clockwise from +x to the θh direction; default 0.
    **params
        Model-specific parameters (``nu`` for ``matern``).  Any other keyword
        raises :class:`InputError`.

    Returns
    -------
    CorrelationModel
    """
    if isinstance(name, CorrelationModel):
        raise InputError("name must be a model name string, not a model object")
    key = str(name).strip().lower().replace("_", "-")
    if key not in _REGISTRY:
        raise InputError(f"unknown correlation model {name!r}: choose one of "
                         + ", ".join(MODEL_NAMES))
    cls = _REGISTRY[key]
    allowed = {"nu"} if cls is Matern else set()
    unknown = sorted(set(params) - allowed)
    if unknown:
        hint = " (the Matern model takes nu)" if cls is Matern else (
            " (this model takes only theta_h, theta_v, angle)")
        raise InputError(f"unknown parameter(s) {', '.join(unknown)} for model {key!r}{hint}")
    if cls is Matern and "nu" not in params:
        raise InputError("the 'matern' model needs its smoothness nu (e.g. nu=1.5)")
    return cls(theta_h=theta_h, theta_v=theta_v, angle=angle, **params)


# ---------------------------------------------------------------------------
def _positive(label, value) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{label} must be a positive number, got {value!r}") from None
    if not (math.isfinite(v) and v > 0):
        raise InputError(f"{label} must be > 0 and finite, got {value!r}")
    return v


def _points(label, pts) -> np.ndarray:
    p = np.asarray(pts, dtype=float)
    if p.ndim != 2 or p.shape[1] != 2:
        raise InputError(f"{label} must have shape (n, 2) of (x, y) coordinates in m, "
                         f"got shape {p.shape}")
    if not np.all(np.isfinite(p)):
        raise InputError(f"{label} contains NaN or infinite coordinates; remove them")
    return p

"""Statistics of a soil property fitted from measured profiles.

Given one or several vertical profiles of one property (depth, value), this
module estimates

* the trend of the mean with depth (constant or linear),
* the standard deviation and COV of the residuals about the trend,
* the vertical scale of fluctuation θv (and θh when profiles stand at
  several x), with a confidence interval,

by restricted maximum likelihood (REML): the Gaussian likelihood of the
residual contrasts, i.e. maximum likelihood on the residuals after the trend
(Patterson & Thompson 1971; for soil profiles e.g. DeGroot & Baecher 1993,
J. Geotech. Eng. 119(1), recalled from memory).  With the trend coefficients
β and the variance σ² profiled out in closed form, the restricted
log-likelihood of the scales θ is

    ℓ_R(θ) = −½ [(n − p) ln σ̂²(θ) + ln|R(θ)| + ln|Xᵀ R(θ)⁻¹ X|],
    σ̂²(θ) = rᵀ R⁻¹ r / (n − p),  r = v − X β̂(θ)  (generalised least squares),

with ``R(θ)`` the correlation matrix of the chosen model (a registry name of
:mod:`fields.models`).  The confidence interval of a scale is the
profile-likelihood interval {θ : 2 [ℓ_R(θ̂) − ℓ_p(θ)] ≤ χ²₁(level)} (Wilks'
likelihood-ratio theorem); an end the likelihood does not reach inside the
searched range is reported as open.

Cross-check: the variance-function method (Vanmarcke 1983, Random Fields,
ch. 5): the variance of moving averages of the residuals over windows of
length T, divided by σ̂², is fitted by least squares with the model's γ(T).

Depth ``z`` is measured downward (m); the trend is
``mean(z) = a + b (z − z_ref)`` with ``z_ref`` the mean data depth.  A
diagonal jitter of 1e-8 keeps R positive definite for smooth models
(Gaussian) at close spacing.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import importlib

import numpy as np
from threadpoolctl import threadpool_limits


class _OnUse:
    """A scipy module imported on first attribute use: the command line builds its parser
    (``TRENDS``) with this module imported, and scipy.stats/linalg/optimize cost seconds."""

    def __init__(self, name):
        self._name = name

    def __getattr__(self, attr):
        return getattr(importlib.import_module(self._name), attr)


linalg, optimize, stats = _OnUse("scipy.linalg"), _OnUse("scipy.optimize"), _OnUse("scipy.stats")

from .averaging import variance_function
from .errors import InputError
from .models import MODEL_NAMES, get_model

__all__ = ["Profile", "ProfileFit", "fit_profiles", "variance_function_theta", "TRENDS"]

TRENDS = ("constant", "linear")
_JITTER = 1e-8
_GRID = 33  # log-spaced scales tried before refining (guards against local maxima)


@dataclass(frozen=True)
class Profile:
    """One vertical profile of a property.

    Parameters
    ----------
    x : float
        Horizontal position (m).
    depth : array_like
        Depths below the ground surface (m, downward), distinct.
    value : array_like
        Measured values (property units).
    name : str
        Label used in messages and plots.
    """

    x: float
    depth: np.ndarray
    value: np.ndarray
    name: str = "profile"

    def __post_init__(self):
        try:
            x = float(self.x)
        except (TypeError, ValueError):
            raise InputError(f"{self.name}: x must be a number (m), got {self.x!r}") from None
        z = np.asarray(self.depth, dtype=float).ravel()
        v = np.asarray(self.value, dtype=float).ravel()
        if z.shape != v.shape:
            raise InputError(f"{self.name}: depth and value must have the same length, "
                             f"got {z.size} and {v.size}")
        if not (np.all(np.isfinite(z)) and np.all(np.isfinite(v)) and math.isfinite(x)):
            raise InputError(f"{self.name}: x, depth and value must be finite numbers; "
                             "remove empty or non-numeric readings")
        order = np.argsort(z, kind="stable")
        z, v = z[order], v[order]
        if z.size > 1 and np.any(np.diff(z) <= 0):
            i = int(np.flatnonzero(np.diff(z) <= 0)[0])
            raise InputError(f"{self.name}: two readings at depth {z[i]:g} m; give one value "
                             "per depth (average repeated readings first)")
        object.__setattr__(self, "x", x)
        object.__setattr__(self, "depth", z)
        object.__setattr__(self, "value", v)


@dataclass
class ProfileFit:
    """Result of :func:`fit_profiles` (units of the property unless said).

    ``theta_*_ci`` are (low, high) in m; ``*_open`` flags say that the
    likelihood did not fall to the interval's level inside the searched
    range at that end (low, high), so the end is a bound of the search, not
    of the interval.  ``theta_h`` is None for a single profile (or several
    at one x).
    """

    model: str
    trend: str
    log: bool
    intercept: float            # mean at z_ref (property units, or ln units with log)
    gradient: float             # per m of depth
    z_ref: float                # m
    sigma: float                # SD of the residuals (property or ln units)
    mean: float                 # mean of the trend over the data (property units)
    cov: float                  # COV of the property about its trend (-)
    theta_v: float
    theta_v_ci: tuple
    theta_v_open: tuple
    theta_h: float | None
    theta_h_ci: tuple | None
    theta_h_open: tuple | None
    level: float
    n_points: int
    n_profiles: int
    loglik: float
    spacing: float              # median sampling interval (m)
    theta_v_variance_function: float
    nu: float | None = None
    search_range: tuple = ()
    likelihood_curve: tuple = field(default=(), repr=False)  # (θv grid, profile ℓ_R − max)

    def trend_at(self, depth):
        """Fitted mean at depths (m), property units (the median for ``log``)."""
        m = self.intercept + self.gradient * (np.asarray(depth, float) - self.z_ref)
        return np.exp(m) if self.log else m

    def correlation_model(self):
        """The fitted :class:`fields.models.CorrelationModel` (θh = θv for one profile)."""
        kw = {} if self.nu is None else {"nu": self.nu}
        return get_model(self.model, theta_h=self.theta_h or self.theta_v, theta_v=self.theta_v, **kw)

    def random_block(self, material, prop, *, theta_h=None) -> str:
        """A ``[[random]]`` block for a case file, with the fit in comments.

        Parameters
        ----------
        material, prop : str
            The ``material`` and ``property`` keys of the block.
        theta_h : float, optional
            θh (m) to write when the data could not estimate it (one profile).
        """
        th = self.theta_h if self.theta_h is not None else theta_h
        lo, hi = self.theta_v_ci
        ends = ("≤" if self.theta_v_open[0] else "") + f"{lo:.3g}", \
            ("≥" if self.theta_v_open[1] else "") + f"{hi:.3g}"
        lines = [f"# fitted from {self.n_points} readings in {self.n_profiles} profile(s) by REML, "
                 f"{self.model} model",
                 f"# trend ({self.trend}): mean = {self._trend_text()}",
                 f"# theta_v {self.level:.0%} interval [{ends[0]}, {ends[1]}] m; variance-function "
                 f"check {self.theta_v_variance_function:.3g} m"]
        if self.theta_h is not None:
            lo, hi = self.theta_h_ci
            lines.append(f"# theta_h {self.level:.0%} interval [{'≤' if self.theta_h_open[0] else ''}"
                         f"{lo:.3g}, {'≥' if self.theta_h_open[1] else ''}{hi:.3g}] m")
        if self.trend == "linear" and self.log:
            lines.append("# the fitted median grows exponentially with depth while the case's su laws are "
                         "linear: approximate it in the material's law, or fit without --log")
        elif self.trend == "linear":
            lines.append("# the COV applies about the trend: put the trend in the material "
                         "(e.g. su = { law = \"depth\", value = ..., gradient = ... })")
        lines += ["[[random]]", f"material = {_toml_str(material)}", f"property = {_toml_str(prop)}",
                  f"distribution = \"{'lognormal' if self.log else 'normal'}\""]
        if self.trend == "constant":
            lines.append(f"mean = {self.mean:.4g}")
        lines.append(f"cov = {self.cov:.3g}")
        if th is None:
            lines.append("theta_h = 0.0   # FILL IN: one profile cannot estimate θh (m)")
        else:
            lines.append(f"theta_h = {th:.3g}")
        lines += [f"theta_v = {self.theta_v:.3g}", f"model = \"{self.model}\""]
        if self.nu is not None:
            lines.append(f"nu = {self.nu:g}")
        return "\n".join(lines) + "\n"

    def _trend_text(self):
        a = self.intercept - self.gradient * self.z_ref
        if self.log:
            return f"exp({a:.4g} {'+' if self.gradient >= 0 else '-'} {abs(self.gradient):.4g}·z) (median)"
        if self.trend == "constant":
            return f"{a:.4g}"
        return f"{a:.4g} {'+' if self.gradient >= 0 else '-'} {abs(self.gradient):.4g}·z  (z = depth, m)"

    def to_dict(self) -> dict:
        """Plain JSON-ready summary."""
        out = {k: getattr(self, k) for k in (
            "model", "trend", "log", "intercept", "gradient", "z_ref", "sigma", "mean", "cov",
            "theta_v", "theta_h", "level", "n_points", "n_profiles", "loglik", "spacing",
            "theta_v_variance_function", "nu")}
        out["theta_v_ci"] = list(self.theta_v_ci)
        out["theta_v_open"] = list(self.theta_v_open)
        out["theta_h_ci"] = None if self.theta_h_ci is None else list(self.theta_h_ci)
        out["theta_h_open"] = None if self.theta_h_open is None else list(self.theta_h_open)
        return out


def _toml_str(s):
    return '"' + str(s).replace("\\", "\\\\").replace('"', '\\"') + '"'


class _Reml:
    """Restricted log-likelihood of the scales for fixed data and trend."""

    def __init__(self, model, nu, x, z, v, X):
        kw = {} if nu is None else {"nu": nu}
        # unit-θ model: ρ of the scaled lag hypot(Δx/θh, Δz/θv) (axes along x and depth)
        self.unit = get_model(model, theta_h=1.0, **kw)
        self.dx2 = np.square(x[:, None] - x[None, :])
        self.dz2 = np.square(z[:, None] - z[None, :])
        self.flat = not np.any(self.dx2)
        self.v, self.X = v, X
        self.cols = [np.ascontiguousarray(c) for c in np.column_stack([X, v]).T]
        self.n, self.p = X.shape
        self.eye = _JITTER * np.eye(self.n)

    def corr(self, th, tv):
        u2 = self.dz2 / tv ** 2 if self.flat else self.dx2 / th ** 2 + self.dz2 / tv ** 2
        return self.unit.rho(np.sqrt(u2)) + self.eye

    def solve(self, th, tv):
        """(ℓ_R, β̂, σ̂²) at scales (θh, θv)."""
        # LAPACK directly: small matrices, and scipy's wrappers go through
        # multi-threaded BLAS paths that are slow on a busy machine
        L, info = linalg.lapack.dpotrf(self.corr(th, tv), lower=1, clean=1)
        if info != 0:
            return -np.inf, None, None
        # one triangular solve per column (trsv): few columns, no threading
        W = np.column_stack([linalg.blas.dtrsv(L, c, lower=1) for c in self.cols])
        Xw, vw = W[:, :self.p], W[:, self.p]
        A = Xw.T @ Xw
        beta = np.linalg.solve(A, Xw.T @ vw)
        r = vw - Xw @ beta
        s2 = float(r @ r) / (self.n - self.p)
        if not s2 > 0:
            return -np.inf, beta, 0.0
        ll = -0.5 * ((self.n - self.p) * math.log(s2) + 2.0 * np.log(np.diag(L)).sum()
                     + np.linalg.slogdet(A)[1])
        return float(ll), beta, s2


def _maximise_1d(f, lo, hi, n=_GRID):
    """Maximum of f(log θ) over [lo, hi] (log m): grid of n, then bounded refinement.

    Returns (t̂, f(t̂), grid, values on the grid).
    """
    g = np.linspace(lo, hi, n)
    vals = np.array([f(t) for t in g])
    k = int(np.nanargmax(vals))
    a, b = g[max(k - 1, 0)], g[min(k + 1, n - 1)]
    res = optimize.minimize_scalar(lambda t: -f(t), bounds=(a, b), method="bounded",
                                   options={"xatol": 1e-4})
    if -res.fun >= vals[k]:
        return float(res.x), float(-res.fun), g, vals
    return float(g[k]), float(vals[k]), g, vals


def _interval(f, t_hat, l_hat, g, approx, drop):
    """Ends (m) of {t : f(t) ≥ l_hat − drop} around t_hat, and open flags.

    ``g`` is a grid of log θ with ``approx`` values not above f (equal to f
    in 1D, a coarse profile in 2D): the walk from t_hat outward evaluates f
    only where the grid says the level may have been crossed, then brentq
    finds the crossing.  No crossing inside the grid: the end is the grid's
    bound and is flagged open.
    """
    target = l_hat - drop
    ends, opens = [], []
    for side in (g[g < t_hat][::-1], g[g > t_hat]):
        prev, found = t_hat, None
        idx = {float(t): k for k, t in enumerate(g)}
        for t in side:
            if approx[idx[float(t)]] >= target:
                prev = t
                continue
            if f(t) < target:
                found = optimize.brentq(lambda u: f(u) - target, prev, t, xtol=1e-4)
                break
            prev = t
        ends.append(math.exp(found if found is not None else (side[-1] if side.size else t_hat)))
        opens.append(found is None)
    return (ends[0], ends[1]), (opens[0], opens[1])


def variance_function_theta(model, depth_list, resid_list, sigma2, *, nu=None):
    """θv by the variance-function method (Vanmarcke 1983), a cross-check.

    For windows of k = 1 … n/4 consecutive readings (length T = k Δ, with Δ
    the median spacing), the variance of the moving averages of the
    residuals over σ² estimates γ(T); θ minimises Σ [γ̂(T) − γ(T; θ)]² over
    log θ.

    Parameters
    ----------
    model : str
        Correlation model name.
    depth_list, resid_list : list of ndarray
        Depths (m) and residuals of each profile.
    sigma2 : float
        Variance of the residuals.
    nu : float, optional
        Matérn smoothness.

    Returns
    -------
    float
        θ (m), or NaN when the profiles are too short (fewer than 8 readings).
    """
    T_all, g_all, w_all = [], [], []
    for z, r in zip(depth_list, resid_list):
        n = r.size
        if n < 8:
            continue
        d = float(np.median(np.diff(z)))
        c = np.concatenate([[0.0], np.cumsum(r)])
        for k in range(1, n // 4 + 1):
            avg = (c[k:] - c[:-k]) / k
            T_all.append(k * d)
            g_all.append(float(np.mean(avg ** 2)) / sigma2)
            w_all.append(n - k + 1)
    if not T_all:
        return math.nan
    T, gh, w = np.array(T_all), np.array(g_all), np.array(w_all, float)
    kw = {} if nu is None else {"nu": nu}

    def loss(t):
        m = get_model(model, theta_h=math.exp(t), **kw)
        return float(np.sum(w * (gh - variance_function(m, T)) ** 2))

    lo, hi = math.log(T.min() / 20), math.log(T.max() * 20)
    g = np.linspace(lo, hi, 41)
    k = int(np.argmin([loss(t) for t in g]))
    res = optimize.minimize_scalar(loss, bounds=(g[max(k - 1, 0)], g[min(k + 1, 40)]),
                                   method="bounded")
    return float(math.exp(res.x))


def fit_profiles(profiles, *, model="exponential", trend="linear", log=False, nu=None,
                 level=0.95, theta_range=None) -> ProfileFit:
    """Fit trend, COV and scales of fluctuation to profiles of one property.

    Parameters
    ----------
    profiles : Profile or sequence of Profile
        Readings of one property.  Profiles at distinct x give θh too.
    model : str
        Correlation model (a name of ``fields.models.MODEL_NAMES``).
    trend : {"constant", "linear"}
        Mean constant or linear in depth.
    log : bool
        Fit ln(value) (a lognormal property): trend of the median, COV from
        σ of the logs, ``cov = sqrt(exp(σ²) − 1)``.
    nu : float, optional
        Matérn smoothness (``matern`` only).
    level : float
        Confidence level of the intervals (0 < level < 1).
    theta_range : (float, float), optional
        Range of θ searched (m); default from a tenth of the smallest
        spacing to ten times the longest extent of the data.

    Returns
    -------
    ProfileFit
    """
    # hundreds of small factorisations: one BLAS thread each is fastest, and
    # multi-threaded ones stall badly when the cores are shared
    with threadpool_limits(1, user_api="blas"):
        return _fit(profiles, model=model, trend=trend, log=log, nu=nu, level=level,
                    theta_range=theta_range)


def _fit(profiles, *, model, trend, log, nu, level, theta_range) -> ProfileFit:
    if isinstance(profiles, Profile):
        profiles = [profiles]
    profiles = list(profiles)
    if not profiles or not all(isinstance(p, Profile) for p in profiles):
        raise InputError("profiles must be one or more fields.fitting.Profile objects")
    key = str(model).strip().lower().replace("_", "-")
    if key not in MODEL_NAMES:
        raise InputError(f"model {model!r} is unknown: choose one of {', '.join(MODEL_NAMES)}")
    if trend not in TRENDS:
        raise InputError(f"trend {trend!r} is unknown: choose one of {', '.join(TRENDS)}")
    if key == "matern" and nu is None:
        raise InputError("the matern model needs its smoothness nu (e.g. 1.5)")
    nu = None if key != "matern" else float(nu)
    if not 0 < float(level) < 1:
        raise InputError(f"level must be between 0 and 1 (e.g. 0.95), got {level!r}")
    p = 1 if trend == "constant" else 2
    for pr in profiles:
        if pr.depth.size < p + 3:
            raise InputError(f"{pr.name}: {pr.depth.size} readings are too few to fit a {trend} "
                             f"trend and a scale of fluctuation; give at least {p + 3}")
    x = np.concatenate([np.full(pr.depth.size, pr.x) for pr in profiles])
    z = np.concatenate([pr.depth for pr in profiles])
    v = np.concatenate([pr.value for pr in profiles])
    if log:
        if np.any(v <= 0):
            pr = next(q for q in profiles if np.any(q.value <= 0))
            raise InputError(f"{pr.name}: a lognormal fit (log) needs values > 0; found "
                             f"{pr.value[pr.value <= 0][0]:g}")
        v = np.log(v)
    z_ref = float(z.mean())
    X = np.ones((z.size, 1)) if p == 1 else np.column_stack([np.ones(z.size), z - z_ref])
    reml = _Reml(key, nu, x, z, v, X)
    spacing = float(np.median(np.concatenate([np.diff(pr.depth) for pr in profiles])))
    dmin = float(min(np.diff(pr.depth).min() for pr in profiles))
    extent = float(max(np.ptp(z), np.ptp(x)))
    if theta_range is None:
        lo, hi = math.log(dmin / 10), math.log(10 * max(extent, dmin))
    else:
        a, b = (float(t) for t in theta_range)
        if not 0 < a < b:
            raise InputError(f"theta_range must be (low, high) with 0 < low < high (m), got {theta_range!r}")
        lo, hi = math.log(a), math.log(b)
    xs = np.unique(x)
    drop = 0.5 * float(stats.chi2.ppf(level, 1))

    if xs.size == 1:
        def f_v(t):
            return reml.solve(math.exp(t), math.exp(t))[0]
        tv, l_hat, g, vals = _maximise_1d(f_v, lo, hi)
        ci_v, open_v = _interval(f_v, tv, l_hat, g, vals, drop)
        ci_h = open_h = None
        curve = (np.exp(g), vals - l_hat)
        theta_h = None
        _, beta, s2 = reml.solve(math.exp(tv), math.exp(tv))
    else:
        gx = np.diff(xs).min()
        lo_h = math.log(gx / 10) if theta_range is None else lo
        hi_h = math.log(10 * max(extent, gx)) if theta_range is None else hi

        def f2(th_, tv_):
            return reml.solve(math.exp(th_), math.exp(tv_))[0]

        def prof_v(tv_):
            return _maximise_1d(lambda a: f2(a, tv_), lo_h, hi_h, 13)[1]

        def prof_h(th_):
            return _maximise_1d(lambda b: f2(th_, b), lo, hi, 13)[1]

        # coarse grid then Nelder-Mead from the best node
        gh_, gv_ = np.linspace(lo_h, hi_h, 13), np.linspace(lo, hi, 13)
        vals2 = np.array([[f2(a, b) for b in gv_] for a in gh_])
        i, j = np.unravel_index(int(np.nanargmax(vals2)), vals2.shape)
        res = optimize.minimize(lambda t: -f2(min(max(t[0], lo_h), hi_h), min(max(t[1], lo), hi)),
                                [gh_[i], gv_[j]], method="Nelder-Mead",
                                options={"xatol": 1e-4, "fatol": 1e-7})
        t_h, t_v = (min(max(res.x[0], lo_h), hi_h), min(max(res.x[1], lo), hi))
        l_hat = -float(res.fun)
        if vals2[i, j] > l_hat:
            t_h, t_v, l_hat = gh_[i], gv_[j], float(vals2[i, j])
        ci_v, open_v = _interval(prof_v, t_v, l_hat, gv_, np.max(vals2, axis=0), drop)
        ci_h, open_h = _interval(prof_h, t_h, l_hat, gh_, np.max(vals2, axis=1), drop)
        tv, theta_h = t_v, math.exp(t_h)
        g = gv_
        curve = (np.exp(g), np.max(vals2, axis=0) - l_hat)
        _, beta, s2 = reml.solve(theta_h, math.exp(tv))

    theta_v = math.exp(tv)
    sigma = math.sqrt(s2)
    intercept = float(beta[0])
    gradient = float(beta[1]) if p == 2 else 0.0
    if log:
        cov = math.sqrt(math.expm1(s2))
        mean = float(np.mean(np.exp(X @ beta + 0.5 * s2)))
    else:
        mean = float(np.mean(X @ beta))
        cov = sigma / abs(mean) if mean != 0 else math.inf
    resid = v - X @ beta
    cuts = np.cumsum([pr.depth.size for pr in profiles])[:-1]
    vf = variance_function_theta(key, [pr.depth for pr in profiles], np.split(resid, cuts), s2, nu=nu)
    return ProfileFit(model=key, trend=trend, log=bool(log), intercept=intercept, gradient=gradient,
                      z_ref=z_ref, sigma=sigma, mean=mean, cov=cov, theta_v=theta_v,
                      theta_v_ci=tuple(ci_v), theta_v_open=tuple(open_v), theta_h=theta_h,
                      theta_h_ci=None if ci_h is None else tuple(ci_h),
                      theta_h_open=None if open_h is None else tuple(open_h), level=float(level),
                      n_points=int(z.size), n_profiles=len(profiles), loglik=float(l_hat),
                      spacing=spacing, theta_v_variance_function=vf, nu=nu,
                      search_range=(math.exp(lo), math.exp(hi)), likelihood_curve=curve)

"""Variance function and covariance of local (cell) averages.

The variance function γ (Vanmarcke 1983, ch. 5; Fenton & Griffiths 2008,
§3.4) is the variance reduction of a unit-variance field averaged over a
line of length ``T`` or a rectangle ``X × Y``:

    γ(T) = (2/T) ∫₀ᵀ (1 - τ/T) ρ(τ) dτ,       Var[average] = γ σ².

Closed forms are used for the Markov, squared-exponential, second-order
Markov and spherical models along a line; other cases are integrated
numerically by composite Gauss–Legendre quadrature graded towards zero lag
(where the Markov correlation has its cusp).  In 2D the product
γ(X)·γ(Y) holds only for separable correlations: here only the squared
exponential aligned with the grid axes (angle a multiple of 90°) is
separable; elliptical models are integrated over the rectangle.

Local averaging for generators
------------------------------
When cells are not small against θ, a field of *cell averages* is the right
input to an analysis on cells.  :func:`grid_cell_covariance` gives the
covariance between averages over equal ``dx × dy`` cells as a function of
their centre offset; the dense generators (``average_cells=True``) and the
circulant-embedding generator use it in place of the point correlation.
For cells of any shape (mesh elements) :func:`cell_average_covariance` takes
quadrature points and weights per cell.
"""
from __future__ import annotations

import math

import numpy as np

from .errors import InputError
from .models import (CorrelationModel, Exponential, Gaussian, SecondOrderMarkov,
                     Spherical)

__all__ = [
    "variance_function",
    "variance_function_2d",
    "grid_cell_covariance",
    "cell_average_covariance",
    "support_radius",
]


# ----------------------------------------------------------- closed forms
def _gamma_exponential(t):
    # Vanmarcke 1983: γ = 2(a + e^-a - 1)/a², a = 2T/θ
    a = 2.0 * t
    out = np.ones_like(a)
    small = a < 1e-4
    out[small] = 1.0 - a[small] / 3.0 + a[small] ** 2 / 12.0  # series, avoids cancellation
    ab = a[~small]
    out[~small] = 2.0 * (ab + np.expm1(-ab)) / ab ** 2
    return out


def _gamma_gaussian(t):
    # Vanmarcke 1983: γ = (θ²/πT²)[(πT/θ) erf(√π T/θ) + exp(-πT²/θ²) - 1]
    out = np.ones_like(t)
    small = t < 1e-4
    out[small] = 1.0 - math.pi * t[small] ** 2 / 6.0
    tb = t[~small]
    from scipy import special  # here, not at import: scipy.special is slow to import

    out[~small] = (math.pi * tb * special.erf(math.sqrt(math.pi) * tb)
                   + np.expm1(-math.pi * tb ** 2)) / (math.pi * tb ** 2)
    return out


def _gamma_second_order_markov(t):
    # b = θ/4, r = T/b: γ = (2/r)[2 + e^-r - 3(1 - e^-r)/r]
    r = 4.0 * t
    out = np.ones_like(r)
    small = r < 1e-3
    out[small] = 1.0 - r[small] ** 2 / 12.0 + r[small] ** 3 / 30.0
    rb = r[~small]
    out[~small] = (2.0 / rb) * (2.0 + np.exp(-rb) + 3.0 * np.expm1(-rb) / rb)
    return out


def _gamma_spherical(t):
    # a_s = 4θ/3, r = T/a_s: r ≤ 1: 1 - r/2 + r³/20; r > 1: 3/(4r) - 1/(5r²)
    r = 0.75 * t
    out = np.empty_like(r)
    near = r <= 1.0
    out[near] = 1.0 - r[near] / 2.0 + r[near] ** 3 / 20.0
    rf = r[~near]
    out[~near] = 3.0 / (4.0 * rf) - 1.0 / (5.0 * rf ** 2)
    return out


_CLOSED = {
    Exponential: _gamma_exponential,
    Gaussian: _gamma_gaussian,
    SecondOrderMarkov: _gamma_second_order_markov,
    Spherical: _gamma_spherical,
}


def support_radius(model: CorrelationModel) -> float:
    """Scaled lag beyond which |ρ| < 1e-16 (dimensionless, in units of θ)."""
    if isinstance(model, Spherical):
        return 4.0 / 3.0
    if isinstance(model, Gaussian):
        return 3.7
    # bracket then bisect on the monotone tail of rho
    hi = 1.0
    while abs(float(model.rho(np.array([hi]))[0])) > 1e-16 and hi < 1e4:
        hi *= 2.0
    lo = 0.0
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        if abs(float(model.rho(np.array([mid]))[0])) > 1e-16:
            lo = mid
        else:
            hi = mid
    return hi


def _graded_nodes(length, n_panels=24, n_gl=12, grade=2.0):
    """Gauss–Legendre nodes/weights on [0, length], panels graded to 0."""
    x, w = np.polynomial.legendre.leggauss(n_gl)
    edges = length * (np.arange(n_panels + 1) / n_panels) ** grade
    a, b = edges[:-1, None], edges[1:, None]
    nodes = 0.5 * (b - a) * x[None, :] + 0.5 * (a + b)
    weights = 0.5 * (b - a) * w[None, :]
    return nodes.ravel(), weights.ravel()


def _axis_theta(model, axis):
    if isinstance(axis, str):
        key = axis.lower()
        if key in ("h", "major"):
            return model.theta_h
        if key in ("v", "minor"):
            return model.theta_v
        if key == "x":
            return model.theta_along(0.0)
        if key == "y":
            return model.theta_along(90.0)
        raise InputError(f"axis must be 'h', 'v', 'x', 'y' or a direction in degrees, got {axis!r}")
    try:
        return model.theta_along(float(axis))
    except (TypeError, ValueError):
        raise InputError(f"axis must be 'h', 'v', 'x', 'y' or a direction in degrees, got {axis!r}") from None


def _check_lengths(label, T):
    T = np.asarray(T, dtype=float)
    if not np.all(np.isfinite(T)) or np.any(T < 0):
        raise InputError(f"{label} must be averaging lengths >= 0 (m), got {T!r}")
    return T


def variance_function(model: CorrelationModel, T, *, axis="h", method="auto"):
    """Variance function γ(T) of line averages of length ``T``.

    Parameters
    ----------
    model : CorrelationModel
        Correlation model (unit variance).
    T : array_like
        Averaging length(s) (m), >= 0.
    axis : {'h', 'v', 'x', 'y'} or float, optional
        Direction of the line: along θh (default), along θv, along the x or
        y axis, or a direction in degrees counter-clockwise from +x.
    method : {'auto', 'numerical'}, optional
        ``auto`` uses the closed form where one is published (Markov,
        squared exponential, second-order Markov, spherical) and quadrature
        otherwise; ``numerical`` always integrates (used to check the
        quadrature against the closed forms).

    Returns
    -------
    numpy.ndarray
        γ(T) (dimensionless), same shape as ``T``; γ(0) = 1.
    """
    if not isinstance(model, CorrelationModel):
        raise InputError("model must be a CorrelationModel from fields.get_model(...)")
    if method not in ("auto", "numerical"):
        raise InputError(f"method must be 'auto' or 'numerical', got {method!r}")
    T = _check_lengths("T", T)
    theta = _axis_theta(model, axis)
    t = np.atleast_1d(T / theta).astype(float)
    closed = _CLOSED.get(type(model)) if method == "auto" else None
    if closed is not None:
        return closed(t).reshape(T.shape)
    # γ(t) = (2/t) ∫_0^min(t, u_max) (1 - u/t) ρ(u) du, ρ negligible past u_max
    umax = support_radius(model)
    out = np.ones_like(t)
    pos = t > 0
    tp = t[pos]
    L = np.minimum(tp, umax)
    s, w = _graded_nodes(1.0, n_panels=32, n_gl=16, grade=2.0)
    u = L[:, None] * s[None, :]
    integrand = (1.0 - u / tp[:, None]) * model.rho(u)
    out[pos] = 2.0 / tp * L * (integrand @ w)
    return out.reshape(T.shape)


def variance_function_2d(model: CorrelationModel, X, Y, *, method="auto"):
    """Variance function γ(X, Y) of averages over ``X × Y`` rectangles.

    The rectangle's sides are parallel to the x and y axes; the model may be
    rotated.

    Parameters
    ----------
    model : CorrelationModel
    X, Y : array_like
        Rectangle sizes along x and y (m), >= 0, broadcast together.
    method : {'auto', 'numerical'}, optional
        ``auto`` uses γ(X)·γ(Y) for the separable case (squared exponential
        with its axes along x and y) and the 2D integral otherwise.

    Returns
    -------
    numpy.ndarray
        γ(X, Y) (dimensionless), broadcast shape of ``X`` and ``Y``.
    """
    if not isinstance(model, CorrelationModel):
        raise InputError("model must be a CorrelationModel from fields.get_model(...)")
    if method not in ("auto", "numerical"):
        raise InputError(f"method must be 'auto' or 'numerical', got {method!r}")
    X = _check_lengths("X", X)
    Y = _check_lengths("Y", Y)
    X, Y = np.broadcast_arrays(X, Y)
    aligned = abs(math.remainder(model.angle, 90.0)) < 1e-12
    if method == "auto" and isinstance(model, Gaussian) and aligned:
        return (variance_function(model, X, axis="x") * variance_function(model, Y, axis="y"))
    out = np.empty(X.shape)
    flat_x, flat_y, flat_o = X.ravel(), Y.ravel(), out.reshape(-1)
    for n, (xx, yy) in enumerate(zip(flat_x, flat_y)):
        flat_o[n] = _gamma_rect(model, float(xx), float(yy))
    return out


def _gamma_rect(model, X, Y):
    if X == 0 and Y == 0:
        return 1.0
    if X == 0:
        return float(variance_function(model, np.array([Y]), axis="y", method="numerical")[0])
    if Y == 0:
        return float(variance_function(model, np.array([X]), axis="x", method="numerical")[0])
    umax = support_radius(model)
    a = math.radians(model.angle)
    # extents of the ellipse of scaled radius umax along x and y
    rx = umax * math.hypot(model.theta_h * math.cos(a), model.theta_v * math.sin(a))
    ry = umax * math.hypot(model.theta_h * math.sin(a), model.theta_v * math.cos(a))
    Lx, Ly = min(X, rx), min(Y, ry)
    tx, wx = _graded_nodes(Lx, n_panels=24, n_gl=12)
    ty, wy = _graded_nodes(Ly, n_panels=24, n_gl=12)
    # (1/XY)∫∫_{[-X,X]×[-Y,Y]} (1-|τx|/X)(1-|τy|/Y) ρ; ρ even ⇒ 2 × (τx > 0 half)
    fx = (1.0 - tx / X) * wx
    fy = (1.0 - ty / Y) * wy
    r_up = model.correlation(tx[:, None], ty[None, :])
    r_dn = model.correlation(tx[:, None], -ty[None, :])
    total = fx @ (r_up + r_dn) @ fy
    return float(2.0 * total / (X * Y))


def _tent_nodes(d, n_panels, n_gl):
    """Nodes/weights on [-d, d] for ∫ (1 - |u|/d)/d f(u) du (graded to 0)."""
    t, w = _graded_nodes(d, n_panels=n_panels, n_gl=n_gl)
    nodes = np.concatenate([-t[::-1], t])
    weights = np.concatenate([w[::-1], w]) * (1.0 - np.abs(nodes) / d) / d
    return nodes, weights


def grid_cell_covariance(model: CorrelationModel, dx, dy, off_x, off_y):
    """Covariance between averages over two ``dx × dy`` cells.

    Parameters
    ----------
    model : CorrelationModel
    dx, dy : float
        Cell sizes (m).
    off_x, off_y : array_like
        Offsets between the two cell centres (m), broadcast together.

    Returns
    -------
    numpy.ndarray
        Cov[A(0), A(offset)] for unit point variance; at zero offset this is
        γ(dx, dy).

    Notes
    -----
    Cov = (1/dx dy) ∫∫ (1 - |u|/dx)(1 - |v|/dy) ρ(Δx + u, Δy + v) du dv over
    u ∈ [-dx, dx], v ∈ [-dy, dy] (Vanmarcke 1983, covariance of local
    averages); the tent weights are the overlap of two cells.  Offsets of up
    to two cells are integrated in lag space with breaks at the tent's kink
    and at zero lag (the Markov cusp) and nodes clustered at both ends of
    each piece, which stays accurate when cells are much larger than θ;
    farther offsets, where the integrand is smooth, use a 16 × 16 Gauss
    rule.
    """
    dx = float(dx)
    dy = float(dy)
    if not (dx > 0 and dy > 0):
        raise InputError(f"cell sizes dx, dy must be > 0 (m), got {dx}, {dy}")
    ox, oy = np.broadcast_arrays(np.asarray(off_x, float), np.asarray(off_y, float))
    shape = ox.shape
    ox, oy = ox.ravel(), oy.ravel()
    out = np.empty(ox.size)
    near = (np.abs(ox) < 2.5 * dx) & (np.abs(oy) < 2.5 * dy)
    for k in np.flatnonzero(near):
        tx, wx = _lag_nodes(ox[k], dx)
        ty, wy = _lag_nodes(oy[k], dy)
        out[k] = wx @ model.correlation(tx[:, None], ty[None, :]) @ wy
    far = np.flatnonzero(~near)
    ux, wx = _tent_nodes(dx, 1, 8)
    uy, wy = _tent_nodes(dy, 1, 8)
    # chunk over offsets to keep the (chunk, qx, qy) work array near 16 MB
    chunk = max(1, 2_000_000 // (ux.size * uy.size))
    for s in range(0, far.size, chunk):
        idx = far[s:s + chunk]
        r = model.correlation(ox[idx, None, None] + ux[None, :, None],
                              oy[idx, None, None] + uy[None, None, :])
        out[idx] = np.einsum("kij,i,j->k", r, wx, wy)
    return out.reshape(shape)


def _lag_nodes(off, d, n_panels=8, n_gl=8):
    """Nodes in lag τ ∈ [off - d, off + d] with tent weights (1 - |τ-off|/d)/d.

    The range is cut at τ = off (tent kink) and τ = 0 (cusp of ρ); each piece
    is mapped by τ = a + (b - a)(1 - cos πt)/2, which clusters nodes at both
    ends, where the kinks lie.
    """
    x, w = np.polynomial.legendre.leggauss(n_gl)
    edges = np.arange(n_panels + 1) / n_panels
    a, b = edges[:-1, None], edges[1:, None]
    t = (0.5 * (b - a) * x + 0.5 * (a + b)).ravel()
    wt = np.broadcast_to(0.5 * (b - a) * w, (n_panels, n_gl)).ravel()
    s = 0.5 * (1.0 - np.cos(np.pi * t))
    ds = 0.5 * np.pi * np.sin(np.pi * t) * wt
    brk = sorted({off - d, off + d, off, *([0.0] if off - d < 0.0 < off + d else [])})
    nodes, weights = [], []
    for lo, hi in zip(brk[:-1], brk[1:]):
        if hi <= lo:
            continue
        tau = lo + (hi - lo) * s
        nodes.append(tau)
        weights.append((hi - lo) * ds * (1.0 - np.abs(tau - off) / d) / d)
    return np.concatenate(nodes), np.concatenate(weights)


def cell_average_covariance(model: CorrelationModel, quad_points, quad_weights,
                            quad_points_b=None, quad_weights_b=None):
    """Covariance matrix of averages over cells of any shape.

    Parameters
    ----------
    model : CorrelationModel
    quad_points : array_like, shape (n_cells, n_q, 2)
        Quadrature points of each cell (m).
    quad_weights : array_like, shape (n_cells, n_q)
        Quadrature weights of each cell; they are normalised to sum to 1 per
        cell, so area weights can be passed directly.
    quad_points_b, quad_weights_b : optional
        A second set of cells (default: the first).

    Returns
    -------
    numpy.ndarray, shape (n_cells, n_cells_b)
        ``C[i, j] = Σ_q Σ_r w_iq w_jr ρ(p_iq - p_jr)``.

    Notes
    -----
    The quadrature's accuracy sets that of the diagonal (the variance
    function of the cell): with Markov models a few points per cell
    underestimate the variance reduction of cells much larger than θ.
    """
    pa, wa = _quad("quad_points", quad_points, quad_weights)
    if quad_points_b is None:
        pb, wb = pa, wa
    else:
        pb, wb = _quad("quad_points_b", quad_points_b, quad_weights_b)
    na, qa = wa.shape
    nb, qb = wb.shape
    fa = pa.reshape(-1, 2)
    fb = pb.reshape(-1, 2)
    out = np.empty((na, nb))
    rows = max(1, 4_000_000 // (qa * fb.shape[0]))
    for s in range(0, na, rows):
        blk = fa[s * qa:(s + rows) * qa]
        r = model.covariance_matrix(blk, fb).reshape(-1, qa, nb, qb)
        out[s:s + rows] = np.einsum("iqjr,iq,jr->ij", r, wa[s:s + rows], wb)
    return out


def _quad(label, pts, wts):
    p = np.asarray(pts, dtype=float)
    if p.ndim != 3 or p.shape[2] != 2:
        raise InputError(f"{label} must have shape (n_cells, n_q, 2), got {p.shape}")
    if wts is None:
        raise InputError(f"{label}: quadrature weights are required, shape (n_cells, n_q)")
    w = np.asarray(wts, dtype=float)
    if w.shape != p.shape[:2]:
        raise InputError(f"quadrature weights must have shape {p.shape[:2]}, got {w.shape}")
    tot = w.sum(axis=1, keepdims=True)
    if np.any(tot <= 0) or np.any(w < 0):
        raise InputError("quadrature weights must be >= 0 with a positive sum per cell")
    return p, w / tot

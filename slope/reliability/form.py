"""First-order reliability method (Hasofer–Lind index) with HLRF / iHLRF.

In the independent standard-normal space ``u`` of the Nataf copula, the
limit state is G(u) = g(T(u)) − threshold. The design point u* is the point
of G = 0 nearest the origin; β = ±‖u*‖ (negative when the mean point already
fails) and pf ≈ Φ(−β) (Hasofer & Lind 1974, J. Eng. Mech. Div. 100:111-121).

Iterations:
- ``hlrf``: Rackwitz & Fiessler (1978, Comput. Struct. 9:489-494)
  u ← [(∇G·u − G)/‖∇G‖²] ∇G.
- ``ihlrf`` (default): the same direction with a step length chosen by an
  Armijo rule on the merit function m(u) = ½‖u‖² + c|G(u)|, c > ‖u‖/‖∇G‖
  (Zhang & Der Kiureghian 1997, Proc. 7th IFIP WG7.5 conference); it
  converges where plain HLRF oscillates.

Gradients are central finite differences in ``u`` (2 n_random evaluations,
one vectorised call); the line search evaluates all trial steps in one call.

Importance factors are α = −∇G/‖∇G‖ at u*, and α² (summing to 1) the share
of each standard variable. With correlated variables α refers to the
independent ``u`` of the Cholesky ordering (variable i mixes u_0..u_i); this
is stated in ``notes``.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy import special

from ..errors import InputError
from .limit_state import as_limit_state
from .variables import RandomVector

__all__ = ["FORMResult", "form"]


@dataclass
class FORMResult:
    """FORM result.

    Attributes
    ----------
    beta : float
        Hasofer–Lind reliability index.
    pf : float
        Φ(−β).
    design_point_u : ndarray (n_random,)
    design_point_x : ndarray (n_vars,)
        Design point in physical units.
    alpha : ndarray (n_random,)
        Unit vector −∇G/‖∇G‖ at the design point.
    importance : dict
        Random variable name → α² (share, sums to 1).
    converged : bool
    iterations, n_evaluations : int
    history : dict
        ``beta`` and ``g`` (G at each iterate) lists.
    n_nonconverged, n_inadmissible : int
        Limit-state evaluations reported as such by g.
    """

    beta: float
    pf: float
    design_point_u: np.ndarray
    design_point_x: np.ndarray
    alpha: np.ndarray
    importance: dict
    converged: bool
    iterations: int
    n_evaluations: int
    history: dict
    n_nonconverged: int
    n_inadmissible: int
    method: str
    notes: list = field(default_factory=list)


class _Counter:
    def __init__(self, ls, variables, surface):
        self.ls, self.v, self.surface = ls, variables, surface
        self.n = self.nc = self.na = 0

    def __call__(self, U):
        X = self.v.to_physical(U)
        ev = self.ls.evaluate(X, self.surface)
        self.n += U.shape[0]
        self.nc += int((~ev.converged).sum())
        self.na += int((ev.converged & ~ev.admissible).sum())
        return ev.fs - self.ls.threshold


def form(limit_state, variables: RandomVector, *, method: str = "ihlrf",
         surface: str = "fixed", u0=None, tol_g: float = 1e-6, tol_u: float = 1e-6,
         max_iter: int = 100, h: float = 1e-4) -> FORMResult:
    """Find the design point and the Hasofer–Lind β.

    Parameters
    ----------
    limit_state : LimitState or callable
    variables : RandomVector
    method : {'ihlrf', 'hlrf'}
    surface : {'fixed', 'searched'}
    u0 : array_like (n_random,), optional
        Start (default: origin of u-space).
    tol_g : float
        Convergence when |G(u)| ≤ tol_g · |G(0)| (FS units relative).
    tol_u : float
        ... and when u is parallel to the gradient: ‖u − (α·u)α‖ ≤ tol_u.
    max_iter : int
    h : float
        Finite-difference step in u (standard deviations).
    """
    if not isinstance(variables, RandomVector):
        raise InputError("variables must be a RandomVector (see random_vector)")
    if method not in ("ihlrf", "hlrf"):
        raise InputError(f"FORM method must be 'ihlrf' or 'hlrf', got {method!r}")
    if surface not in ("fixed", "searched"):
        raise InputError("FORM takes surface='fixed' or 'searched' (run twice for both)")
    ls = as_limit_state(limit_state)
    ls.surfaces(surface)
    n = variables.n_random
    if n == 0:
        raise InputError("FORM needs at least one random (non-deterministic) variable")
    G = _Counter(ls, variables, surface)
    u = np.zeros(n) if u0 is None else np.asarray(u0, float).reshape(n).copy()
    E = np.eye(n) * h

    def value_and_grad(u):
        pts = np.vstack([u[None, :], u + E, u - E])
        v = G(pts)
        return v[0], (v[1:n + 1] - v[n + 1:]) / (2 * h)

    g, grad = value_and_grad(u)
    g0 = abs(g) if u0 is None else abs(G(np.zeros((1, n)))[0])
    scale = max(g0, 1e-12)
    hist = {"beta": [], "g": []}
    converged = False
    it = 0
    notes = []
    for it in range(1, max_iter + 1):
        ng = float(np.linalg.norm(grad))
        if not np.isfinite(g) or ng == 0 or not np.isfinite(ng):
            notes.append("gradient vanished or G not finite; stopped")
            break
        alpha = -grad / ng
        hist["beta"].append(float(alpha @ u))
        hist["g"].append(float(g))
        if abs(g) <= tol_g * scale and np.linalg.norm(u - (alpha @ u) * alpha) <= tol_u:
            converged = True
            break
        u_new = ((grad @ u - g) / ng**2) * grad
        d = u_new - u
        if method == "ihlrf":
            c = 2.0 * np.linalg.norm(u) / ng + 10.0
            merit0 = 0.5 * u @ u + c * abs(g)
            # Directional derivative of the merit function along d.
            slope = u @ d + c * np.sign(g) * (grad @ d) if g != 0 else u @ d - c * abs(grad @ d)
            lam = 0.5 ** np.arange(10)
            trial = u[None, :] + lam[:, None] * d[None, :]
            gt = G(trial)
            merit = 0.5 * np.sum(trial**2, axis=1) + c * np.abs(gt)
            okk = np.flatnonzero(merit - merit0 <= 1e-4 * lam * min(slope, 0.0))
            k = okk[0] if okk.size else int(np.nanargmin(merit))
            u = trial[k]
        else:
            u = u_new
        g, grad = value_and_grad(u)
    ng = float(np.linalg.norm(grad))
    alpha = -grad / ng if ng > 0 else np.full(n, np.nan)
    beta = float(alpha @ u) if converged else float(np.sign(alpha @ u) * np.linalg.norm(u))
    if not converged:
        notes.append(f"not converged in {max_iter} iterations; last iterate reported")
    if variables.is_correlated:
        notes.append("importance factors refer to the independent standard normals of the "
                     "Cholesky ordering of the variables")
    imp = {name: float(a * a) for name, a in zip(variables.random_names, alpha)}
    return FORMResult(beta, float(special.ndtr(-beta)), u.copy(),
                      variables.to_physical(u[None, :])[0], alpha, imp, converged, it, G.n,
                      hist, G.nc, G.na, method, notes)

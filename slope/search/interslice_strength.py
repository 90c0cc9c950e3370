"""Interslice shear strength: does a solution ask more shear of a slice boundary than the soil there has?

A rigorous method of slices (Spencer, Morgenstern-Price) finds interslice
forces E (normal, total) and X (shear) at every vertical slice boundary. The
solution is acceptable only if the shear it needs can be carried across the
boundary at the same factor of safety as on the base (Chen & Morgenstern
1983, the admissibility of interslice forces; Duncan & Wright 2005, *Soil
Strength and Slope Stability*, the chapter on checking the interslice
forces; both recalled from memory, chapter numbers not checked):

    |X_i| <= [ ∫ c dz + (E_i - U_i) tan φ̄_i ] / F

over the height of boundary ``i`` from the slip surface to the ground, with
``U_i = ∫ u dz`` the pore-water thrust on it, c and φ the strengths of the
drainage hypothesis (su and φ = 0 for undrained zones, with su's law in
depth, elevation or su/σ'v, exactly as on the slice bases: the strengths
come from :func:`slope.strength.base_strength`), and ``tan φ̄`` the
height-weighted mean of tan φ along the boundary (the distribution of the
effective normal stress over the height is unknown; only its resultant
E - U is). A boundary in effective tension (E < U) is given no frictional
strength: its tension is a matter of the line of thrust, judged separately.

The check is applied to non-circular surfaces only (see
:func:`slope.search.evaluate_surfaces`): circles keep the acceptance they
always had.

Where it bites (measured on the demos): boundaries through saturated
cohesionless zones near the toe, where most of the total E is water thrust
and (E - U) tan φ' is small, while Spencer's constant λ asks X = λ E of the
total force (the dam demo's per-realisation paths, ratios 1.16-2.4); tension
across cohesionless cover (E < 0, blocks entering beyond the crest). Where it
does not: homogeneous φ = 0 slopes, whose non-circular paths need about a
quarter of su h / F (tests/slope/test_interslice_strength.py).

Integration: each boundary is split at every zone edge and at the phreatic
surface, and each piece integrated by 3-point Gauss-Legendre, so piecewise
linear strengths (constant c, su growing with depth, su/σ'v with hydrostatic
water) are integrated exactly.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..bank import point_stresses
from ..slices import SliceBank
from ..strength import base_strength

__all__ = ["BoundaryStrength", "BoundaryGeometry", "boundary_geometry", "boundary_strength", "interslice_ratio",
           "RATIO_TOLERANCE", "INTERSLICE_REASON"]

#: A boundary fails the check when ``|X| F / available > 1 + RATIO_TOLERANCE``. The forces and
#: strengths are both exact for the slices (no discretisation between them); 1 % leaves room for
#: the method's own tolerance on F and the round-off of the cumulative sums of E, nothing more.
RATIO_TOLERANCE = 0.01

#: Reason under which a surface failing the check is counted as not counted.
INTERSLICE_REASON = "interslice shear above the strength across a slice boundary"

_N_GAUSS = 3
#: Gauss-Legendre points and weights on [0, 1] (computed once: a call costs as much as a small bank's check)
_GAUSS = tuple(np.polynomial.legendre.leggauss(_N_GAUSS))
_GAUSS = (0.5 * (_GAUSS[0] + 1.0), 0.5 * _GAUSS[1])


@dataclass
class BoundaryStrength:
    """Strength available across the interior slice boundaries of a bank (shape ``(m, n - 1)``).

    Attributes
    ----------
    cohesion : kN/m
        ∫ c dz (or ∫ su dz on undrained zones) from the slip surface to the ground.
    tan_phi : -
        Height-weighted mean tan φ along the boundary (0 where every zone is undrained or φ = 0).
    water : kN/m
        Pore-water thrust ``U = ∫ u dz`` on the boundary.
    height : m
        Height of the boundary.
    """

    cohesion: np.ndarray
    tan_phi: np.ndarray
    water: np.ndarray
    height: np.ndarray


class _BoundaryPoints:
    """Integration points on the slice boundaries, shaped as slice bases for the strength functions.

    Each point is a base of zero length (``x_left = x_right``), so
    :meth:`SliceBank.base_points_section_frame` and the strength overrides of
    a random field (which sample the field where the bases are) read the
    point itself.
    """

    base_points_section_frame = SliceBank.base_points_section_frame
    #: every base is one point, so its points along the base are all equal (a random field's overrides
    #: read the grid there once: :func:`slope.simulate.refinement.realisation_overrides`)
    zero_length = True

    def __init__(self, bank, x, y, zone, depth, sigma_v_eff):
        self.direction = bank.direction
        self.x_left = self.x_right = self.x_mid = x
        self.y_base_left = self.y_base_right = self.y_base = y
        self.zone, self.depth, self.sigma_v_eff = zone, depth, sigma_v_eff
        self.zone_names, self.zone_materials = bank.zone_names, bank.zone_materials

    @property
    def n_surfaces(self) -> int:
        return int(self.zone.shape[0])


@dataclass
class BoundaryGeometry:
    """What the check needs of the slice boundaries that depends on the surfaces and the section only.

    The integration points on the boundaries (as bases, ``points``), their
    zone, effective vertical stress and pore pressure (kPa), the Gauss
    weights of the pieces inside a zone (``weights``, m) and the boundary
    heights (m). Computed once per surface by :func:`boundary_geometry`, it
    serves every set of strengths on the same section (unit weights and
    water included): e.g. each realisation of a random field
    (:mod:`slope.simulate.bank_checks`).
    """

    points: _BoundaryPoints
    zone: np.ndarray
    pore_pressure: np.ndarray
    weights: np.ndarray
    height: np.ndarray


def boundary_geometry(section, bank) -> BoundaryGeometry:
    """:class:`BoundaryGeometry` of every interior slice boundary of ``bank`` (built from ``section``)."""
    m, n = bank.width.shape
    xb = bank.x_right[:, :-1]                                   # interior boundaries, sliding frame
    xs = bank.direction[:, None] * xb                           # section frame
    lo = bank.y_base_right[:, :-1]
    hi = bank.y_top_right[:, :-1]
    hi = np.maximum(hi, lo)
    # breakpoints: every zone edge crossing the vertical, the phreatic surface, both ends
    ye = section._edge_y(xs)                                    # (m, n-1, n_edges)
    extra = [lo[..., None], hi[..., None]]
    water = section.water
    if water is not None and water.phreatic is not None:
        extra.append(water.phreatic_y(xs)[..., None])
    br = np.concatenate([np.where(np.isnan(ye), lo[..., None], ye)] + extra, axis=-1)
    br = np.sort(np.clip(br, lo[..., None], hi[..., None]), axis=-1)
    a, b = br[..., :-1], br[..., 1:]                            # pieces, (m, n-1, P)
    tq, wq = _GAUSS
    y = a[..., None] + (b - a)[..., None] * tq                  # (m, n-1, P, q)
    dz = (b - a)[..., None] * wq
    x = np.broadcast_to(xb[..., None, None], y.shape)
    shp = y.shape
    xsec = np.broadcast_to(xs[..., None, None], shp)
    zone, sig_eff, u = point_stresses(section, xsec, y)
    depth = section.ground_y(xsec) - y
    flat = lambda v: np.ascontiguousarray(v).reshape(m, -1)    # noqa: E731 - points as bases
    pts = _BoundaryPoints(bank, flat(x), flat(y), flat(np.where(zone >= 0, zone, 0)), flat(depth), flat(sig_eff))
    w = np.where(zone >= 0, dz, 0.0)                            # pieces outside every zone carry nothing
    return BoundaryGeometry(points=pts, zone=zone, pore_pressure=u, weights=w, height=hi - lo)


def boundary_strength(section, bank, hypothesis="drained", overrides=None, geometry=None) -> BoundaryStrength:
    """Cohesive strength, mean friction and water thrust on every interior slice boundary.

    Parameters
    ----------
    section : Section
        The section the bank was built from.
    bank : SliceBank
        Valid surfaces (the rows are used as they are; not read when
        ``geometry`` is given).
    hypothesis : {"drained", "undrained"}
    overrides : callable or dict, optional
        As for :func:`slope.search.evaluate_surfaces`: a function of a bank
        returning per-base overrides (called here with the boundary points,
        so a random field is sampled on the boundaries), or a dict of
        values that must be single numbers (per-slice arrays belong to the
        bases and cannot be placed on the boundaries).
    geometry : BoundaryGeometry, optional
        :func:`boundary_geometry` of ``bank`` on ``section``, when kept from
        an earlier call (the strengths alone are computed).

    Returns
    -------
    BoundaryStrength
    """
    g = boundary_geometry(section, bank) if geometry is None else geometry
    pts, u, w, h = g.points, g.pore_pressure, g.weights, g.height
    shp = g.zone.shape
    ov = overrides(pts) if callable(overrides) else _scalar_overrides(overrides)
    c, tp = base_strength(pts, section.materials, hypothesis, ov)
    c = np.asarray(c).reshape((-1,) + shp)[0]                   # one strength sample
    tp = np.asarray(tp).reshape((-1,) + shp)[0]
    with np.errstate(invalid="ignore", divide="ignore"):
        tan_mean = np.where(h > 0, (tp * w).sum(axis=(-1, -2)) / np.where(h > 0, h, 1.0), 0.0)
    return BoundaryStrength(cohesion=(c * w).sum(axis=(-1, -2)), tan_phi=tan_mean,
                            water=(u * w).sum(axis=(-1, -2)), height=h)


def _scalar_overrides(overrides):
    if overrides is None:
        return None
    out = {}
    for k, v in overrides.items():
        v = np.asarray(v, float)
        if v.size != 1:
            from ..errors import InputError

            raise InputError(f"overrides['{k}']: the interslice strength check needs one value (or a function "
                             "of the bank, as a random field gives); per-slice values lie on the bases, not "
                             "on the slice boundaries")
        out[k] = float(v.ravel()[0])
    return out


def interslice_ratio(strength: BoundaryStrength, E, X, F, force_scale) -> np.ndarray:
    """Interslice shear needed over shear available, ``|X| F / [∫c dz + (E - U)⁺ tan φ̄]``, per boundary.

    Parameters
    ----------
    strength : BoundaryStrength
        Shape ``(m, n - 1)``.
    E, X : ndarray (..., m, n + 1), kN/m
        Total interslice normal and shear forces of the solution
        (``factor_of_safety(..., return_forces=True)``).
    F : ndarray (..., m)
        Factor of safety of the solution.
    force_scale : ndarray (m,), kN/m
        A force typical of each surface (:attr:`BankTerms.force_scale`); a
        shear below ``1e-9`` of it is round-off and never fails the check.

    Returns
    -------
    ndarray (..., m, n - 1)
        The ratio (0 where no shear is needed, inf where shear is needed on
        a boundary with no strength). A surface fails when its largest
        ratio exceeds ``1 + RATIO_TOLERANCE``.
    """
    Xi = np.abs(np.asarray(X)[..., 1:-1])
    Ee = np.maximum(np.asarray(E)[..., 1:-1] - strength.water, 0.0)
    avail = strength.cohesion + Ee * strength.tan_phi
    need = Xi * np.asarray(F)[..., None]
    tiny = 1e-9 * np.asarray(force_scale)[:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        r = np.where(avail > 0, need / np.where(avail > 0, avail, 1.0), np.inf)
    return np.where(Xi <= tiny, 0.0, r)

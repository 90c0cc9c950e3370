"""Geometry-only terms of a slice bank, computed once for every method.

The methods of slices evaluate the same handful of per-slice quantities for
every strength sample; this module computes them once per bank (shape
``(n_surfaces, n_slices)``) so that the kernels only combine them with the
sampled strengths ``c`` and ``tan_phi``.

Forces on slice ``i`` (sliding frame, see :mod:`slope.slices`; kN/m):

* ``A = W + q_v`` downward, ``B = kh W + q_h`` toward +x' (the tension-crack
  water force is added to ``B`` of slice 0, the upslope end);
* base normal ``N`` along ``n = (sin a, cos a)`` and mobilised shear
  ``S = [c l + (N - u l) tan(phi)] / F`` against the motion, along
  ``-t = -(cos a, -sin a)``;
* interslice forces, see :mod:`slope.methods.gle`.

Moments are counter-clockwise positive in the sliding frame about the moment
point ``(xo, yo)``; with the circle centre above the surface the sliding mass
then turns in the positive sense, so driving moments are positive.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from slipfield.slope.errors import InputError
from slipfield.slope.slices import SliceBank

__all__ = ["BankTerms", "prepare_bank"]


@dataclass
class BankTerms:
    """Per-slice geometric and load terms of a bank (shape ``(m, n)``).

    Attributes
    ----------
    bank : SliceBank
        The bank these terms were computed from.
    cos_a, sin_a : -
        Cosine and sine of the base inclination.
    width, length : m
        Slice width ``b`` and base length ``l``.
    A : kN/m
        Vertical load ``W + q_v`` (downward positive).
    B : kN/m
        Horizontal load ``kh W + q_h`` (+x' positive), crack force in slice 0.
    ub, ul : kN/m
        Pore-water force measures ``u b`` and ``u l``.
    xo, yo : (m,) m
        Moment point (sliding frame).
    dx, dy : m
        Base midpoint relative to the moment point.
    mt, mn : m
        Moment about ``(xo, yo)`` of a unit force along ``t`` (the direction
        of motion along the base) and along ``n`` (base normal, into the
        slice), applied at the base midpoint.
    m_active : (m,) kN m/m
        Moment of all applied loads (weight, surcharge, seismic, crack water)
        about the moment point.
    couple : kN m/m
        Moment of the applied loads of each slice about its own base midpoint
        (non-zero for seismic forces, off-centre surcharges, crack water).
    use_mn : (m,) bool
        False where ``mn`` vanishes (circle about its centre): kernels skip it.
    x_bound : (m, n + 1) m
        Abscissae of the slice boundaries (sliding frame).
    y_bound_base, y_bound_top : (m, n + 1) m
        Base and ground elevation at the slice boundaries.
    force_scale : (m,) kN/m
        ``sum(|A| + |B|)``, used to judge residuals of force equilibrium.
    length_scale : (m,) m
        Horizontal extent of the surface, for moment residuals.
    valid : (m,) bool
        Surfaces usable by the kernels (bank-valid and finite terms).
    """

    bank: SliceBank
    cos_a: np.ndarray
    sin_a: np.ndarray
    width: np.ndarray
    length: np.ndarray
    A: np.ndarray
    B: np.ndarray
    ub: np.ndarray
    ul: np.ndarray
    xo: np.ndarray
    yo: np.ndarray
    dx: np.ndarray
    dy: np.ndarray
    mt: np.ndarray
    mn: np.ndarray
    m_active: np.ndarray
    couple: np.ndarray
    use_mn: np.ndarray
    x_bound: np.ndarray
    y_bound_base: np.ndarray
    y_bound_top: np.ndarray
    force_scale: np.ndarray
    length_scale: np.ndarray
    valid: np.ndarray

    @property
    def n_surfaces(self) -> int:
        return int(self.width.shape[0])

    @property
    def n_slices(self) -> int:
        return int(self.width.shape[1])


def _arm(force, coord, name):
    # A load of zero may come with a NaN point of application: its arm is
    # irrelevant, so it must not turn the moment into NaN.
    return np.where(force != 0.0, coord, 0.0)


def default_moment_point(bank: SliceBank):
    """Moment point used when the caller gives none.

    The circle centre for circular surfaces. For other surfaces, a point
    above the middle of the surface: x' at the middle of its horizontal
    extent, y at the highest ground point plus half that extent. Methods that
    satisfy both force and moment equilibrium (Spencer, Morgenstern-Price)
    do not depend on this choice; Ordinary and Bishop do on non-circular
    surfaces.

    Returns
    -------
    xo, yo : ndarray, shape (m,), m (sliding frame)
    """
    x0 = bank.x_left[:, 0]
    x1 = bank.x_right[:, -1]
    extent = x1 - x0
    xo = np.where(np.isfinite(bank.centre_x), bank.centre_x, 0.5 * (x0 + x1))
    top = np.maximum(bank.y_top_left, bank.y_top_right)
    # rejected surfaces carry NaN geometry: max over finite values, NaN if none
    ytop = np.where(np.isfinite(top), top, -np.inf).max(axis=1)
    ytop = np.where(np.isfinite(ytop), ytop, np.nan)
    yo = np.where(np.isfinite(bank.centre_y), bank.centre_y, ytop + 0.5 * extent)
    return xo, yo


def prepare_bank(bank: SliceBank, moment_point=None) -> BankTerms:
    """Compute the geometry-only terms of a bank once.

    Parameters
    ----------
    bank : SliceBank
        Slices of ``m`` surfaces, ``n`` slices each (sliding frame).
    moment_point : tuple of two arrays broadcastable to (m,), optional
        ``(xo, yo)`` in the sliding frame, m. Default
        :func:`default_moment_point`.

    Returns
    -------
    BankTerms
    """
    if not isinstance(bank, SliceBank):
        raise InputError(
            f"bank: expected a slope.slices.SliceBank, got {type(bank).__name__}; "
            "build one with slope.bank or pass a SliceBank")
    m, n = bank.width.shape
    ca = np.cos(bank.alpha)
    sa = np.sin(bank.alpha)
    b = np.asarray(bank.width, dtype=float)
    l = np.asarray(bank.base_length, dtype=float)
    W = np.asarray(bank.weight, dtype=float)
    kh = float(bank.kh)
    crack = np.nan_to_num(np.asarray(bank.crack_force, dtype=float))
    A = W + bank.q_v
    B = kh * W + bank.q_h
    B = B.copy()
    B[:, 0] += crack
    ub = bank.u_base * b
    ul = bank.u_base * l

    if moment_point is None:
        xo, yo = default_moment_point(bank)
    else:
        try:
            xo, yo = (np.broadcast_to(np.asarray(v, dtype=float), (m,)).copy()
                      for v in moment_point)
        except (ValueError, TypeError):
            raise InputError(
                "moment_point: expected (xo, yo), each a number or an array of "
                f"one value per surface ({m}); give the point in the sliding frame") from None
    dx = bank.x_mid - xo[:, None]
    dy = bank.y_base - yo[:, None]
    mt = -dx * sa - dy * ca
    mn = dx * ca - dy * sa

    xq = _arm(bank.q_v, bank.x_q, "x_q")
    yq = _arm(bank.q_h, bank.y_q, "y_q")
    crack_y = np.where(crack != 0.0, bank.crack_y, 0.0)
    # Weight acts on the vertical through the slice midpoint (the usual slice
    # assumption), the seismic force at the centre of gravity.
    m_load = (W * (xo[:, None] - bank.x_mid)
              + kh * W * (yo[:, None] - bank.y_centroid)
              - bank.q_v * np.where(bank.q_v != 0.0, xq - xo[:, None], 0.0)
              - bank.q_h * np.where(bank.q_h != 0.0, yq - yo[:, None], 0.0))
    m_active = m_load.sum(axis=1) - crack * np.where(crack != 0.0, crack_y - yo, 0.0)
    couple = (kh * W * (bank.y_base - bank.y_centroid)
              - bank.q_v * np.where(bank.q_v != 0.0, xq - bank.x_mid, 0.0)
              - bank.q_h * np.where(bank.q_h != 0.0, yq - bank.y_base, 0.0))
    couple = couple.copy()
    couple[:, 0] -= crack * np.where(crack != 0.0, crack_y - bank.y_base[:, 0], 0.0)

    x_bound = np.concatenate([bank.x_left[:, :1], bank.x_right], axis=1)
    yb_bound = np.concatenate([bank.y_base_left[:, :1], bank.y_base_right], axis=1)
    yt_bound = np.concatenate([bank.y_top_left[:, :1], bank.y_top_right], axis=1)
    extent = x_bound[:, -1] - x_bound[:, 0]
    scale_r = np.where(np.isfinite(bank.radius), bank.radius, extent)
    use_mn = np.where(np.isfinite(mn), np.abs(mn), 0.0).max(axis=1) > 1e-9 * np.maximum(scale_r, 1e-12)

    finite = np.isfinite(np.stack([ca, sa, b, l, A, B, ub, ul, mt, mn]).reshape(10, m, n)).all(axis=(0, 2))
    finite &= np.isfinite(m_active) & np.isfinite(couple).all(axis=1)
    valid = np.asarray(bank.valid, dtype=bool) & finite & (extent > 0)

    return BankTerms(
        bank=bank, cos_a=ca, sin_a=sa, width=b, length=l, A=A, B=B, ub=ub, ul=ul,
        xo=xo, yo=yo, dx=dx, dy=dy, mt=mt, mn=mn, m_active=m_active,
        couple=couple, use_mn=use_mn, x_bound=x_bound, y_bound_base=yb_bound,
        y_bound_top=yt_bound,
        force_scale=np.abs(A).sum(axis=1) + np.abs(B).sum(axis=1),
        length_scale=np.maximum(extent, 1e-12), valid=valid)

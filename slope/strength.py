"""Materials and the shear strength on slice bases.

A material carries both drained (Mohr–Coulomb c', φ') and, optionally,
undrained parameters, so one section can be analysed under either drainage
hypothesis:

- ``"drained"``: every base uses c' and tan φ' (effective stress; the methods
  of slices subtract the pore pressure).
- ``"undrained"``: bases in a material with an undrained model use
  c = su, tan φ = 0 (total stress, φ = 0). Materials without an undrained model
  (free-draining fills, sands) keep their drained c', φ' — common practice for
  granular zones in a short-term analysis.

Undrained models (``Material.su_model``):

- ``"constant"``: su = ``su`` (kPa).
- ``"depth"``: su = ``su`` + ``su_gradient`` · z, z the depth (m) of the base
  midpoint below the ground line.
- ``"elevation"``: su = ``su`` + ``su_gradient`` · (``su_datum`` − y), y the
  base midpoint elevation (m); su grows downward from the datum.
- ``"ratio"``: su = ``su_ratio`` · σ'v (the undrained strength ratio S used for
  contractive tailings and normally consolidated clays), σ'v the vertical
  effective stress at the base midpoint before failure; never below
  ``su_min``.

Units: kPa, kN/m³, degrees at the user level, m.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

import numpy as np

from .errors import InputError
from .tangent import tan_degrees

__all__ = ["Material", "base_strength", "HYPOTHESES", "SU_MODELS"]

HYPOTHESES = ("drained", "undrained")
SU_MODELS = ("constant", "depth", "elevation", "ratio")


@dataclass(frozen=True)
class Material:
    """A soil or rock material.

    Parameters
    ----------
    name : str
    unit_weight : float, kN/m³
        Unit weight above the phreatic surface (moist).
    unit_weight_sat : float, optional, kN/m³
        Unit weight below the phreatic surface; defaults to ``unit_weight``.
    c : float, kPa
        Effective cohesion c'.
    phi : float, degrees
        Effective friction angle φ' (0 ≤ φ' < 90).
    su_model : {None, "constant", "depth", "elevation", "ratio"}
        Undrained strength model; None when the material has no undrained
        strength (it then stays drained in an undrained analysis).
    su : float, kPa
        su for ``constant``; su at the ground line for ``depth``; su at
        ``su_datum`` for ``elevation``.
    su_gradient : float, kPa/m
        Increase of su per metre of depth (``depth``, ``elevation``).
    su_datum : float, m
        Reference elevation for ``elevation``.
    su_ratio : float
        S = su/σ'v for ``ratio``.
    su_min : float, kPa
        Lower bound on su for ``ratio`` (e.g. near the surface).
    """

    name: str
    unit_weight: float
    unit_weight_sat: float | None = None
    c: float = 0.0
    phi: float = 0.0
    su_model: str | None = None
    su: float = 0.0
    su_gradient: float = 0.0
    su_datum: float = 0.0
    su_ratio: float = 0.0
    su_min: float = 0.0

    def __post_init__(self):
        n = f"material '{self.name}'"
        for attr in ("unit_weight", "unit_weight_sat", "c", "phi", "su", "su_gradient",
                     "su_datum", "su_ratio", "su_min"):
            v = getattr(self, attr)
            if v is not None and not np.isfinite(float(v)):
                raise InputError(f"{n}: {attr} must be a finite number, got {v!r}")
        if not self.unit_weight > 0:
            raise InputError(f"{n}: unit_weight must be positive (kN/m³), got {self.unit_weight}")
        if self.unit_weight_sat is None:
            object.__setattr__(self, "unit_weight_sat", float(self.unit_weight))
        if not self.unit_weight_sat > 0:
            raise InputError(f"{n}: unit_weight_sat must be positive (kN/m³), got {self.unit_weight_sat}")
        if self.c < 0:
            raise InputError(f"{n}: cohesion c must be >= 0 kPa, got {self.c}")
        if not 0 <= self.phi < 90:
            raise InputError(f"{n}: friction angle phi must be in [0, 90) degrees, got {self.phi}")
        if self.su_model is not None and self.su_model not in SU_MODELS:
            raise InputError(f"{n}: su_model must be one of {SU_MODELS} or None, got {self.su_model!r}")
        if self.su < 0 or self.su_min < 0 or self.su_ratio < 0:
            raise InputError(f"{n}: su, su_min and su_ratio must be >= 0, got {self.su}, {self.su_min}, {self.su_ratio}")
        if self.su_model == "constant" and self.su <= 0:
            raise InputError(f"{n}: su_model 'constant' needs su > 0 kPa")
        if self.su_model == "ratio" and self.su_ratio <= 0:
            raise InputError(f"{n}: su_model 'ratio' needs su_ratio > 0 (typically 0.2-0.3)")
        if self.su_model in ("depth", "elevation") and self.su <= 0 and self.su_gradient <= 0:
            raise InputError(f"{n}: su_model '{self.su_model}' needs su > 0 or su_gradient > 0")

    @property
    def has_drained(self) -> bool:
        return self.c > 0 or self.phi > 0

    @property
    def has_undrained(self) -> bool:
        return self.su_model is not None


def _material_list(bank, materials: Mapping):
    names = getattr(bank, "zone_materials", None) or []
    if len(names) != len(bank.zone_names):
        raise InputError(
            "slice bank has no zone → material map (zone_materials); build it with slope.bank.build_bank"
        )
    out = []
    for zn, mn in zip(bank.zone_names, names):
        if mn not in materials:
            raise InputError(f"zone '{zn}' refers to material '{mn}', which is not defined in materials")
        out.append(materials[mn])
    return out


def base_strength(bank, materials: Mapping, hypothesis: str = "drained", overrides=None):
    """Cohesion and friction coefficient on every slice base.

    Parameters
    ----------
    bank : SliceBank
        From :func:`slope.bank.build_bank` (uses ``zone``, ``depth``,
        ``y_base``, ``sigma_v_eff``).
    materials : mapping str -> Material
        Usually ``section.materials``.
    hypothesis : {"drained", "undrained"}
        Drainage hypothesis of the analysis.
    overrides : dict, optional
        Per-slice values replacing the material's, each broadcastable to
        ``(n_samples, n_surfaces, n_slices)`` (or ``(n_surfaces, n_slices)``):
        ``"c"`` (kPa), ``"phi"`` (degrees), ``"su"`` (kPa),
        ``"su_ratio"`` (-). NaN entries keep the material's value, so a random
        field may cover only some zones. ``"c"``/``"phi"`` act on drained
        bases, ``"su"``/``"su_ratio"`` on undrained ones (``"su"`` wins over a
        ratio).

    Returns
    -------
    c : ndarray, kPa
    tan_phi : ndarray
        Shape ``(n_surfaces, n_slices)``, or the broadcast shape with the
        overrides (leading sample axis).

    Raises
    ------
    InputError
        Unknown hypothesis or override key, a material lacking the parameters
        the hypothesis needs, negative overridden strengths.
    """
    if hypothesis not in HYPOTHESES:
        raise InputError(f"hypothesis must be 'drained' or 'undrained', got {hypothesis!r}")
    mats = _material_list(bank, materials)
    zone = np.asarray(bank.zone)
    zsafe = np.where(zone >= 0, zone, 0)  # rejected surfaces may hold -1

    def per_zone(values):
        return np.asarray(values, dtype=float)[zsafe]

    undrained_zone = np.array([hypothesis == "undrained" and m.has_undrained for m in mats])
    if hypothesis == "drained":
        missing = [m.name for m, used in zip(mats, np.isin(np.arange(len(mats)), zone)) if used and not m.has_drained]
        if missing:
            raise InputError(
                f"material(s) {missing} have no drained strength (c' = 0 and φ' = 0); give c and phi, "
                "or analyse with hypothesis='undrained'"
            )
    und = undrained_zone[zsafe]
    c = per_zone([m.c for m in mats])
    phi = per_zone([m.phi for m in mats])

    ov = {} if overrides is None else dict(overrides)
    bad = set(ov) - {"c", "phi", "su", "su_ratio"}
    if bad:
        raise InputError(f"overrides: unknown key(s) {sorted(bad)}; use 'c', 'phi', 'su', 'su_ratio'")
    for k, v in ov.items():
        v = np.asarray(v, dtype=float)
        if np.any(v[np.isfinite(v)] < 0):
            raise InputError(f"overrides['{k}']: strengths must be >= 0; map the random field through a positive marginal")
        if k == "phi" and np.any(v[np.isfinite(v)] >= 90):
            raise InputError("overrides['phi']: friction angles must be below 90 degrees")
        ov[k] = v

    def take(key, base):
        if key not in ov:
            return base
        v = ov[key]
        return np.where(np.isnan(v), base, v)

    c = take("c", c)
    phi = take("phi", phi)
    tan_phi = tan_degrees(phi)

    if np.any(undrained_zone):
        model = [m.su_model for m in mats]
        su0 = per_zone([m.su for m in mats])
        grad = per_zone([m.su_gradient for m in mats])
        datum = per_zone([m.su_datum for m in mats])
        ratio = take("su_ratio", per_zone([m.su_ratio for m in mats]))
        smin = per_zone([m.su_min for m in mats])
        code = per_zone([SU_MODELS.index(mo) if mo else -1 for mo in model])
        depth = np.maximum(bank.depth, 0.0)
        # the laws are exclusive per zone: nested where gives np.select's values at a fraction of its cost
        su = np.where(code == 0, su0, np.where(code == 1, su0 + grad * depth,
                                               np.where(code == 2, su0 + grad * (datum - bank.y_base), 0.0)))
        su = np.where(code == 3, np.maximum(ratio * np.maximum(bank.sigma_v_eff, 0.0), smin), su)
        su = np.maximum(su, 0.0)
        su = take("su", su)
        c = np.where(und, su, c)
        tan_phi = np.where(und, 0.0, tan_phi)
    c, tan_phi = np.broadcast_arrays(c, tan_phi)
    return np.array(c), np.array(tan_phi)

"""Random limit-equilibrium problem: random properties mapped on slice bases.

Units: m, kPa, degrees. θ is the Vanmarcke (1983) scale of fluctuation.
"""
from __future__ import annotations

import hashlib
import json
import math
from dataclasses import dataclass, field

import numpy as np

from slipfield.fields import RegularGrid, get_model, make_generator
from slipfield.fields.marginals import nataf_correlation
from slipfield.fields.properties import intrinsic_groups

from ..bank import build_bank
from ..errors import InputError
from ..methods import prepare_bank

__all__ = ["RandomProperty", "RandomProblem", "PROPS", "AVERAGING"]

PROPS = ("c", "phi", "su", "su_ratio", "unit_weight")
# base-average is the default: the strength mobilised on a base is the mean
# along its length, and four points approximate that line average (and so
# the variance reduction γ(T)) better than the midpoint value does.
AVERAGING = {"base-average": 4, "midpoint": 1}


@dataclass
class RandomProperty:
    """One spatially random soil property.

    Parameters
    ----------
    material : str
        Material name (a key of ``section.materials``).
    prop : {"c", "phi", "su", "su_ratio", "unit_weight"}
        Property: c' (kPa), φ' (degrees), su (kPa), su/σ'v (-), or
        ``unit_weight``: a factor (-, mean about 1) on γ and γsat of the
        material's zones, one random variable per zone and realisation
        (θ = inf only: weights, their moments, σ'v and ru pore pressures
        follow it through :func:`slope.bank.scale_unit_weights`).
    marginal : fields.marginals.Marginal
        Point distribution (from ``fields.marginals.make_marginal``).
    theta_h, theta_v : float, m
        Scales of fluctuation along the major (θh) and minor axis;
        ``math.inf`` in both gives one random variable per realisation.
    model : str
        Correlation model name (``fields.get_model``).
    angle : float, degrees
        Angle from +x to the θh direction, counter-clockwise.
    nu : float, optional
        Matérn smoothness.
    multiplier : bool
        True: the field is a factor (mean 1) multiplying the material's
        deterministic value at each base (depth trends, ratio laws).
    """

    material: str
    prop: str
    marginal: object
    theta_h: float
    theta_v: float
    model: str = "exponential"
    angle: float = 0.0
    nu: float | None = None
    multiplier: bool = False

    def __post_init__(self):
        if self.prop not in PROPS:
            raise InputError(f"RandomProperty.prop must be one of {PROPS}, got {self.prop!r}")
        for name in ("theta_h", "theta_v"):
            v = float(getattr(self, name))
            if not (v > 0) or math.isnan(v):
                raise InputError(f"RandomProperty.{name} must be > 0 m (math.inf for a single random "
                                 f"variable), got {v!r}")
            setattr(self, name, v)
        if math.isinf(self.theta_h) != math.isinf(self.theta_v):
            raise InputError("RandomProperty: theta_h and theta_v must be both finite or both math.inf")
        if self.prop == "unit_weight" and not math.isinf(self.theta_h):
            raise InputError(f"RandomProperty {self.material}.unit_weight: a unit weight is random only as one "
                             "variable per zone (theta_h = theta_v = inf); a unit-weight field would need the "
                             "field integrated over every slice, which slipfield does not do")
        if not hasattr(self.marginal, "from_standard_normal"):
            raise InputError("RandomProperty.marginal must come from fields.marginals.make_marginal(...)")

    @property
    def single(self) -> bool:
        return math.isinf(self.theta_h)

    @property
    def key(self) -> str:
        return f"{self.material}.{self.prop}"

    def correlation_model(self):
        kw = {} if self.nu is None else {"nu": self.nu}
        return get_model(self.model, theta_h=self.theta_h, theta_v=self.theta_v, angle=self.angle, **kw)

    def describe(self) -> dict:
        m = self.marginal
        return {"material": self.material, "prop": self.prop, "marginal": type(m).__name__,
                "mean": float(m.mean), "std": float(m.std), "marginal_repr": repr(m),
                "theta_h": self.theta_h, "theta_v": self.theta_v, "model": self.model,
                "angle": self.angle, "nu": self.nu, "multiplier": self.multiplier}

    def manifest(self) -> dict:
        """The property as plain data for users' files: the marginal's name and
        parameters, never a Python object repr (``describe`` feeds the fingerprint)."""
        def num(v):
            v = float(v)
            return v if math.isfinite(v) else None

        d = {k: v for k, v in self.describe().items() if k not in ("marginal", "marginal_repr")}
        m = self.marginal
        d["marginal"] = {"name": m.name, "mean": float(m.mean), "std": float(m.std),
                         "lower": num(m.lower), "upper": num(m.upper),
                         "parameters": {k: num(v) for k, v in dict(m.params).items()}}
        return d


@dataclass
class RandomProblem:
    """A section with random properties and a bank of candidate surfaces.

    Parameters
    ----------
    section : slope.section.Section
    hypothesis : {"drained", "undrained"}
    method : str
        Method of slices (``slope.methods.factor_of_safety``).
    properties : list of RandomProperty
    surfaces : list of surfaces
        Candidate surfaces (e.g. ``SearchResult.surfaces``); the slice
        geometry is built once.
    fixed_index : int
        Index in ``surfaces`` of the deterministic critical surface.
    cross_correlation : list of (i, j, rho)
        Target correlation between properties i and j (point values, after
        the marginals; Nataf-adjusted). Applied between fields of one zone.
    n_slices : int
    cell : float, m
        Random-field grid cell size.
    field_method : str
        Generator (``fields.make_generator``).
    averaging : {"base-average", "midpoint"}
        Strength on a base: mean of 4 points along it (default; approximates
        the line average over the base) or the value at its midpoint.
    interslice : str
        Interslice function for Morgenstern-Price.
    site_data : dict, optional
        ``"material.property"`` -> (points (n, 2) m, standard-normal values
        (n,), error variances (n,)): the property's fields are conditioned
        on them (:mod:`slope.simulate.conditioning`, :mod:`slope.site_data`).
    """

    section: object
    hypothesis: str
    method: str
    properties: list
    surfaces: object
    fixed_index: int
    cross_correlation: list = field(default_factory=list)
    n_slices: int = 30
    cell: float = 0.5
    field_method: str = "fft"
    averaging: str = "base-average"
    interslice: str = "half-sine"
    site_data: dict = field(default_factory=dict)

    def __post_init__(self):
        self.properties = list(self.properties)
        if not self.properties:
            raise InputError("RandomProblem.properties is empty; give at least one RandomProperty")
        mats = self.section.materials
        used = {z.material for z in self.section.zones}
        seen = set()
        for i, p in enumerate(self.properties):
            if not isinstance(p, RandomProperty):
                raise InputError(f"RandomProblem.properties[{i}] must be a RandomProperty")
            if p.material not in mats or p.material not in used:
                raise InputError(f"RandomProblem.properties[{i}]: material {p.material!r} is not used by "
                                 f"any zone of the section; use one of {sorted(used)}")
            if p.key in seen:
                raise InputError(f"RandomProblem.properties[{i}]: {p.key} is given twice; give it once")
            seen.add(p.key)
        if self.averaging not in AVERAGING:
            raise InputError(f"RandomProblem.averaging must be one of {list(AVERAGING)}, got {self.averaging!r}")
        if not (float(self.cell) > 0):
            raise InputError(f"RandomProblem.cell must be > 0 m, got {self.cell!r}")
        self.cell = float(self.cell)
        self.surfaces = list(self.surfaces)
        if not 0 <= int(self.fixed_index) < len(self.surfaces):
            raise InputError(f"RandomProblem.fixed_index must be in [0, {len(self.surfaces)}), "
                             f"got {self.fixed_index!r}")
        self.fixed_index = int(self.fixed_index)
        n = len(self.properties)
        R = np.eye(n)
        for t in self.cross_correlation:
            try:
                i, j, rho = int(t[0]), int(t[1]), float(t[2])
            except (TypeError, ValueError, IndexError):
                raise InputError(f"cross_correlation entries must be (i, j, rho), got {t!r}") from None
            if not (0 <= i < n and 0 <= j < n and i != j) or not -1 < rho < 1:
                raise InputError(f"cross_correlation entry {t!r}: need distinct property indices in "
                                 f"[0, {n}) and -1 < rho < 1")
            r0 = nataf_correlation(self.properties[i].marginal, self.properties[j].marginal, rho)
            R[i, j] = R[j, i] = r0
        intrinsic_groups(R, [None if p.single else p.correlation_model() for p in self.properties],
                         [p.key for p in self.properties], where="cross_correlation")
        try:
            self._chol = np.linalg.cholesky(R)
        except np.linalg.LinAlgError:
            raise InputError("cross_correlation: the (Nataf-adjusted) correlation matrix is not positive "
                             "definite; reduce the correlations") from None
        self._bank = None
        self._terms = None
        self._gens = {}
        self._stencil = None  # slope.simulate.engine.BaseStencil, built on first use

    def __getstate__(self):
        # workers evaluate through the stencil (valid surfaces only); the full
        # bank and its terms are rebuilt lazily if ever needed, not shipped
        state = dict(self.__dict__)
        if state.get("_stencil") is not None:
            state["_bank"] = None
            state["_terms"] = None
        return state

    # geometry, built once ------------------------------------------------
    @property
    def bank(self):
        if self._bank is None:
            self._bank = build_bank(self.section, self.surfaces, self.n_slices)
        return self._bank

    @property
    def terms(self):
        if self._terms is None:
            self._terms = prepare_bank(self.bank)
        return self._terms

    @property
    def grid(self) -> RegularGrid:
        g = np.asarray(self.section.ground)
        x0, x1 = g[:, 0].min(), g[:, 0].max()
        y0, y1 = float(self.section.base_y), g[:, 1].max()
        nx = max(1, int(math.ceil((x1 - x0) / self.cell)))
        ny = max(1, int(math.ceil((y1 - y0) / self.cell)))
        return RegularGrid(float(x0), float(y0), nx, ny, self.cell, self.cell)

    def zones_of(self, i) -> list[int]:
        mat = self.properties[i].material
        return [z for z, zone in enumerate(self.section.zones) if zone.material == mat]

    def generator(self, i, z=None):
        """Field generator of property i: on zone z's field box (the simulator's), or the whole grid.

        The fields of a zone are generated on the box of cells its consumers
        read (:func:`slope.simulate.field_box.field_box`); ``z=None`` gives a
        whole-grid generator (not used by the simulator).
        """
        if z is None:
            key, grid = i, self.grid
        else:
            from .field_box import field_box

            box = field_box(self, z)
            key, grid = (i, box.i0, box.i1, box.j0, box.j1), box.subgrid()
        if key not in self._gens:
            self._gens[key] = make_generator(self.field_method, self.properties[i].correlation_model(),
                                             grid=grid)
        return self._gens[key]

    def fingerprint(self) -> str:
        """Hash of everything that determines the realisations and FS values."""
        g = np.asarray(self.section.ground)
        desc = {"properties": [p.describe() for p in self.properties],
                "cross": [list(map(float, t)) for t in self.cross_correlation],
                "hypothesis": self.hypothesis, "method": self.method, "n_slices": self.n_slices,
                "cell": self.cell, "field_method": self.field_method, "averaging": self.averaging,
                "interslice": self.interslice, "fixed_index": self.fixed_index,
                "ground": g.round(9).tolist(), "zones": [repr(z) for z in self.section.zones],
                "materials": {k: repr(v) for k, v in sorted(self.section.materials.items())},
                "surfaces": [repr(s) for s in self.surfaces],
                # water and loads change every base's pore pressure and driving force
                "water": _canonical(self.section.water), "loads": _canonical(self.section.loads),
                # fields generated per zone on its box of read cells (slope.simulate.field_box): stores
                # written with whole-grid fields hold other realisations and must not be resumed
                "field_layout": "zone-box-1"}
        if self.site_data:  # only when present, so stores of runs without data stay valid
            desc["site_data"] = {k: _canonical([np.asarray(a) for a in v])
                                 for k, v in sorted(self.site_data.items())}
        return hashlib.sha256(json.dumps(desc, sort_keys=True, default=str).encode()).hexdigest()


def _canonical(obj):
    """JSON-ready, full-precision description of a dataclass / array / container (for hashing)."""
    import dataclasses

    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return {type(obj).__name__: {f.name: _canonical(getattr(obj, f.name)) for f in dataclasses.fields(obj)}}
    if isinstance(obj, np.ndarray):
        return [_canonical(v) for v in obj.tolist()]
    if isinstance(obj, dict):
        return {str(k): _canonical(v) for k, v in sorted(obj.items(), key=lambda kv: str(kv[0]))}
    if isinstance(obj, (list, tuple)):
        return [_canonical(v) for v in obj]
    if isinstance(obj, (float, np.floating)):
        return repr(float(obj))
    if obj is None or isinstance(obj, (bool, int, str)):
        return obj
    return repr(obj)

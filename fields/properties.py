"""Several cross-correlated random properties on the same points, with depth
trends and zones.

Cross-correlation
-----------------
Properties are cross-correlated by a *linear model of coregionalisation with
one common spatial model* (the intrinsic correlation model, Wackernagel
2003, Multivariate Geostatistics, chapter on intrinsic correlation (recalled
from memory)): in Gaussian space
``Z = L W`` where the ``W_j`` are independent standard fields of the same
correlation model ρ(τ) and ``L Lᵀ = R0``, so that

    corr(Z_i(x), Z_j(x + τ)) = R0_ij ρ(τ).

``R0`` is the Nataf-adjusted matrix (:func:`fields.marginals.nataf_matrix`),
so the *physical* values ``x_i = F_i⁻¹(Φ(Z_i))`` at one point have exactly the
target (Pearson) correlation ``R_ij``.  (At a lag τ ≠ 0 the physical cross-
correlation is the Nataf transform of ``R0_ij ρ(τ)``, close to but not exactly
``R_ij ρ(τ)`` for non-normal marginals.)

The intrinsic model needs one spatial model per group of correlated
properties: properties linked by a non-zero correlation (directly or through
others) must have equal models, otherwise :class:`InputError` is raised.
Properties uncorrelated with all others may have their own model.

Trends
------
``DepthTrend(gradient, y_ref)`` makes the mean vary with elevation ``y`` (m):
``mean(y) = m0 + gradient * (y_ref - y)`` (gradient in property units per
metre of depth below ``y_ref``; ``m0`` the marginal's mean).

* normal (and deterministic) marginals: the trend is added, the standard
  deviation is constant with depth;
* lognormal marginals: the field is scaled by ``mean(y) / m0``, so the COV is
  constant with depth (common practice for c' and su) and ``mean(y)`` must stay > 0 at every point;
* bounded marginals (truncated normal, beta, uniform, triangular) take no
  trend: their bounds would have to move with depth; build zones instead.

Zones
-----
Each zone gets its own specs and correlation matrix and is generated
independently (its own seed streams); values outside every zone where a
property is defined are NaN.  A zone's field is generated on the whole domain
and masked, which keeps grid-only generators (``fft``) usable.

Seeds
-----
Independent field ``W_p`` of property number ``p`` (its position among all
properties, first-seen order over the zones) in zone number ``z`` (position in
the zone dict, 0 without zones) uses stream :func:`field_stream` ``(p, z)``:
realisation ``k`` is the same whatever the batch, and zones/properties never
share noise. The slope simulator draws its fields with the same streams and
mixes them with the same :func:`coregionalise` and :func:`intrinsic_groups`,
so the rules are written once.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .errors import InputError, finite_float
from .generators import FieldGenerator, make_generator
from .grid import RegularGrid
from .marginals import Marginal, make_marginal, nataf_matrix
from .models import CorrelationModel, get_model

__all__ = ["DepthTrend", "PropertyField", "CorrelatedProperties", "correlated_properties", "field_stream",
           "coregionalise", "intrinsic_groups"]

_TREND_OK = ("normal", "lognormal", "deterministic")


def field_stream(prop: int, zone: int) -> tuple[int, int]:
    """Seed stream of the independent field of property ``prop`` in zone ``zone``.

    Realisation ``k`` of a run with seed ``s`` draws that field's noise from
    ``fields.seeding.field_noise_rng(s, k, *field_stream(prop, zone))`` (a
    single random variable from ``realisation_rng`` with the same keys).
    """
    return int(prop), int(zone)


def intrinsic_groups(R0, models, names, where="cross-correlation"):
    """Groups of properties linked by a non-zero correlation, each with one spatial model.

    Parameters
    ----------
    R0 : array (n, n)
        Correlation matrix of the underlying standard normals.
    models : sequence
        Spatial model of each property (anything comparable with ``==``;
        ``None`` for a single random variable, θ → ∞).
    names : sequence of str
        Property names, for messages.
    where : str
        What the user wrote the correlations in, for messages.

    Returns
    -------
    list of list of int
        Connected components of the non-zero correlations, ascending.

    Raises
    ------
    InputError
        Two correlated properties with different spatial models: mixing their
        fields would give each a correlation structure that is neither model.
    """
    R0 = np.asarray(R0, dtype=float)
    n = R0.shape[0]
    parent = list(range(n))

    def find(i):
        while parent[i] != i:
            i = parent[i]
        return i
    for i in range(n):
        for j in range(i + 1, n):
            if R0[i, j] != 0.0:
                parent[find(j)] = find(i)
    groups: dict[int, list[int]] = {}
    for i in range(n):
        groups.setdefault(find(i), []).append(i)
    out = []
    for members in groups.values():
        for i in members[1:]:
            if models[i] != models[members[0]]:
                a, b = names[members[0]], names[i]
                raise InputError(
                    f"{where}: correlated properties {a!r} and {b!r} have different correlation models "
                    f"({_model_words(models[members[0]])} vs {_model_words(models[i])}); cross-correlation "
                    "uses one common spatial model (intrinsic coregionalisation): give them the same model, "
                    "scales of fluctuation and angle, or remove their correlation")
        out.append(sorted(members))
    return out


def _model_words(model):
    return "a single random variable (θ = inf)" if model is None else repr(model)


def coregionalise(L, normals: dict) -> dict:
    """Cross-correlated standard normals ``Z_i = Σ_{j ≤ i} L_ij W_j``.

    Parameters
    ----------
    L : array (n, n)
        Lower Cholesky factor of the correlation matrix of all properties.
    normals : dict int -> ndarray
        Independent standard normals ``W_j`` of the properties present (any
        broadcastable shapes; a single random variable broadcasts over a field).

    Returns
    -------
    dict int -> ndarray
        ``Z_i`` for every key of ``normals``. Element-wise sums in ascending
        ``j`` (not a BLAS product) keep realisations bit-identical whatever the
        batch size.
    """
    keys = sorted(normals)
    out = {}
    for i in keys:
        acc = None
        for j in keys:
            if j <= i and L[i, j] != 0.0:
                term = L[i, j] * normals[j]
                acc = term if acc is None else acc + term
        out[i] = acc
    return out


@dataclass(frozen=True)
class DepthTrend:
    """Linear trend of the mean with depth.

    Parameters
    ----------
    gradient : float
        Increase of the mean per metre of depth below ``y_ref`` (property
        units / m; e.g. kPa/m for su).  Negative values decrease with depth.
    y_ref : float
        Elevation (m) at which the mean equals the marginal's mean ``m0``.
    """

    gradient: float
    y_ref: float

    def __post_init__(self):
        for label in ("gradient", "y_ref"):
            object.__setattr__(self, label, finite_float(getattr(self, label), f"trend {label}"))

    def mean_at(self, m0, y):
        """Mean at elevations ``y`` (m): ``m0 + gradient * (y_ref - y)``."""
        return m0 + self.gradient * (self.y_ref - np.asarray(y, dtype=float))


@dataclass(frozen=True)
class PropertyField:
    """One random property: its marginal, spatial model and optional trend.

    Parameters
    ----------
    name : str
        Property name (key of the output dict), e.g. ``"c"`` or ``"phi"``.
    marginal : Marginal or dict
        The point distribution (a dict is passed to
        :func:`fields.marginals.make_marginal`, e.g.
        ``{"name": "lognormal", "mean": 10, "cov": 0.3}``).
    model : CorrelationModel or str
        Spatial correlation model, or a model name used with ``theta_h``,
        ``theta_v``, ``angle`` (and ``params``) by :func:`fields.get_model`.
    theta_h, theta_v : float, optional
        Scales of fluctuation (m) when ``model`` is a name.
    angle : float, optional
        Rotation of the θh axis (degrees, counter-clockwise from +x).
    trend : DepthTrend or (gradient, y_ref), optional
        Linear trend of the mean with depth (see module doc).
    params : dict, optional
        Extra model parameters (e.g. ``{"nu": 1.5}`` for Matérn).
    """

    name: str
    marginal: object
    model: object
    theta_h: float | None = None
    theta_v: float | None = None
    angle: float = 0.0
    trend: object = None
    params: dict | None = None

    def __post_init__(self):
        if not isinstance(self.name, str) or not self.name.strip():
            raise InputError(f"property name must be a non-empty string, got {self.name!r}")
        m = self.marginal
        if isinstance(m, dict):
            kw = dict(m)
            if "name" not in kw:
                raise InputError(f"property {self.name!r}: marginal dict needs 'name', e.g. "
                                 "{'name': 'lognormal', 'mean': 10, 'cov': 0.3}")
            m = make_marginal(kw.pop("name"), **kw)
        if not isinstance(m, Marginal):
            raise InputError(f"property {self.name!r}: marginal must be a Marginal "
                             "(fields.marginals.make_marginal) or a dict of its arguments")
        object.__setattr__(self, "marginal", m)
        mod = self.model
        if isinstance(mod, str):
            if self.theta_h is None:
                raise InputError(f"property {self.name!r}: model {mod!r} given by name needs "
                                 "theta_h= (m)")
            mod = get_model(mod, theta_h=self.theta_h, theta_v=self.theta_v, angle=self.angle,
                            **(self.params or {}))
        if not isinstance(mod, CorrelationModel):
            raise InputError(f"property {self.name!r}: model must be a CorrelationModel or a "
                             "model name with theta_h=, e.g. model='exponential', theta_h=20")
        object.__setattr__(self, "model", mod)
        t = self.trend
        if t is not None and not isinstance(t, DepthTrend):
            if isinstance(t, dict):
                t = DepthTrend(**t)
            else:
                try:
                    g, yr = t
                except (TypeError, ValueError):
                    raise InputError(f"property {self.name!r}: trend must be a DepthTrend or "
                                     "(gradient, y_ref)") from None
                t = DepthTrend(g, yr)
            object.__setattr__(self, "trend", t)
        if t is not None and m.name not in _TREND_OK:
            raise InputError(f"property {self.name!r}: a depth trend is supported for "
                             f"{', '.join(_TREND_OK)} marginals, not {m.name!r} (its bounds "
                             "would move with depth); use zones or drop the trend")

    def to_physical(self, z, y):
        """Physical values of standard-normal ``z`` at elevations ``y`` (m).

        Parameters
        ----------
        z : array_like, shape (..., n_points)
        y : array_like, shape (n_points,)

        Returns
        -------
        numpy.ndarray
            Same shape as ``z`` (property units).
        """
        x = self.marginal.from_standard_normal(z)
        if self.trend is None:
            return x
        m0 = self.marginal.mean
        mean_y = self.trend.mean_at(m0, y)
        if self.marginal.name == "lognormal":
            if np.any(mean_y <= 0):
                raise InputError(f"property {self.name!r}: the depth trend gives a mean <= 0 "
                                 f"(min {np.min(mean_y):.4g}) inside the domain; a lognormal "
                                 "needs a positive mean: change gradient or y_ref")
            return x * (mean_y / m0)
        return x + (mean_y - m0)


class _ZoneSampler:
    """Specs, correlation and generators of one zone (see module doc)."""

    def __init__(self, label, specs, correlation, method, grid, points, opts, cache):
        specs = list(specs)
        if not specs:
            raise InputError(f"zone {label!r}: give at least one PropertyField")
        for s in specs:
            if not isinstance(s, PropertyField):
                raise InputError(f"zone {label!r}: specs must be PropertyField objects, "
                                 f"got {type(s).__name__}")
        names = [s.name for s in specs]
        dup = sorted({n for n in names if names.count(n) > 1})
        if dup:
            raise InputError(f"zone {label!r}: property name(s) {', '.join(dup)} given twice")
        n = len(specs)
        R = np.eye(n) if correlation is None else np.asarray(correlation, dtype=float)
        R0 = nataf_matrix([s.marginal for s in specs], R, names)
        self.label, self.specs, self.names, self.R0 = label, specs, names, R0
        # generators are shared by equal models across zones (the zones differ
        # by their seed streams, not by the set-up)
        self.groups = intrinsic_groups(R0, [sp.model for sp in specs], names, where=f"zone {label!r}")
        for members in self.groups:
            model = specs[members[0]].model
            if model not in cache:
                cache[model] = make_generator(method, model, grid=grid, points=points, **opts)
        self.L = np.linalg.cholesky(R0)
        self.cache = cache
        self.generators = list({id(cache[sp.model]): cache[sp.model] for sp in specs}.values())

    def sample_gaussian(self, seed, indices, zone_index, prop_index):
        """Standard-normal fields, list over the zone's properties of (len(indices), n_points).

        ``prop_index[j]``: position of the zone's property j among all properties (its stream).
        """
        W = {j: self.cache[sp.model].sample(seed, indices, field_stream(prop_index[j], zone_index))
             for j, sp in enumerate(self.specs)}
        Z = coregionalise(self.L, W)
        return [Z[j] for j in range(len(self.specs))]


class CorrelatedProperties:
    """Sampler of cross-correlated, possibly zoned, random properties.

    Build it with :func:`correlated_properties`.

    Attributes
    ----------
    names : list of str
        All property names (union over zones, first-seen order).
    points : numpy.ndarray, shape (n_points, 2)
        Where the properties are generated (m).
    grid : RegularGrid or None
    zone_masks : dict or None
        Zone label → boolean mask over the points.
    """

    def __init__(self, zones_specs, zones_corr, masks, method, grid, points, opts):
        self.grid = grid
        self.points = grid.points() if grid is not None else np.asarray(points, dtype=float)
        self.zone_masks = masks
        self._zones = []
        cache: dict = {}
        for label, specs in zones_specs.items():
            corr = zones_corr.get(label)
            self._zones.append(_ZoneSampler(label, specs, corr, method, grid, points, opts,
                                            cache))
        names = []
        for zs in self._zones:
            names += [n for n in zs.names if n not in names]
        self.names = names

    def zone_sampler(self, label=None):
        """Internal per-zone sampler (its ``R0`` = Nataf-adjusted matrix)."""
        if label is None:
            return self._zones[0]
        for zs in self._zones:
            if zs.label == label:
                return zs
        raise InputError(f"no zone {label!r}")

    def sample(self, seed, indices):
        """Physical realisations of every property.

        Parameters
        ----------
        seed : int
            Seed of the run (>= 0).
        indices : sequence of int
            Realisation numbers, e.g. ``range(n)``.

        Returns
        -------
        dict of str → numpy.ndarray
            Shape ``(len(indices), n_points)``, or ``(len(indices), nx, ny)``
            on a grid; property units; NaN outside the zones of a property.
        """
        idx = list(indices) if not isinstance(indices, np.ndarray) else indices
        n = len(idx)
        y = self.points[:, 1]
        out = {name: np.full((n, self.points.shape[0]), np.nan) for name in self.names}
        for z, zs in enumerate(self._zones):
            Z = zs.sample_gaussian(seed, idx, z, [self.names.index(name) for name in zs.names])
            mask = None if self.zone_masks is None else self.zone_masks[zs.label]
            for spec, zf in zip(zs.specs, Z):
                if mask is None:
                    out[spec.name][:] = spec.to_physical(zf, y)
                else:
                    out[spec.name][:, mask] = spec.to_physical(zf[:, mask], y[mask])
        if self.grid is not None:
            out = {k: self.grid.reshape(v) for k, v in out.items()}
        return out


def _masks_from(zones, labels_order, n_points, grid):
    """Boolean masks per zone from integer labels or a dict of masks."""
    shape_ok = {(n_points,)} | ({(grid.nx, grid.ny)} if grid is not None else set())
    if isinstance(zones, dict):
        masks = {}
        for lab, m in zones.items():
            a = np.asarray(m)
            if a.shape not in shape_ok or a.dtype != bool:
                raise InputError(f"zones[{lab!r}] must be a boolean mask of shape ({n_points},)"
                                 + (f" or ({grid.nx}, {grid.ny})" if grid is not None else "")
                                 + f", got dtype {a.dtype} shape {a.shape}")
            masks[lab] = a.reshape(n_points)
        labs = list(masks)
        for a in range(len(labs)):
            for b in range(a + 1, len(labs)):
                if np.any(masks[labs[a]] & masks[labs[b]]):
                    raise InputError(f"zones {labs[a]!r} and {labs[b]!r} overlap: a point "
                                     "belongs to at most one zone")
    else:
        lab = np.asarray(zones)
        if lab.shape not in shape_ok or not np.issubdtype(lab.dtype, np.integer):
            raise InputError(f"zones must be integer labels of shape ({n_points},)"
                             + (f" or ({grid.nx}, {grid.ny})" if grid is not None else "")
                             + f" or a dict zone -> boolean mask; got dtype {lab.dtype} "
                             f"shape {lab.shape}")
        lab = lab.reshape(n_points)
        masks = {k: lab == k for k in labels_order}
    missing = [k for k in labels_order if k not in masks]
    if missing:
        raise InputError(f"specs given for zone(s) {missing!r} that zones= does not define")
    empty = [k for k in labels_order if not masks[k].any()]
    if empty:
        raise InputError(f"zone(s) {empty!r} have specs but no points in zones=: check the "
                         "labels or drop those specs")
    return masks


def correlated_properties(specs, correlation=None, *, method="cholesky", grid=None,
                          points=None, zones=None, **opts) -> CorrelatedProperties:
    """Cross-correlated random properties on one set of points or grid.

    Parameters
    ----------
    specs : sequence of PropertyField, or dict zone → sequence of PropertyField
        The properties (a dict when ``zones`` is given).
    correlation : array_like (n, n), or dict zone → array_like, optional
        Target correlation matrix of the *physical* values at one point, in
        the order of the specs (identity when omitted).  Must be positive
        definite, as must its Nataf adjustment; otherwise the error names the
        pair most involved.
    method : str
        Generator (``cholesky``, ``kl``, ``fft``, ``spectral``; see
        :func:`fields.make_generator`).
    grid : RegularGrid, optional
    points : array_like, shape (n, 2), optional
        Exactly one of ``grid`` and ``points`` (m).
    zones : array_like of int, or dict zone → bool mask, optional
        Integer zone label of every point/cell (keys of ``specs`` are the
        labels), or one boolean mask per zone (keys match ``specs``).
    **opts
        Generator options.

    Returns
    -------
    CorrelatedProperties
        ``.sample(seed, indices)`` → dict name → array.
    """
    if grid is not None and not isinstance(grid, RegularGrid):
        raise InputError("grid must be a fields.RegularGrid(x0, y0, nx, ny, dx, dy)")
    if (grid is None) == (points is None):
        raise InputError("give exactly one of grid= (a RegularGrid) or points= (array (n, 2), m)")
    n_points = grid.n_points if grid is not None else np.asarray(points).shape[0]
    if zones is None:
        if isinstance(specs, dict):
            raise InputError("specs is a dict of zones but zones= is not given: give zones= "
                             "(labels per point or dict zone -> mask) or a list of specs")
        zs, zc, masks = {0: specs}, {0: correlation}, None
    else:
        if not isinstance(specs, dict):
            raise InputError("with zones=, specs must be a dict zone -> list of PropertyField")
        if correlation is not None and not isinstance(correlation, dict):
            raise InputError("with zones=, correlation must be a dict zone -> matrix (or None)")
        zs, zc = dict(specs), dict(correlation or {})
        extra = [k for k in zc if k not in zs]
        if extra:
            raise InputError(f"correlation given for zone(s) {extra!r} that have no specs")
        masks = _masks_from(zones, list(zs), n_points, grid)
        masks = {k: masks[k] for k in zs}
    return CorrelatedProperties(zs, zc, masks, method, grid, points, opts)

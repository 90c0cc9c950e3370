"""Evaluating a set of trial surfaces: the one place surfaces are counted, tolerated or excluded.

A trial counts toward the critical surface when its bank geometry is valid,
the method converged, and no *intolerable* flag is raised; by default a
negative effective normal force at a few slices or a line of thrust outside a
slice (common under the crest of cohesive slopes) is tolerated but counted,
while m_α ≤ 0.2 and non-positive F are not. Surfaces shallower than
``min_depth`` are excluded with their own reason.
"""
from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field

import numpy as np

from ..bank import build_bank
from ..errors import InputError
from ..methods.result import THRUST_OUTSIDE
from ..strength import base_strength
from ..surfaces import Circle, Circles, Polyline
from .interslice_retry import retry_label, retry_rows
from .interslice_strength import INTERSLICE_REASON

_TOLERABLE = {"negative-normal": 1, "small-m-alpha": 2, "thrust-outside": 4}


def _methods():
    from .. import methods  # late import: the methods package is optional for geometry work

    return methods


@dataclass
class SearchResult:
    """Outcome of a search over a bank of trial surfaces.

    Attributes
    ----------
    search : str
        Name of the search.
    method : str
        Method of slices used.
    fs_min : float
        Factor of safety of the critical surface (NaN if no trial counted).
    critical : Circle or Polyline or None
        The critical surface.
    critical_index : int
        Its index among the trials (-1 if none).
    critical_flags : int
        Flags of the method at the critical surface (0 = admissible).
    surfaces : Circles or list
        All trial surfaces, in bank order.
    fs : ndarray (n_trials,)
        Factor of safety of every trial (NaN where the geometry was rejected);
        use ``counted`` to see which entered the minimum.
    counted : ndarray of bool (n_trials,)
        Trials eligible for the minimum.
    flags : ndarray of int (n_trials,)
        Method flags of every trial (see :data:`slope.methods.FLAG_NAMES`).
    rejected : dict str -> int
        Count of trials not counted, by reason.
    n_trials : int
    bank : SliceBank
        The slice bank of the trials.
    history : list
        ``refine`` only: factor of safety after each accepted improvement.
    trials_rejected : dict str -> int
        ``refine`` only: the optimiser's trial shapes that were not accepted
        as a minimum, by reason (kinematically inadmissible shape, not
        converged, or a method flag).
    interslice_ratio : ndarray (n_trials,) or None
        Largest interslice shear needed over shear available of each trial
        (:mod:`slope.search.interslice_strength`); NaN where not checked
        (circles, invalid geometry), None when no trial was checked.
    interslice_function : ndarray of object (n_trials,) or None
        Trials counted with a Morgenstern-Price solution of another
        interslice function after the first solution failed the interslice
        shear-strength check or the thrust-line criterion: the function's
        name ('' elsewhere; :mod:`slope.search.interslice_retry`). None when
        no trial was checked.
    retried : dict str -> int
        Those trials counted, by method and interslice function.
    """

    search: str
    method: str
    fs_min: float
    critical: object
    critical_index: int
    critical_flags: int
    surfaces: object
    fs: np.ndarray
    counted: np.ndarray
    flags: np.ndarray
    rejected: dict
    n_trials: int
    bank: object = None
    history: list = field(default_factory=list)
    trials_rejected: dict = field(default_factory=dict)
    interslice_ratio: np.ndarray = None
    interslice_function: np.ndarray = None
    retried: dict = field(default_factory=dict)

    def summary(self) -> str:
        rej = ", ".join(f"{k}: {v}" for k, v in sorted(self.rejected.items())) or "none"
        return (f"{self.search} search, {self.method}: {self.n_trials} trials, "
                f"{int(self.counted.sum())} counted, FS min = {self.fs_min:.4f}; not counted: {rej}")


def _tolerated_mask(tolerate) -> int:
    mask = 0
    for t in tolerate:
        if t not in _TOLERABLE:
            raise InputError(f"tolerate: unknown flag {t!r}; use any of {sorted(_TOLERABLE)}")
        mask |= _TOLERABLE[t]
    return mask


def _surface_of(surfaces, i):
    if isinstance(surfaces, Circles):
        return Circle(float(surfaces.xc[i]), float(surfaces.yc[i]), float(surfaces.radius[i]))
    return surfaces[i]


def evaluate_surfaces(section, surfaces, *, hypothesis="drained", method="bishop", n_slices=40,
                      overrides=None, tolerate=("negative-normal", "thrust-outside"), search="given",
                      min_depth=None, interslice_check=True, bank=None, boundary_cache=None,
                      **method_opts) -> SearchResult:
    """Factor of safety of every trial surface for one set of strengths.

    Parameters
    ----------
    section : Section
    surfaces : Circles, Circle, Polyline or sequence
    hypothesis : {"drained", "undrained"}
    method : str
        Method of slices (see :func:`slope.methods.factor_of_safety`).
    n_slices : int
    overrides : dict or callable, optional
        Per-slice strength overrides for :func:`slope.strength.base_strength`
        (a single sample: shapes broadcastable to (n_surfaces, n_slices)), or
        a function of the slice bank of the usable surfaces returning them
        (strengths from a random field, for surfaces built on the fly).
    tolerate : sequence of {"negative-normal", "thrust-outside"}
        Method flags that do not exclude a trial from the minimum (they stay
        in ``flags`` and in ``rejected`` is nothing for them).
    min_depth : float, optional, m
        Surfaces whose greatest vertical depth below the ground line is
        less than this are dropped from the trials (they are not in
        ``surfaces`` nor in the bank) and counted in ``rejected`` under
        :data:`MIN_DEPTH_REASON`; ``n_trials`` still counts them.
    interslice_check : bool
        Judge the interslice shear of non-circular surfaces (polylines)
        solved by Spencer or Morgenstern-Price against the strength across
        the slice boundaries (:mod:`slope.search.interslice_strength`): a
        counted solution needing more is no longer counted, under
        :data:`INTERSLICE_REASON`. A non-circular solution refused by it, or
        by a line of thrust outside the mass where ``tolerate`` does not
        name it, is first solved again by Morgenstern-Price with the other
        interslice functions (:mod:`slope.search.interslice_retry`). Circles are never judged this
        way (their acceptance, and every result built on them, is unchanged).
    bank : SliceBank, optional
        The slice bank of ``surfaces`` when already built (by
        :func:`slope.bank.build_bank` with the same section and
        ``n_slices``, e.g. rows of a simulator's bank); built here otherwise.
    boundary_cache : dict, optional
        Kept by a caller that judges the same ``bank`` on the same section
        (geometry, water, unit weights) again and again with other strengths
        (e.g. a surface in every realisation of a random field): the
        geometry of its slice boundaries for the interslice check
        (:func:`slope.search.interslice_strength.boundary_geometry`) is
        stored in it on the first call and reused after.
    **method_opts
        Passed to :func:`slope.methods.factor_of_safety`.

    Returns
    -------
    SearchResult
    """
    methods = _methods()
    tol_mask = _tolerated_mask(tolerate)
    if bank is None:
        bank = build_bank(section, surfaces, n_slices=n_slices)
    if isinstance(surfaces, (Circle, Polyline)):
        surfaces = [surfaces]
    n_shallow = 0
    if min_depth is not None and float(min_depth) > 0:
        bank, surfaces, n_shallow = _drop_shallow(bank, surfaces, float(min_depth))
    m = bank.n_surfaces
    isr = None
    function = None
    retried = Counter()
    rejected = Counter(str(r) for r in bank.reason[~bank.valid])
    rejected[MIN_DEPTH_REASON] += n_shallow
    fs = np.full(m, np.nan)
    flags = np.zeros(m, dtype=int)
    counted = np.zeros(m, bool)
    idx = np.nonzero(bank.valid)[0]
    if len(idx):
        sub, terms = _valid_rows(bank, idx, boundary_cache, "moment_point" in method_opts)
        ov = None
        if callable(overrides):
            ov = overrides(sub)  # strengths that depend on where the bases lie (random fields)
        elif overrides is not None:
            ov = {k: np.broadcast_to(np.asarray(v, float), (m, bank.n_slices))[idx] for k, v in overrides.items()}
        c, tp = base_strength(sub, section.materials, hypothesis, ov)
        spec = methods.method_spec(method)
        poly = ~np.isfinite(sub.centre_x)
        check = interslice_check and spec.name in _INTERSLICE_METHODS and bool(poly.any())
        res = methods.factor_of_safety(sub if terms is None else terms, c, tp, method=method, return_forces=check,
                                       **method_opts)
        f = res.fs.reshape(-1, len(idx))[0]
        fl = np.asarray(res.flags).reshape(-1, len(idx))[0]
        conv = np.asarray(res.converged).reshape(-1, len(idx))[0]
        # a negative effective normal force changes nothing where every base
        # of the surface is frictionless (phi = 0: strength c l alone)
        frictionless = np.all(np.broadcast_to(tp, res.fs.shape + (sub.n_slices,)).reshape(
            -1, len(idx), sub.n_slices)[0] == 0, axis=1)
        bad = fl & ~tol_mask & ~np.where(frictionless, _TOLERABLE["negative-normal"], 0)
        ok = conv & (bad == 0) & np.isfinite(f)
        if check:
            # clean but for the line of thrust (where the search does not tolerate it outside the mass): judged
            # for interslice shear too, and retried with another interslice function before being refused
            # (slope.search.interslice_retry)
            near = conv & ((bad & ~THRUST_OUTSIDE) == 0) & np.isfinite(f)
            judge = _interslice_judge(section, sub, hypothesis, overrides, boundary_cache)
            ratio, fails = judge(np.arange(len(idx)), res, near)
            refused = np.flatnonzero(near & poly & (fails | ((bad & THRUST_OUTSIDE) != 0)))
            if refused.size:
                used = str(method_opts.get("interslice", "constant")) if spec.name == "morgenstern-price" \
                    else "constant"
                rf, rfl, rratio, rfun = retry_rows(section, sub, refused, c, tp, used=used, hypothesis=hypothesis,
                                                   overrides=overrides, tolerated=tol_mask,
                                                   frictionless=frictionless, judge=judge, F_start=f[refused],
                                                   terms=terms)
                got = refused[rfun != ""]
                f, fl = f.copy(), fl.copy()
                f[got], fl[got], ratio[got] = rf[rfun != ""], rfl[rfun != ""], rratio[rfun != ""]
                bad[got], fails[got] = 0, False
                function = np.full(m, "", dtype=object)
                function[idx[got]] = rfun[rfun != ""]
                for name in rfun[rfun != ""]:
                    retried[retry_label(name)] += 1
            isr = np.full(m, np.nan)
            isr[idx] = ratio
            rejected[INTERSLICE_REASON] += int(fails.sum())    # judged on `near` rows only
            ok = conv & (bad == 0) & np.isfinite(f) & ~fails
        fs[idx] = f
        flags[idx] = fl
        counted[idx] = ok
        rejected["not converged"] += int(np.sum(~conv))
        for bit, name in methods.FLAG_NAMES.items():
            rejected[name] += int(np.sum(conv & ((bad & bit) != 0)))
    rejected = {k: v for k, v in rejected.items() if v}
    if counted.any():
        i = int(np.nanargmin(np.where(counted, fs, np.inf)))
        crit, fmin, cflags = _surface_of(surfaces, i), float(fs[i]), int(flags[i])
    else:
        i, crit, fmin, cflags = -1, None, float("nan"), 0
    return SearchResult(search=search, method=str(method), fs_min=fmin, critical=crit, critical_index=i,
                        critical_flags=cflags, surfaces=surfaces, fs=fs, counted=counted, flags=flags,
                        rejected=rejected, n_trials=m + n_shallow, bank=bank, interslice_ratio=isr,
                        interslice_function=function, retried=dict(retried))


def _valid_rows(bank, idx, cache, own_moment_point):
    """(bank of the rows ``idx``, its BankTerms or None): kept in ``cache`` (evaluate_surfaces' boundary_cache).

    The terms depend on the geometry only (:func:`slope.methods.prepare_bank`
    with the default moment point), so a caller judging the same bank again
    keeps them; without a cache, or with a moment point of the caller's, the
    method prepares them itself as always.
    """
    if cache is None or own_moment_point:
        return bank.subset(idx), None
    kept = cache.get("valid rows")
    if kept is None or not np.array_equal(kept[0], idx):
        from ..methods.terms import prepare_bank

        sub = bank.subset(idx)
        kept = cache["valid rows"] = (idx.copy(), sub, prepare_bank(sub))
    return kept[1], kept[2]


def _interslice_judge(section, sub, hypothesis, overrides, boundary_cache=None):
    """``judge(rows, res, ok) -> (ratio, fails)``: the interslice check of solutions on rows of ``sub``.

    ``res`` holds the solutions of the surfaces ``rows`` of ``sub`` (in that
    order, with their forces); ``ok`` says which to judge (non-circular
    ones only; NaN ratio elsewhere). The strength across each surface's
    slice boundaries does not depend on the solution: it is computed once
    per surface and kept, so a retry with another interslice function
    (:mod:`slope.search.interslice_retry`) pays only for its forces; its
    geometry is kept in ``boundary_cache`` when the caller gives one.
    """
    from ..methods.terms import prepare_bank
    from .interslice_strength import (RATIO_TOLERANCE, BoundaryStrength, boundary_geometry, boundary_strength,
                                      interslice_ratio)

    ov = overrides if callable(overrides) or overrides is None else {
        key: np.asarray(v, float) for key, v in overrides.items()}
    held = {}

    def judge(rows, res, ok):
        rows = np.asarray(rows)
        k = rows.size
        ratio = np.full(k, np.nan)
        sel = np.flatnonzero(~np.isfinite(sub.centre_x[rows]) & ok)
        if sel.size:
            need = np.asarray([r for r in rows[sel] if r not in held], dtype=int)
            if need.size:
                key = tuple(need.tolist())
                kept = None if boundary_cache is None else boundary_cache.get(key)
                if kept is None:  # the rows' geometry: the same for any strengths
                    part = sub.subset(need)
                    kept = (boundary_geometry(section, part), prepare_bank(part).force_scale)
                    if boundary_cache is not None:
                        boundary_cache[key] = kept
                st = boundary_strength(section, None, hypothesis, ov, geometry=kept[0])
                scale = kept[1]
                for j, r in enumerate(need):
                    held[r] = (st.cohesion[j], st.tan_phi[j], st.water[j], st.height[j], scale[j])
            got = [held[r] for r in rows[sel]]
            st = BoundaryStrength(*(np.stack([g[q] for g in got]) for q in range(4)))
            E = np.asarray(res.E).reshape(-1, k, sub.n_slices + 1)[0][sel]
            X = np.asarray(res.X).reshape(-1, k, sub.n_slices + 1)[0][sel]
            F = np.asarray(res.fs).reshape(-1, k)[0][sel]
            r = interslice_ratio(st, E, X, F, np.array([g[4] for g in got]))
            ratio[sel] = r.max(axis=1) if r.shape[1] else 0.0
        return ratio, np.nan_to_num(ratio, nan=0.0) > 1.0 + RATIO_TOLERANCE

    return judge


#: Methods whose solutions carry interslice forces E and X to judge.
_INTERSLICE_METHODS = ("spencer", "morgenstern-price")

#: Reason under which :func:`evaluate_surfaces` counts the surfaces shallower than ``min_depth``.
MIN_DEPTH_REASON = "shallower than search.min_depth"


def surface_depth(bank) -> np.ndarray:
    """Greatest vertical depth of each surface of a bank below the ground line (m; NaN if invalid).

    Taken over slice sides and midpoints, as the sliding-mass geometry of the report.
    """
    with np.errstate(invalid="ignore"):
        d = np.fmax(np.fmax(bank.y_top_left - bank.y_base_left, bank.y_top_right - bank.y_base_right),
                    bank.y_top - bank.y_base)
        return np.where(bank.valid, np.max(d, axis=1), np.nan)


def _drop_shallow(bank, surfaces, min_depth):
    """The bank and surfaces without the valid surfaces shallower than ``min_depth`` (m), and their count."""
    depth = surface_depth(bank)
    keep = ~(bank.valid & (depth < min_depth))
    n_drop = int(np.sum(~keep))
    if not n_drop:
        return bank, surfaces, 0
    idx = np.flatnonzero(keep)
    if isinstance(surfaces, Circles):
        kept = Circles(surfaces.xc[idx], surfaces.yc[idx], surfaces.radius[idx]) if idx.size else surfaces
    else:
        kept = [surfaces[i] for i in idx]
    if not idx.size:
        raise InputError(f"search.min_depth = {min_depth:g} m: every one of the {len(keep)} trial surfaces is "
                         "shallower; lower min_depth or move the search towards deeper surfaces")
    return bank.subset(idx), kept, n_drop


# ------------------------------------------------------------------ circles

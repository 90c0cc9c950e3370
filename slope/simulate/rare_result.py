"""Result of a subset simulation (:func:`slope.simulate.rare.subset_simulate`)."""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from ..reliability.stats import beta_from_pf

__all__ = ["SubsetResult", "lognormal_interval"]

_Z95 = 1.959963984540054


def lognormal_interval(pf, cov):
    """95 % interval of an estimate pf with CoV ``cov``, the estimator taken as lognormal with mean pf.

    s² = ln(1 + δ²); bounds pf/√(1 + δ²)·exp(∓1.96 s) (common practice for
    subset simulation, whose estimates are skewed to the right).
    """
    if pf is None or not (pf > 0) or not math.isfinite(cov):
        return (float("nan"), float("nan"))
    s = math.sqrt(math.log1p(cov * cov))
    m = pf / math.sqrt(1.0 + cov * cov)
    return (m * math.exp(-_Z95 * s), m * math.exp(_Z95 * s))


@dataclass
class SubsetResult:
    """Subset simulation estimate of pf = P(FS < threshold) with random fields.

    Attributes
    ----------
    pf : float or None
        The estimate; None when the run stopped before the failure level
        (``status`` says why, ``pf_upper`` what was reached).
    cov, cov_upper : float, -
        CoV of pf with Au & Beck's γ factors: levels uncorrelated / fully
        correlated (a bracket).
    interval_95 : (float, float)
        :func:`lognormal_interval` of pf with ``cov``.
    beta : float
        −Φ⁻¹(pf).
    levels : list of dict
        Per level: ``threshold`` (FS, the failure threshold on the last),
        ``probability`` (conditional), ``cov`` (δ), ``gamma``,
        ``acceptance`` of the chains that made it, ``lambda`` per adaptation
        group, ``n_failed`` (samples with FS < threshold).
    n_evaluations : int
        Samples whose critical FS was computed (the bank re-searched each time).
    counts : dict
        Of those: ``nonconv``/``inadm`` (lowest surface excluded), ``none``
        (no valid surface: ranked safe), ``refined``.
    status : {"failure-level-reached", "max-levels", "no-progress"}
    message : str
    failures : dict of ndarray
        Last-level samples with FS < threshold: ``fs``, ``crit`` (bank index
        of the critical surface; with the per-realisation search, the bank
        surface it started from), ``sample`` (flat index in the level), and
        the polylines the per-realisation search found where they govern:
        ``searched_vertices`` / ``searched_geometry``, the simulator's sparse
        rows (:data:`~.failure_geometry.VERTEX_DTYPE`,
        :data:`~.failure_geometry.GEOMETRY_DTYPE`) numbered by position in
        ``failures`` (see :meth:`governing`).
    level0_fs : ndarray or None
        Critical FS of level 0 (the first N Monte Carlo realisations; NaN
        without a valid surface); None when level 0 came from a checkpoint.
    """

    pf: float | None
    cov: float
    cov_upper: float
    interval_95: tuple
    beta: float
    pf_upper: float
    levels: list
    n_evaluations: int
    counts: dict
    status: str
    message: str
    settings: object
    seed: int
    failures: dict = field(repr=False)
    final_fs: np.ndarray = field(repr=False)
    problem: object = field(default=None, repr=False)
    refine: object = None
    level0_fs: np.ndarray | None = field(default=None, repr=False)
    _layout: object = field(default=None, repr=False)
    _replay: object = field(default=None, repr=False)

    @classmethod
    def build(cls, *, problem, settings, seed, levels, counts, stop, final, layout, refine, level0_fs=None):
        probs = [lv["probability"] for lv in levels]
        deltas = [lv["cov"] for lv in levels]
        reached = float(np.prod(probs)) if probs else 1.0
        t = settings.threshold
        if stop is not None:
            status, pf, msg = "no-progress", None, (
                f"{stop}. Reached: P(FS <= {levels[-1]['threshold']:.4g}) = {reached:.3g} after "
                f"{len(levels)} level(s); pf < {t:g} is below that and not estimated" if levels else stop)
        elif levels[-1]["n_failed"] == 0:
            status, pf = "max-levels", None
            prev = levels[-2]["threshold"] if len(levels) > 1 else float("nan")
            reached = float(np.prod(probs[:-1])) if len(probs) > 1 else 1.0
            msg = (f"stopped after max_levels = {settings.max_levels} levels without a sample below FS {t:g}: "
                   f"reached P(FS <= {prev:.4g}) = {reached:.3g}; pf is smaller than that (not estimated)")
        else:
            pf = reached
            status = "failure-level-reached" if levels[-1]["n_failed"] >= settings.n_chains else "max-levels"
            msg = ("failure level reached" if status == "failure-level-reached" else
                   f"max_levels = {settings.max_levels} reached with only {levels[-1]['n_failed']} failed samples "
                   "in the last level: pf estimated from them, with a larger CoV")
        if pf is not None:
            cov = math.sqrt(sum(d * d for d in deltas))
            cov_up = float(sum(deltas))
        else:
            cov = cov_up = float("nan")
        from .rare_surfaces import empty_rows, rows_of_surfaces, take

        if final is not None:
            fs, crit = final["fs"], final["crit"]
            fail = np.flatnonzero(fs < t)
            found = take(final.get("surfaces") or {}, fail)
            vert, geo = rows_of_surfaces(found) if found else empty_rows()
            failures = {"fs": fs[fail], "crit": crit[fail], "sample": fail, "searched_vertices": vert,
                        "searched_geometry": geo}
            final_fs, replay = fs, final["replay"]
        else:
            vert, geo = empty_rows()
            failures = {"fs": np.zeros(0), "crit": np.zeros(0, int), "sample": np.zeros(0, int),
                        "searched_vertices": vert, "searched_geometry": geo}
            final_fs, replay = np.zeros(0), None
        return cls(pf=pf, cov=cov, cov_upper=cov_up, interval_95=lognormal_interval(pf, cov),
                   beta=float(beta_from_pf(pf)) if pf else float("nan"), pf_upper=reached, levels=levels,
                   n_evaluations=int(counts["n"]), counts=dict(counts), status=status, message=msg,
                   settings=settings, seed=int(seed), failures=failures, final_fs=final_fs, problem=problem,
                   refine=refine, level0_fs=level0_fs, _layout=layout, _replay=replay)

    @property
    def thresholds(self) -> list:
        return [lv["threshold"] for lv in self.levels]

    @property
    def mc_equivalent(self) -> float:
        """Crude Monte Carlo samples for the same CoV: (1 − pf)/(pf δ²)."""
        if not self.pf or not math.isfinite(self.cov) or self.cov <= 0:
            return float("nan")
        return (1.0 - self.pf) / (self.pf * self.cov ** 2)

    # ------------------------------------------------------ failure samples
    @property
    def searched_family(self) -> str | None:
        """Family name of the surfaces the per-realisation search found (None without a search)."""
        return None if self.refine is None else f"{getattr(self.refine, 'search', 'nelder-mead')} (per realisation)"

    def failure_surfaces(self) -> dict:
        """{position in ``failures``: vertices (m, 2), section frame, m} of the failures a searched polyline governs."""
        return _searched(self.failures)

    def governing(self):
        """The governing surface of every failure sample, with its geometry (:class:`~.failure_geometry.GoverningSurfaces`).

        Entry i is ``failures`` position i: the per-realisation search's own
        polyline where it governed the sample (measured by the simulator on
        the slices the search judged), else the bank's critical surface.
        """
        from .failure_geometry import gather_governing, governing_families

        found = self.failure_surfaces()
        crit = self.failures["crit"]
        return gather_governing(self.problem, crit, found, self.failures["searched_geometry"],
                                governing_families(self.problem, crit, found, self.searched_family))

    def failure_map(self, x_edges, y_edges):
        """Where the failure samples' governing surfaces pass, given failure.

        Fraction of the last level's failed samples (FS < threshold) whose
        governing surface has a slice-base midpoint in each cell (the
        per-realisation search's polyline where it governed, sliced as
        :func:`.failure_geometry.slice_searched` measures it; else the bank's
        critical surface), as :meth:`SimulationResult.failure_map`; multiply
        by ``pf`` for the unconditional density.

        Returns
        -------
        ndarray (len(x_edges)-1, len(y_edges)-1)
        """
        from .failure_geometry import failure_cells

        crit = self.failures["crit"]
        found = _searched(self.failures)
        on_bank = (crit >= 0) & ~np.isin(np.arange(crit.size), list(found))
        counts = failure_cells(self.problem, crit[on_bank], [found[k] for k in sorted(found)],
                               np.asarray(x_edges, float), np.asarray(y_edges, float))
        return counts / max(crit.size, 1)

    def typical_failure(self) -> int | None:
        """Position in ``failures`` of the most typical failure, or None.

        Among the failed samples of the last level, those on the most
        frequent critical surface; of them, the one whose FS is nearest to
        their median.
        """
        crit, fs = self.failures["crit"], self.failures["fs"]
        if crit.size == 0:
            return None
        vals, cnt = np.unique(crit, return_counts=True)
        on = np.flatnonzero(crit == vals[np.argmax(cnt)])
        return int(on[np.argmin(np.abs(fs[on] - np.median(fs[on])))])

    def failure_noise(self, which: int) -> np.ndarray:
        """Standard-normal input of failure ``which`` (rebuilt from its chain, no FS evaluated)."""
        k = int(self.failures["sample"][which])
        if self._replay is None:  # the last level is Monte Carlo's first
            return self._layout.draw(self.problem, self.seed, [k])[0]
        return self._replay.state(self._layout, self.seed, len(self.levels) - 1, k)

    def failure_fields(self, which: int | None = None):
        """Fields of a failure sample (default the most typical) on the problem's grid.

        Returns
        -------
        grid : RegularGrid
        fields : dict key -> ndarray (nx, ny)
            As :func:`slope.simulate.realise_fields` (physical values, NaN
            outside the property's zones).
        """
        from .driver import realise_fields
        from .rare import GivenNoise

        which = self.typical_failure() if which is None else int(which)
        if which is None:
            raise InputError("failure_fields: this subset run has no failed sample")
        u = self.failure_noise(which)
        return realise_fields(self.problem, GivenNoise(self._layout, u[None], [0]), 0)

    def _level0(self, what):
        if self.level0_fs is None:
            return None
        f = self.level0_fs[np.isfinite(self.level0_fs)]
        if f.size < 2:
            return None
        return float(f.mean()) if what == "mean" else float(f.std(ddof=1))

    def to_dict(self) -> dict:
        """JSON-ready summary (FS dimensionless, pf a fraction)."""
        lo, hi = self.interval_95
        return {"estimator": "subset", "pf": self.pf, "cov": self.cov, "cov_upper": self.cov_upper,
                "pf_interval_95": [lo, hi], "ci_method": "lognormal with the estimator's CoV",
                "beta_from_pf": self.beta, "status": self.status, "message": self.message,
                "reached_probability": self.pf_upper, "levels": self.levels,
                "thresholds": self.thresholds, "n_evaluations": self.n_evaluations,
                "crude_mc_equivalent": self.mc_equivalent,
                "n_failure_samples": int(self.failures["fs"].size),
                "n_failed_on_searched_surface": len(self.failure_surfaces()),
                "n_nonconverged": int(self.counts["nonconv"]), "n_inadmissible": int(self.counts["inadm"]),
                "n_no_valid_surface": int(self.counts["none"]), "n_refined": int(self.counts["refined"]),
                "level0_mean_fs": self._level0("mean"), "level0_std_fs": self._level0("std"),
                "settings": self.settings.describe(), "seed": self.seed,
                "refine": None if self.refine is None else self.refine.describe(),
                "method": "subset simulation (Au & Beck 2001), adaptive conditional sampling "
                          "(Papaioannou et al. 2015) in the fields' white noise",
                "units": {"fs": "-", "pf": "probability (fraction)"}}


def _searched(failures) -> dict:
    """{position: vertices} of the failures a searched polyline governs (none in failures that lack the rows)."""
    from .rare_surfaces import surfaces_of_rows

    found = surfaces_of_rows(failures.get("searched_vertices"), failures.get("searched_geometry"))
    return {k: xy for k, (xy, _) in found.items()}

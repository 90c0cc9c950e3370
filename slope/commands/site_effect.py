"""What the site data changed: pf with and without conditioning, and where the data reduce the spread.

Used by ``slipfield run`` when the case has ``[[site_data]]``: the spatial
simulation (conditioned) is repeated without the data, with the same seed
(common random numbers: the unconditional fields are the same, so the
difference is the data's doing, not sampling noise), and a map of the
conditional standard deviation (simple-kriging variance, standard-normal
units, relative to the unconditional 1) is drawn on the section with the
data locations.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["SiteDataEffect", "site_data_effect", "conditional_sd_figure"]


@dataclass(frozen=True)
class SiteDataEffect:
    """pf of the spatial simulation with and without the site data (same seed).

    Attributes
    ----------
    hypothesis : str
    pf_conditional, pf_unconditional : float or None
    interval_conditional, interval_unconditional : (float, float) or (None, None)
        95 % intervals of pf.
    n_data : dict
        ``material.property`` -> number of readings.
    """

    hypothesis: str
    pf_conditional: float | None
    pf_unconditional: float | None
    interval_conditional: tuple
    interval_unconditional: tuple
    n_data: dict
    fs_conditional_mean: float | None = None
    fs_material_values: float | None = None

    def sentence(self) -> str:
        """One plain sentence saying how much the data changed pf."""
        pc, pu = self.pf_conditional, self.pf_unconditional
        if pc is None or pu is None:
            return (f"{self.hypothesis}: pf could not be compared with and without the site data "
                    "(a simulation had no admissible result).")
        data = ", ".join(f"{n} readings of {k}" for k, n in sorted(self.n_data.items()))
        lc, hc = self.interval_conditional
        lu, hu = self.interval_unconditional
        overlap = not (hc < lu or hu < lc)
        if pu > 0 and pc > 0:
            change = f"by a factor of {pc / pu:.3g}"
        else:
            change = "from {0:.3g} to {1:.3g}".format(pu, pc)
        fs = ""
        if self.fs_conditional_mean is not None and self.fs_material_values is not None:
            fs = (f" With strengths at their conditional mean the least FS of the bank is "
                  f"{self.fs_conditional_mean:.3f} (material values: {self.fs_material_values:.3f}).")
        return (f"{self.hypothesis}: conditioning on {data} changed pf from {pu:.3g} "
                f"[{lu:.3g}, {hu:.3g}] to {pc:.3g} [{lc:.3g}, {hc:.3g}] ({change}, same seed); "
                + ("the 95 % intervals overlap, so the change is within the sampling uncertainty of this run."
                   if overlap else "the 95 % intervals do not overlap.") + fs)

    def to_dict(self) -> dict:
        return {"hypothesis": self.hypothesis, "pf_conditional": self.pf_conditional,
                "pf_unconditional": self.pf_unconditional,
                "pf_interval_95_conditional": list(self.interval_conditional),
                "pf_interval_95_unconditional": list(self.interval_unconditional),
                "n_data": dict(self.n_data), "statement": self.sentence(),
                "deterministic_fs_conditional_mean": self.fs_conditional_mean,
                "deterministic_fs_material_values": self.fs_material_values,
                "note": "unconditional: the same simulation (same seed, same fields before conditioning) "
                        "without the site data; deterministic FS on the run's surface bank with the "
                        "strengths at their conditional mean where data exist (material values elsewhere)"}


def site_data_effect(prob, est_conditional, hypothesis, *, n, seed, batch, n_jobs, quiet, refine=None):
    """Simulate ``prob`` without its site data and compare pf.

    Parameters
    ----------
    prob : RandomProblem
        The conditioned problem (``prob.site_data`` non-empty).
    est_conditional : PfEstimate-like
        Its estimate (``pf``, ``ci_low``/``ci_high`` via ``interval``).

    Returns
    -------
    SiteDataEffect, and the unconditional FS array
    """
    from dataclasses import replace

    from ..reliability.stats import estimate_pf
    from ..simulate import simulate

    bare = replace(prob, site_data={})
    res = simulate(bare, n, seed, batch=batch, n_jobs=n_jobs, progress=not quiet, refine=refine)
    fs = np.asarray(res.fs, float)
    ok = np.isfinite(fs)
    est_u = estimate_pf(fs, valid=ok) if ok.any() else None

    def pf_int(e):
        if e is None or e.n_valid == 0:
            return None, (None, None)
        return float(e.pf), (float(e.ci[0]), float(e.ci[1]))

    pc, ic = pf_int(est_conditional)
    pu, iu = pf_int(est_u)
    n_data = {k: int(np.asarray(v[0]).shape[0]) for k, v in prob.site_data.items()}
    from ..simulate.conditioning import conditional_mean_fs

    det = conditional_mean_fs(prob)
    return SiteDataEffect(hypothesis, pc, pu, ic, iu, n_data, det["fs"], det["fs_material_values"]), fs


def conditional_sd(prob):
    """Conditional SD relative to the unconditional one on the grid, per property with data.

    Returns
    -------
    dict key -> ndarray (nx, ny): sqrt of the simple-kriging variance
    (standard-normal units) in the property's zones, NaN elsewhere.
    """
    from ..simulate.conditioning import conditioner

    g = prob.grid
    centres = g.points()
    zone = np.asarray(prob.section.zone_at(centres[:, 0], centres[:, 1]))
    out = {}
    for i, p in enumerate(prob.properties):
        if p.key not in prob.site_data:
            continue
        sd = np.full(centres.shape[0], np.nan)
        for z in prob.zones_of(i):
            sd[zone == z] = 1.0
            cd = conditioner(prob, i, z)
            if cd is None:
                continue
            idx = np.flatnonzero(zone == z)
            W = cd.cov.weights(centres[idx])
            C = cd.cov.model.covariance_matrix(centres[idx], cd.cov.data_points)
            sd[idx] = np.sqrt(np.clip(1.0 - np.einsum("td,td->t", W, C), 0.0, 1.0))
        out[p.key] = sd.reshape(g.nx, g.ny)
    return out


def conditional_sd_figure(prob, section, hypothesis):
    """Figure: conditional SD ÷ unconditional SD on the section, with the data locations."""
    from .. import report as rp
    from ..report.style import new_figure

    g = prob.grid
    x = g.x0 + (np.arange(g.nx) + 0.5) * g.dx
    y = g.y0 + (np.arange(g.ny) + 0.5) * g.dy
    maps = conditional_sd(prob)
    with rp.report_style():
        fig, axes = new_figure(nrows=len(maps), ncols=1, figsize=(8.0, 3.2 * len(maps)))
        axes = np.atleast_1d(axes)
        for ax, (key, sd) in zip(axes, maps.items()):
            rp.plot_field_realisation(ax, x, y, sd, label=f"{key}: conditional SD ÷ unconditional SD",
                                      units="-", ground_xy=section.ground,
                                      title=f"{key}, {hypothesis}: where the site data narrow the field")
            pts = np.asarray(prob.site_data[key][0])
            ax.plot(pts[:, 0], pts[:, 1], "o", ms=3, mfc="white", mec="black", label="site data")
            ax.legend(loc="lower right", fontsize=7)
    return fig

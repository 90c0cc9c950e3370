"""Distributions of FS and estimates of pf: histogram and CDF, convergence, comparison."""
from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from ...errors import InputError
from matplotlib.ticker import FuncFormatter, NullFormatter
from scipy.special import ndtr

from ..style import PALETTE, new_figure, report_style
from ._common import _axes, _vector

__all__ = ['fit_fs_distributions', 'plot_fs_distribution', 'plot_pf_convergence', 'plot_pf_comparison']


def fit_fs_distributions(fs_samples) -> dict:
    """Maximum-likelihood normal and lognormal fits to factors of safety.

    Normal: mean and the ddof=0 standard deviation. Lognormal with the
    location fixed at zero (two-parameter lognormal): ``scale`` = exp(mean of
    ln FS) and ``s`` = root mean square of ln FS - ln ``scale``. Both are the
    closed forms ``scipy.stats.norm.fit`` and ``scipy.stats.lognorm.fit(...,
    floc=0)`` evaluate, in the same order (the same numbers, tested); written
    out so that drawing figures does not import scipy.stats (a second per
    worker of a run). The lognormal fit is skipped (``None``) when any FS is
    not positive.

    Parameters
    ----------
    fs_samples : 1-D array_like
        Finite factors of safety (dimensionless).

    Returns
    -------
    dict
        ``{"normal": {"mean", "std", "pf"}, "lognormal": {"s", "scale",
        "median", "pf"} or None, "n"}`` where each ``pf`` is the fitted
        distribution's P(FS < 1).
    """
    fs = _vector(fs_samples, "fs_samples", min_len=2)
    if not np.all(np.isfinite(fs)):
        raise InputError("fs_samples: contains NaN/inf; pass only converged, admissible FS and count the rest separately.")
    mu = fs.mean()
    sd = np.sqrt(((fs - mu) ** 2).mean())
    out = {"n": int(fs.size), "normal": {"mean": float(mu), "std": float(sd),
                                         "pf": float(ndtr((1.0 - mu) / sd)) if sd > 0 else float(mu < 1.0)}}
    if np.all(fs > 0):
        ln_fs = np.log(fs)
        scale = np.exp(ln_fs.mean())
        s = np.sqrt(np.mean((ln_fs - np.log(scale)) ** 2))
        out["lognormal"] = {"s": float(s), "scale": float(scale), "median": float(scale),
                            "pf": float(ndtr(np.log(1.0 / scale) / s)) if s > 0 else float(scale < 1.0)}
    else:
        out["lognormal"] = None
    return out


def plot_fs_distribution(
    fs_samples,
    *,
    n_excluded: int = 0,
    pf: float | None = None,
    pf_interval: tuple[float, float] | None = None,
    bins: int | str = "auto",
    axes=None,
    title: str | None = None,
):
    """Histogram of FS with fitted normal and lognormal densities, and the empirical CDF.

    Left panel: density histogram with the two maximum-likelihood fits of
    :func:`fit_fs_distributions`. Right panel: empirical CDF
    F(x) = #{FS <= x}/n as a step line, FS = 1 marked, and pf annotated.

    Parameters
    ----------
    fs_samples : 1-D array_like
        Converged, admissible factors of safety.
    n_excluded : int
        Realisations left out of ``fs_samples`` because they did not converge
        or were inadmissible; stated on the figure so they are not lost.
    pf : float, optional
        Probability of failure to annotate (the simulator's estimate). When
        ``None``, the empirical fraction with FS < 1 of ``fs_samples``.
    pf_interval : (float, float), optional
        Confidence interval of ``pf``, annotated when given.
    bins : int or str
        Passed to :func:`numpy.histogram_bin_edges`.
    axes : pair of Axes, optional
        Two axes to draw into; a new 1×2 figure when ``None``.
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    fs = _vector(fs_samples, "fs_samples", min_len=2)
    if int(n_excluded) < 0:
        raise InputError("n_excluded: must be a count >= 0 of realisations left out.")
    fits = fit_fs_distributions(fs)
    if pf is None:
        pf = float(np.mean(fs < 1.0))
    with report_style():
        if axes is None:
            fig, (ax_h, ax_c) = new_figure(1, 2, figsize=(8.0, 3.4))
        else:
            ax_h, ax_c = axes
            fig = ax_h.figure
        edges = np.histogram_bin_edges(fs, bins=bins)
        ax_h.hist(fs, bins=edges, density=True, color=PALETTE["sky_blue"], edgecolor="white", linewidth=0.5,
                  label=f"simulated (n = {fs.size})")
        pad = 0.05 * np.ptp(edges)
        x_lo = edges[0] - pad
        if fits["lognormal"] is not None:
            x_lo = max(x_lo, 1e-9)  # the lognormal density lives on FS > 0
        x = np.linspace(x_lo, edges[-1] + pad, 400)
        nrm = fits["normal"]
        # A constant FS (e.g. no random input) has no density to draw.
        if nrm["std"] > 1e-9 * abs(nrm["mean"]):
            z = (x - nrm["mean"]) / nrm["std"]
            ax_h.plot(x, np.exp(-0.5 * z * z) / (np.sqrt(2.0 * np.pi) * nrm["std"]), color=PALETTE["blue"],
                      label=f"normal fit (μ = {nrm['mean']:.3f}, σ = {nrm['std']:.3f})", gid="fit-normal")
        if fits["lognormal"] is not None and fits["lognormal"]["s"] > 1e-9:
            ln = fits["lognormal"]
            z = np.log(x / ln["scale"]) / ln["s"]
            ax_h.plot(x, np.exp(-0.5 * z * z) / (np.sqrt(2.0 * np.pi) * ln["s"] * x), color=PALETTE["vermillion"],
                      linestyle="--",
                      label=f"lognormal fit (median = {ln['median']:.3f}, σ_ln = {ln['s']:.3f})", gid="fit-lognormal")
        ax_h.axvline(1.0, color=PALETTE["black"], linewidth=1.0, linestyle=":", label="FS = 1")
        ax_h.set_xlabel("factor of safety FS")
        ax_h.set_ylabel("probability density")
        # Below the panel: the fits' parameters are long and would cover the histogram.
        ax_h.legend(loc="upper left", bbox_to_anchor=(0.0, -0.2), borderaxespad=0.0)

        srt = np.sort(fs)
        ecdf = np.arange(1, srt.size + 1) / srt.size
        ax_c.step(srt, ecdf, where="post", color=PALETTE["blue"], label="empirical CDF", gid="ecdf")
        ax_c.axvline(1.0, color=PALETTE["black"], linewidth=1.0, linestyle=":", label="FS = 1")
        # pf is read off the CDF at FS = 1: a short leader from the axis to that point.
        ax_c.plot([min(srt[0], 1.0), 1.0], [pf, pf], color=PALETTE["vermillion"], linewidth=0.8, linestyle="--",
                  gid="pf-leader")
        text = f"pf = P(FS < 1) = {pf:.3g}"
        if pf_interval is not None:
            lo_pf, hi_pf = (float(v) for v in pf_interval)
            text += f"\nconfidence interval [{lo_pf:.3g}, {hi_pf:.3g}]"
        text += f"\nn = {fs.size}"
        if n_excluded:
            text += f"\n{int(n_excluded)} not converged/inadmissible, excluded"
        # The lower right of a CDF plot is empty (the curve is high there), above the pf leader.
        ax_c.text(0.98, min(pf + 0.06, 0.6), text, transform=ax_c.transAxes, ha="right", va="bottom", fontsize=8,
                  gid="pf-note")
        ax_c.set_ylim(0.0, 1.0)
        ax_c.set_xlabel("factor of safety FS")
        ax_c.set_ylabel("P(FS ≤ x)")
        ax_c.legend(loc="upper left")
        if title:
            fig.suptitle(title)
    return fig


# --------------------------------------------------------------------------- convergence
def plot_pf_convergence(n, pf, lo, hi, *, level: float = 0.95, ax=None, title: str | None = None):
    """Running estimate of pf with its confidence band against the number of realisations.

    Parameters
    ----------
    n : 1-D array_like of int
        Number of realisations at each checkpoint (increasing, >= 1).
    pf, lo, hi : 1-D array_like
        Estimate and lower/upper confidence bounds at each checkpoint, all in
        [0, 1] with lo <= pf <= hi.
    level : float
        Confidence level of the band, for the legend (default 0.95).
    ax : Axes, optional
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    n = _vector(n, "n")
    pf = _vector(pf, "pf")
    lo = _vector(lo, "lo")
    hi = _vector(hi, "hi")
    if not (n.size == pf.size == lo.size == hi.size):
        raise InputError(f"plot_pf_convergence: n, pf, lo, hi must have one value per checkpoint; got lengths "
                         f"{n.size}, {pf.size}, {lo.size}, {hi.size}.")
    if np.any(n < 1) or np.any(np.diff(n) <= 0):
        raise InputError("n: numbers of realisations must be >= 1 and strictly increasing.")
    for name, arr in (("pf", pf), ("lo", lo), ("hi", hi)):
        if np.any(~np.isfinite(arr)) or np.any(arr < 0) or np.any(arr > 1):
            raise InputError(f"{name}: probabilities must be finite and within [0, 1].")
    if np.any(lo > pf + 1e-12) or np.any(hi < pf - 1e-12):
        raise InputError("lo, hi: each band must contain its estimate (lo <= pf <= hi).")
    with report_style():
        fig, ax = _axes(ax)
        ax.fill_between(n, lo, hi, color=PALETTE["sky_blue"], alpha=0.35, linewidth=0,
                        label=f"{100 * level:g} % confidence band")
        ax.plot(n, pf, color=PALETTE["blue"], label="pf estimate")
        ax.set_xscale("log")
        # Plain numbers of realisations (100, 1000), not powers of ten with minor labels.
        ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:,.0f}" if v >= 1 else f"{v:g}"))
        ax.xaxis.set_minor_formatter(NullFormatter())
        ax.set_xlabel("number of realisations")
        ax.set_ylabel("probability of failure pf")
        ax.set_ylim(bottom=0.0)
        ax.legend(loc="upper right")
        if title:
            ax.set_title(title)
    return fig


def plot_pf_comparison(labels: Sequence[str], pf, lo=None, hi=None, *, log_pf: bool = False, ax=None,
                       title: str | None = None, colour: str | None = None):
    """Several estimates of pf side by side, each with its confidence interval.

    For the averaging report (given θ, single random variable, analytic
    variance-reduction estimate) or system versus fixed-surface pf.

    Parameters
    ----------
    labels : sequence of str
        One label per estimate (top to bottom).
    pf : 1-D array_like
        Probabilities of failure, in [0, 1].
    lo, hi : 1-D array_like, optional
        Confidence bounds; NaN where an estimate has none (e.g. a closed form).
    log_pf : bool
        Logarithmic pf axis; estimates of 0 are then listed in a note.
    ax : Axes, optional
    title : str, optional
    colour : str, optional
        Colour of the estimates (e.g. their hypothesis's).

    Returns
    -------
    matplotlib.figure.Figure
    """
    labels = [str(s) for s in labels]
    pf = _vector(pf, "pf")
    if len(labels) != pf.size:
        raise InputError(f"labels: {len(labels)} labels for {pf.size} values of pf; give one label per estimate.")
    if (lo is None) != (hi is None):
        raise InputError("lo, hi: give both confidence bounds or neither.")
    lo = np.full(pf.size, np.nan) if lo is None else _vector(lo, "lo")
    hi = np.full(pf.size, np.nan) if hi is None else _vector(hi, "hi")
    if lo.size != pf.size or hi.size != pf.size:
        raise InputError("lo, hi: one bound per estimate (NaN where there is none).")
    if np.any(~np.isfinite(pf)) or np.any(pf < 0) or np.any(pf > 1):
        raise InputError("pf: probabilities must be finite and within [0, 1].")
    has = np.isfinite(lo) & np.isfinite(hi)
    if np.any(lo[has] > pf[has] + 1e-12) or np.any(hi[has] < pf[has] - 1e-12):
        raise InputError("lo, hi: each interval must contain its estimate (lo <= pf <= hi).")
    with report_style():
        fig, ax = _axes(ax, figsize=(6.4, 0.5 * len(labels) + 1.3))
        ypos = np.arange(pf.size)[::-1]
        drawable = pf > 0 if log_pf else np.ones(pf.size, bool)
        xerr = np.vstack([np.where(has, pf - lo, 0.0), np.where(has, hi - pf, 0.0)])
        if log_pf:
            # Keep the lower whisker on the positive axis.
            xerr[0] = np.where(has & (lo > 0), xerr[0], 0.0)
        eb = ax.errorbar(pf[drawable], ypos[drawable], xerr=xerr[:, drawable], color=colour or PALETTE["blue"],
                         marker="o", linestyle="none", capsize=3)
        eb.lines[0].set_gid("estimates")
        for y, p in zip(ypos, pf):
            # Above and to the right of the point, so a pf of 0 is not printed on the axis.
            ax.annotate(f"{p:.3g}", xy=(p, y), xytext=(4, 5), textcoords="offset points", ha="left", fontsize=7)
        ax.set_yticks(ypos, labels)
        ax.set_ylim(-0.7, pf.size - 0.3)
        ax.set_xlabel("probability of failure pf (bars: confidence interval)")
        ax.grid(axis="y", visible=False)
        if log_pf:
            ax.set_xscale("log")
            if (~drawable).any():
                ax.text(0.0, 1.01, "pf = 0 not drawn on log axis: " + ", ".join(np.array(labels)[~drawable]),
                        transform=ax.transAxes, fontsize=7, gid="zero-note")
        else:
            ax.set_xlim(left=0.0)
        if title:
            ax.set_title(title)
    return fig

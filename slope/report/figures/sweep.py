"""pf and FS against the scale of fluctuation (θ sweeps)."""
from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from ...errors import InputError
from matplotlib.ticker import NullLocator

from ..style import CYCLE, new_figure, report_style
from ._common import _axes, _vector

__all__ = ['plot_pf_vs_theta', 'plot_fs_vs_theta']


def _theta_series(theta_values, y, lo, hi, labels, name):
    """Validate sweep inputs: θ vector, (n_series, n_theta) values and bounds, labels."""
    theta = _vector(theta_values, "theta_values")
    if np.any(np.isnan(theta)) or np.any(theta <= 0):
        raise InputError("theta_values: scales of fluctuation must be > 0 (use inf for a single random variable).")
    y = np.atleast_2d(np.asarray(y, dtype=float))
    if y.ndim != 2 or y.shape[1] != theta.size:
        raise InputError(f"{name}: expected {theta.size} values per series (one per θ), got shape {y.shape}.")
    if (lo is None) != (hi is None):
        raise InputError("lo, hi: give both confidence bounds or neither.")
    if lo is not None:
        lo = np.broadcast_to(np.atleast_2d(np.asarray(lo, dtype=float)), y.shape)
        hi = np.broadcast_to(np.atleast_2d(np.asarray(hi, dtype=float)), y.shape)
        if np.any(lo > y + 1e-12) or np.any(hi < y - 1e-12):
            raise InputError(f"lo, hi: each interval must contain its value of {name} (lo <= value <= hi).")
    if labels is None:
        labels = [None] if y.shape[0] == 1 else [f"series {i + 1}" for i in range(y.shape[0])]
    labels = list(labels)
    if len(labels) != y.shape[0]:
        raise InputError(f"labels: expected {y.shape[0]} labels (one per series), got {len(labels)}.")
    return theta, y, lo, hi, labels


def _draw_theta_sweep(ax, theta, y, lo, hi, labels, *, ylabel, theta_name, log_y, from_zero, gid):
    """Draw series against θ with θ = ∞ as a separate marker past the right edge."""
    fin = np.isfinite(theta)
    if fin.any():
        tmax, tmin = theta[fin].max(), theta[fin].min()
        span = np.log10(tmax / tmin) if tmax > tmin else 1.0
        x_inf = tmax * 10 ** max(0.25 * span, 0.3)
    else:
        x_inf = 1.0
    zero_note = []
    for s in range(y.shape[0]):
        colour = CYCLE[s % len(CYCLE)]
        v = y[s]
        yerr = None if lo is None else np.vstack([v - lo[s], hi[s] - v])
        if fin.any():
            eb = ax.errorbar(theta[fin], v[fin], yerr=None if yerr is None else yerr[:, fin], color=colour,
                             marker="o", markersize=4, capsize=2, label=labels[s])
            eb.lines[0].set_gid(f"{gid}-{s}")
        if (~fin).any():
            eb = ax.errorbar(np.full((~fin).sum(), x_inf), v[~fin], yerr=None if yerr is None else yerr[:, ~fin],
                             color=colour, marker="s", markerfacecolor="white", markersize=6, capsize=2,
                             linestyle="none", label=None if fin.any() else labels[s])
            eb.lines[0].set_gid(f"{gid}-{s}-inf")
        if log_y and np.any(v <= 0):
            zero_note.append(labels[s] or ylabel)
    if (~fin).any() and fin.any():
        ax.axvline(np.sqrt(theta[fin].max() * x_inf), color="#999999", linestyle=":", linewidth=0.8)
    ax.set_xscale("log")
    if log_y:
        ax.set_yscale("log")
    elif from_zero:
        ax.set_ylim(bottom=0.0)
    # Ticks at the swept values themselves: a sweep has few, chosen θ.
    ticks = list(np.unique(theta[fin]))
    tick_labels = [f"{t:g}" for t in ticks]
    if (~fin).any():
        ticks.append(x_inf)
        tick_labels.append("∞\n(single random\nvariable)")
    ax.xaxis.set_minor_locator(NullLocator())
    ax.set_xticks(ticks, tick_labels)
    lo_x = theta[fin].min() / 1.5 if fin.any() else x_inf / 3
    ax.set_xlim(lo_x, (x_inf if (~fin).any() else theta[fin].max()) * 1.5)
    ax.set_xlabel(f"scale of fluctuation {theta_name} (m)")
    ax.set_ylabel(ylabel)
    if zero_note:
        ax.text(0.02, 0.02, "values of 0 not drawn on log axis: " + ", ".join(zero_note), transform=ax.transAxes,
                fontsize=7, ha="left", va="bottom", gid=f"{gid}-zero-note")
    if any(lbl for lbl in labels):
        ax.legend(loc="best")


def plot_pf_vs_theta(
    theta_values,
    pf,
    lo=None,
    hi=None,
    labels: Sequence[str] | None = None,
    *,
    theta_name: str = "θh",
    log_pf: bool = False,
    ax=None,
    title: str | None = None,
):
    """pf against the scale of fluctuation from a θ sweep.

    Finite θ go on a logarithmic x axis. θ = ∞ (each property as a single
    random variable) cannot sit on that axis: it is drawn as a separate,
    unconnected marker at the right edge, past a dotted separator, with the
    tick labelled "∞".

    Parameters
    ----------
    theta_values : 1-D array_like
        Scales of fluctuation, m (> 0; ``inf`` allowed).
    pf : array_like, shape (n_theta,) or (n_series, n_theta)
        Probability of failure per θ (one row per series, e.g. per θv).
    lo, hi : array_like, same shape as ``pf``, optional
        Confidence bounds, drawn as error bars.
    labels : sequence of str, optional
        One legend label per series.
    theta_name : str
        Name on the x axis (e.g. ``"θh"``).
    log_pf : bool
        Logarithmic pf axis (values of 0 are then not drawable and are
        listed in a note on the figure).
    ax : Axes, optional
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    theta, pf, lo, hi, labels = _theta_series(theta_values, pf, lo, hi, labels, "pf")
    for name, arr in (("pf", pf), ("lo", lo), ("hi", hi)):
        if arr is not None and (np.any(~np.isfinite(arr)) or np.any(arr < 0) or np.any(arr > 1)):
            raise InputError(f"{name}: probabilities must be finite and within [0, 1].")
    with report_style():
        fig, ax = _axes(ax)
        _draw_theta_sweep(ax, theta, pf, lo, hi, labels, ylabel="probability of failure pf", theta_name=theta_name,
                          log_y=log_pf, from_zero=True, gid="series")
        if title:
            ax.set_title(title)
    return fig


def plot_fs_vs_theta(
    theta_values,
    mean_fs,
    std_fs,
    labels: Sequence[str] | None = None,
    *,
    theta_name: str = "θh",
    axes=None,
    title: str | None = None,
):
    """Mean and standard deviation of FS against the scale of fluctuation (θ sweep).

    Same x axis as :func:`plot_pf_vs_theta` (log θ, θ = ∞ as a separate
    marker at the right edge).

    Parameters
    ----------
    theta_values : 1-D array_like
        Scales of fluctuation, m (> 0; ``inf`` allowed).
    mean_fs, std_fs : array_like, shape (n_theta,) or (n_series, n_theta)
        Sample mean and standard deviation of the (minimum) FS per θ.
    labels : sequence of str, optional
        One legend label per series.
    theta_name : str
        Name on the x axes.
    axes : pair of Axes, optional
        Two axes to draw into; a new 1×2 figure when ``None``.
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    theta, mean, _, _, labels = _theta_series(theta_values, mean_fs, None, None, labels, "mean_fs")
    _, std, _, _, _ = _theta_series(theta_values, std_fs, None, None, labels, "std_fs")
    if std.shape != mean.shape:
        raise InputError(f"std_fs: shape {std.shape} differs from mean_fs {mean.shape}; give one σ per mean.")
    if np.any(~np.isfinite(mean)) or np.any(~np.isfinite(std)) or np.any(std < 0):
        raise InputError("mean_fs, std_fs: must be finite, with std_fs >= 0.")
    with report_style():
        if axes is None:
            fig, (ax_m, ax_s) = new_figure(1, 2, figsize=(8.4, 3.4))
        else:
            ax_m, ax_s = axes
            fig = ax_m.figure
        _draw_theta_sweep(ax_m, theta, mean, None, None, labels, ylabel="mean FS", theta_name=theta_name,
                          log_y=False, from_zero=False, gid="mean")
        _draw_theta_sweep(ax_s, theta, std, None, None, labels, ylabel="standard deviation of FS",
                          theta_name=theta_name, log_y=False, from_zero=True, gid="std")
        if title:
            fig.suptitle(title)
    return fig

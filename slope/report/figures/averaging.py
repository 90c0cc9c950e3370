"""Variance function γ(T) of correlation models (spatial averaging)."""
from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from ...errors import InputError
from ..style import CYCLE, PALETTE, report_style
from ._common import _axes, _vector

__all__ = ["plot_variance_reduction", "plot_variance_reduction_along_surface"]

# Properties' curves avoid the hypotheses' colours (vermillion, bluish green): the figure is one hypothesis'.
_PROPERTY_COLOURS = (PALETTE["blue"], PALETTE["orange"], PALETTE["reddish_purple"], PALETTE["sky_blue"],
                     PALETTE["black"])


def plot_variance_reduction(T_over_theta, gamma_by_model: Mapping[str, object], *, ax=None, title: str | None = None):
    """Variance function γ(T) of each correlation model against T/θ.

    γ(T) is the ratio Var[local average over length T] / point variance
    (Vanmarcke 1983). The dotted line θ/T is its common large-T asymptote,
    drawn for reference.

    Parameters
    ----------
    T_over_theta : 1-D array_like
        Averaging length over scale of fluctuation (> 0).
    gamma_by_model : mapping of str to 1-D array_like
        γ values per model name, each the length of ``T_over_theta``, in [0, 1].
    ax : Axes, optional
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    t = _vector(T_over_theta, "T_over_theta", min_len=2)
    if np.any(t <= 0) or not np.all(np.isfinite(t)):
        raise InputError("T_over_theta: averaging lengths over θ must be finite and > 0.")
    if not gamma_by_model:
        raise InputError("gamma_by_model: give at least one model name with its γ values.")
    with report_style():
        fig, ax = _axes(ax)
        for k, (name, g) in enumerate(gamma_by_model.items()):
            g = _vector(g, f"gamma_by_model[{name!r}]")
            if g.size != t.size:
                raise InputError(f"gamma_by_model[{name!r}]: {g.size} values for {t.size} values of T/θ.")
            if np.any(g < -1e-12) or np.any(g > 1 + 1e-12):
                raise InputError(f"gamma_by_model[{name!r}]: variance reduction factors must lie in [0, 1].")
            ax.plot(t, g, color=CYCLE[k % len(CYCLE)], label=str(name), gid=f"gamma-{k}")
        big = t >= 1.0
        if big.any():
            ax.plot(t[big], 1.0 / t[big], color="#777777", linestyle=":", linewidth=1.0, label="θ/T (asymptote)",
                    gid="asymptote")
        ax.set_xscale("log")
        ax.set_ylim(0.0, 1.05)
        ax.set_xlabel("averaging length / scale of fluctuation, T/θ")
        ax.set_ylabel("variance function γ(T)")
        ax.legend(loc="lower left")
        if title:
            ax.set_title(title)
    return fig


def plot_variance_reduction_along_surface(entries: Sequence[Mapping], *, ax=None, title: str | None = None):
    """Variance reduction of this case's random properties along their own critical surface.

    For each property: its 1D variance function γ(T) along θh against the
    averaging length T in metres (its own model and θ), the value at the
    length of the critical surface inside the property's zones (circle),
    and the value from the 2D correlation at the surface's own lags
    (diamond), which is what the quick estimate uses.

    Parameters
    ----------
    entries : sequence of dict
        ``{"label": str, "T": 1-D array (m), "gamma": 1-D array (-),
        "length": float (m), "gamma_surface": float (-), "gamma_line":
        float (-)}``.
    ax : Axes, optional
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    if not entries:
        raise InputError("entries: give at least one property with its γ(T) curve and surface length.")
    with report_style():
        fig, ax = _axes(ax, figsize=(6.4, 3.6))
        for k, e in enumerate(entries):
            t = _vector(e["T"], f"entries[{k}].T", min_len=2)
            g = _vector(e["gamma"], f"entries[{k}].gamma", min_len=2)
            if g.size != t.size or np.any(t <= 0):
                raise InputError(f"entries[{k}]: T (> 0, m) and gamma need one value each per point.")
            colour = _PROPERTY_COLOURS[k % len(_PROPERTY_COLOURS)]
            ax.plot(t, g, color=colour, label=str(e["label"]), gid=f"gamma-curve-{k}")
            ax.plot([e["length"]], [e["gamma_line"]], marker="o", color=colour, linestyle="none",
                    gid=f"gamma-line-{k}")
            ax.plot([e["length"]], [e["gamma_surface"]], marker="D", markerfacecolor="white", color=colour,
                    linestyle="none", gid=f"gamma-surface-{k}")
        ax.plot([], [], marker="o", color="#555555", linestyle="none", label="γ along θh at the surface length")
        ax.plot([], [], marker="D", markerfacecolor="white", color="#555555", linestyle="none",
                label="γ along the surface itself (2D correlation), used")
        ax.set_xscale("log")
        ax.set_ylim(0.0, 1.05)
        ax.set_xlabel("averaging length T (m)")
        ax.set_ylabel("variance function γ(T)")
        # Below the axes, so that long property names do not narrow the plotting area.
        ax.legend(loc="upper left", bbox_to_anchor=(0.0, -0.2), borderaxespad=0.0)
        if title:
            ax.set_title(title)
    return fig

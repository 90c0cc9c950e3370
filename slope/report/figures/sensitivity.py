"""Tornado chart: FS with each random variable at its low and high value in turn."""
from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from ...errors import InputError
from ..style import PALETTE, report_style
from ._common import _axes, _vector

__all__ = ['plot_tornado']


def plot_tornado(names, low_fs, high_fs, base_fs: float, k: float = 1.0, *, clipped: Sequence[str] = (), ax=None,
                 title: str | None = None):
    """Tornado chart: FS with each input at its low and its high value in turn.

    Bars are sorted with the largest swing |high − low| at the top.

    Parameters
    ----------
    names : sequence of str
        Input variables.
    low_fs, high_fs : 1-D array_like
        FS with the variable at mean − k·σ and mean + k·σ (others at their means).
    base_fs : float
        FS with every variable at its mean.
    k : float
        Number of standard deviations used, for the legend.
    clipped : sequence of str
        Variables whose mean ± k·σ left their support and were clipped to
        it; marked with an asterisk and explained under the chart.
    ax : Axes, optional
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    names = [str(s) for s in names]
    unknown = set(map(str, clipped)) - set(names)
    if unknown:
        raise InputError(f"clipped: {sorted(unknown)} are not among the tornado's variables {names}.")
    low = _vector(low_fs, "low_fs")
    high = _vector(high_fs, "high_fs")
    if not (len(names) == low.size == high.size):
        raise InputError(f"plot_tornado: names, low_fs and high_fs need one entry per variable; got {len(names)}, "
                         f"{low.size}, {high.size}.")
    base_fs = float(base_fs)
    if not (np.all(np.isfinite(low)) and np.all(np.isfinite(high)) and np.isfinite(base_fs)):
        raise InputError("plot_tornado: FS values must be finite; report non-converged evaluations separately.")
    order = np.argsort(-np.abs(high - low), kind="stable")
    with report_style():
        fig, ax = _axes(ax, figsize=(6.4, 0.45 * len(names) + 1.4))
        ypos = np.arange(len(names))[::-1]  # largest swing on top
        ax.barh(ypos, low[order] - base_fs, left=base_fs, color=PALETTE["orange"], height=0.6,
                label=f"variable at mean − {k:g}σ")
        ax.barh(ypos, high[order] - base_fs, left=base_fs, color=PALETTE["sky_blue"], height=0.6,
                label=f"variable at mean + {k:g}σ")
        ax.axvline(base_fs, color=PALETTE["black"], linewidth=1.0, label=f"all at mean, FS = {base_fs:.3f}")
        marked = set(map(str, clipped))
        ax.set_yticks(ypos, [names[i] + (" *" if names[i] in marked else "") for i in order])
        xlabel = "factor of safety FS"
        if marked:
            xlabel += f"\n* mean ± {k:g}σ clipped to the variable's support"
        ax.set_xlabel(xlabel)
        ax.grid(axis="y", visible=False)
        ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), borderaxespad=0.0)
        if title:
            ax.set_title(title)
    return fig

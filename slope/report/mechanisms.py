"""Figure of the failure mechanisms (issue 15): failure maps with circles alone and with the free search.

Drawn from :func:`slope.simulate.mechanism_results.mechanism_maps` (typed
arrays, not results.json). Units: m.
"""
from __future__ import annotations

from .figures import plot_failure_map
from .style import new_figure, report_style

__all__ = ["plot_mechanism_maps"]


def plot_mechanism_maps(x_edges, y_edges, free, circles, ground_xy, *, n_failed_free, n_failed_circles, n_total,
                        families=None):
    """Two failure maps of the same realisations, one above the other: circles alone, then every family.

    Parameters
    ----------
    x_edges, y_edges : array_like, m
        Cell edges.
    free, circles : (nx, ny) array_like
        Share of the failed realisations whose governing surface crosses
        each cell, with the free search and with circles alone.
    ground_xy : (n, 2) array_like, m
    n_failed_free, n_failed_circles, n_total : int
    families : dict str -> int, optional
        Realisations each family governed, named in the lower panel's title.

    Returns
    -------
    matplotlib.figure.Figure
    """
    with report_style():
        fig, axes = new_figure(2, 1, figsize=(7.0, 7.4))
        plot_failure_map(x_edges, y_edges, circles, ground_xy, n_failed=n_failed_circles, n_total=n_total,
                         ax=axes[0], title="circles alone")
        fams = "" if not families else "\ngoverning: " + ", ".join(f"{k} {v}" for k, v in families.items())
        plot_failure_map(x_edges, y_edges, free, ground_xy, n_failed=n_failed_free, n_total=n_total,
                         ax=axes[1], title="every family and the per-realisation search" + fams)
    return fig

"""Figures of a slipfield analysis, drawn from plain arrays, lists and dicts.

One module per topic (section, fields, distributions, sensitivity, sweep,
averaging, failure); :mod:`.catalogue` says which figure a run draws from
which typed result.

Every function takes an optional ``ax`` (a matplotlib Axes to draw into); when
it is ``None`` a new figure is made in slipfield's style (see
:mod:`slope.report.style`). Every function returns the
:class:`matplotlib.figure.Figure` it drew on, ready for
:func:`slope.report.html.save_figure` or for embedding in the HTML report.

Input shapes
------------
``xy`` arrays
    ``(n, 2)`` arrays of ``(x, y)`` points in m, x to the right, y up.
zone dict
    ``{"name": str, "polygon_xy": (n, 2), "material": str (optional)}``.
surface dict
    ``{"xy": (n, 2), "fs": float, "label": str (optional),
    "converged": bool (optional, default True)}``.
Field arrays
    ``values[i, j]`` at cell ``(x_i, y_j)``, the ``fields.RegularGrid``
    convention; ``grid_x`` / ``grid_y`` are either cell centres (length
    ``nx`` / ``ny``) or cell edges (length ``nx + 1`` / ``ny + 1``). NaN
    marks cells outside the soil.

Nothing here computes a probability of failure that is reported elsewhere:
the simulator owns pf and its confidence interval; the figures show what
they are given and, where they must compute (empirical CDF, fitted
densities), they use the formulas stated in each docstring.
"""
from slipfield.fields._lazy import lazy_exports

# Loaded on first use: a run whose figures are drawn by its worker processes never imports
# matplotlib in the command itself (about half a second of a warm run).
_WHERE = {
    "plot_variance_reduction": "averaging", "plot_variance_reduction_along_surface": "averaging",
    "fit_fs_distributions": "distributions", "plot_fs_distribution": "distributions",
    "plot_pf_comparison": "distributions", "plot_pf_convergence": "distributions",
    "plot_failure_geometry": "failure", "plot_failure_map": "failure",
    "plot_field_realisation": "fields", "plot_realisations": "fields",
    "plot_section": "section", "plot_tornado": "sensitivity",
    "plot_fs_vs_theta": "sweep", "plot_pf_vs_theta": "sweep",
}

__all__ = [
    "plot_section",
    "plot_field_realisation",
    "fit_fs_distributions",
    "plot_fs_distribution",
    "plot_pf_convergence",
    "plot_tornado",
    "plot_pf_comparison",
    "plot_pf_vs_theta",
    "plot_fs_vs_theta",
    "plot_variance_reduction",
    "plot_variance_reduction_along_surface",
    "plot_failure_map",
    "plot_failure_geometry",
    "plot_realisations",
]

__getattr__, __dir__ = lazy_exports(globals(), _WHERE)

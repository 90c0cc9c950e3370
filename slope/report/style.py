"""The look of slipfield's figures: one restrained matplotlib style of our own.

Colours
-------
Categorical colours are the eight-colour palette of Okabe & Ito (2008,
*Color Universal Design*, J*Fly web publication), reproduced by Wong (2011,
"Points of view: Color blindness", *Nature Methods* 8:441). It stays
distinguishable under the common forms of colour-vision deficiency. (Hex
values recalled from those sources.)

Continuous quantities (a property's random field, the failure map) use
matplotlib's ``cividis``, designed to be perceptually uniform and readable
with deuteranomaly (Nuñez, Anderton & Renslow 2018, *PLoS ONE* 13(7):
e0199239). Factors of safety of trial surfaces are never colour-coded as a
rainbow: the figures show the critical surface(s) only, labelled with their FS.

Usage
-----
Every public figure function draws inside :func:`report_style`, so the
user's global ``rcParams`` are left untouched::

    with report_style():
        fig, ax = new_figure()
"""
from __future__ import annotations

import contextlib
from collections.abc import Iterator

import matplotlib

from matplotlib.figure import Figure

__all__ = [
    "PALETTE",
    "CYCLE",
    "FIELD_CMAP",
    "DENSITY_CMAP",
    "RC_PARAMS",
    "report_style",
    "new_figure",
    "zone_colour",
    "HYPOTHESIS_COLOURS",
    "METHOD_LINESTYLES",
    "hypothesis_colour",
]

#: Okabe & Ito (2008) palette by name (values recalled from Wong 2011, Fig. 2).
PALETTE: dict[str, str] = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky_blue": "#56B4E9",
    "bluish_green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "reddish_purple": "#CC79A7",
}

#: Order used for successive series: strongest contrasts first; yellow last
#: because it is faint on white.
CYCLE: tuple[str, ...] = (
    PALETTE["blue"],
    PALETTE["vermillion"],
    PALETTE["bluish_green"],
    PALETTE["reddish_purple"],
    PALETTE["orange"],
    PALETTE["sky_blue"],
    PALETTE["black"],
    PALETTE["yellow"],
)

#: Colour map for a random field of a soil property.
FIELD_CMAP = "cividis"
#: Colour map for densities (failure map).
DENSITY_CMAP = "cividis"

# Light fills for soil zones: the palette's colours blended towards white so
# that surfaces and text drawn on top keep their contrast.
# The hypotheses' colours (vermillion, bluish green) are left out, so a critical surface never lies on a fill
# of its own colour.
_ZONE_BASE = (
    PALETTE["orange"],
    PALETTE["sky_blue"],
    PALETTE["yellow"],
    PALETTE["reddish_purple"],
    PALETTE["black"],
    PALETTE["blue"],
)

RC_PARAMS: dict[str, object] = {
    "figure.figsize": (6.4, 4.0),
    "figure.dpi": 100,
    "savefig.dpi": 150,
    "savefig.bbox": "tight",
    "font.size": 9.0,
    "axes.titlesize": 10.0,
    "axes.labelsize": 9.0,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "grid.color": "#d9d9d9",
    "grid.linewidth": 0.6,
    "grid.linestyle": "-",
    "axes.axisbelow": True,
    "axes.prop_cycle": matplotlib.cycler(color=list(CYCLE)),
    "lines.linewidth": 1.6,
    "legend.frameon": False,
    "legend.fontsize": 8.0,
    "image.cmap": FIELD_CMAP,
    # Keep text as text in SVG output (smaller files, searchable reports).
    "svg.fonttype": "none",
    # Fixed salt for the SVG element ids (random by default): the same figure gives the same file,
    # whichever process draws it.
    "svg.hashsalt": "slipfield",
}


def zone_colour(index: int) -> tuple[float, float, float]:
    """Light fill colour for soil zone number ``index`` (0-based).

    Parameters
    ----------
    index : int
        Position of the zone in the section's list of zones.

    Returns
    -------
    tuple of float
        RGB in [0, 1]: a palette colour mixed 55 % with white.
    """
    from matplotlib.colors import to_rgb

    r, g, b = to_rgb(_ZONE_BASE[index % len(_ZONE_BASE)])
    w = 0.55
    return (r + (1 - r) * w, g + (1 - g) * w, b + (1 - b) * w)


@contextlib.contextmanager
def report_style() -> Iterator[None]:
    """Context in which matplotlib uses slipfield's style.

    The user's own ``rcParams`` are restored on exit. pyplot is never
    imported, so the layer runs on headless machines whatever the backend.
    """
    with matplotlib.rc_context(RC_PARAMS):
        yield


def new_figure(nrows: int = 1, ncols: int = 1, figsize=None, **kwargs):
    """A new figure and its axes, not registered with pyplot.

    Figures are created through :class:`matplotlib.figure.Figure` directly so
    that long runs producing many figures do not accumulate them in pyplot's
    global registry (no ``plt.close`` needed, no memory growth).

    Parameters
    ----------
    nrows, ncols : int
        Grid of axes.
    figsize : tuple of float, optional
        Width and height in inches; the style's default when omitted.
    **kwargs
        Passed to :meth:`matplotlib.figure.Figure.subplots`.

    Returns
    -------
    fig : matplotlib.figure.Figure
    ax : Axes or array of Axes
    """
    fig = Figure(figsize=figsize or matplotlib.rcParams["figure.figsize"], layout="constrained")
    ax = fig.subplots(nrows, ncols, **kwargs)
    return fig, ax


#: One colour per drainage hypothesis, the same in every figure of every report. Not blue: blue is the
#: colour of water lines on the section, and a drained surface must not read as a water line.
HYPOTHESIS_COLOURS: dict[str, str] = {"undrained": PALETTE["vermillion"], "drained": PALETTE["bluish_green"]}
#: Line style per method of slices on the section figure (colour says the hypothesis).
METHOD_LINESTYLES: dict[str, object] = {"bishop": "-", "spencer": "--", "morgenstern-price": (0, (1, 1.5)),
                                        "janbu": "-.", "ordinary": (0, (6, 2, 1, 2, 1, 2))}


def hypothesis_colour(name: str) -> str:
    """The colour of a drainage hypothesis (:data:`HYPOTHESIS_COLOURS`; others take the cycle's tail)."""
    if name in HYPOTHESIS_COLOURS:
        return HYPOTHESIS_COLOURS[name]
    return CYCLE[2 + sum(map(ord, name)) % (len(CYCLE) - 3)]  # stable across processes

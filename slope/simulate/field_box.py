"""Where each zone's random fields are generated: a box of the problem's grid.

A zone's fields are read only in and near that zone: at the slice bases
lying in it (the bank's :class:`~slope.simulate.engine.BaseStencil`, the
per-realisation searches: refinement and the dynamic-programming free
search, every base taking the field of the zone of its midpoint), by the
site-data conditioning at the data inside it, and by field exports on its
cells. So the fields of zone ``z`` are generated on a box of grid cells
(:func:`field_box`) instead of the whole grid: a torus 2.0x smaller for
the levee demo (6.3x for its fill), 5.0x for the dam demo. A stationary field restricted to a box has
the same law there as the whole-grid field, so the statistics are
unchanged; the realisations themselves differ from whole-grid ones (another
torus, other white noise) and are again fixed by ``(seed, k, property,
zone)``.

The box of zone ``z`` is the bounding box of the zone's polygon grown by
:data:`REACH_M` plus one cell on every side (the bilinear interpolation
reads the neighbouring cell centres), clipped to the grid, and grown further
to every cell the bank's bases in zone ``z`` read, so the bank always reads
generated values. A base's averaging points lie within 3/8 of its length of
its midpoint, which is in the zone: on the three demo banks every one lies
within ``REACH_M`` of its zone, so their boxes depend on the section and the
cell size only, never on the bank. Coarse slicing (long, steep bases) can
reach farther, and then the bank widens the box; problems derived from
another (one surface, other θ: :mod:`.studies`) take its boxes
(:func:`inherit_boxes`), so they draw the same realisations. A point read
by a per-realisation search outside the box takes the value of the nearest
box cell, as a point outside the grid takes the nearest grid cell. Field
exports give the cells of the box and NaN elsewhere, with each zone's box
in the manifest (:func:`slope.simulate.driver.realise_fields`).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from slipfield.fields import RegularGrid

__all__ = ["FieldBox", "field_box", "inherit_boxes", "REACH_M"]

#: how far (m) beyond its zone's polygon a zone's field is generated, besides the
#: one cell of the bilinear interpolation: averaging points of bases up to
#: 2.7 m long (3/8 of the length from the midpoint) stay within it
REACH_M = 1.0


@dataclass(frozen=True)
class FieldBox:
    """Cells ``i0 <= i < i1``, ``j0 <= j < j1`` of a grid ``(nx, ny)`` (cell ``i * ny + j``).

    Attributes
    ----------
    grid : RegularGrid
        The parent grid (the problem's).
    i0, i1, j0, j1 : int
    """

    grid: RegularGrid
    i0: int
    i1: int
    j0: int
    j1: int

    @property
    def shape(self) -> tuple[int, int]:
        return (self.i1 - self.i0, self.j1 - self.j0)

    @property
    def n_cells(self) -> int:
        return (self.i1 - self.i0) * (self.j1 - self.j0)

    def subgrid(self) -> RegularGrid:
        """The box as a grid of its own (same cells, origin at its corner), m."""
        g = self.grid
        return RegularGrid(g.x0 + self.i0 * g.dx, g.y0 + self.j0 * g.dy, self.i1 - self.i0, self.j1 - self.j0,
                           g.dx, g.dy)

    def cells(self) -> np.ndarray:
        """Flat indices in the parent grid of the box's cells, in the box's C order."""
        i = np.arange(self.i0, self.i1)
        j = np.arange(self.j0, self.j1)
        return (i[:, None] * self.grid.ny + j[None, :]).ravel()

    def local(self, cells) -> np.ndarray:
        """Flat indices in the box of parent-grid cells ``cells``; a cell beyond the box gives the
        nearest box cell (the value :meth:`embed` puts there with ``outside="edge"``)."""
        i, j = np.divmod(np.asarray(cells, dtype=np.int64), self.grid.ny)
        i = np.clip(i, self.i0, self.i1 - 1)
        j = np.clip(j, self.j0, self.j1 - 1)
        return (i - self.i0) * (self.j1 - self.j0) + (j - self.j0)

    def embed(self, values, outside="edge") -> np.ndarray:
        """Box values ``(s, bx, by)`` on the parent grid ``(s, nx, ny)``.

        ``outside``: ``"edge"`` gives a cell outside the box the value of the
        nearest box cell (what a point beyond the box reads), ``"nan"`` NaN
        (not generated).
        """
        v = np.asarray(values)
        s = v.shape[0]
        g = self.grid
        pad = ((0, 0), (self.i0, g.nx - self.i1), (self.j0, g.ny - self.j1))
        if outside == "edge":
            return np.pad(v.reshape(s, *self.shape), pad, mode="edge")
        return np.pad(v.reshape(s, *self.shape).astype(float), pad, constant_values=np.nan)

    def describe(self) -> dict:
        """The box as plain data (cells and metres) for manifests."""
        sub = self.subgrid()
        return {"i0": self.i0, "i1": self.i1, "j0": self.j0, "j1": self.j1,
                "x_range_m": [sub.x0, sub.x0 + sub.nx * sub.dx], "y_range_m": [sub.y0, sub.y0 + sub.ny * sub.dy]}


def field_box(problem, z) -> FieldBox:
    """The :class:`FieldBox` of zone ``z`` (see module doc), kept with the problem.

    The one place every consumer of a zone's fields asks where they exist.
    """
    boxes = problem.__dict__.setdefault("_field_boxes", {})
    key = (z, problem.cell)
    if key not in boxes:
        boxes[key] = _build(problem, z)
    return boxes[key]


def inherit_boxes(parent, child):
    """Give ``child`` (a problem derived from ``parent``: same section and cell) ``parent``'s boxes."""
    for z in range(len(parent.section.zones)):
        field_box(parent, z)
    child._field_boxes = dict(parent._field_boxes)
    return child


def _build(problem, z):
    from .engine import stencil

    g = problem.grid
    poly = np.asarray(problem.section.zones[z].polygon, float)
    grow = REACH_M + g.dx, REACH_M + g.dy
    i_s = [int(np.floor((poly[:, 0].min() - grow[0] - g.x0) / g.dx)),
           int(np.floor((poly[:, 0].max() + grow[0] - g.x0) / g.dx))]
    j_s = [int(np.floor((poly[:, 1].min() - grow[1] - g.y0) / g.dy)),
           int(np.floor((poly[:, 1].max() + grow[1] - g.y0) / g.dy))]
    st = stencil(problem)
    if z in st.zones:  # every cell the bank's bases read
        i, j = np.divmod(st.zones[z][1], g.ny)
        i_s += [int(i.min()), int(i.max())]
        j_s += [int(j.min()), int(j.max())]
    i0, i1 = min(max(0, min(i_s)), g.nx - 1), max(1, min(g.nx, max(i_s) + 1))
    j0, j1 = min(max(0, min(j_s)), g.ny - 1), max(1, min(g.ny, max(j_s) + 1))
    return FieldBox(g, i0, max(i1, i0 + 1), j0, max(j1, j0 + 1))

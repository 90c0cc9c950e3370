"""Regular rectangular grids of cells.

Cell ``(i, j)`` has its centre at ``(x0 + (i + 0.5) dx, y0 + (j + 0.5) dy)``;
field arrays have shape ``(n, nx, ny)`` and flattened point order is C order
over ``(i, j)`` (``j`` fastest), as in DEVELOPERS.md.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .errors import InputError, finite_float

__all__ = ["RegularGrid"]


@dataclass(frozen=True)
class RegularGrid:
    """A regular grid of ``nx × ny`` rectangular cells.

    Parameters
    ----------
    x0, y0 : float
        Lower-left corner of the grid (m).
    nx, ny : int
        Number of cells along x and y (>= 1).
    dx, dy : float
        Cell sizes along x and y (m, > 0).
    """

    x0: float
    y0: float
    nx: int
    ny: int
    dx: float
    dy: float

    def __post_init__(self):
        for label in ("x0", "y0"):
            object.__setattr__(self, label, finite_float(getattr(self, label), f"grid {label}", "m"))
        for label in ("nx", "ny"):
            v = getattr(self, label)
            if isinstance(v, bool) or int(v) != v or int(v) < 1:
                raise InputError(f"grid {label} must be an integer >= 1, got {v!r}")
            object.__setattr__(self, label, int(v))
        for label in ("dx", "dy"):
            v = getattr(self, label)
            try:
                fv = float(v)
            except (TypeError, ValueError):
                raise InputError(f"grid spacing {label} must be a positive number (m), got {v!r}") from None
            if not (math.isfinite(fv) and fv > 0):
                raise InputError(f"grid spacing {label} must be > 0 (m), got {v!r}")
            object.__setattr__(self, label, fv)

    @property
    def shape(self) -> tuple[int, int]:
        """``(nx, ny)``."""
        return (self.nx, self.ny)

    @property
    def n_points(self) -> int:
        """Number of cells, ``nx * ny``."""
        return self.nx * self.ny

    @property
    def x(self) -> np.ndarray:
        """Cell-centre x coordinates, shape (nx,) (m)."""
        return self.x0 + (np.arange(self.nx) + 0.5) * self.dx

    @property
    def y(self) -> np.ndarray:
        """Cell-centre y coordinates, shape (ny,) (m)."""
        return self.y0 + (np.arange(self.ny) + 0.5) * self.dy

    @property
    def x_edges(self) -> np.ndarray:
        """Cell-edge x coordinates, shape (nx + 1,) (m)."""
        return self.x0 + np.arange(self.nx + 1) * self.dx

    @property
    def y_edges(self) -> np.ndarray:
        """Cell-edge y coordinates, shape (ny + 1,) (m)."""
        return self.y0 + np.arange(self.ny + 1) * self.dy

    def points(self) -> np.ndarray:
        """Cell centres, shape ``(nx * ny, 2)``, C order over ``(i, j)``."""
        xx, yy = np.meshgrid(self.x, self.y, indexing="ij")
        return np.column_stack([xx.ravel(), yy.ravel()])

    def reshape(self, values) -> np.ndarray:
        """Reshape ``(n, nx * ny)`` flattened values to ``(n, nx, ny)``."""
        v = np.asarray(values)
        if v.shape[-1] != self.n_points:
            raise InputError(f"values have {v.shape[-1]} points per realisation but the grid "
                             f"has {self.n_points} cells ({self.nx}x{self.ny})")
        return v.reshape(v.shape[:-1] + (self.nx, self.ny))

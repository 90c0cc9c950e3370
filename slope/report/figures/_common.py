"""Helpers shared by the figure modules: argument checks and the figure frame."""
from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from ...errors import InputError
from ...section import _as_points
from ..style import new_figure

__all__ = ["_xy", "_vector", "_axes", "_edges", "_fs_text"]


def _xy(a, name: str, min_points: int = 2) -> np.ndarray:
    """(n, 2) points in m, by the one check of point lists that the section, water and surfaces use."""
    return _as_points(name, a, min_points)


def _vector(a, name: str, min_len: int = 1) -> np.ndarray:
    arr = np.asarray(a, dtype=float)
    if arr.ndim != 1 or arr.size < min_len:
        raise InputError(f"{name}: expected a 1-D array of at least {min_len} numbers, got shape {arr.shape}.")
    return arr


def _axes(ax, figsize=None):
    if ax is None:
        fig, ax = new_figure(figsize=figsize)
        return fig, ax
    return ax.figure, ax


def _edges(coords: np.ndarray, n: int, name: str) -> np.ndarray:
    """Cell edges from centres (length n) or edges (length n + 1)."""
    if coords.size == n + 1:
        return coords
    if coords.size == n:
        if n == 1:
            raise InputError(f"{name}: a single cell centre cannot define the cell size; pass the 2 cell edges instead.")
        mid = 0.5 * (coords[1:] + coords[:-1])
        return np.concatenate([[2 * coords[0] - mid[0]], mid, [2 * coords[-1] - mid[-1]]])
    raise InputError(
        f"{name}: length {coords.size} fits neither the {n} cell centres nor the {n + 1} cell edges "
        "of the values array (values[i, j] at x_i, y_j)."
    )


def _fs_text(fs) -> str:
    return "FS = n/a" if fs is None or not np.isfinite(fs) else f"FS = {fs:.3f}"

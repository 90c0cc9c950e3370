"""Closed-form geometry of a sliding mass, for checks of the simulator's failure geometry.

The area between the ground and a polyline whose ends lie on the ground is
the area of the simple polygon they bound, by the shoelace (surveyor's)
formula A = ½ |Σ (x_i y_{i+1} − x_{i+1} y_i)| (Braden 1986, "The surveyor's
area formula", College Mathematics Journal 17(4): 326–337; recalled); the
greatest depth of a polyline under a polyline ground is reached at a vertex
of one of them.
"""
import contextlib

import numpy as np
import pytest


def shoelace_and_depth(section, xy):
    """Area (m² per m) and greatest depth (m) between the ground and a polyline whose ends lie on the ground."""
    g = section.ground
    x0, x1 = xy[0, 0], xy[-1, 0]
    assert section.ground_y(x0) == pytest.approx(xy[0, 1], abs=1e-9)
    assert section.ground_y(x1) == pytest.approx(xy[-1, 1], abs=1e-9)
    inner = g[(g[:, 0] > x0) & (g[:, 0] < x1)][::-1]       # the ground back from the far end
    assert len(xy) + len(inner) < 20                           # fewer bends than slices (see the fixtures)
    poly = np.vstack([xy, inner])
    x, y = poly[:, 0], poly[:, 1]
    area = 0.5 * abs(np.dot(x, np.roll(y, -1)) - np.dot(np.roll(x, -1), y))
    xs = np.union1d(xy[:, 0], inner[:, 0])
    depth = np.max(section.ground_y(xs) - np.interp(xs, xy[:, 0], xy[:, 1]))
    return area, depth


@contextlib.contextmanager
def interrupted_after_saves(monkeypatch, n_saves=2):
    """Within the block, subset simulation's level store raises KeyboardInterrupt right after its
    ``n_saves``-th checkpoint is written (as a user's Ctrl-C between levels would); the store's own
    ``save`` is back after the block."""
    from slipfield.slope.simulate import rare_store

    save = rare_store.LevelStore.save
    calls = []

    def stop_after(self, *a, **k):
        save(self, *a, **k)
        calls.append(1)
        if len(calls) == n_saves:
            raise KeyboardInterrupt

    monkeypatch.setattr(rare_store.LevelStore, "save", stop_after)
    try:
        with pytest.raises(KeyboardInterrupt):
            yield
    finally:
        monkeypatch.setattr(rare_store.LevelStore, "save", save)

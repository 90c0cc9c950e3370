"""Where to drill next: pre-posterior value of a vertical profile at candidate x.

For each candidate position and each spatially random property, the
variance of the property's average along the fixed deterministic critical
surface (standard-normal space, the base-length weighted mean of the values
the simulator puts on its slice bases) is computed with the data already
in the case and with a new profile of readings added at that x, every
``spacing`` metres from the ground down through the property's material.

What is exact and what is approximated (said plainly):

* For a Gaussian field the posterior variance of a linear functional does
  not depend on the values that will be measured, so the *expected*
  (pre-posterior) variance after drilling is exactly the conditional
  variance computed here; nothing is sampled.
* It is the variance of the strength average on one surface, the fixed
  deterministic critical one: the simulator's pf also depends on other
  surfaces (the critical surface moves between realisations) and, through
  the marginal, on the physical rather than the Gaussian values.  The
  reduction is therefore an indicator of how much a profile would narrow
  pf's spread, not the pf interval itself; it ranks candidates, it does not
  predict the pf a new investigation would give.
* Readings are placed at cell centres (as the simulator places data), with
  the error variance given (standard-normal units).
"""
from __future__ import annotations

import numpy as np

from slipfield.fields.conditioning import DataCovariance

from .engine import stencil

__all__ = ["surface_average_weights", "profile_value", "drilling_summary"]


def surface_average_weights(problem, index=None):
    """Weights of the base-length average along one surface, per zone, on the zone's cells.

    Returns
    -------
    dict zone -> (cells, a): the average is Σ_z a_z · Z_z[cells_z].
    """
    st = stencil(problem)
    index = problem.fixed_index if index is None else int(index)
    row = int(np.flatnonzero(st.rows == index)[0])
    n = st.shape[1]
    length = np.asarray(st.bank.base_length)[row]
    total = float(length.sum())
    out = {}
    for z, (bases, cells, W) in st.zones.items():
        mine = (bases // n) == row
        if not np.any(mine):
            continue
        lw = length[bases[mine] % n] / total
        a = np.asarray(W[np.flatnonzero(mine)].T @ lw).ravel()
        keep = a != 0.0  # the surface's own cells only
        out[z] = (cells[keep], a[keep])
    return out


def _column_cells(problem, x, zones, spacing):
    """Cell centres of a vertical profile at x inside ``zones``, every ``spacing`` m."""
    g = problem.grid
    i = int(np.clip(np.floor((x - g.x0) / g.dx), 0, g.nx - 1))
    xc = g.x0 + (i + 0.5) * g.dx
    top = float(problem.section.ground_y(xc))
    ys = g.y0 + (np.arange(g.ny) + 0.5) * g.dy
    step = max(1, int(round(spacing / g.dy)))
    ys = ys[ys < top][::-1][::step]
    zone = np.asarray(problem.section.zone_at(np.full(ys.size, xc), ys))
    keep = np.isin(zone, list(zones))
    return np.column_stack([np.full(int(keep.sum()), xc), ys[keep]]), zone[keep]


def profile_value(problem, xs, *, spacing=1.0, error_var=0.0):
    """Expected variance reduction of each property's surface average for a profile at each x.

    Parameters
    ----------
    problem : RandomProblem
        With or without site data already.
    xs : sequence of float
        Candidate profile positions (m).
    spacing : float
        Vertical spacing of the readings (m).
    error_var : float
        Measurement-error variance of each reading (standard-normal units).

    Returns
    -------
    list of dict
        One per candidate: ``x`` and, per ``material.property``,
        ``variance_now`` and ``variance_after`` of the surface average
        (standard-normal units) and ``fraction_removed``.
    """
    from .conditioning import conditioner

    weights = surface_average_weights(problem)
    centres = problem.grid.points()
    out = []
    for x in xs:
        row = {"x": float(x), "properties": {}}
        for i, p in enumerate(problem.properties):
            if p.single or p.prop == "unit_weight":
                continue
            model = p.correlation_model()
            zones = [z for z in problem.zones_of(i) if z in weights]
            now = after = 0.0
            new_pts, new_zone = _column_cells(problem, float(x), zones, spacing)
            for z in zones:
                cells, a = weights[z]
                tp = centres[cells]
                prior = float(a @ model.covariance_matrix(tp) @ a)
                cd = conditioner(problem, i, z)
                old = (cd.cov.data_points, cd.nugget) if cd is not None else (np.empty((0, 2)), np.empty(0))
                v = [prior, prior]
                for k, (pts, nug) in enumerate((old, (np.vstack([old[0], new_pts[new_zone == z]]),
                                                      np.concatenate([old[1], np.full(int((new_zone == z).sum()),
                                                                                      float(error_var))])))):
                    if pts.shape[0]:
                        # a tiny floor keeps a reading repeated in one cell from making C_dd singular
                        cov = DataCovariance(model, pts, np.maximum(nug, 1e-10))
                        c_s = model.covariance_matrix(tp, pts).T @ a
                        v[k] = prior - float(c_s @ _solve(cov, c_s))
                now += v[0]
                after += v[1]
            row["properties"][p.key] = {"variance_now": now, "variance_after": after,
                                        "fraction_removed": (1.0 - after / now) if now > 0 else 0.0}
        out.append(row)
    return out


def _solve(cov, b):
    from scipy import linalg

    return linalg.cho_solve(cov.cho, b, check_finite=False)


def drilling_summary(settings: dict, problem) -> dict:
    """The ``[drilling]`` table of a case evaluated on a problem (what ``slipfield run`` reports).

    Parameters
    ----------
    settings : dict
        Checked ``[drilling]`` keys: ``candidates`` (m), ``spacing`` (m),
        ``error_sd`` (standard-normal units).
    problem : RandomProblem
    """
    return {"candidates": profile_value(problem, settings["candidates"], spacing=float(settings["spacing"]),
                                        error_var=float(settings["error_sd"]) ** 2),
            "note": "expected (pre-posterior) variance of each property's average along the fixed deterministic "
                    "critical surface, standard-normal units, now and with a profile at x; exact for that "
                    "Gaussian average, an indicator for pf (the critical surface moves, marginals are not "
                    "Gaussian), not the pf interval itself"}

"""Site data in the single-variable analyses: the conditional mean at each slice base.

The single-variable analyses (Monte Carlo, Latin hypercube, point
estimates, FOSM, FORM, subset simulation, the tornado) take each random
property as one random variable ``X = F⁻¹(Φ(U))``, ``U`` standard normal,
``F`` the property's marginal. Where the case has ``[[site_data]]`` for a
property, the standard-normal value on each slice base becomes

    μ_c(x_b) + U,

with ``μ_c(x_b)`` the simple-kriging (conditional) mean of the property's
standard-normal field at the midpoint ``x_b`` of the base, from the data
of the base's zone and the property's correlation model (θh, θv, model,
angle) — the data as the spatial simulation holds them: each datum at the
centre of its grid cell, several data in one cell merged
(:class:`slope.simulate.conditioning.ZoneConditioner`). Without data
``μ_c = 0`` and the analyses are exactly those without site data.

What this does **not** do: the spread of ``U`` stays the prior one (unit
variance); the data move each base's median, they do not narrow the
variable. That is conservative; the spatial simulation is where the data
reduce uncertainty (conditional variance ``1 − kᵀC⁻¹k`` near the data).
Data of one property do not inform another (no co-kriging).

Closed form for one zero-error datum ``z_d`` at distance ``d``:
``μ_c = ρ(d) z_d`` (simple kriging; e.g. Rasmussen & Williams 2006, eq. 2.19);
with θ → ∞ it is ``z_d`` everywhere in the zone.
"""
from __future__ import annotations

import numpy as np

__all__ = ["gaussian_means", "CHUNK_BASES"]

#: slice bases per kriging-weight matrix (bounds memory: bases × data floats)
CHUNK_BASES = 20_000


def gaussian_means(case, det, hypothesis, bank) -> dict:
    """Standard-normal conditional mean of each property with site data, on every slice base of ``bank``.

    Parameters
    ----------
    case : slope.case.build.Case
    det : dict
        :func:`slope.case.analyses.deterministic` of the case.
    hypothesis : str
    bank : slope.slices.SliceBank
        The bank the single-variable limit state evaluates.

    Returns
    -------
    dict
        ``{j: μ_c (m, n)}`` for the j-th property of
        :func:`slope.case.analyses.properties_for` that has site data in a
        zone the bank crosses (0 on bases of zones without data); empty
        without ``[[site_data]]``.
    """
    if not case.extras.get("site_data"):
        return {}
    from ..simulate.conditioning import conditioner
    from .analyses import random_problem

    prob = random_problem(case, det, hypothesis)
    if prob is None or not prob.site_data:
        return {}
    xb, yb = bank.base_points_section_frame(1)
    pts = np.column_stack([xb.ravel(), yb.ravel()])
    zone = np.where(np.asarray(bank.valid, bool)[:, None], np.asarray(bank.zone), -1).ravel()
    out = {}
    for j, p in enumerate(prob.properties):
        if p.key not in prob.site_data:
            continue
        mu = np.zeros(zone.size)
        for z in prob.zones_of(j):
            cd = conditioner(prob, j, z)
            sel = np.flatnonzero(zone == z)
            if cd is None or sel.size == 0:
                continue
            for a in range(0, sel.size, CHUNK_BASES):
                part = sel[a:a + CHUNK_BASES]
                mu[part] = cd.cov.weights(pts[part]) @ cd.z
        if np.any(mu != 0):
            out[j] = mu.reshape(np.shape(bank.zone))
    return out

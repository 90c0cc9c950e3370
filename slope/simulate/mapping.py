"""Random fields → strengths on slice bases.

Default mapping is ``average``: the value of a base is the mean of the field
at ``n_per_base`` points along it, because the methods of slices integrate
strength along each base, so the base average (a local average, Vanmarcke
1983) is the quantity the kernel needs; a midpoint value overstates the
variance of short-scale fluctuations. Values are taken from the nearest grid
cell (unbiased pointwise variance, unlike bilinear interpolation). Each zone
has its own independent field (stream ``(property, zone)``).
"""
from __future__ import annotations

import math

import numpy as np

from fields import RegularGrid, get_model, make_generator
from fields.marginals import make_marginal
from fields.seeding import realisation_rng


class Mapper:
    """Precomputed grids, generators and base-point indices of a problem."""

    def __init__(self, problem):
        self.problem = problem
        bank = problem.bank
        npb = 1 if problem.mapping == "midpoint" else int(problem.n_per_base)
        x, y = bank.base_points_section_frame(npb)
        zmat = list(getattr(bank, "zone_materials", bank.zone_names))
        h = float(problem.cell_size)
        self.items = []
        for ip, p in enumerate(problem.properties):
            marg = make_marginal(p.distribution, mean=p.mean, cov=p.cov)
            for iz, mname in enumerate(zmat):
                if mname != p.material:
                    continue
                mask = bank.zone == iz
                if not mask.any():
                    continue
                xs, ys = x[mask], y[mask]
                x0, y0 = xs.min() - h, ys.min() - h
                nx = max(1, int(math.ceil((xs.max() - x0) / h)) + 1)
                ny = max(1, int(math.ceil((ys.max() - y0) / h)) + 1)
                if math.isinf(p.theta_h):
                    nx = 1
                if math.isinf(p.theta_v):
                    ny = 1
                grid = RegularGrid(x0, y0, nx, ny, h, h)
                gen = None
                if nx * ny > 1:
                    th = p.theta_h if math.isfinite(p.theta_h) else p.theta_v
                    tv = p.theta_v if math.isfinite(p.theta_v) else p.theta_h
                    model = get_model(p.model, theta_h=th, theta_v=tv, angle=p.angle)
                    gen = make_generator(problem.generator, model, grid=grid)
                i = np.clip(((xs - x0) // h).astype(int), 0, nx - 1)
                j = np.clip(((ys - y0) // h).astype(int), 0, ny - 1)
                self.items.append(dict(ip=ip, iz=iz, name=p.name, mask=mask, flat=i * ny + j,
                                       gen=gen, marg=marg))

    def overrides(self, seed, indices):
        """Strength overrides for ``slope.strength.base_strength``, shape (s, m, n)."""
        bank = self.problem.bank
        s = len(indices)
        out = {}
        for it in self.items:
            if it["gen"] is None:
                z = np.array([realisation_rng(seed, k, it["ip"], it["iz"]).standard_normal()
                              for k in indices])[:, None]
            else:
                z = it["gen"].sample(seed, indices, stream=(it["ip"], it["iz"]))
            v = it["marg"].from_standard_normal(z)
            if it["name"] == "phi":
                v = np.tan(np.radians(v))  # kernel integrates tan φ along the base
            vb = v[:, it["flat"]].mean(axis=-1)  # (s, n_base_in_zone)
            if it["name"] == "phi":
                vb = np.degrees(np.arctan(vb))
            arr = out.setdefault(it["name"], np.full((s,) + bank.zone.shape, np.nan))
            arr[:, it["mask"]] = vb
        return out

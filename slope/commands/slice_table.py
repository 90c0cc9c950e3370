"""Slice table of a critical surface: what a checker recomputes by hand.

The surface is re-evaluated alone with the case's strengths and the forces
returned (:func:`slope.methods.factor_of_safety` with ``return_forces``);
the mobilised shear on each base is S = (c l + N' tan φ) / F, Mohr-Coulomb
divided by the factor of safety, the definition every method of slices
shares.
"""
from __future__ import annotations

import numpy as np

from ..methods import factor_of_safety
from ..strength import base_strength

__all__ = ["slice_table", "SLICE_COLUMNS"]

#: (key, heading with unit) of each column, in order.
SLICE_COLUMNS = (
    ("slice", "slice"), ("x_mid", "x mid (m)"), ("width", "width b (m)"), ("alpha", "base angle α (°)"),
    ("base_length", "base length l (m)"), ("zone", "zone at base"), ("weight", "weight W (kN/m)"),
    ("u", "pore pressure u (kPa)"), ("c", "c or su (kPa)"), ("phi", "φ (°)"),
    ("normal_eff", "effective normal N' (kN/m)"), ("E_left", "E left (kN/m)"), ("E_right", "E right (kN/m)"),
    ("X_left", "X left (kN/m)"), ("X_right", "X right (kN/m)"), ("shear_mobilised", "mobilised shear S (kN/m)"),
)


def slice_table(case, bank, index: int, hypothesis: str, method: str) -> dict:
    """Per-slice quantities of surface ``index`` of ``bank`` under one hypothesis and method.

    Returns
    -------
    dict
        ``{"columns": SLICE_COLUMNS, "rows": [[...], ...], "fs": F of this
        evaluation, "converged": bool}``; x in the section frame, α in the
        sliding frame (positive where the base rises against the motion);
        interslice forces are empty for methods without them.
    """
    sub = bank.subset([int(index)])
    c, tan_phi = base_strength(sub, case.section.materials, hypothesis)
    opts = dict(interslice=case.analysis["interslice"]) if method == "morgenstern-price" else {}
    r = factor_of_safety(sub, c, tan_phi, method, return_forces=True, **opts)
    F = float(r.fs[0, 0])
    c1 = np.broadcast_to(c, sub.width.shape)[0]
    t1 = np.broadcast_to(tan_phi, sub.width.shape)[0]
    n_eff = None if r.normal_eff is None else r.normal_eff[0, 0]
    E = None if r.E is None else r.E[0, 0]
    X = None if r.X is None else r.X[0, 0]
    names = list(sub.zone_names)
    rows = []
    for i in range(sub.width.shape[1]):
        z = int(sub.zone[0, i])
        nn = None if n_eff is None else float(n_eff[i])
        rows.append([
            i + 1, float(sub.x_mid[0, i] * sub.direction[0]), float(sub.width[0, i]),
            float(np.degrees(sub.alpha[0, i])), float(sub.base_length[0, i]), names[z] if 0 <= z < len(names) else "—",
            float(sub.weight[0, i]), float(sub.u_base[0, i]), float(c1[i]), float(np.degrees(np.arctan(t1[i]))), nn,
            None if E is None else float(E[i]), None if E is None else float(E[i + 1]),
            None if X is None else float(X[i]), None if X is None else float(X[i + 1]),
            None if nn is None else float((c1[i] * sub.base_length[0, i] + nn * t1[i]) / F),
        ])
    return {"columns": SLICE_COLUMNS, "rows": rows, "fs": F, "converged": bool(r.converged[0, 0])}

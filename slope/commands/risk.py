"""Risk-chart points of a run, computed from its typed results.

Each hypothesis models a condition with its own annual probability
(``[[risk.hypothesis]]``: e.g. the undrained case triggered by a rapid
loading event, the drained case the normal long-term state with probability
1 per year), so

    annual pf = P(condition per year) × pf | condition,

for the spatial simulation (critical surface re-searched) and for the
single-random-variable estimate (Monte Carlo, else Latin hypercube), each
with its 95 % interval scaled the same way. This product assumes failure
under a condition is governed by one occurrence a year at most — a common
simplification the user owns. ``[risk] annual_exceedance`` is the condition
probability of every hypothesis without its own entry; ``annual_pf`` is an
input, kept apart from the computed points.
"""
from __future__ import annotations

from .results import RiskPoint, RunResults

__all__ = ["risk_points"]


def _condition(risk: dict, hyp: str):
    for h in risk.get("hypothesis", []) or []:
        if h["name"] == hyp:
            return float(h["annual_probability"]), h.get("condition", "") or ""
    if "annual_exceedance" in risk:
        return float(risk["annual_exceedance"]), "the analysed loading ([risk] annual_exceedance)"
    return None, ""


def risk_points(case, res: RunResults) -> dict | None:
    """``{"consequence", "consequence_label", "points": [RiskPoint], "tolerability", "given", "notes"}``.

    None when the case has no ``[risk]`` table.
    """
    risk = case.data.get("risk")
    if risk is None:
        return None
    cons = float(risk["consequence"])
    points, notes = [], []
    for hyp in res.deterministic:
        p_cond, condition = _condition(risk, hyp)
        if p_cond is None:
            notes.append(f"{hyp}: no annual probability of its condition given ([[risk.hypothesis]]), not charted")
            continue
        sp = res.spatial.get(hyp)
        if sp is not None:
            c = sp.spatial.searched
            points.append(RiskPoint(hyp, "spatial simulation", sp.spatial.path + ("critical_surface_searched", "pf"),
                                    float(c.pf), tuple(map(float, c.interval)), p_cond, condition, cons))
        sv = res.single_variable.get(hyp)
        for m in ("monte-carlo", "latin-hypercube"):
            b = (sv.blocks if sv else {}).get(m)
            if b is not None and b.get("pf") is not None:
                label = "single random variables (" + ("Monte Carlo" if m == "monte-carlo" else "Latin hypercube") + ")"
                points.append(RiskPoint(hyp, label, sv.path + (m, "pf"), float(b["pf"]),
                                        tuple(map(float, b["pf_interval_95"])), p_cond, condition, cons))
                break
    lines = [{"label": t["label"], "source": t["source"], "points": [list(map(float, p)) for p in t["points"]]}
             for t in risk.get("tolerability", []) or []]
    given = float(risk["annual_pf"]) if "annual_pf" in risk else None
    return {"consequence": cons, "consequence_label": risk.get("consequence_label", "consequence"),
            "points": points, "tolerability": lines, "given": given, "notes": notes}

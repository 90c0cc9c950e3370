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

__all__ = ["risk_points", "chart_points"]


def _condition(risk: dict, hyp: str):
    for h in risk.get("hypothesis", []) or []:
        if h["name"] == hyp:
            return float(h["annual_probability"]), h.get("condition", "") or ""
    if "annual_exceedance" in risk:
        return float(risk["annual_exceedance"]), "the analysed loading ([risk] annual_exceedance)"
    return None, ""


def chart_points(case, estimates) -> dict | None:
    """Risk-chart points from pf estimates given condition by condition.

    Parameters
    ----------
    estimates : sequence of (hypothesis, estimate label, key path, pf, (low, high) or None)
        pf given each hypothesis's condition, with where it is found in results.json.

    Returns
    -------
    dict or None
        ``{"consequence", "consequence_label", "points": [RiskPoint], "tolerability", "given", "notes"}``;
        None when the case has no ``[risk]`` table.
    """
    risk = case.data.get("risk")
    if risk is None:
        return None
    cons = float(risk["consequence"])
    points, notes = [], []
    for hyp in dict.fromkeys(e[0] for e in estimates):
        p_cond, condition = _condition(risk, hyp)
        if p_cond is None:
            notes.append(f"{hyp}: no annual probability of its condition given ([[risk.hypothesis]]), not charted")
            continue
        for h, label, path, pf, iv in estimates:
            if h == hyp and pf is not None:
                points.append(RiskPoint(hyp, label, tuple(path), float(pf),
                                        None if iv is None else tuple(map(float, iv)), p_cond, condition, cons))
    lines = [{"label": t["label"], "source": t["source"], "points": [list(map(float, p)) for p in t["points"]]}
             for t in risk.get("tolerability", []) or []]
    given = float(risk["annual_pf"]) if "annual_pf" in risk else None
    return {"consequence": cons, "consequence_label": risk.get("consequence_label", "consequence"),
            "points": points, "tolerability": lines, "given": given, "notes": notes}


def risk_points(case, res: RunResults) -> dict | None:
    """The risk chart of a run: the spatial estimate and the single-variable sampling estimate of every
    hypothesis (see :func:`chart_points`)."""
    estimates = []
    for hyp in res.deterministic:
        sp = res.spatial.get(hyp)
        if sp is not None:
            c = sp.spatial.searched
            estimates.append((hyp, "spatial simulation", sp.spatial.path + ("critical_surface_searched", "pf"),
                              c.pf, c.interval))
        sv = res.single_variable.get(hyp)
        for m in ("monte-carlo", "latin-hypercube"):
            b = (sv.blocks if sv else {}).get(m)
            if b is not None and b.get("pf") is not None:
                label = "single random variables (" + ("Monte Carlo" if m == "monte-carlo" else "Latin hypercube") + ")"
                estimates.append((hyp, label, sv.path + (m, "pf"), b["pf"], b["pf_interval_95"]))
                break
    return chart_points(case, estimates)

"""The case's inputs echoed as tables, so a reviewer checks them without opening the case file.

Each function takes the built case (:class:`slope.case.build.Case`) and
returns table dicts (``{"caption", "columns", "rows"}``, see
:mod:`slope.report.tables`); the values are the checked values the run
used, defaults included.
"""
from __future__ import annotations

import math

__all__ = ["input_tables"]


def _num(v):
    if v is None:
        return None
    if isinstance(v, str):
        return "∞" if v.strip().lower() in ("inf", "infinity") else v
    if isinstance(v, float) and math.isinf(v):
        return "∞"
    return v


def _su_law(mat) -> str:
    if mat.su_model is None:
        return "— (stays drained in an undrained analysis)"
    if mat.su_model == "constant":
        return f"su = {mat.su:g} kPa"
    if mat.su_model == "depth":
        return f"su = {mat.su:g} + {mat.su_gradient:g} z kPa (z: depth below ground, m)"
    if mat.su_model == "elevation":
        return f"su = {mat.su:g} + {mat.su_gradient:g} ({mat.su_datum:g} − y) kPa"
    return f"su = {mat.su_ratio:g} σ'v, at least {mat.su_min:g} kPa"


def _points(xy) -> str:
    return " → ".join(f"({x:g}, {y:g})" for x, y in xy)


def materials_table(case) -> dict:
    zones: dict = {}
    for z in case.section.zones:
        zones.setdefault(z.material, []).append(z.name)
    rows = [[m.name, ", ".join(zones.get(m.name, [])) or "—", m.unit_weight, m.unit_weight_sat, m.c, m.phi,
             _su_law(m)] for m in case.section.materials.values()]
    return {"caption": "Materials", "columns": ["material", "zones", "γ (kN/m³)", "γsat (kN/m³)", "c' (kPa)",
                                                "φ' (°)", "undrained strength su"], "rows": rows}


def random_table(case) -> dict:
    from ..case.analyses import properties_for

    hyps = case.analysis["hypotheses"]
    used = {h: {id(r) for r in properties_for(case, h)} for h in hyps}
    units = {"c": "kPa", "phi": "°", "su": "factor on the su law", "su_ratio": "factor on su/σ'v",
             "unit_weight": "kN/m³"}
    rows = []
    for r in case.randoms:
        mat = case.section.materials[r["material"]]
        mean = r.get("mean")
        if mean is None:
            mean = {"c": mat.c, "phi": mat.phi, "unit_weight": mat.unit_weight}.get(r["property"], 1.0)
        bounds = ", ".join(f"{k} {r[k]:g}" for k in ("lower", "upper") if k in r) or "—"
        model = r.get("model", "exponential") + (f" (ν = {r['nu']:g})" if r.get("model") == "matern" else "")
        rows.append([f"{r['material']}.{r['property']}", units.get(r["property"], "-"), r["distribution"], mean,
                     r["cov"], bounds, _num(r["theta_h"]), _num(r["theta_v"]), model, r.get("angle", 0.0),
                     ", ".join(h for h in hyps if id(r) in used[h]) or "none"])
    return {"caption": "Random properties ([[random]])",
            "columns": ["property", "unit", "distribution", "mean", "COV (-)", "bounds", "θh (m)", "θv (m)",
                        "correlation model", "angle (°)", "hypotheses using it"], "rows": rows}


def correlation_table(case) -> dict | None:
    cc = case.data.get("cross_correlation", [])
    if not cc:
        return None
    return {"caption": "Cross-correlations between random properties (at a point)",
            "columns": ["between", "and", "ρ (-)"], "rows": [[c["between"][0], c["between"][1], c["rho"]] for c in cc]}


def water_table(case) -> dict:
    w = case.data.get("water", {})
    rows = []
    if "phreatic" in w:
        rows.append(["phreatic surface", "all zones without a line of their own", _points(w["phreatic"])])
    for p in w.get("piezometric", []) or []:
        rows.append(["piezometric line", p["zone"], _points(p["line"])])
    if "ru" in w:
        rows.append(["pore-pressure ratio ru", "all zones", w["ru"]])
    if not rows:
        rows.append(["none", "—", "dry section: no pore pressure"])
    rows.append(["unit weight of water", "—", f"{w.get('unit_weight', 9.81):g} kN/m³"])
    if "phreatic" in w:
        rows.append(["cos²β seepage correction of phreatic pressures", "—",
                     "applied" if w.get("inclination_correction", True) else "not applied"])
    return {"caption": "Water", "columns": ["water input", "applies to", "value ([x, y] points in m)"], "rows": rows}


def loads_table(case) -> dict:
    rows = []
    for i, s in enumerate(case.data.get("surcharge", [])):
        q2 = s.get("q_end", s["q"])
        rows.append([f"surcharge {i + 1}", f"x {s['x_from']:g} to {s['x_to']:g} m",
                     f"{s['q']:g} kPa" + ("" if q2 == s["q"] else f" → {q2:g} kPa")])
    kh = case.data.get("seismic", {}).get("kh", 0.0)
    rows.append(["seismic coefficient kh (pseudo-static)", "whole sliding mass", kh])
    tc = case.data.get("tension_crack")
    rows.append(["tension crack", "upslope end of every surface",
                 "none" if not tc else f"{tc['depth']:g} m deep" + (f", water-filled to {tc.get('fill', 1.0):g} of "
                                                                     "its depth" if tc.get("water_filled") else ", dry")])
    return {"caption": "Loads", "columns": ["load", "where", "value"], "rows": rows}


def search_table(case) -> dict:
    s = case.data.get("search", {})
    rows = [["kind", s.get("kind", "centre-lattice")], ["trial surfaces asked", s.get("trials", 1500)],
            ["minimum depth (m)", s.get("min_depth", 0.5)]]
    for k, label in (("x_range", "circle centres, x range (m)"), ("y_range", "circle centres, y range (m)"),
                     ("entry", "entry window, x (m)"), ("exit", "exit window, x (m)")):
        if k in s:
            rows.append([label, f"{s[k][0]:g} to {s[k][1]:g}"])
    if "circle" in s:
        rows.append(["fixed circle (m)", f"centre ({s['circle']['x']:g}, {s['circle']['y']:g}), r {s['circle']['r']:g}"])
    if "polyline" in s:
        rows.append(["fixed polyline (m)", _points(s["polyline"])])
    a = case.analysis
    rows += [["hypotheses", ", ".join(a["hypotheses"])], ["methods", ", ".join(a["methods"])],
             ["method of the random runs", a["method"]], ["slices per surface", a["slices"]],
             ["Morgenstern-Price interslice function", a["interslice"]]]
    return {"caption": "Search and analysis settings", "columns": ["setting", "value"], "rows": rows}


def simulation_table(case, realisations: int) -> dict:
    s = case.simulation
    rows = [["realisations", realisations], ["seed", s["seed"]], ["random-field cell size (m)", s["cell"]],
            ["random-field generator", s["field_method"]], ["field to slice-base mapping", s["averaging"]],
            ["pf estimator", "share of valid realisations with FS < 1, 95 % Wilson interval (Wilson 1927)"],
            ["refinement", f"realisations with a bank FS below {s['refine_below']:g} refined ({s['refine_method']})"
             if s.get("refine_below") else "none"]]
    rel = case.data.get("reliability")
    if rel:
        rows += [["single-variable methods", ", ".join(rel["methods"])], ["single-variable samples", rel["samples"]],
                 ["tornado at mean ± k σ, k", rel["tornado_k"]],
                 ["critical surface per sample", "re-searched" if rel.get("research_surface") else
                  "fixed (deterministic critical surface)"]]
    return {"caption": "Simulation and reliability settings", "columns": ["setting", "value"], "rows": rows}


def input_tables(case, realisations: int) -> list[dict]:
    """Every input table, in the report's order (materials, random properties, cross-correlations, water,
    loads, search, simulation)."""
    out = [materials_table(case), random_table(case), correlation_table(case), water_table(case),
           _values_as_text(loads_table(case)), _values_as_text(search_table(case)),
           _values_as_text(simulation_table(case, realisations))]
    return [t for t in out if t is not None]


def _values_as_text(table: dict) -> dict:
    """The value column of a settings table as text: numbers and words in one column align alike."""
    from .tables import format_value

    table["rows"] = [[*r[:-1], format_value(r[-1])] for r in table["rows"]]
    return table

"""The figures of a ``slipfield run``: name → the typed result it needs → how it is drawn.

Each :class:`FigureEntry` names a figure, says which part of the typed
results (:mod:`slope.commands.results`) it draws from, the report section it
belongs to, and its draw function. A draw function takes the case and the
run's :class:`~slope.commands.results.RunResults` and returns
:class:`Drawn` items: a figure with its caption, or — where a figure would
be empty — a sentence instead. The report and the run both read this list;
adding a figure is one draw function and one line of :data:`CATALOGUE`.
"""
from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np


__all__ = ["Drawn", "FigureEntry", "CATALOGUE", "SECTIONS", "draw_all"]


@dataclass
class Drawn:
    """A figure (or the sentence that replaces an empty one) ready for the report."""

    stem: str
    caption: str
    figure: object | None
    text: str = ""
    group: str = ""
    legend: list = None  # the figure's legend entries as text, for readers who cannot see the image
    saved: bool = False  # the figure was written to figures/<stem>.png (and ``figure`` let go)


@dataclass(frozen=True)
class FigureEntry:
    """One figure of the catalogue."""

    name: str
    group: str
    needs: str
    draw: Callable


#: Report sections of the figures, in page order: key → heading.
SECTIONS = {
    "section": "Section: every input acting on stability, and the critical surfaces",
    "single": "Single random variables: FS distributions and tornado charts",
    "spatial": "Spatial simulation: FS distributions, convergence and the effect of spatial averaging",
    "fields": "Random fields of the realisations drawn, in physical units",
    "averaging": "Variance reduction of this case's properties along their critical surface",
    "failure": "Where and how the slope fails",
    "risk": "Risk chart",
}


def _hyps(res, attr):
    return [(h, v) for h, v in getattr(res, attr).items() if v is not None]


# --------------------------------------------------------------------------- section
def _section(case, res):
    from ..style import METHOD_LINESTYLES, hypothesis_colour
    from .section import plot_section

    sec = case.section
    zones = [{"name": z.name, "polygon_xy": z.polygon, "material": z.material} for z in sec.zones]
    water = sec.water
    phreatic = getattr(water, "phreatic", None) if water is not None else None
    lines = [{"xy": xy, "label": f"piezometric line, zone {z}"}
             for z, xy in (getattr(water, "piezometric", None) or {}).items()]
    ru = getattr(water, "ru", None) if water is not None else None
    loads = sec.loads
    strips = [{"x1": s.x1, "x2": s.x2, "q1": s.q, "q2": s.q if s.q2 is None else s.q2}
              for s in (loads.strips if loads is not None else [])]
    crack = None
    if loads is not None and loads.crack is not None:
        crack = {"depth": loads.crack.depth, "water_filled": loads.crack.water_filled}
    surfaces = []
    for h, ms in res.deterministic.items():
        for m, d in ms.items():
            if d.surface_xy is not None:
                surfaces.append({"xy": d.surface_xy, "fs": d.fs, "label": f"{h}, {m}", "short": m, "group": h,
                                 "colour": hypothesis_colour(h), "linestyle": METHOD_LINESTYLES.get(m, "-")})
    fig = plot_section(None, sec.ground, zones, phreatic, surfaces, title=case.title, water_lines=lines,
                       surcharges=strips, kh=loads.kh if loads is not None else None, crack=crack,
                       search=case.data.get("search"), zone_names_on_section=True, water_label="phreatic surface")
    text = ""
    if ru is not None:
        text = f"Pore pressures from the ratio ru = {ru} (no water line is drawn)."
    legend = [tx.get_text() for lg in fig.legends for tx in lg.get_texts()]
    return [Drawn("section", "Section: zones, water lines, loads, the search region and the critical surface of "
                  "every method (colour: hypothesis; line style: method)", fig, text, legend=legend)]


# --------------------------------------------------------------------------- single random variables
def _fs_single(case, res):
    from .distributions import plot_fs_distribution

    out = []
    for h, sv in _hyps(res, "single_variable"):
        for m in ("monte-carlo", "latin-hypercube"):
            fs = sv.samples.get(m)
            if fs is None:
                continue
            ok = np.isfinite(fs)
            b = sv.blocks[m]
            fig = plot_fs_distribution(fs[ok], n_excluded=int((~ok).sum()), pf=b["pf"],
                                       pf_interval=tuple(b["pf_interval_95"]))
            stem = "fs_single_variable" if m == "monte-carlo" else "fs_single_variable_lhs"
            out.append(Drawn(f"{stem}_{h}", f"FS distribution, single random variables ({m}), {h}", fig))
    return out


def _tornado(case, res):
    from .sensitivity import plot_tornado

    out = []
    for h, sv in _hyps(res, "single_variable"):
        tr = sv.tornado
        if tr is None:
            continue
        fig = plot_tornado(tr.names, tr.fs_low, tr.fs_high, tr.fs_mean, k=tr.k, clipped=tr.clipped)
        out.append(Drawn(f"tornado_{h}", f"Tornado chart (mean ± {tr.k:g}σ), {h}", fig))
    return out


# --------------------------------------------------------------------------- spatial simulation
def _fs_spatial(case, res):
    from .distributions import plot_fs_distribution

    out = []
    for h, sp in _hyps(res, "spatial"):
        fs = sp.spatial.fs
        ok = np.isfinite(fs)
        c = sp.spatial.searched
        fig = plot_fs_distribution(fs[ok], n_excluded=int((~ok).sum()), pf=c.pf, pf_interval=tuple(c.interval))
        out.append(Drawn(f"fs_spatial_{h}", f"FS distribution of the spatially variable simulation, {h}", fig))
    return out


def _convergence(case, res):
    from .distributions import plot_pf_convergence
    from ...reliability.stats import convergence_history

    out = []
    for h, sp in _hyps(res, "spatial"):
        fs = sp.spatial.fs
        c = sp.spatial.searched
        cap = f"Convergence of pf with its 95 % band, {h}"
        if c.n_failed == 0:
            # An empty band says nothing a sentence cannot say better.
            out.append(Drawn(f"pf_convergence_{h}", cap, None,
                             f"No realisation of the {h} spatial simulation failed (FS < 1) among {c.n_valid} valid "
                             f"realisations, so pf = 0 at every step and there is no convergence to draw; the "
                             f"95 % interval bounds pf above by {c.interval[1]:.3g}. More realisations lower that "
                             "bound; a rare-event estimator would estimate pf itself."))
            continue
        hist = convergence_history(fs, np.isfinite(fs))
        fig = plot_pf_convergence(hist["n"], hist["pf"], hist["ci_low"], hist["ci_high"])
        out.append(Drawn(f"pf_convergence_{h}", cap, fig))
    return out


def _comparison(case, res):
    from ..style import hypothesis_colour
    from .distributions import plot_pf_comparison

    out = []
    for h, sp in _hyps(res, "spatial"):
        rows = [("spatial (θ as given)", sp.spatial.searched),
                ("single random variable (θ → ∞)", sp.single.searched)]
        if sp.quick.estimate is not None:
            rows.append(("quick estimate: σ × √γ on the fixed surface", sp.quick.estimate))
        cap = f"What spatial averaging changes: pf with and without it, {h}"
        if all(r[1].pf == 0 for r in rows):
            # Points at 0 would sit on the axis, all alike: a sentence says it plainly.
            bounds = "; ".join(f"{name} < {r.interval[1]:.3g}" for name, r in rows)
            out.append(Drawn(f"pf_comparison_{h}", cap, None,
                             f"No realisation failed (FS < 1) in any of these {h} analyses, so pf = 0 in each and "
                             f"spatial averaging shows no difference to draw. Upper ends of the 95 % intervals: "
                             f"{bounds}."))
            continue
        fig = plot_pf_comparison([r[0] for r in rows], [r[1].pf for r in rows], [r[1].interval[0] for r in rows],
                                 [r[1].interval[1] for r in rows], colour=hypothesis_colour(h))
        out.append(Drawn(f"pf_comparison_{h}", cap, fig))
    return out


def _site_data(case, res):
    """pf with and without the site data, and where the data reduce the uncertainty (issue 16)."""
    from ..style import hypothesis_colour
    from .distributions import plot_pf_comparison
    from ...commands.site_effect import conditional_sd_figure

    out = []
    for h, sp in _hyps(res, "spatial"):
        eff = sp.site_data
        if eff is None:
            continue
        if eff.pf_conditional is not None and eff.pf_unconditional is not None:
            lo = [min(eff.interval_conditional[0], eff.pf_conditional),
                  min(eff.interval_unconditional[0], eff.pf_unconditional)]
            hi = [max(eff.interval_conditional[1], eff.pf_conditional),
                  max(eff.interval_unconditional[1], eff.pf_unconditional)]
            fig = plot_pf_comparison(["conditioned on the site data", "without the site data (same seed)"],
                                     [eff.pf_conditional, eff.pf_unconditional], lo, hi, colour=hypothesis_colour(h))
            out.append(Drawn(f"pf_site_data_{h}", f"pf with and without the site data, {h}", fig, eff.sentence()))
        out.append(Drawn(f"site_data_sd_{h}", "Site data locations and the conditional standard deviation relative "
                                              f"to the unconditional one, {h}",
                         conditional_sd_figure(sp.spatial.problem, case.section, h)))
    return out


# --------------------------------------------------------------------------- fields
def _su_law(mat, x, y, section):
    """The material's undrained law at points (kPa), as :func:`slope.strength.base_strength` applies it.

    The ``ratio`` law (su = S · σ'v, never below its minimum) uses the vertical effective stress a slice base
    at the point would carry (:func:`slope.bank.vertical_effective_stress`): the field is shown in kPa.
    """
    from ...bank import vertical_effective_stress

    ground_y = section.ground_y(x.ravel()).reshape(x.shape)
    depth = np.maximum(ground_y - y, 0.0)
    if mat.su_model == "constant":
        su = np.full_like(x, mat.su)
    elif mat.su_model == "depth":
        su = mat.su + mat.su_gradient * depth
    elif mat.su_model == "elevation":
        su = mat.su + mat.su_gradient * (mat.su_datum - y)
    elif mat.su_model == "ratio":
        su = np.maximum(mat.su_ratio * np.maximum(vertical_effective_stress(section, x, y), 0.0), mat.su_min)
    else:
        return None
    return np.maximum(su, 0.0)


def _physical(case, p, grid, values):
    """A realisation's field in physical units: (values, label, units, note), or None (not a field).

    Multiplier properties (su, su_ratio) are factors on the material's undrained law; the simulator applies
    them to the whole law (:func:`slope.simulate.engine.strength_overrides`), so su in kPa is the factor times
    the law at each cell.
    """
    labels = {"c": ("c'", "kPa"), "phi": ("φ'", "°")}
    if p.prop == "unit_weight":
        return None  # one random variable per zone: no spatial variation to show
    if not p.multiplier:
        name, units = labels.get(p.prop, (p.prop, "-"))
        return values, f"{p.material}: {name}", units, ""
    mat = case.section.materials[p.material]
    X, Y = np.meshgrid(grid.x, grid.y, indexing="ij")
    law = _su_law(mat, X, Y, case.section)
    if law is None:
        return values, f"{p.material}: su factor on its law", "-", ""
    if mat.su_model == "ratio":
        note = (f"su = the random factor × max({mat.su_ratio:g} σ'v, {mat.su_min:g} kPa): the field of the "
                f"strength ratio su/σ'v (mean {mat.su_ratio:g}) is shown as su in kPa, with σ'v at each cell from "
                "the soil above it, the loads and the pore pressures of the case.")
        return values * law, f"{p.material}: su = factor × {mat.su_ratio:g} σ'v", "kPa", note
    law_name = {"constant": f"{mat.su:g} kPa", "depth": "its depth law", "elevation": "its elevation law"}[mat.su_model]
    return values * law, f"{p.material}: su ({law_name} × the random factor)", "kPa", ""


def _fields(case, res):
    from ..style import hypothesis_colour
    from .fields import plot_realisations
    from ...case.analyses import surface_xy
    from ...simulate import realise_fields

    out = []
    for h, sp in _hyps(res, "spatial"):
        run = sp.spatial
        if not run.shown:
            continue
        prob = run.problem
        real = [(r, realise_fields(prob, run.seed, r["realisation"])) for r in run.shown]
        grid = real[0][1][0]
        for p in prob.properties:
            first = _physical(case, p, grid, real[0][1][1][p.key])
            if first is None:
                continue
            _, label, units, note = first
            panels = [{"values": _physical(case, p, grid, f[p.key])[0],
                       "surface_xy": surface_xy(prob.bank, r["bank_index"]), "fs": r["fs"],
                       "label": f"realisation {r['realisation']}, {r['role']}"} for r, (_, f) in real]
            fig = plot_realisations(grid.x, grid.y, panels, label, units=units, ground_xy=case.section.ground, ncols=2,
                                    surface_colour=hypothesis_colour(h))
            stem = "field_" + "".join(ch if ch.isalnum() else "_" for ch in p.key) + f"_{h}"
            out.append(Drawn(stem, f"Random field {p.key} in the realisation with the lowest FS and in a typical "
                                   f"one, each with its own critical surface, {h}", fig, note))
    return out


# --------------------------------------------------------------------------- averaging
def _averaging(case, res):
    from .averaging import plot_variance_reduction_along_surface
    from slipfield.fields import get_model, variance_function

    from ...case.build import theta_value

    out = []
    by_key = {f"{r['material']}.{r['property']}": r for r in case.randoms}
    for h, sp in _hyps(res, "spatial"):
        entries = []
        for row in sp.quick.properties:
            r = by_key.get(row["property"])
            th = theta_value(r["theta_h"]) if r else np.inf
            if r is None or not np.isfinite(th):
                continue
            model = get_model(r.get("model", "exponential"), theta_h=th,
                              **({"nu": r["nu"]} if r.get("model") == "matern" else {}))
            T = np.logspace(np.log10(th) - 1.5, np.log10(th) + 1.5, 60)
            same = next((e for e in entries if e["key"] == (th, r.get("model", "exponential"), r.get("nu"))
                         and np.isclose(e["length"], row["length_m"]) and np.isclose(e["gamma_surface"], row["gamma"])
                         and np.isclose(e["gamma_line"], row["gamma_1d_theta_h"])), None)
            if same is not None:
                # Drawn once: an identical curve on top would hide the first and its markers.
                same["names"].append(row["property"])
                continue
            entries.append({"names": [row["property"]], "key": (th, r.get("model", "exponential"), r.get("nu")),
                            "T": T, "gamma": np.array([float(variance_function(model, t)) for t in T]),
                            "length": row["length_m"], "gamma_surface": row["gamma"],
                            "gamma_line": row["gamma_1d_theta_h"]})
        for e in entries:
            e["label"] = f"{', '.join(e['names'])} (θh = {e['key'][0]:g} m, {e['key'][1]})"
        if not entries:
            continue
        fig = plot_variance_reduction_along_surface(entries)
        out.append(Drawn(f"variance_reduction_{h}", "Variance function γ(T) of each random property, with γ at the "
                                                    f"length of the deterministic critical surface in its zones, {h}",
                         fig))
    return out


# --------------------------------------------------------------------------- failure
def _failure_map(case, res):
    from .failure import plot_failure_map
    from ...simulate.failure_geometry import failure_map

    sec = case.section
    out = []
    for h, sp in _hyps(res, "spatial"):
        run = sp.spatial
        cap = f"Failure map: where the governing surfaces of failed realisations lie, {h}"
        if run.failed_area.size == 0:
            out.append(Drawn(f"failure_map_{h}", cap, None,
                             f"No realisation failed (FS < 1) among {len(run.fs)}: there is no failure to map; pf "
                             "is bounded above by its 95 % interval only."))
            continue
        fm = failure_map(run.governing, run.fs, np.linspace(sec.x_min, sec.x_max, 81),
                         np.linspace(sec.base_y, float(sec.ground[:, 1].max()), 41))
        fig = plot_failure_map(fm.x_edges, fm.y_edges, fm.density, sec.ground, n_failed=fm.n_failed,
                               n_total=fm.n_total, groups=[(g.kind, g.label, g.surfaces) for g in fm.groups])
        out.append(Drawn(f"failure_map_{h}", cap, fig))
    return out


def _mechanisms(case, res):
    """Failure maps of the same realisations with circles alone and with every surface family (issue 15)."""
    from ...simulate.mechanism_results import mechanism_maps
    from ..mechanisms import plot_mechanism_maps

    sec = case.section
    out = []
    for h, sp in _hyps(res, "spatial"):
        mech, r = sp.spatial.mechanisms, sp.spatial.result
        if mech is None or r is None:
            continue
        x_edges = np.linspace(sec.x_min, sec.x_max, 81)
        y_edges = np.linspace(sec.base_y, float(sec.ground[:, 1].max()), 41)
        free, circ, nf, nc = mechanism_maps(r, x_edges, y_edges)
        fig = plot_mechanism_maps(x_edges, y_edges, free, circ, sec.ground, n_failed_free=nf, n_failed_circles=nc,
                                  n_total=r.n, families=mech.families)
        out.append(Drawn(f"mechanism_maps_{h}", f"Failure mechanisms: circles alone and the free search, {h}", fig,
                         f"pf with circles alone {mech.pf_circles:.3g}, with every family and the per-realisation "
                         f"search {mech.pf:.3g}, from the same realisations (common random numbers)."))
    return out


def _failure_geometry(case, res):
    from .failure import plot_failure_geometry

    out = []
    for h, sp in _hyps(res, "spatial"):
        if sp.spatial.failed_area.size:
            fig = plot_failure_geometry(sp.spatial.failed_area, sp.spatial.failed_depth)
            out.append(Drawn(f"failure_geometry_{h}", "Failure geometry: sliding-mass area and greatest depth of the "
                                                      f"failed governing surfaces, {h}", fig))
    return out


# --------------------------------------------------------------------------- risk
_MARKERS = {"spatial simulation": "o"}


def risk_scenarios(res) -> list[dict]:
    """The risk chart's points as scenario dicts, in the order of ``res.risk["points"]`` (then the input)."""
    from ..style import hypothesis_colour

    scen = []
    for p in res.risk["points"]:
        scen.append({"label": p.label, "consequence": p.consequence, "pf": p.pf,
                     "annual_exceedance": p.annual_probability_of_condition,
                     "pf_interval": p.pf_interval, "colour": hypothesis_colour(p.hypothesis),
                     "marker": _MARKERS.get(p.estimate, "s")})
    if res.risk.get("given") is not None:
        scen.append({"label": "annual pf given in the case (an input, not computed)",
                     "consequence": res.risk["consequence"], "annual_probability": res.risk["given"],
                     "colour": "#555555", "marker": "D", "filled": False})
    return scen


def _risk(case, res):
    from ..risk import plot_risk_chart

    if res.risk is None:
        return []
    scen = risk_scenarios(res)
    if not scen:
        return [Drawn("risk_chart", "Risk chart", None, "; ".join(res.risk["notes"]))]
    fig = plot_risk_chart(scen, res.risk["tolerability"], consequence_label=res.risk["consequence_label"])
    conds = {p.hypothesis: (p.annual_probability_of_condition, p.condition) for p in res.risk["points"]}
    text = " ".join(f"{h}: condition {c or '(not described)'}, {a:g} per year." for h, (a, c) in conds.items())
    text += "".join(f" {n}." for n in res.risk["notes"])
    return [Drawn("risk_chart", "Risk chart: annual pf = P(condition per year) × pf | condition, with the 95 % "
                                "interval of pf as error bars, against consequence", fig, text)]


#: Every figure of a run, in report order.
CATALOGUE: tuple[FigureEntry, ...] = (
    FigureEntry("section", "section", "case inputs; deterministic critical surface of every method", _section),
    FigureEntry("fs_single_variable", "single", "single_variable[h].samples (Monte Carlo / LHS FS)", _fs_single),
    FigureEntry("tornado", "single", "single_variable[h].tornado", _tornado),
    FigureEntry("fs_spatial", "spatial", "spatial[h].spatial (FS per realisation, pf count)", _fs_spatial),
    FigureEntry("pf_convergence", "spatial", "spatial[h].spatial (FS per realisation)", _convergence),
    FigureEntry("pf_comparison", "spatial", "spatial[h] (spatial, θ → ∞ and quick estimates)", _comparison),
    FigureEntry("site_data", "spatial", "spatial[h].site_data (pf with and without [[site_data]])", _site_data),
    FigureEntry("field", "fields", "spatial[h].spatial.shown and its problem (fields regenerated)", _fields),
    FigureEntry("variance_reduction", "averaging", "spatial[h].quick.properties and the case's models", _averaging),
    FigureEntry("failure_map", "failure", "spatial[h].spatial.governing (governing surfaces of failed realisations)",
                _failure_map),
    FigureEntry("mechanism_maps", "failure", "spatial[h].spatial.mechanisms and its simulation result", _mechanisms),
    FigureEntry("failure_geometry", "failure", "spatial[h].spatial.failed_area / failed_depth", _failure_geometry),
    FigureEntry("risk_chart", "risk", "risk points (P(condition) × pf | condition)", _risk),
)


def draw_all(case, res) -> list[Drawn]:
    """Draw every catalogue entry for a run; each item carries its report section in ``group``."""
    out = []
    for entry in CATALOGUE:
        for d in entry.draw(case, res):
            d.group = entry.group
            out.append(d)
    return out

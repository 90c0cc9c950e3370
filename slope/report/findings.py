"""Findings in words, generated from a run's typed results (no canned conclusions).

For each hypothesis: the deterministic FS by method, pf with its interval
from the spatial simulation and from single random variables, whether
spatial averaging raised or lowered pf and by how much, the most influential
variable, the failure mechanisms (which family governed how many
realisations, pf with circles alone beside pf with the free search), and any
exclusion that could bias the result; then the governing hypothesis.
"""
from __future__ import annotations

__all__ = ["findings", "governing_hypothesis", "mechanism_sentence"]


def _pf(p, iv=None) -> str:
    s = f"{p:.3g}"
    if iv is not None and None not in iv:
        s += f" (95 % interval {iv[0]:.3g} – {iv[1]:.3g})"
    return s


def _deterministic(h, ms) -> str:
    fs = {m: d.fs for m, d in ms.items() if d.fs is not None}
    if not fs:
        return f"No method found an admissible, converged critical surface under the {h} hypothesis."
    parts = ", ".join(f"{m} {v:.3f}" for m, v in fs.items())
    lo, hi = min(fs.values()), max(fs.values())
    spread = "" if len(fs) == 1 else f"; the methods span {lo:.3f} to {hi:.3f} ({100 * (hi - lo) / lo:.1f} %)"
    return f"Deterministic FS ({h}): {parts}{spread}."


def _averaging(sp) -> str:
    a, b = sp.spatial.searched, sp.single.searched
    if a.pf is None or b.pf is None:
        return ""
    if a.pf == 0 and b.pf == 0:
        # No failure either way says nothing about averaging: give what the two samples do bound.
        bound = "" if None in (a.interval[1], b.interval[1]) else (
            f"; with 95 % confidence pf is below {a.interval[1]:.3g} with θ as given and below "
            f"{b.interval[1]:.3g} with θ → ∞")
        return ("No realisation failed, either with θ as given or with θ → ∞, so this run cannot show how "
                f"spatial averaging changes pf{bound}.")
    if a.pf == b.pf:
        return (f"Spatial averaging left pf unchanged at {a.pf:.3g} "
                "(same count of failures with θ as given and with θ → ∞).")
    if b.pf > 0 and a.pf > 0:
        ratio = b.pf / a.pf if b.pf > a.pf else a.pf / b.pf
        how = f"by a factor of {ratio:.2g}"
    else:
        how = f"from {b.pf:.3g} to {a.pf:.3g}"
    overlap = not (a.interval[1] < b.interval[0] or b.interval[1] < a.interval[0])
    word = "lowered" if a.pf < b.pf else "raised"
    note = (" The two 95 % intervals overlap, so the difference is within sampling error."
            if overlap else "")
    return (f"Spatial averaging {word} pf {how} compared with treating each property as one random variable "
            f"(θ → ∞: {_pf(b.pf, b.interval)}).{note}")


def _and(names) -> str:
    return names[0] if len(names) == 1 else f"{', '.join(names[:-1])} and {names[-1]}"


def mechanism_sentence(mech) -> str:
    """Failure mechanisms of one simulation in words (a MechanismSummary; "" without one)."""
    if mech is None:
        return ""
    fams = ", ".join(f"{k} {v}" for k, v in mech.families.items())
    out = f"Governing surface family, realisations: {fams}."
    if mech.search is not None:
        lo, hi = mech.window if mech.window is not None else (0.0, float("nan"))
        out += (f" The per-realisation {mech.search} search ran on the {mech.n_searched} realisations with a bank FS "
                f"in [{lo:g}, {hi:g}) and lowered {mech.n_refined}; pf with it counts the lowering inside that "
                "window only (a realisation already below 1 fails either way).")
    out += (f" pf with circles alone {_pf(mech.pf_circles, mech.pf_circles_interval)}, with every family and the "
            f"free search {_pf(mech.pf, mech.pf_interval)}")
    eff = mech.mechanism_effect
    return out + (f" (× {eff:.2g}, the mechanism effect)." if eff is not None and eff != 1.0 else ".")


def _exclusions(h, ms, sv, sp) -> str:
    from .exclusions import NOT_SLIP_SURFACES

    bits, by_count = [], {}
    for m, d in ms.items():
        # Only surfaces a method failed on could hide a lower FS; those that are no slip surface of the case
        # (listed in the exclusions table) could not.
        failed = {r: k for r, k in d.not_counted.items() if k and r not in NOT_SLIP_SURFACES}
        if failed:
            key = (sum(failed.values()), d.n_trials, "; ".join(f"{r}: {k}" for r, k in failed.items()))
            by_count.setdefault(key, []).append(m)
    if by_count:
        bits.append("trial surfaces without a valid solution, among which a lower FS could lie: " + ", ".join(
            f"{k} of {n} by {_and(methods)} ({why})" for (k, n, why), methods in by_count.items()))
    if sp is not None:
        n = sp.spatial.realisations
        x = n - sp.spatial.searched.n_valid
        if x:
            bits.append(f"{x} of {n} spatial realisations had no converged, admissible surface and are excluded "
                        "from pf (if they were weak realisations, pf is biased low)")
    for m, b in (sv.blocks.items() if sv else []):
        if str(b.get("status", "ok")) != "ok":
            bits.append(f"{m}: {b['status']}")
    if not bits:
        return ""
    return "Exclusions that could bias the result: " + "; ".join(bits) + "."


def governing_hypothesis(res) -> tuple[str, str] | None:
    """(hypothesis, why): the largest spatial pf, else the lowest deterministic FS."""
    pfs = {h: sp.spatial.searched.pf for h, sp in res.spatial.items() if sp is not None}
    if pfs and max(pfs.values()) > 0:
        h = max(pfs, key=pfs.get)
        return h, f"largest spatial pf, {pfs[h]:.3g}"
    fs = {h: min((d.fs for d in ms.values() if d.fs is not None), default=None) for h, ms in res.deterministic.items()}
    fs = {h: v for h, v in fs.items() if v is not None}
    if not fs:
        return None
    h = min(fs, key=fs.get)
    return h, f"lowest deterministic FS, {fs[h]:.3f}" + (" (no spatial realisation failed in any hypothesis)"
                                                        if pfs else "")


def findings(res) -> dict:
    """``{"by_hypothesis": [(hypothesis, [sentence, ...])], "governing": str}``."""
    out = []
    for h, ms in res.deterministic.items():
        sv, sp = res.single_variable.get(h), res.spatial.get(h)
        s = [_deterministic(h, ms)]
        if sp is not None:
            c = sp.spatial.searched
            s.append(f"Spatial simulation ({sp.spatial.realisations} realisations, critical surface re-searched in "
                     f"each): pf = {_pf(c.pf, c.interval)}, mean FS {c.mean_fs:.3f}, σ FS {c.std_fs:.3f}.")
            s.append(_averaging(sp))
            s.append(mechanism_sentence(getattr(sp.spatial, "mechanisms", None)))
        if sv is not None:
            for m, label in (("monte-carlo", "Monte Carlo"), ("latin-hypercube", "Latin hypercube")):
                b = sv.blocks.get(m)
                if b is not None:
                    s.append(f"Single random variables on the deterministic critical surface ({label}, "
                             f"{b.get('n_evaluations', b.get('n'))} samples): pf = {_pf(b['pf'], b['pf_interval_95'])}.")
                    break
            form = sv.blocks.get("form")
            if form and form.get("beta") is not None:
                s.append(f"FORM: β = {form['beta']:.3g}, pf = {form['pf']:.3g}"
                         + ("" if form.get("converged") else " (the iteration did not converge)") + ".")
            s.append(sv.site_data_sentence())  # "" without [[site_data]]
            top = sv.most_influential()
            if top:
                s.append(f"Most influential variable: {top[0]} ({top[1]}).")
        if sv is None and sp is None:
            s.append(f"No random property acts under the {h} hypothesis: no probability was computed.")
        s.append(_exclusions(h, ms, sv, sp))
        out.append((h, [x for x in s if x]))
    g = governing_hypothesis(res)
    gov = "" if g is None else f"Governing hypothesis: {g[0]} ({g[1]})."
    return {"by_hypothesis": out, "governing": gov}

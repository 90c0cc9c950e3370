"""What each analysis did not count, by reason, with one line saying what the reason means.

Rows come from the typed results: trial surfaces of the deterministic
search by reason (the bank's and the method's), realisations of each
simulation without a converged, admissible surface, and evaluations of the
single-variable methods set aside. A reason this module does not know is
still listed, with its own words as its meaning.
"""
from __future__ import annotations

from ..search.path_acceptance import KINEMATIC_REASON, UNSUPPORTED_REASON

__all__ = ["exclusion_table", "MEANINGS", "NOT_SLIP_SURFACES"]

#: Reason → what it means, one line each.
MEANINGS = {
    "does not cut the ground line twice": "the trial circle or polyline never enters and leaves the ground, so it "
                                          "bounds no sliding mass",
    "cuts the ground line more than twice": "the surface leaves and re-enters the ground: it would bound two masses",
    "a slice base lies outside every zone": "part of the surface runs outside the section's soil zones",
    "never deeper than the tension crack": "the whole surface lies within the tension crack depth",
    "shallower than search.min_depth": "the sliding mass is thinner than the case's minimum depth: a skin slip "
                                       "the search was told to leave out",
    "no driving moment: the loads balance about the circle centre": "nothing drives the mass round this circle, so "
                                                                    "F is unbounded and it cannot be critical",
    "not converged": "the method's iteration did not reach its tolerance on F; its last iterate is not a solution",
    "negative effective base normal force": "a slice base would be in tension, which soil cannot carry",
    "m_alpha <= 0.2 on a slice": "Bishop/Janbu's m_α became small, so one slice dominates and F is unreliable "
                                 "(common practice: reject m_α ≤ 0.2)",
    "line of thrust outside the slice": "the interslice force acts outside its slice: equilibrium needs tension "
                                        "or moment the soil cannot supply",
    "factor of safety not positive or not finite": "no driving moment, or the solver diverged",
    "interslice shear above the strength across a slice boundary":
        "a non-circular solution needs more shear across a vertical slice boundary than the soil there can "
        "carry at the same factor of safety (Chen & Morgenstern 1983), so it is not an acceptable solution",
    "surface rejected by the slice bank": "the surface geometry was rejected before any method ran",
    "negative shear strength on slice bases": "a spurious root of the equilibrium equations with negative base "
                                              "strengths",
    "realisations without a converged, admissible critical surface":
        "no surface of the bank gave a valid FS in that realisation; it is left out of pf (n_valid)",
    "lowest surface not converged, next valid one taken":
        "the lowest FS came from a non-converged iteration; the lowest valid FS was used (still counted)",
    "lowest surface inadmissible, next valid one taken":
        "the lowest FS came from an inadmissible solution; the lowest valid FS was used (still counted)",
    "realisations without a valid FS on the fixed surface":
        "the fixed deterministic surface gave no valid FS in that realisation; left out of its pf",
    "evaluations not converged or inadmissible": "samples whose FS is not a valid solution; left out of the estimate",
    KINEMATIC_REASON:
        "a free non-circular path whose lower limit-equilibrium FS is not backed by a mechanism: as a chain of "
        "rigid blocks (upper bound, Donald & Chen 1997) it is less critical than the surface it started from, "
        "which is kept",
    UNSUPPORTED_REASON: "free paths are not judged as rigid blocks where a tension crack is modelled, so they are "
                        "refused and their start surface is kept",
}


#: Trial surfaces set aside because they are not slip surfaces of the case by definition (no sliding mass, no
#: driving moment, shallower than the case's minimum depth…). Leaving them out cannot hide a lower FS; every
#: other reason (a method that did not converge or gave an inadmissible solution) could.
NOT_SLIP_SURFACES = frozenset({
    "does not cut the ground line twice", "cuts the ground line more than twice",
    "a slice base lies outside every zone", "never deeper than the tension crack", "shallower than search.min_depth",
    "no driving moment: the loads balance about the circle centre",
})


def _row(analysis, what, reason, count, of):
    return [analysis, what, reason, count, of, MEANINGS.get(reason, reason)]


def exclusion_table(res) -> dict:
    """One row per analysis × reason with a count above zero (a row saying so when there is none)."""
    rows = []
    for h, ms in res.deterministic.items():
        for m, d in ms.items():
            for reason, k in d.not_counted.items():
                if k:
                    rows.append(_row(f"{h} · deterministic search · {m}", "trial surfaces", reason, k, d.n_trials))
    for h, sv in res.single_variable.items():
        for m, b in (sv.blocks.items() if sv else []):
            k = int(b.get("n_nonconverged", 0) or 0) + int(b.get("n_inadmissible", 0) or 0)
            if k:
                rows.append(_row(f"{h} · single random variables · {m}", "evaluations",
                                 "evaluations not converged or inadmissible", k, b.get("n_evaluations", b.get("n"))))
    for h, sp in res.spatial.items():
        if sp is None:
            continue
        for run, name in ((sp.spatial, "spatial simulation"), (sp.single, "θ → ∞ simulation")):
            n = run.realisations
            for reason, k in (("realisations without a converged, admissible critical surface",
                               n - run.searched.n_valid),
                              ("lowest surface not converged, next valid one taken", run.n_nonconverged),
                              ("lowest surface inadmissible, next valid one taken", run.n_inadmissible),
                              ("realisations without a valid FS on the fixed surface",
                               n - (run.fixed.n_valid if run.fixed is not None else 0))):
                if k:
                    rows.append(_row(f"{h} · {name}", "realisations", reason, int(k), n))
            # paths of the per-realisation search not accepted (slope.simulate.mechanisms, refinement)
            for reason, k in (getattr(run.result, "refine_rejected", None) or {}).items():
                if k:
                    rows.append(_row(f"{h} · {name}", "paths and trial shapes of the per-realisation search",
                                     reason, int(k), None))
            # the bank's non-circular surfaces judged per realisation (slope.simulate.bank_checks)
            for reason, k in (getattr(run.result, "bank_rejected", None) or {}).items():
                if k:
                    rows.append(_row(f"{h} · {name}", "lowest non-circular bank surfaces of a realisation",
                                     reason, int(k), None))
        q = sp.quick
        if q.realisations - q.n_valid:
            rows.append(_row(f"{h} · quick σ√γ estimate", "realisations",
                             "realisations without a valid FS on the fixed surface", q.realisations - q.n_valid,
                             q.realisations))
    if not rows:
        rows.append(["every analysis", "—", "none", 0, None, "nothing was left out"])
    return {"caption": "Trial surfaces, realisations and evaluations not counted, by reason",
            "columns": ["analysis", "what", "reason", "count", "of", "what the reason means"], "rows": rows}

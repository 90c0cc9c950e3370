"""The files of a ``slipfield run`` drawn from its typed results: figures, CSV tables, ``report.html``.

The page is a jinja2 template (``templates/run_report.html``) with one
stylesheet and one print stylesheet, both inlined so the report stays a
single self-contained file. Content order (issue 13): title block, findings
in words, the comparison table, the inputs, the section figure, the other
figures, exclusions, slice tables.
"""
from __future__ import annotations

import base64
import datetime as _dt
import os
from pathlib import Path

from ..files import atomic_write_text
from .exclusions import exclusion_table
from .figures.catalogue import SECTIONS
from .findings import findings
from .render import render_figures
from .inputs import input_tables
from .tables import table_to_html, write_csv
from .templating import TEMPLATES, render_page

__all__ = ["write_run_report", "comparison_table", "render_run_report", "TEMPLATES"]

QUANTITIES = (("mean_fs", "mean FS"), ("std_fs", "σ FS"), ("pf", "pf [95 % interval]"), ("beta", "β"),
              ("n", "evaluations"))


def comparison_table(res) -> dict:
    """Rows (methods) × columns (hypotheses), every number with its results.json key path.

    Returns
    -------
    dict
        ``{"hypotheses": [...], "quantities": QUANTITIES, "rows": [{"label", "cells": {h: {q: (value, path)
        or None}}}]}``; ``path`` is the dotted key path (list items as ``[i]``).
    """
    from ..commands.results import comparison_rows

    hyps, rows = comparison_rows(res)

    def dotted(path):
        return ".".join(f"[{k}]" if isinstance(k, int) else str(k) for k in path)

    out = []
    for label, by_h in rows:
        cells = {}
        for h in hyps:
            e = by_h.get(h)
            cells[h] = None if e is None else {q: (v, dotted(p)) for q, (v, p) in e.cells().items()}
            if e is not None:
                cells[h]["status"] = e.status
        out.append({"label": label, "cells": cells})
    return {"hypotheses": hyps, "quantities": QUANTITIES, "rows": out}


def _mechanism_columns(run, mech: bool) -> list:
    """Per realisation: FS with circles alone (when other families or a search ran), then the governing surface."""
    from ..simulate.failure_geometry import governing_surfaces, surface_columns

    result = run.result
    gov = run.governing if run.governing is not None else governing_surfaces(result)
    fc = result.fs_circles_only
    return [([float(fc[k])] if mech else []) + surface_columns(gov, k) for k in range(result.n)]


def _csv_tables(stage: Path, res) -> list[dict]:
    """The CSV files; returns the slice tables (one per critical surface) for the page."""
    from ..commands.results import comparison_rows

    rows = [[h, m, d.fs, d.n_trials, d.n_counted, d.status] for h, ms in res.deterministic.items()
            for m, d in ms.items()]
    write_csv(stage / "deterministic.csv", ["hypothesis", "method", "FS (-)", "trials", "counted", "status"], rows)
    hyps, comp = comparison_rows(res)
    rows = []
    for label, by_h in comp:
        for h, e in by_h.items():
            if e.path[0] != "single_variable_reliability":
                continue
            v = e.values
            iv = v.get("pf_interval") or (None, None)
            rows.append([h, label, v.get("pf"), iv[0], iv[1], v.get("beta"), v.get("mean_fs"), v.get("std_fs"),
                         v.get("n")])
    write_csv(stage / "reliability.csv", ["hypothesis", "method", "pf (-)", "pf low (-)", "pf high (-)", "beta (-)",
                                          "mean FS (-)", "std FS (-)", "evaluations"], rows)
    rows = []
    for h, sp in res.spatial.items():
        if sp is None:
            continue
        for run in (sp.spatial, sp.single):
            c, f = run.searched, run.fixed
            rows.append([h, run.run, run.realisations, c.pf, *c.interval, c.beta_from_pf, c.mean_fs, c.std_fs,
                         None if f is None else f.pf])
        q = sp.quick.estimate
        rows.append([h, "analytic_variance_reduction", sp.quick.realisations, *(
            [q.pf, *q.interval, q.beta_from_pf, q.mean_fs, q.std_fs, q.pf] if q is not None else [None] * 7)])
    write_csv(stage / "simulation.csv", ["hypothesis", "analysis", "realisations", "pf (-)", "pf low (-)",
                                         "pf high (-)", "beta (-)", "mean FS (-)", "std FS (-)",
                                         "pf fixed surface (-)"], rows)
    rows = []
    mech = any(sp is not None and sp.spatial.mechanisms is not None for sp in res.spatial.values())
    for h, sp in res.spatial.items():
        if sp is None:
            continue
        a = sp.spatial
        extra = _mechanism_columns(a, mech)
        rows += [[h, k, float(a.fs[k]), int(a.critical_index[k]), float(a.fs_fixed[k]), *extra[k]]
                 for k in range(len(a.fs))]
    from ..simulate.failure_geometry import SURFACE_HEADER

    write_csv(stage / "fs_realisations.csv", ["hypothesis", "realisation", "FS critical (-)", "bank index",
                                               "FS fixed surface (-)"] + (["FS circles alone (-)"] if mech else [])
              + SURFACE_HEADER, rows)
    slices = []
    for h, ms in res.deterministic.items():
        for m, d in ms.items():
            if d.slices is None:
                continue
            name = f"slices_{h}_{m}.csv"
            cols = [c[1] for c in d.slices["columns"]]
            write_csv(stage / name, cols, d.slices["rows"])
            slices.append({"hypothesis": h, "method": m, "csv": name, "fs": d.slices["fs"], "fs_search": d.fs,
                           "converged": d.slices["converged"],
                           "table": table_to_html({"caption": "", "columns": cols, "rows": d.slices["rows"]},
                                                  table_id=f"slices-{h}-{m}")})
    return slices


def render_run_report(case, res, drawn, fig_dir: Path, slices) -> str:
    """The report page as HTML text."""
    from ..commands.results import CAUTION

    groups, number = [], 0
    for key, heading in SECTIONS.items():
        items = []
        for d in (x for x in drawn if x.group == key):
            item = {"caption": d.caption, "text": d.text, "stem": d.stem, "number": None, "src": None,
                    "legend": d.legend or []}
            if d.saved:
                number += 1
                b64 = base64.b64encode((fig_dir / f"{d.stem}.png").read_bytes()).decode("ascii")
                item.update(number=number, src=f"data:image/png;base64,{b64}")
            items.append(item)
        if items:
            groups.append({"key": key, "heading": heading, "items": items})
    meta = [("case file", os.path.basename(res.case_path)), ("case file SHA-256", res.case_sha256),
            ("slipfield version", res.version), ("run started", res.started_utc), ("seed", res.seed),
            ("realisations", res.realisations),
            ("wall time of the analyses", f"{res.analysis_time_s:.1f} s" if res.analysis_time_s else "—"),
            ("report written", _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC"))]
    return render_page(
        "run_report.html",
        title=res.title, note=res.note, meta=meta, caution=CAUTION, findings=findings(res),
        comparison=comparison_table(res),
        inputs=[table_to_html(t, table_id=f"inputs-{i}") for i, t in enumerate(input_tables(case, res.realisations))],
        section=next((g for g in groups if g["key"] == "section"), None),
        groups=[g for g in groups if g["key"] != "section"],
        exclusions=table_to_html(exclusion_table(res), table_id="exclusions-table"),
        slices=slices)


def write_run_report(stage: Path, case, res, *, formats=("png",), n_jobs: int = 1) -> None:
    """Figures (``figures/``), CSV tables and ``report.html`` of a run into ``stage``.

    ``n_jobs`` ≥ 2 draws the figures in that many worker processes (:func:`slope.report.render.render_figures`);
    the files are the same.
    """
    drawn = render_figures(case, res, stage / "figures", formats, n_jobs=n_jobs)
    slices = _csv_tables(stage, res)
    atomic_write_text(stage / "report.html", render_run_report(case, res, drawn, stage / "figures", slices))

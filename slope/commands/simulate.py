"""``slipfield simulate``: the spatially variable simulation of a case, resumable.

It runs one hypothesis and streams its blocks into ``DIR/store`` (a
:class:`~slope.simulate.store.BlockStore`) so that an interrupted run can be
continued with ``--resume``; its tables are written into a staging folder
and moved into place only when the run succeeded (``--export-fields`` the
same way). Every check of the user's input (case file, options, the output
folders, the store of a run to continue, the dask scheduler) is made before
anything is written, so bad input leaves the disk as it was.

``sweep_case`` (:mod:`.sweep`) and ``export_realisations`` (:mod:`.export`)
are re-exported here for callers of the former combined module.
"""
from __future__ import annotations

import hashlib
import json
import sys
import time
import warnings
from pathlib import Path

import numpy as np

from ..case.preflight import preflight
from ..errors import InputError
from ..simulate.failure_geometry import SURFACE_HEADER, governing_surfaces, surface_columns
from ..simulate.mechanism_results import mechanism_summary
from ._shared import RESULTS_VERSION, parse_theta_list, problem_of, settings, summary, write_json
from .export import EXPORT_FORMATS, export_realisations, write_realisations
from .folders import OutputFolder
from .results import jsonable
from .sweep import sweep_case

__all__ = ["simulate_case", "sweep_case", "export_realisations", "parse_theta_list", "EXPORT_FORMATS",
           "case_fingerprint", "PRESENTATION_KEYS"]

_STORE = "store"

#: Keys of the case file that cannot change a realisation's FS in ``simulate`` (dotted paths; a
#: table name covers the whole table). Every other key, including keys added later, is part of the
#: fingerprint a resumed run must match: a new key is covered unless it is listed here.
PRESENTATION_KEYS = frozenset({
    "case.title", "case.note",                      # words in the report
    "simulation.realisations",                      # how many: a resume extends the run
    "simulation.jobs", "simulation.batch",          # results are identical for any jobs and batch
    "simulation.seed",                              # the seed actually used is recorded on its own (--seed)
    "simulation.refine_below", "simulation.refine_method",  # the refinement used is recorded on its own
    # the estimator: a Monte Carlo store holds realisations, whichever estimator chose it; a subset
    # store records its settings in its own identity (slope.simulate.rare_store)
    "simulation.estimator", "simulation.level_probability", "simulation.samples_per_level",
    "simulation.refine_search",
    "analysis.hypotheses",                          # the hypothesis actually run is recorded on its own
    "analysis.methods",                             # the deterministic table of `run`; simulate uses analysis.method
    "reliability",                                  # single-random-variable methods of `run`
    "sweep",                                        # grid of `slipfield sweep`
    "risk",                                         # annual risk chart, drawn from pf afterwards
    "report",                                       # presentation options
})


def _strip(value, path: str):
    """``value`` without the keys listed in :data:`PRESENTATION_KEYS` (below ``path``)."""
    if isinstance(value, dict):
        return {k: _strip(v, f"{path}.{k}" if path else k) for k, v in value.items()
                if (f"{path}.{k}" if path else k) not in PRESENTATION_KEYS}
    if isinstance(value, list):
        return [_strip(v, path) for v in value]
    return value


def case_fingerprint(case) -> dict:
    """Digest of every table of a parsed case that can change a realisation's FS.

    Computed from the checked tables with their defaults filled (so writing
    a default explicitly changes nothing) minus :data:`PRESENTATION_KEYS`.

    Returns
    -------
    dict table -> str
        SHA-256 (hex, 16 characters) of each table's relevant content; a
        resume compares them table by table and names the ones that differ.
    """
    kept = _strip(case.data, "")
    return {t: hashlib.sha256(json.dumps(v, sort_keys=True, default=repr).encode()).hexdigest()[:16]
            for t, v in sorted(kept.items()) if v not in ({}, [])}


# ------------------------------------------------------- status per realisation
def _statuses(res) -> list[str]:
    """Status of each realisation's critical FS, from the per-realisation flags of the result.

    ``ok``: the lowest FS of the bank counted; ``ok-lowest-nonconverged-excluded`` /
    ``ok-lowest-inadmissible-excluded``: the lowest-FS surface was excluded and the
    next qualifying one is critical; ``ok-refined``: the refinement lowered the FS;
    ``no-valid-surface``: no surface qualified (FS empty, excluded from pf).
    """
    n = res.n
    flags = res.flags or {}
    none = flags.get("none", ~np.isfinite(res.fs))
    nonconv, inadm = flags.get("nonconv", np.zeros(n, bool)), flags.get("inadm", np.zeros(n, bool))
    refined = flags.get("refined", np.zeros(n, bool))
    out = []
    for k in range(n):
        if not np.isfinite(res.fs[k]) or none[k]:
            out.append("no-valid-surface")
        elif refined[k]:  # the final FS is the refined one, whatever happened in the bank
            out.append("ok-refined")
        elif nonconv[k]:
            out.append("ok-lowest-nonconverged-excluded")
        elif inadm[k]:
            out.append("ok-lowest-inadmissible-excluded")
        else:
            out.append("ok")
    return out


def _store_of(out: Path, prob, seed, refine, identity):
    from ..simulate import BlockStore, store_header
    from ..simulate.store import BLOCK

    return BlockStore(out / _STORE, store_header(prob, seed, refine, identity), block=BLOCK)


def _remove_store(store: Path) -> None:
    """Remove the files of slipfield's own store (``--overwrite`` without ``--resume``)."""
    import re

    for f in store.glob("*"):
        if f.is_file() and (f.name in ("header.json", "case.json") or re.match(r"^\.?block_\d{6}\.npz", f.name)):
            f.unlink()


# --------------------------------------------------------------- simulate
def simulate_case(case_path, out_dir, *, realisations=None, jobs=None, batch=None, seed=None, hypothesis=None,
                  resume=False, scheduler=None, export_fields=None, export_format="xdmf",
                  progress=False, refine_below=None, refine_method=None, overwrite=False, estimator=None,
                  level_probability=None, samples_per_level=None, refine_search=None) -> dict:
    """Spatially variable simulation of a case, streamed to ``out_dir`` (resumable).

    Parameters
    ----------
    case_path : path-like
        ``.toml`` case file.
    out_dir : path-like
        Output folder: ``store/`` (blocks of 100 realisations, kept for
        ``resume``), ``results.json``, ``fs_realisations.csv``.
    realisations, jobs, batch, seed : int, optional
        Override ``simulation.realisations``, ``jobs``, ``batch``, ``seed``.
    hypothesis : {"drained", "undrained"}, optional
        Default: the first of ``analysis.hypotheses``.
    resume : bool
        Continue the run stored in ``out_dir`` up to ``realisations``; a
        store of another problem is refused, naming what differs: every
        key of the case that can change a realisation's FS is covered
        (:func:`case_fingerprint`), and title, notes and report options are
        not. Unusable stored blocks are reported and recomputed.
    scheduler : str, optional
        Address of a dask.distributed scheduler (``tcp://host:port``).
    export_fields : path-like, optional
        Folder for :func:`export_realisations` (filled when the run succeeds).
    export_format : {"xdmf", "vtu", "npz"}
    progress : bool
        tqdm progress bar.
    refine_search : str, optional
        Override ``simulation.refine_search``: the per-realisation search
        (on by default for realisations with bank FS in [1, refine_below),
        ``slope.simulate.refinement``), or ``off``.
    refine_below : float, optional
        Override ``simulation.refine_below`` (default 1.10).
    refine_method : str, optional
        Override ``simulation.refine_method`` (default ``spencer``).
    overwrite : bool
        Start afresh in an ``out_dir`` (or ``export_fields``) holding
        slipfield's own output: only the files its marker lists are replaced.
    estimator, level_probability, samples_per_level : optional
        Override ``simulation.estimator`` etc. (:mod:`slope.commands.subset_cmd`):
        with subset simulation ``store/`` holds its level checkpoints and
        ``--resume`` continues from the last finished level.

    Returns
    -------
    dict
        The content of ``results.json``.
    """
    from ..case.build import load_case
    from ..report import write_csv
    from ..simulate import StoreRepairWarning, connect_scheduler, simulate
    from ..simulate.refinement import RefineSettings
    from ..caution import CAUTION

    t0 = time.perf_counter()
    if export_format not in EXPORT_FORMATS:
        raise InputError(f"--export-format: {export_format!r} is not supported; use one of "
                         f"{', '.join(EXPORT_FORMATS)}")
    case = load_case(case_path)
    n, n_jobs, block, seed = settings(case, realisations, jobs, batch, seed)
    # the search of the one hypothesis is checked by problem_of
    preflight(case, realisations=None if realisations is None else n, batch=None if batch is None else block,
              search=False)
    exp = None if export_fields is None else Path(export_fields)
    if exp is not None:
        a, b = exp.absolute().resolve(), Path(out_dir).absolute().resolve()
        if a == b or b in a.parents or a in b.parents:
            raise InputError(f"--export-fields {exp}: must not be --out, inside it or hold it; give a "
                             "separate folder")
    refine = RefineSettings.from_case(case.simulation, search=refine_search, below=refine_below, method=refine_method)
    out = OutputFolder(out_dir, "simulate", overwrite=overwrite)
    exp_folder = None if exp is None else OutputFolder(exp, "simulate --export-fields", option="--export-fields",
                                                       overwrite=overwrite)
    if scheduler is None:
        from ..simulate.driver import start_workers

        start_workers(n_jobs)  # the pool starts while the search runs
    hyp, _, prob = problem_of(case, hypothesis)
    identity = {"case": case_fingerprint(case), "hypothesis": hyp, "results_format": RESULTS_VERSION}
    from .subset_cmd import choose_estimator, simulate_subset_case

    chosen, sub = choose_estimator(case, prob, estimator, level_probability, samples_per_level, seed, n_jobs,
                                   block, refine)
    if chosen["estimator"] == "subset":
        if exp is not None:
            raise InputError("--export-fields: with subset simulation the fields of the most typical failure are "
                             "written to subset_typical_failure.npz in --out; leave --export-fields out")
        return simulate_subset_case(case, case_path, prob, hyp, out, sub, seed=seed, n_jobs=n_jobs, batch=block,
                                    resume=resume, overwrite=overwrite, scheduler=scheduler, refine=refine,
                                    progress=progress, chosen=chosen, identity=identity)
    ident = {"path": str(case_path), "title": case.title, "hypothesis": hyp, "seed": seed,
             "fingerprint": prob.fingerprint()}
    store = out.path / _STORE
    st = _store_of(out.path, prob, seed, refine, identity)
    fresh = overwrite and not resume
    resumed = False if fresh else st.check(
        resume=resume, fix="use a new --out (or --overwrite to start this one afresh)",
        resume_hint="pass --resume to continue it")
    n_before = int(st.load().get("fs", np.empty(0)).size) if resumed else 0
    client = None if scheduler is None else connect_scheduler(scheduler, option="--scheduler")
    try:
        # every input is checked: from here on the run writes
        out.claim(folders=[_STORE])
        if fresh:
            _remove_store(store)
        with warnings.catch_warnings():  # repaired blocks are reported below, in the user's words
            warnings.simplefilter("ignore", StoreRepairWarning)
            res = simulate(prob, n, seed, n_jobs=n_jobs, batch=block, store=str(store), resume=resumed,
                           progress=progress, scheduler=client, refine=refine, store_identity=identity)
        write_json(store / "case.json", ident)
    finally:
        if client is not None:
            client.close()
    for msg in res.store_notices:
        print(f"slipfield: {msg}", file=sys.stderr)
    statuses = _statuses(res)
    stage = out.stage()
    exp_stage = None
    try:
        rows = [[k, float(res.fs[k]), int(res.critical_index[k]), statuses[k], float(res.fs_fixed[k]),
                 bool(res.fixed_ok[k])] for k in range(n)]
        header = ["realisation", "FS critical (-)", "critical surface index", "status", "FS fixed surface (-)",
                  "fixed surface ok"]
        if mechanism_summary(res) is not None:  # other families or a per-realisation search
            rows = [r + [float(res.fs_circles_only[k])] for k, r in enumerate(rows)]
            header += ["FS circles alone (-)"]
        gov = governing_surfaces(res)  # the surface that governs, read back by read_surface_columns
        rows = [r + surface_columns(gov, k) for k, r in enumerate(rows)]
        header += SURFACE_HEADER
        write_csv(stage / "fs_realisations.csv", header, rows)
        if exp_folder is not None:
            exp_stage = exp_folder.stage()
            write_realisations(prob, res, seed, exp_stage, export_format, statuses=statuses)  # guarded above
        results = {
            "slipfield_results_version": RESULTS_VERSION, "command": "simulate",
            "case": {"path": str(case_path), "title": case.title, "note": case.data["case"].get("note", "")},
            "hypothesis": hyp, "method": prob.method, "seed": seed, "realisations": n, "batch": block,
            "jobs": n_jobs, "scheduler": scheduler, "resumed": bool(resumed),
            "realisations_from_store": int(min(n_before, n)),
            "store_blocks_recomputed": list(res.store_notices),
            "problem_fingerprint": ident["fingerprint"],
            "properties": [p.manifest() for p in prob.properties],
            "simulation": summary(res),
            "units": {"fs": "-", "pf": "probability (fraction)", "theta": "m"},
            "fs_csv_status": {"ok": "lowest FS of the bank counted",
                              "ok-lowest-nonconverged-excluded": "the lowest-FS surface did not converge; the "
                                                                 "next qualifying surface is critical",
                              "ok-lowest-inadmissible-excluded": "the lowest-FS surface was inadmissible; the "
                                                                 "next qualifying surface is critical",
                              "ok-refined": "the bank's critical surface was refined into a polyline with "
                                            "this realisation's fields, which lowered the FS",
                              "no-valid-surface": "no surface converged and was admissible; excluded from pf"},
            "export_fields": None if exp is None else {"folder": str(exp), "format": export_format},
            "caution": CAUTION,
        }
        if chosen["estimator_setting"] != "monte-carlo":
            results["estimator"], results["estimator_choice"] = "monte-carlo", chosen
        results["wall_time_s"] = round(time.perf_counter() - t0, 3)
        results["files"] = ["fs_realisations.csv", "results.json", f"{_STORE}/"]
        write_json(stage / "results.json", results)
        if exp_stage is not None:
            exp_folder.commit(exp_stage)
            exp_stage = None
        out.commit(stage)
    except BaseException:
        out.discard(stage)
        if exp_stage is not None:
            exp_folder.discard(exp_stage)
        raise
    return jsonable(results)

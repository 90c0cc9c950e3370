"""``slipfield simulate`` and ``slipfield sweep``, and the export of realisations.

``simulate`` runs only the spatially variable simulation of a case (one
hypothesis) and streams its blocks into ``DIR/store`` so that an interrupted
run can be continued with ``--resume``; its tables are written into a
staging folder inside ``DIR`` and moved into place only when the run
succeeded. ``sweep`` runs a grid of scales of fluctuation with common random
numbers (the same seed and streams at every grid point) into a staging folder
beside ``DIR`` that is renamed at the end, as ``slipfield run`` does.

Every check of the user's input (case file, options, the store of a run to
continue, the dask scheduler) is made before anything is written, so bad
input leaves the disk as it was.
"""
from __future__ import annotations

import contextlib
import json
import math
import os
import re
import shutil
import tempfile
import time
from pathlib import Path

import numpy as np

from ..errors import InputError
from .run import _jsonable

__all__ = ["simulate_case", "sweep_case", "export_realisations", "parse_theta_list", "EXPORT_FORMATS"]

RESULTS_VERSION = 1
EXPORT_FORMATS = ("xdmf", "vtu", "npz")
#: property → unit of the exported field (multiplier properties are factors)
_UNITS = {"c": "kPa", "phi": "degree", "su": "kPa", "su_ratio": "-"}
_SCHEDULER_TIMEOUT_S = 3.0
_STORE = "store"


# --------------------------------------------------------------- helpers
def _write_json(path: Path, obj) -> None:
    from ..report import atomic_write_text

    atomic_write_text(path, json.dumps(_jsonable(obj), indent=2, allow_nan=False))


def _slug(key: str) -> str:
    return re.sub(r"[^A-Za-z0-9]+", "_", key).strip("_") or "field"


def _positive_int(value, option, lo):
    if value is None:
        return None
    try:
        v = int(value)
    except (TypeError, ValueError):
        raise InputError(f"{option}: {value!r} is not an integer; give an integer >= {lo}") from None
    if v < lo:
        raise InputError(f"{option}: {v} is too small; give an integer >= {lo}")
    return v


def parse_theta_list(text, option: str) -> list[float]:
    """Scales of fluctuation from a comma-separated option value.

    Parameters
    ----------
    text : str or sequence
        e.g. ``"5,10,20,inf"`` (m); ``inf`` means a single random variable.
    option : str
        Option name used in error messages (e.g. ``"--theta-h"``).

    Returns
    -------
    list of float
        Distinct values in ascending order (``inf`` last), m.

    Raises
    ------
    InputError
        A value that is not a number, is <= 0 or NaN, or an empty list.
    """
    items = [s.strip() for s in text.split(",")] if isinstance(text, str) else list(text)
    out = []
    for s in items:
        if isinstance(s, str) and s.lower() in ("inf", "+inf", "infinity", "∞"):
            out.append(math.inf)
            continue
        try:
            v = float(s)
        except (TypeError, ValueError):
            raise InputError(f"{option}: {s!r} is not a number; give scales of fluctuation in m separated by "
                             f"commas, e.g. {option} 5,10,20,inf") from None
        if not v > 0 or math.isnan(v):
            raise InputError(f"{option}: {s!r} is not > 0; scales of fluctuation must be positive lengths in m "
                             "('inf' for a single random variable)")
        out.append(v)
    if not out or (isinstance(text, str) and not text.strip()):
        raise InputError(f"{option}: no values given; give e.g. {option} 5,10,20,inf (m)")
    return sorted(set(out))


@contextlib.contextmanager
def _scheduler(address):
    """A dask.distributed Client for ``--scheduler``, or None; fails fast if it does not answer."""
    if address is None:
        yield None
        return
    try:
        from dask.distributed import Client
    except ImportError:
        raise InputError("--scheduler needs dask.distributed; install it (pip install distributed) "
                         "or omit --scheduler to run locally") from None
    try:
        client = Client(address, timeout=_SCHEDULER_TIMEOUT_S, set_as_default=False)
    except Exception as exc:  # noqa: BLE001 - every way of not answering is the user's address
        why = " ".join(str(exc).split()) or type(exc).__name__
        raise InputError(f"--scheduler {address}: no dask scheduler answered within "
                         f"{_SCHEDULER_TIMEOUT_S:g} s ({why}); check the address or omit --scheduler to run "
                         "locally") from None
    try:
        yield client
    finally:
        client.close()


def _problem(case, hypothesis, theta_override=None):
    """Search the case's bank once (run method only) and build its RandomProblem."""
    from ..case.analyses import random_problem, trial_surfaces

    hyps = list(case.analysis["hypotheses"])
    hyp = hypothesis or hyps[0]
    if hyp not in ("drained", "undrained"):
        raise InputError(f"--hypothesis: {hyp!r} is not known; use drained or undrained")
    # only the bank of the run method is needed (deterministic() would search every method)
    det = {hyp: {"bank": trial_surfaces(case, hyp, case.analysis["method"])}}
    prob = random_problem(case, det, hyp, theta_override=theta_override)
    if prob is None:
        raise InputError(f"--hypothesis {hyp}: no [[random]] property of {case.path} is used under the {hyp} "
                         "hypothesis; add one or choose the other hypothesis")
    return hyp, det, prob


def _settings(case, realisations, jobs, batch, seed, default_n=None):
    sim = case.simulation
    n = _positive_int(realisations, "--realisations", 1) or int(default_n or sim["realisations"])
    return (n, _positive_int(jobs, "--jobs", 1) or int(sim["jobs"]),
            _positive_int(batch, "--batch", 1) or int(sim["batch"]),
            int(sim["seed"]) if seed is None else _positive_int(seed, "--seed", 0))


def _summary(res) -> dict:
    """Counts and estimates of one SimulationResult (FS dimensionless, pf a fraction)."""
    d = res.to_dict()
    d["n_valid"] = int(np.isfinite(res.fs).sum())
    d["n_failed"] = int((np.isfinite(res.fs) & (res.fs < 1.0)).sum())
    return d


# ------------------------------------------------------- status per realisation
def _statuses(store: Path, n: int, fs) -> list[str]:
    """Status of each realisation's critical FS, from the per-realisation flags of the store.

    ``ok``: the lowest FS of the bank counted; ``ok-lowest-nonconverged-excluded`` /
    ``ok-lowest-inadmissible-excluded``: the lowest-FS surface was excluded and the
    next qualifying one is critical; ``no-valid-surface``: no surface qualified
    (FS empty, excluded from pf).
    """
    from ..simulate import load_store

    stored = load_store(store)
    flags = ({k: stored[k][:n].astype(bool) for k in ("nonconv", "inadm", "none")}
             if all(k in stored for k in ("nonconv", "inadm", "none")) else {})
    refined = stored["refined"][:n].astype(bool) if "refined" in stored else np.zeros(n, bool)
    fs = np.asarray(fs, float)
    if not flags or any(v.size != n for v in flags.values()):
        return ["ok" if np.isfinite(f) else "no-valid-surface" for f in fs]
    out = []
    for k in range(n):
        if not np.isfinite(fs[k]) or flags["none"][k]:
            out.append("no-valid-surface")
        elif refined[k]:  # the final FS is the refined one, whatever happened in the bank
            out.append("ok-refined")
        elif flags["nonconv"][k]:
            out.append("ok-lowest-nonconverged-excluded")
        elif flags["inadm"][k]:
            out.append("ok-lowest-inadmissible-excluded")
        else:
            out.append("ok")
    return out


# ----------------------------------------------------------------- export
def _finite_or_none(v):
    v = float(v)
    return v if np.isfinite(v) else None


def _property_manifest(p) -> dict:
    """A random property as plain data: the marginal's name and parameters, never an object repr."""
    d = {k: v for k, v in p.describe().items() if k not in ("marginal", "marginal_repr")}
    m = p.marginal
    d["marginal"] = {"name": m.name, "mean": float(m.mean), "std": float(m.std),
                     "lower": _finite_or_none(m.lower), "upper": _finite_or_none(m.upper),
                     "parameters": {k: _finite_or_none(v) for k, v in dict(m.params).items()}}
    return d


def export_realisations(problem, result, seed, directory, fmt: str = "xdmf", *, indices=None,
                        statuses=None) -> dict:
    """Write each realisation's property fields on the section grid, with its FS.

    The fields are those of :func:`slope.simulate.realise_fields` (the values
    the simulator interpolated onto the slice bases), so another code can
    reuse exactly the realisations behind ``result``.

    Parameters
    ----------
    problem : slope.simulate.RandomProblem
        The problem ``result`` was computed for.
    result : slope.simulate.SimulationResult
        Its simulation (FS per realisation, critical surface index).
    seed : int
        The run seed (``result.seed``).
    directory : path-like
        Output folder (created). Files are each written atomically; callers
        that need the folder as a whole to appear at once stage it
        (``slipfield simulate --export-fields`` does).
    fmt : {"xdmf", "vtu", "npz"}
        ``xdmf``: one XDMF time series per property (time value =
        realisation index k, heavy data in ``<stem>.h5`` beside it), streamed;
        ``vtu``: one VTU file per property, one cell array
        ``<name>_<k:05d>`` per realisation (held in memory while writing);
        ``npz``: one NPZ per property, ``values`` of shape (n, nx, ny), with
        ``fs`` and ``critical_index`` arrays.
        Every format also writes ``realisations.csv`` (FS per realisation)
        and ``fields.json`` (manifest).
    indices : sequence of int, optional
        Realisations to export (default all ``0 .. result.n - 1``).
    statuses : sequence of str, optional
        Status of each realisation's FS (written in the index CSV).

    Returns
    -------
    dict
        The manifest written to ``fields.json``: grid (m), cell ordering,
        per-property file, array name and unit, and the index CSV.

    Notes
    -----
    Cells are the grid cells of ``problem.grid`` (cell ``i * ny + j`` is
    grid cell (i, j), centre ``(x0 + (i + 0.5) dx, y0 + (j + 0.5) dy)``).
    Values are NaN at cells whose centre lies outside the property's zones.
    Multiplier properties (su, su_ratio) are factors (-) of the material's
    deterministic value (its depth law or ratio), as in the simulator.
    """
    from slipfield.fields.io import NpzSeriesWriter, XdmfSeriesWriter, grid_mesh, write_vtu

    from ..report import write_csv
    from ..simulate import realise_fields

    if fmt not in EXPORT_FORMATS:
        raise InputError(f"export format {fmt!r} is not supported; use one of {', '.join(EXPORT_FORMATS)}")
    n = int(result.n)
    idx = list(range(n)) if indices is None else [int(k) for k in indices]
    bad = [k for k in idx if not 0 <= k < n]
    if bad:
        raise InputError(f"export_realisations: indices {bad[:5]} are outside 0..{n - 1}; give realisations of "
                         "this result")
    if result.problem is not None and result.problem.fingerprint() != problem.fingerprint():
        raise InputError("export_realisations: result was computed for another problem; pass the problem "
                         "given to simulate()")
    directory = Path(directory)
    directory.mkdir(parents=True, exist_ok=True)
    grid = problem.grid
    mesh = grid_mesh(grid)
    keys = [p.key for p in problem.properties]
    names = {k: _slug(k) for k in keys}
    ext = {"xdmf": ".xdmf", "vtu": ".vtu", "npz": ".npz"}[fmt]
    files = {k: directory / f"field_{names[k]}{ext}" for k in keys}
    if fmt == "xdmf":
        with contextlib.ExitStack() as stack:
            ws = {k: stack.enter_context(XdmfSeriesWriter(files[k], mesh, name=names[k])) for k in keys}
            for k in idx:
                _, f = realise_fields(problem, seed, k)
                for key in keys:
                    ws[key].write(f[key].reshape(1, -1), [k])
    elif fmt == "npz":
        with contextlib.ExitStack() as stack:
            extra = {"fs": np.asarray(result.fs, float)[idx], "critical_index": np.asarray(result.critical_index)[idx]}
            ws = {k: stack.enter_context(NpzSeriesWriter(files[k], grid, len(idx), indices=idx, extra=extra))
                  for k in keys}
            for k in idx:
                _, f = realise_fields(problem, seed, k)
                for key in keys:
                    ws[key].write(f[key][None])
    else:
        vals = {key: np.empty((len(idx), grid.nx * grid.ny)) for key in keys}
        for r, k in enumerate(idx):
            _, f = realise_fields(problem, seed, k)
            for key in keys:
                vals[key][r] = f[key].reshape(-1)
        for key in keys:
            write_vtu(files[key], mesh, vals[key], name=names[key], indices=idx)
    fs = np.asarray(result.fs, float)
    crit = np.asarray(result.critical_index, int)
    rows = [[k, float(fs[k]), int(crit[k]), float(result.fs_fixed[k]), bool(result.fixed_ok[k]),
             None if statuses is None else statuses[k]] for k in idx]
    write_csv(directory / "realisations.csv", ["realisation", "FS critical (-)", "critical surface index",
                                               "FS fixed surface (-)", "fixed surface ok", "status"], rows)
    props = []
    for p in problem.properties:
        props.append({"key": p.key, "file": files[p.key].name, "array": names[p.key],
                      "unit": "-" if p.multiplier else _UNITS[p.prop],
                      "meaning": ("factor of the material's deterministic value" if p.multiplier
                                  else "value of the property"), **_property_manifest(p)})
        if fmt == "xdmf":
            props[-1]["heavy_data"] = files[p.key].with_suffix(".h5").name
    manifest = {
        "format": "slipfield-realisations", "version": 1, "file_format": fmt, "seed": int(seed),
        "n_exported": len(idx), "realisations": idx if len(idx) < n else f"0..{n - 1}",
        "problem_fingerprint": problem.fingerprint(), "hypothesis": problem.hypothesis,
        "grid": {"x0": grid.x0, "y0": grid.y0, "nx": grid.nx, "ny": grid.ny, "dx": grid.dx, "dy": grid.dy,
                 "units": "m"},
        "cells": "cell i*ny+j is grid cell (i, j), centre (x0+(i+0.5)dx, y0+(j+0.5)dy); NaN outside the "
                 "property's zones",
        "time_value": "realisation index k" if fmt == "xdmf" else None,
        "index": "realisations.csv", "properties": props,
        "reproduce": "slipfield.slope.simulate.realise_fields(problem, seed, k) returns the same arrays (nx, ny)",
    }
    _write_json(directory / "fields.json", manifest)
    return manifest


# --------------------------------------------------------------- simulate
def _check_out_for_simulate(out: Path, head: dict, ident: dict, resume: bool) -> bool:
    """Refuse an --out that holds something else; True when a stored run will be continued."""
    hpath = out / _STORE / "header.json"
    if not out.exists():
        return False
    if not out.is_dir():
        raise InputError(f"--out {out}: is a file; give a folder")
    if not hpath.exists():
        if any(out.iterdir()):
            raise InputError(f"--out {out}: the folder exists and holds no slipfield simulation; choose a new or "
                             "empty folder")
        return False
    if not resume:
        raise InputError(f"--out {out}: already holds a simulation; pass --resume to continue it or choose "
                         "a new --out")
    try:
        old = json.loads(hpath.read_text())
    except (OSError, ValueError):
        raise InputError(f"--resume: {hpath} is unreadable; choose a new --out") from None
    if old != head:
        try:
            was = json.loads((out / _STORE / "case.json").read_text())
            what = f"case {was.get('title')!r} ({was.get('path')}), {was.get('hypothesis')}, seed {was.get('seed')}"
        except (OSError, ValueError):
            what = "another case"
        why = "a different seed" if old.get("seed") != head["seed"] else "a different case or settings"
        raise InputError(f"--resume: {out} holds a run of {what}, not of this one ({ident['title']!r}, "
                         f"{ident['hypothesis']}, seed {ident['seed']}: {why}); use a new --out")
    return True


def _stored_count(store: Path) -> int:
    from ..simulate import load_store

    stored = load_store(store)
    return int(stored["fs"].size) if stored else 0


def simulate_case(case_path, out_dir, *, realisations=None, jobs=None, batch=None, seed=None, hypothesis=None,
                  resume=False, scheduler=None, export_fields=None, export_format="xdmf",
                  progress=False, refine_below=None, refine_method="spencer") -> dict:
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
        store of another case, hypothesis or seed is refused.
    scheduler : str, optional
        Address of a dask.distributed scheduler (``tcp://host:port``).
    export_fields : path-like, optional
        Folder for :func:`export_realisations` (replaced when the run succeeds).
    export_format : {"xdmf", "vtu", "npz"}
    progress : bool
        tqdm progress bar.
    refine_below : float, optional
        Refine the critical surface of realisations with a bank FS below this
        into a polyline with their own fields (``slope.simulate.refinement``).
    refine_method : str
        Method of slices of the refinement (default ``spencer``).

    Returns
    -------
    dict
        The content of ``results.json``.
    """
    from ..case.build import load_case
    from ..report import write_csv
    from .run import CAUTION
    from ..simulate import simulate
    from ..simulate import store_header
    from ..simulate.refinement import RefineSettings

    t0 = time.perf_counter()
    if export_format not in EXPORT_FORMATS:
        raise InputError(f"--export-format: {export_format!r} is not supported; use one of "
                         f"{', '.join(EXPORT_FORMATS)}")
    case = load_case(case_path)
    n, n_jobs, block, seed = _settings(case, realisations, jobs, batch, seed)
    hyp, _, prob = _problem(case, hypothesis)
    out = Path(out_dir)
    exp = None if export_fields is None else Path(export_fields)
    if exp is not None and (exp.resolve() == out.resolve() or out.resolve() in exp.resolve().parents):
        raise InputError(f"--export-fields {exp}: must not be --out or inside it; give a separate folder")
    ident = {"path": str(case_path), "title": case.title, "hypothesis": hyp, "seed": seed,
             "fingerprint": prob.fingerprint()}
    refine = (RefineSettings.from_case(case.simulation) if refine_below is None else
              RefineSettings(below=refine_below, method=refine_method))
    resumed = _check_out_for_simulate(out, store_header(prob, seed, refine), ident, resume)
    store = out / _STORE
    with _scheduler(scheduler) as client:
        # every input is checked: from here on the run writes
        n_before = _stored_count(store) if resumed else 0
        out.mkdir(parents=True, exist_ok=True)
        store.mkdir(exist_ok=True)
        _write_json(store / "case.json", ident)
        res = simulate(prob, n, seed, n_jobs=n_jobs, batch=block, store=str(store), resume=True,
                       progress=progress, scheduler=client, refine=refine)
    statuses = _statuses(store, n, res.fs)
    stage = Path(tempfile.mkdtemp(prefix=".partial-", dir=out))
    exp_stage = None
    try:
        rows = [[k, float(res.fs[k]), int(res.critical_index[k]), statuses[k], float(res.fs_fixed[k]),
                 bool(res.fixed_ok[k])] for k in range(n)]
        write_csv(stage / "fs_realisations.csv", ["realisation", "FS critical (-)", "critical surface index",
                                                  "status", "FS fixed surface (-)", "fixed surface ok"], rows)
        if exp is not None:
            exp.parent.mkdir(parents=True, exist_ok=True)
            exp_stage = Path(tempfile.mkdtemp(prefix=f".{exp.name}.partial-", dir=exp.parent))
            export_realisations(prob, res, seed, exp_stage, export_format, statuses=statuses)
        results = {
            "slipfield_results_version": RESULTS_VERSION, "command": "simulate",
            "case": {"path": str(case_path), "title": case.title, "note": case.data["case"].get("note", "")},
            "hypothesis": hyp, "method": prob.method, "seed": seed, "realisations": n, "batch": block,
            "jobs": n_jobs, "scheduler": scheduler, "resumed": bool(resumed),
            "realisations_from_store": int(min(n_before, n)),
            "problem_fingerprint": ident["fingerprint"],
            "properties": [p.describe() for p in prob.properties],
            "simulation": _summary(res),
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
        results["wall_time_s"] = round(time.perf_counter() - t0, 3)
        results["files"] = ["fs_realisations.csv", "results.json", f"{_STORE}/"]
        _write_json(stage / "results.json", results)
        if exp_stage is not None:
            _replace_dir(exp_stage, exp)
            exp_stage = None
        # results.json last: its presence marks a finished run
        os.replace(stage / "fs_realisations.csv", out / "fs_realisations.csv")
        os.replace(stage / "results.json", out / "results.json")
    finally:
        shutil.rmtree(stage, ignore_errors=True)
        if exp_stage is not None:
            shutil.rmtree(exp_stage, ignore_errors=True)
    return _jsonable(results)


def _replace_dir(stage: Path, target: Path) -> None:
    """Move a finished staging folder onto ``target``, replacing an earlier one only now."""
    if target.exists():
        old = target.with_name(f".{target.name}.old-{os.getpid()}")
        target.rename(old)
        stage.rename(target)
        shutil.rmtree(old, ignore_errors=True)
    else:
        stage.rename(target)


# ------------------------------------------------------------------ sweep
def sweep_case(case_path, out_dir, *, theta_h=None, theta_v=None, realisations=None, jobs=None, batch=None,
               seed=None, hypothesis=None, scheduler=None, progress=False) -> dict:
    """pf over a grid of scales of fluctuation, with common random numbers.

    Every random property gets the same (θh, θv) at a grid point; the same
    seed and streams are used at every point (as
    :func:`slope.simulate.theta_sweep`), so differences between rows are not
    the sampling noise of independent runs. A point with θh or θv = inf is
    run with both infinite (each property a single random variable per
    realisation: one field cannot be infinite along one axis only).

    Parameters
    ----------
    case_path : path-like
    out_dir : path-like
        Output folder (replaced only when the sweep succeeds): ``sweep.csv``,
        ``sweep.json``, ``figures/pf_vs_theta_h.{png,svg}``,
        ``figures/fs_vs_theta_h.{png,svg}``.
    theta_h, theta_v : str or sequence, m
        Grid values (``"5,10,inf"``); default the case's ``[sweep]`` table.
    realisations : int, optional
        Per grid point; default ``sweep.realisations`` then
        ``simulation.realisations``.
    jobs, batch, seed, hypothesis, scheduler, progress
        As :func:`simulate_case`.

    Returns
    -------
    dict
        The content of ``sweep.json``.
    """
    from .. import report as rp
    from ..case.build import load_case
    from .run import CAUTION
    from ..simulate import theta_sweep

    t0 = time.perf_counter()
    case = load_case(case_path)
    sw = case.data.get("sweep") or {}
    grid_vals = {}
    for opt, key, given in (("--theta-h", "theta_h", theta_h), ("--theta-v", "theta_v", theta_v)):
        if given is None:
            if key not in sw:
                raise InputError(f"{opt}: not given and the case has no sweep.{key}; give e.g. {opt} 5,10,20,inf")
            given = [str(v) for v in sw[key]]
        grid_vals[key] = parse_theta_list(given, opt)
    n, n_jobs, block, seed = _settings(case, realisations, jobs, batch, seed, default_n=sw.get("realisations"))
    hyp, _, prob = _problem(case, hypothesis)
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise InputError(f"--out {out}: is a file; give a folder")
    with _scheduler(scheduler) as client:
        rows = theta_sweep(prob, grid_vals["theta_h"], grid_vals["theta_v"], n, seed, n_jobs=n_jobs,
                           batch=block, progress=progress, scheduler=client)
    for r in rows:  # the sweep files name the interval bounds explicitly
        r["pf_low"], r["pf_high"] = r.pop("lo"), r.pop("hi")
    out.parent.mkdir(parents=True, exist_ok=True)
    stage = Path(tempfile.mkdtemp(prefix=f".{out.name}.partial-", dir=out.parent))
    try:
        cols = [("theta_h", "theta_h (m)"), ("theta_v", "theta_v (m)"), ("pf", "pf (-)"),
                ("pf_low", "pf low 95% Wilson (-)"), ("pf_high", "pf high 95% Wilson (-)"),
                ("mean_fs", "mean FS (-)"), ("std_fs", "std FS (-)"), ("n", "realisations"),
                ("n_valid", "valid"), ("n_nonconverged", "lowest surface non-converged"),
                ("n_inadmissible", "lowest surface inadmissible"), ("n_no_valid_surface", "no valid surface")]
        rp.write_csv(stage / "sweep.csv", [c for _, c in cols], [[r[k] for k, _ in cols] for r in rows])
        notes = _sweep_figures(rows, grid_vals, stage / "figures", case.title, hyp)
        results = {
            "slipfield_results_version": RESULTS_VERSION, "command": "sweep",
            "case": {"path": str(case_path), "title": case.title}, "hypothesis": hyp, "method": prob.method,
            "seed": seed, "realisations_per_point": n, "theta_h": grid_vals["theta_h"],
            "theta_v": grid_vals["theta_v"], "rows": rows,
            "common_random_numbers": "same seed and streams at every grid point",
            "infinite_theta": "a point with theta_h or theta_v = inf is run with both = inf (single random "
                              "variable per property); theta_h_run/theta_v_run give what was run",
            "units": {"theta": "m", "fs": "-", "pf": "probability (fraction)"},
            "figure_notes": notes, "caution": CAUTION,
        }
        results["wall_time_s"] = round(time.perf_counter() - t0, 3)
        _write_json(stage / "sweep.json", results)
        _replace_dir(stage, out)
    except BaseException:
        shutil.rmtree(stage, ignore_errors=True)
        raise
    return _jsonable(results)


def _sweep_figures(rows, grid_vals, fig_dir, title, hyp) -> list[str]:
    """pf and mean/σ FS against θh, one series per θv; returns notes on what was not drawn."""
    from .. import report as rp

    th, tv = grid_vals["theta_h"], grid_vals["theta_v"]
    by = {(r["theta_h"], r["theta_v"]): r for r in rows}

    def table(key):
        return np.array([[by[(h, v)][key] for h in th] for v in tv], float)

    pf, lo, hi = table("pf"), table("pf_low"), table("pf_high")
    labels = [f"θv = {v:g} m" if math.isfinite(v) else "θv = ∞" for v in tv]
    notes = []
    fig_dir.mkdir(parents=True, exist_ok=True)
    if np.all(np.isfinite(pf)):
        # Wilson bounds at pf = 0 or 1 can sit a rounding error outside pf
        fig = rp.plot_pf_vs_theta(th, pf, np.minimum(lo, pf), np.maximum(hi, pf), labels, theta_name="θh",
                                  title=f"{title}: pf against θh ({hyp})")
        rp.save_figure(fig, fig_dir, "pf_vs_theta_h")
    else:
        notes.append("pf_vs_theta_h not drawn: a grid point had no realisation with a valid surface")
    mean, std = table("mean_fs"), table("std_fs")
    if np.all(np.isfinite(mean)) and np.all(np.isfinite(std)):
        fig = rp.plot_fs_vs_theta(th, mean, std, labels, theta_name="θh",
                                  title=f"{title}: FS against θh ({hyp})")
        rp.save_figure(fig, fig_dir, "fs_vs_theta_h")
    else:
        notes.append("fs_vs_theta_h not drawn: a grid point had fewer than 2 valid realisations")
    import matplotlib.pyplot as plt

    plt.close("all")
    return notes

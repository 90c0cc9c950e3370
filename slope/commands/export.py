"""Export of realisations: each realisation's property fields on the section grid, with its FS."""
from __future__ import annotations

import contextlib
from pathlib import Path

import numpy as np

from ..errors import InputError
from ._shared import slug, write_json

__all__ = ["export_realisations", "write_realisations", "EXPORT_FORMATS"]

EXPORT_FORMATS = ("xdmf", "vtu", "npz")
#: property → unit of the exported field (multiplier properties are factors)
_UNITS = {"c": "kPa", "phi": "degree", "su": "kPa", "su_ratio": "-"}


def export_realisations(problem, result, seed, directory, fmt: str = "xdmf", *, indices=None,
                        statuses=None) -> dict:
    """Write each realisation's property fields on the section grid, with its FS, into a checked folder.

    ``directory`` follows the output-folder rules of ``slipfield simulate
    --export-fields`` (:class:`.folders.OutputFolder`): a new or empty
    folder, or one holding an earlier export (its marker file says so, and
    only the files it lists are replaced); a folder with files slipfield
    did not write, a file, a symbolic link or the current folder are refused
    (:class:`InputError` naming ``directory`` and the fix) before anything
    is computed. The files are staged and moved into place when all are
    written, so a failure leaves nothing half-written. Arguments and return
    value as :func:`write_realisations`.
    """
    from .folders import OutputFolder

    _checked_indices(problem, result, fmt, indices)  # bad arguments: refused before the folder is touched
    folder = OutputFolder(directory, "export_realisations", option="directory")
    stage = folder.stage()
    try:
        manifest = write_realisations(problem, result, seed, stage, fmt, indices=indices, statuses=statuses)
        folder.commit(stage)
    except BaseException:
        folder.discard(stage)
        raise
    return manifest


def _checked_indices(problem, result, fmt, indices) -> list:
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
    return idx


def write_realisations(problem, result, seed, directory, fmt: str = "xdmf", *, indices=None,
                       statuses=None) -> dict:
    """Write each realisation's property fields on the section grid, with its FS.

    No folder check: ``directory`` is a staging folder the caller made and
    guards (:func:`export_realisations`, ``slipfield simulate
    --export-fields``).

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
        Output folder (created if missing). Files are each written
        atomically; the callers stage the folder so it appears whole.
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
    from ..simulate.failure_geometry import SURFACE_HEADER, governing_surfaces, surface_columns
    from ..simulate.mechanism_results import mechanism_summary
    from ..simulate import realise_fields

    n = int(result.n)
    idx = _checked_indices(problem, result, fmt, indices)
    directory = Path(directory)
    directory.mkdir(parents=True, exist_ok=True)
    grid = problem.grid
    mesh = grid_mesh(grid)
    keys = [p.key for p in problem.properties]
    names = {k: slug(k) for k in keys}
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
    header = ["realisation", "FS critical (-)", "critical surface index", "FS fixed surface (-)",
              "fixed surface ok", "status"]
    if mechanism_summary(result) is not None:  # other families or a per-realisation search
        rows = [r + [float(result.fs_circles_only[k])] for r, k in zip(rows, idx)]
        header += ["FS circles alone (-)"]
    gov = governing_surfaces(result, which=idx)  # the surface that governs, read back by read_surface_columns
    rows = [r + surface_columns(gov, k) for r, k in zip(rows, idx)]
    header += SURFACE_HEADER
    write_csv(directory / "realisations.csv", header, rows)
    props = []
    for p in problem.properties:
        props.append({"key": p.key, "file": files[p.key].name, "array": names[p.key],
                      "unit": "-" if p.multiplier else _UNITS[p.prop],
                      "meaning": ("factor of the material's deterministic value" if p.multiplier
                                  else "value of the property"), **p.manifest()})
        if fmt == "xdmf":
            props[-1]["heavy_data"] = files[p.key].with_suffix(".h5").name
    manifest = {
        "format": "slipfield-realisations", "version": 1, "file_format": fmt, "seed": int(seed),
        "n_exported": len(idx), "realisations": idx if len(idx) < n else f"0..{n - 1}",
        "problem_fingerprint": problem.fingerprint(), "hypothesis": problem.hypothesis,
        "grid": {"x0": grid.x0, "y0": grid.y0, "nx": grid.nx, "ny": grid.ny, "dx": grid.dx, "dy": grid.dy,
                 "units": "m"},
        "cells": "cell i*ny+j is grid cell (i, j), centre (x0+(i+0.5)dx, y0+(j+0.5)dy); NaN outside the "
                 "property's zones and outside each zone's field box (the cells the simulation generates)",
        "field_boxes": _field_boxes(problem),
        "time_value": "realisation index k" if fmt == "xdmf" else None,
        "index": "realisations.csv",
        "governing_surface": {"columns": SURFACE_HEADER, "frame": "section, m",
                              "read_back": "slipfield.slope.simulate.failure_geometry.read_surface_columns(row) "
                                           "gives the Circle or Polyline of a csv.DictReader row"},
        "properties": props,
        "reproduce": "slipfield.slope.simulate.realise_fields(problem, seed, k) returns the same arrays (nx, ny)",
    }
    write_json(directory / "fields.json", manifest)
    return manifest


def _field_boxes(problem):
    """Each zone's field box (cells i0 <= i < i1, j0 <= j < j1 and metres), by zone."""
    from ..simulate.field_box import field_box

    used = sorted({z for i in range(len(problem.properties)) for z in problem.zones_of(i)})
    return [{"zone": z, "material": problem.section.zones[z].material, **field_box(problem, z).describe()}
            for z in used]

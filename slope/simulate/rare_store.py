"""Level checkpoints of a subset simulation, so an interrupted run resumes.

A store folder holds ``header.json`` (what the run is: problem fingerprint,
seed, subset and refinement settings), ``level_0/`` (the Monte Carlo store
of the first level, :func:`slope.simulate.simulate`'s own, resumable within
the level) and, after each finished level, ``levels.json`` (the levels so
far, λ, evaluation counts) with ``seeds_<level>.npz`` (the next level's
chain seeds: noise, FS, critical surface). Each file is written to a
temporary name and renamed, and ``levels.json`` last, so a run stopped at
any moment resumes from its last finished level with bit-identical results.
"""
from __future__ import annotations

import json
import os

import numpy as np

from ..errors import InputError

__all__ = ["LevelStore", "subset_store_header"]

_FORMAT = "slipfield-subset-store"


def subset_store_header(problem, seed, settings, refine) -> dict:
    """What a subset store records in ``header.json``; a resume needs an equal one."""
    return {"format": _FORMAT, "version": 1, "fingerprint": problem.fingerprint(), "seed": int(seed),
            "settings": settings.describe(), "refine": None if refine is None else refine.describe()}


def _atomic_json(path, obj):
    tmp = path + ".tmp"
    with open(tmp, "w") as fh:
        json.dump(obj, fh)
    os.replace(tmp, path)


class LevelStore:
    """Checkpoints of one subset simulation in ``folder`` (see module doc)."""

    def __init__(self, folder, problem, seed, settings, refine):
        self.folder = str(folder)
        head = subset_store_header(problem, seed, settings, refine)
        hpath = os.path.join(self.folder, "header.json")
        if os.path.exists(hpath):
            try:
                with open(hpath) as fh:
                    old = json.load(fh)
            except (OSError, ValueError):
                raise InputError(f"subset store {self.folder}: header.json is unreadable; use a new folder") from None
            if old != head:
                why = ("the seed differs" if old.get("seed") != head["seed"] else
                       "the subset settings differ" if old.get("settings") != head["settings"] else
                       "the refinement settings differ" if old.get("refine") != head["refine"] else
                       "the problem differs")
                raise InputError(f"subset store {self.folder}: cannot resume, {why}; use a new folder")
        else:
            os.makedirs(self.folder, exist_ok=True)
            _atomic_json(hpath, head)

    def level0_dir(self) -> str:
        return os.path.join(self.folder, "level_0")

    def load(self):
        """The last checkpoint: dict(levels, lambda, counts, seeds) or None."""
        path = os.path.join(self.folder, "levels.json")
        if not os.path.exists(path):
            return None
        try:
            with open(path) as fh:
                state = json.load(fh)
            with np.load(os.path.join(self.folder, state["seeds_file"])) as d:
                seeds = {k: d[k] for k in ("u", "fs", "crit")}
                seeds["threshold"] = float(d["threshold"])
        except (OSError, ValueError, KeyError) as exc:
            raise InputError(f"subset store {self.folder}: the last checkpoint is unreadable ({exc}); use a new "
                             "folder") from None
        return {"levels": state["levels"], "lambda": float(state["lambda"]), "counts": state["counts"],
                "seeds": seeds}

    def save(self, levels, lam, counts, seeds):
        """Checkpoint after a finished level (seeds first, then the index that names them)."""
        name = f"seeds_{len(levels) - 1:03d}.npz"
        path = os.path.join(self.folder, name)
        tmp = path + ".tmp.npz"
        np.savez(tmp, u=seeds["u"], fs=seeds["fs"], crit=seeds["crit"], threshold=seeds["threshold"])
        os.replace(tmp, path)
        old = None
        lpath = os.path.join(self.folder, "levels.json")
        if os.path.exists(lpath):
            with open(lpath) as fh:
                old = json.load(fh).get("seeds_file")
        _atomic_json(lpath, {"levels": levels, "lambda": float(lam), "counts": counts, "seeds_file": name})
        if old and old != name:  # only the last level's seeds are needed to resume
            os.remove(os.path.join(self.folder, old))

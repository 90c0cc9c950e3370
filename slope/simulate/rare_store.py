"""Level checkpoints of a subset simulation, so an interrupted run resumes.

A store folder holds the header of a :class:`~slope.simulate.store.BlockStore`
(task ``subset-levels``: its identity is the problem fingerprint, seed,
subset and refinement settings and whatever the caller adds, compared key by
key on resume with the store's own messages), ``level_0/`` (the Monte Carlo
block store of the first level, :func:`slope.simulate.simulate`'s own, so an
interruption inside level 0 loses at most a block) and, after each finished
level, ``levels.json`` (the levels so far, λ, evaluation counts) with
``seeds_<level>.npz`` (the next level's chain seeds: noise, FS, critical
surface, and the polylines the per-realisation search found for the seeds it
governs, with their geometry, as the simulator's sparse rows numbered by
seed: :mod:`.rare_surfaces`). The seeds are a matrix (seeds × noise values), which the block
store's one-row-per-realisation arrays do not hold, so they have their own
files. Each file is written to a temporary name and renamed, ``levels.json``
last, so a run stopped at any moment resumes from its last finished level
with bit-identical results.

Checkpoint format versions (:data:`CHECKPOINT_VERSION`, in the header's
identity and in ``levels.json``): 1 (no version recorded) held the seeds'
bank surfaces only; 2 added the searched surfaces of the seeds. A store of
another version is refused on resume with both versions and the fix, never
continued: its seeds would hand the next level bank surfaces where the
search's polylines governed.
"""
from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np

from ..errors import InputError
from ..files import atomic_write_text
from .rare_surfaces import empty_rows, rows_of_surfaces, surfaces_of_rows
from .store import BlockStore, read_header

__all__ = ["LevelStore", "subset_store_identity", "TASK", "CHECKPOINT_VERSION"]

TASK = "subset-levels"
#: format of the level checkpoints (see the module notes); 1 is a store that records none
CHECKPOINT_VERSION = 2


def subset_store_identity(problem, seed, settings, refine, extra=None) -> dict:
    """What a subset store is tied to; a resume needs an equal one."""
    ident = {"problem": problem.fingerprint(), "seed": int(seed), "subset": settings.describe(),
             "refine": None if refine is None else refine.describe()}
    if refine is not None:
        from .refinement import REFINE_REASONS

        from ..search.path_acceptance import RULE_ID

        # as driver.store_header: the search's acceptance rules
        ident["refine"]["acceptance"] = list(REFINE_REASONS) + [RULE_ID]
    if extra:
        ident.update(extra)
    return ident


def _atomic_json(path: Path, obj) -> None:
    atomic_write_text(path, json.dumps(obj))


class LevelStore:
    """Checkpoints of one subset simulation in ``folder`` (see module doc).

    Parameters
    ----------
    folder : path-like
    identity : dict
        :func:`subset_store_identity`.
    """

    def __init__(self, folder, identity: dict):
        self.folder = Path(folder)
        self.identity = dict(identity, checkpoint_version=CHECKPOINT_VERSION)
        self._blocks = BlockStore(self.folder, self.identity, task=TASK)

    def check(self, *, resume: bool, fix: str = "use a new store directory", **kw) -> bool:
        """Refuse a store of another run or checkpoint format (nothing written); True when one will be resumed."""
        if resume:
            head = read_header(self.folder)
            ident = head.get("identity") if head is not None else None
            if isinstance(ident, dict):
                self._refuse_version(ident.get("checkpoint_version", 1), fix)
        return self._blocks.check(resume=resume, fix=fix, **kw)

    def _refuse_version(self, old, fix: str) -> None:
        if old != CHECKPOINT_VERSION:
            raise InputError(
                f"subset store {self.folder} holds level checkpoints of format version {old}; this slipfield "
                f"continues version {CHECKPOINT_VERSION} only (its chain seeds carry the surfaces the "
                f"per-realisation search found, which version {old} did not keep), so the run cannot resume "
                f"from it: {fix}")

    def open(self, *, resume: bool, **kw) -> bool:
        """:meth:`check`, then create the folder and header; True when resuming."""
        self.check(resume=resume, **kw)
        return self._blocks.open(resume=resume, **kw)

    def level0_dir(self) -> str:
        return str(self.folder / "level_0")

    def load(self):
        """The last checkpoint: dict(levels, lambda, counts, seeds) or None."""
        path = self.folder / "levels.json"
        if not path.exists():
            return None
        try:
            state = json.loads(path.read_text())
        except (OSError, ValueError) as exc:
            raise InputError(f"subset store {self.folder}: the last checkpoint is unreadable ({exc}); use a new "
                             "folder") from None
        self._refuse_version(state.get("checkpoint_version", 1) if isinstance(state, dict) else 1,
                             "use a new folder")
        try:
            with np.load(self.folder / state["seeds_file"], allow_pickle=False) as d:
                seeds = {k: d[k] for k in ("u", "fs", "crit")}
                seeds["threshold"] = float(d["threshold"])
                seeds["surfaces"] = surfaces_of_rows(d["surface_vertices"], d["surface_geometry"])
        except (OSError, ValueError, KeyError) as exc:
            raise InputError(f"subset store {self.folder}: the last checkpoint is unreadable ({exc}); use a new "
                             "folder") from None
        return {"levels": state["levels"], "lambda": float(state["lambda"]), "counts": state["counts"],
                "seeds": seeds}

    def save(self, levels, lam, counts, seeds):
        """Checkpoint after a finished level (seeds first, then the index that names them)."""
        name = f"seeds_{len(levels) - 1:03d}.npz"
        path = self.folder / name
        tmp = self.folder / f".{name}.part.npz"
        vert, geo = rows_of_surfaces(seeds["surfaces"]) if seeds.get("surfaces") else empty_rows()
        np.savez(tmp, u=seeds["u"], fs=seeds["fs"], crit=seeds["crit"], threshold=seeds["threshold"],
                 surface_vertices=vert, surface_geometry=geo)
        os.replace(tmp, path)
        lpath = self.folder / "levels.json"
        old = json.loads(lpath.read_text()).get("seeds_file") if lpath.exists() else None
        _atomic_json(lpath, {"checkpoint_version": CHECKPOINT_VERSION, "levels": levels, "lambda": float(lam),
                             "counts": counts, "seeds_file": name})
        if old and old != name:  # only the last level's seeds are needed to resume
            (self.folder / old).unlink(missing_ok=True)

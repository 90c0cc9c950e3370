"""On-disk store of realisation blocks, written atomically, for resume.

Resume means "up to n": a resumed run computes only the blocks not yet on
disk for realisations ``0 .. n-1``. A store made for another problem or seed
is refused (its fingerprint is kept in ``meta.json``).
"""
from __future__ import annotations

import hashlib
import json
import os
from pathlib import Path

import numpy as np

from ..errors import InputError


def fingerprint(problem, seed) -> str:
    """SHA-256 of the bank arrays, materials, random properties, settings and seed."""
    h = hashlib.sha256()
    for name, v in sorted(problem.bank.__dict__.items()):
        if isinstance(v, np.ndarray) and v.dtype != object:
            h.update(name.encode()); h.update(np.ascontiguousarray(v).tobytes())
    h.update(repr(sorted((k, repr(m)) for k, m in problem.materials.items())).encode())
    h.update(repr((problem.properties, problem.hypothesis, problem.method, problem.cell_size,
                   problem.mapping, problem.n_per_base, problem.fixed_index, problem.generator,
                   int(seed))).encode())
    return h.hexdigest()


class DiskStore:
    """Directory of ``r<start>-<stop>.npz`` blocks plus ``meta.json``."""

    def __init__(self, path, problem, seed, resume=False):
        self.path = Path(path)
        fp = fingerprint(problem, seed)
        meta = self.path / "meta.json"
        if meta.exists():
            old = json.loads(meta.read_text())
            if not resume:
                raise InputError(f"store {self.path} already holds a run; pass resume=True or use a new directory")
            if old["fingerprint"] != fp:
                raise InputError(f"resume refused: store {self.path} was made for a different problem or seed "
                                 "(fingerprint differs); use a new directory")
        else:
            self.path.mkdir(parents=True, exist_ok=True)
            meta.write_text(json.dumps({"fingerprint": fp}))

    def _file(self, a, b):
        return self.path / f"r{a:09d}-{b:09d}.npz"

    def has(self, a, b):
        return self._file(a, b).exists()

    def write(self, a, b, arrays):
        tmp = self.path / f".tmp-{a}-{b}-{os.getpid()}.npz"
        np.savez(tmp, **arrays)
        os.replace(tmp, self._file(a, b))

    def read(self, a, b):
        with np.load(self._file(a, b)) as f:
            return {k: f[k] for k in f.files}

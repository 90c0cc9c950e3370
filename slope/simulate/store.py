"""Result store: per-realisation arrays on disk in checked blocks, tied to what made them.

A store is one folder holding ``header.json`` and blocks
``block_NNNNNN.npz``. Block ``i`` holds realisations ``i*block ..
stop-1`` (``stop <= (i+1)*block``; only the last block of a run may be
short, and a resume extends it). The header records the store's
*identity*: a JSON dict of everything that determines the stored values
(problem fingerprint, seed, settings such as refinement, and whatever the
caller adds, e.g. a hash of the case file's relevant tables). A run resumes
only from a store whose identity is equal; otherwise it is refused with the
keys that differ.

The store does not trust its files:

- only names matching ``block_NNNNNN.npz`` are read; a temporary file left
  by an interrupted write (``.block_NNNNNN.npz.*.part``) is ignored;
- every block records its range (``_start``, ``_stop``), the digest of the
  store identity it was computed for (``_store``) and a SHA-256 checksum of
  its arrays (``_checksum``);
- a block that cannot be read, is empty or truncated, belongs to another
  position or another store, or whose content does not match its checksum
  is reported by name (:attr:`BlockStore.notices`, and a
  :class:`StoreRepairWarning` from the driver) and recomputed. Since a
  realisation depends only on ``(seed, k)``, the repaired run is
  bit-identical to an uninterrupted one.

API for other estimators (e.g. the levels of a subset simulation): make one
store per task, ``BlockStore(folder / task_name, identity, task=task_name)``,
call :meth:`BlockStore.open` once (``resume`` as the user asked), read what
is there with :meth:`BlockStore.read_blocks`, and write each finished block
with :meth:`BlockStore.write_block`. Per-realisation arrays must be 1-D with
one row per realisation and a fixed dtype; the block size must not depend on
jobs or batch size.

*Sparse arrays* hold rows for some realisations only (e.g. the vertices of
the surfaces a per-realisation search found, kept for the few realisations
it lowered, so a store and a result grow with those, not with every
realisation): their key starts with :data:`SPARSE_PREFIX` and they are 1-D
structured arrays with an integer field ``realisation`` (global number,
ascending, inside the block's range; several rows may share one). A block
must hold at least one ordinary array, which gives its range.

Format versions: 3 added sparse arrays (the per-realisation search's
vertices moved from a fixed-size record of every realisation into one);
a store of another version is never resumed (:meth:`BlockStore.check` says
so and how to continue).
"""
from __future__ import annotations

import hashlib
import io
import json
import re
import zipfile
from pathlib import Path

import numpy as np

from ..errors import InputError
from ..files import atomic_write_bytes

__all__ = ["BlockStore", "StoreRepairWarning", "FORMAT", "VERSION", "BLOCK", "identity_digest",
           "read_header", "SPARSE_PREFIX", "is_sparse", "take_realisations"]

FORMAT = "slipfield-block-store"
VERSION = 3
BLOCK = 100  # realisations per on-disk block (fixed, independent of jobs and batch)
HEADER = "header.json"
_NAME = re.compile(r"^block_(\d{6})\.npz$")
_META = ("_start", "_stop", "_store", "_checksum")


#: key prefix of a sparse array (rows for some realisations only, see the module notes)
SPARSE_PREFIX = "sparse_"


def is_sparse(key: str) -> bool:
    """Whether the array stored under ``key`` is sparse (rows tagged by ``realisation``)."""
    return str(key).startswith(SPARSE_PREFIX)


def take_realisations(arrays: dict, lo: int, hi: int) -> dict:
    """Realisations ``lo .. hi-1`` of block arrays whose first ordinary row is realisation ``lo``.

    Ordinary arrays are cut at ``hi - lo`` rows; sparse arrays keep the rows
    whose ``realisation`` is below ``hi``.
    """
    return {k: (v[v["realisation"] < hi] if is_sparse(k) else v[:hi - lo]) for k, v in arrays.items()}


def _sparse_ok(v, a: int, b: int) -> bool:
    """A sparse array of a block of realisations a .. b-1: 1-D, tagged, ascending, inside the range."""
    if v.ndim != 1 or v.dtype.names is None or "realisation" not in v.dtype.names:
        return False
    r = v["realisation"]
    return bool(np.all((r >= a) & (r < b)) and np.all(np.diff(r) >= 0))


class StoreRepairWarning(UserWarning):
    """A stored block was unusable and is recomputed (the message names it and why)."""


def identity_digest(identity: dict) -> str:
    """SHA-256 (hex) of a JSON identity dict (key order does not matter)."""
    return hashlib.sha256(json.dumps(identity, sort_keys=True, default=str).encode()).hexdigest()


def _checksum(arrays: dict, start: int, stop: int, store: str) -> str:
    h = hashlib.sha256(f"{start}:{stop}:{store}".encode())
    for k in sorted(arrays):
        a = np.ascontiguousarray(arrays[k])
        h.update(f"|{k}|{a.dtype.str}|{a.shape}|".encode())
        h.update(a.tobytes())
    return h.hexdigest()


def read_header(folder) -> dict | None:
    """The header of the store in ``folder``; None when there is none.

    Raises
    ------
    InputError
        The header exists but is not a readable slipfield store header.
    """
    path = Path(folder) / HEADER
    if not path.exists():
        return None
    try:
        head = json.loads(path.read_text())
    except (OSError, ValueError) as exc:
        raise InputError(f"store {folder}: {HEADER} is unreadable ({exc}); continue in a new folder") from None
    if not isinstance(head, dict) or head.get("format") != FORMAT:
        raise InputError(f"store {folder}: {HEADER} is not a header of a slipfield store of format version "
                         f"{VERSION} (written by another version?); continue in a new folder")
    return head


def _differences(old: dict, new: dict, prefix="") -> list[str]:
    """Keys (dotted) whose values differ between two identity dicts."""
    out = []
    for k in sorted(set(old) | set(new), key=str):
        a, b = old.get(k), new.get(k)
        if isinstance(a, dict) and isinstance(b, dict):
            out += _differences(a, b, f"{prefix}{k}.")
        elif a != b:
            out.append(f"{prefix}{k}")
    return out


_PHRASES = {"problem": "the problem differs (hash mismatch)", "seed": "the seed differs",
            "refine": "the refinement settings differ", "task": "it stores another task",
            "block": "the block size differs", "results_format": "slipfield's results format differs"}


def _phrase(key: str) -> str:
    head, _, rest = key.partition(".")
    if head in _PHRASES:
        return _PHRASES[head]
    if head == "case" and rest:
        return f"the case's [{rest.split('.')[0]}] table differs"
    return f"{key} differs"


class BlockStore:
    """Blocks of per-realisation arrays in one folder, tied to an identity.

    Parameters
    ----------
    folder : path-like
        The store's folder (created by :meth:`open`).
    identity : dict
        JSON-ready description of everything that determines the stored
        values; compared key by key on resume.
    task : str
        Name of what is stored (e.g. ``"rlem"``, ``"subset-level-2"``);
        part of the identity.
    block : int
        Realisations per block.
    """

    def __init__(self, folder, identity: dict, *, task: str = "rlem", block: int = BLOCK):
        self.folder = Path(folder)
        self.block = int(block)
        self.identity = json.loads(json.dumps(dict(identity, task=task, block=self.block), default=str))
        self.digest = identity_digest(self.identity)
        self.header = {"format": FORMAT, "version": VERSION, "identity": self.identity, "digest": self.digest}
        self.notices: list[str] = []

    # ------------------------------------------------------------ header
    def check(self, *, resume: bool, fix: str = "use a new store directory",
              resume_hint: str = "pass resume=True to continue it") -> bool:
        """Refuse a store that cannot be continued; True when one will be resumed.

        Reads only; nothing is written. Raises InputError naming what
        differs (the keys of the identity) and ``fix``.
        """
        old = read_header(self.folder)
        if old is None:
            return False
        if not resume:
            raise InputError(f"store {self.folder} already holds a run; {resume_hint} or {fix}")
        if old.get("version") != VERSION or not isinstance(old.get("identity"), dict):
            raise InputError(f"store {self.folder} was written by another version of slipfield's store "
                             f"(version {old.get('version')}, this is {VERSION}); {fix}")
        diff = _differences(old["identity"], self.identity)
        if diff:
            raise InputError(f"cannot resume from store {self.folder}: it holds another run "
                             f"({'; '.join(dict.fromkeys(_phrase(k) for k in diff))}); {fix}")
        return True

    def open(self, *, resume: bool, **kw) -> bool:
        """:meth:`check`, then create the folder and header; True when resuming."""
        resumed = self.check(resume=resume, **kw)
        self.folder.mkdir(parents=True, exist_ok=True)
        for tmp in self.folder.glob(".block_*.part"):  # our own interrupted writes
            tmp.unlink(missing_ok=True)
        if not resumed:
            self._write(self.folder / HEADER, json.dumps(self.header, indent=1).encode())
        return resumed

    # ------------------------------------------------------------ blocks
    def path(self, start: int) -> Path:
        """File of the block starting at realisation ``start``."""
        return self.folder / f"block_{start // self.block:06d}.npz"

    def _bad(self, name: str, why: str) -> None:
        self.notices.append(f"store {self.folder}: {name} {why}; it is recomputed")

    def _read(self, path: Path, start: int):
        try:
            with np.load(path, allow_pickle=False) as d:
                arrays = {k: d[k] for k in d.files}
        except (OSError, ValueError, EOFError, KeyError, zipfile.BadZipFile) as exc:
            why = "is empty" if path.stat().st_size == 0 else f"is unreadable (truncated or corrupt: {exc})"
            return self._bad(path.name, why)
        if any(k not in arrays for k in _META):
            return self._bad(path.name, "is not a block of this store format")
        a, b = int(arrays.pop("_start")), int(arrays.pop("_stop"))
        store, check = str(arrays.pop("_store")), str(arrays.pop("_checksum"))
        if store != self.digest:
            return self._bad(path.name, "was computed for another run")
        if a != start or not start < b <= start + self.block:
            return self._bad(path.name, f"holds realisations {a}..{b - 1}, not those of its position "
                                        f"({start}..{start + self.block - 1})")
        dense = [v for k, v in arrays.items() if not is_sparse(k)]
        if not dense or any(v.shape != (b - a,) for v in dense):
            return self._bad(path.name, "is truncated (arrays shorter than its range)")
        if not all(_sparse_ok(v, a, b) for k, v in arrays.items() if is_sparse(k)):
            return self._bad(path.name, "holds rows of realisations outside its range")
        if _checksum(arrays, a, b, store) != check:
            return self._bad(path.name, "does not match its checksum (edited or damaged)")
        return b, arrays

    def read_blocks(self, n: int) -> dict[int, tuple[int, dict]]:
        """Checked blocks covering realisations ``0 .. n-1``.

        Returns
        -------
        dict start -> (stop, arrays)
            Only blocks that pass every check; arrays are truncated at
            ``n``. Rejected blocks are listed in :attr:`notices`.
        """
        out = {}
        if not self.folder.is_dir():
            return out
        for p in sorted(self.folder.iterdir()):
            m = _NAME.match(p.name)
            if not m or not p.is_file():
                continue  # temporary files and anything else are not blocks
            start = int(m.group(1)) * self.block
            if start >= n:
                continue
            got = self._read(p, start)
            if got is not None:
                stop, arrays = got
                stop = min(stop, n)
                out[start] = (stop, take_realisations(arrays, start, stop))
        return out

    def write_block(self, start: int, arrays: dict) -> Path:
        """Write the block starting at ``start`` (atomically, checksummed).

        ``arrays``: key -> 1-D array of the block's realisations
        ``start .. start + len - 1`` (at most ``block``), and sparse arrays
        (:data:`SPARSE_PREFIX`) of rows tagged with realisations in that range.
        """
        arrays = {k: np.ascontiguousarray(v) for k, v in arrays.items()}
        sizes = {v.shape for k, v in arrays.items() if not is_sparse(k)}
        if start % self.block or len(sizes) != 1 or len(next(iter(sizes))) != 1:
            raise ValueError("write_block: start must be a block boundary and arrays 1-D of one length")
        stop = start + next(iter(sizes))[0]
        if not start < stop <= start + self.block:
            raise ValueError(f"write_block: {stop - start} rows do not fit a block of {self.block}")
        bad = [k for k, v in arrays.items() if is_sparse(k) and not _sparse_ok(v, start, stop)]
        if bad:
            raise ValueError(f"write_block: sparse arrays {bad} need ascending 'realisation' rows in "
                             f"{start}..{stop - 1}")
        meta = {"_start": np.int64(start), "_stop": np.int64(stop), "_store": np.str_(self.digest),
                "_checksum": np.str_(_checksum(arrays, start, stop, self.digest))}
        buf = io.BytesIO()
        np.savez(buf, **arrays, **meta)
        path = self.path(start)
        self._write(path, buf.getvalue())
        return path

    def load(self) -> dict:
        """Arrays of the blocks stored from realisation 0 on, concatenated (up to the first gap)."""
        parts, start = [], 0
        blocks = self.read_blocks(np.iinfo(np.int64).max)
        while start in blocks:
            stop, arrays = blocks[start]
            parts.append(arrays)
            if stop < start + self.block:
                break
            start = stop
        if not parts:
            return {}
        return {k: np.concatenate([p[k] for p in parts]) for k in parts[0]}

    def _write(self, path: Path, data: bytes) -> None:
        # a temporary name (".NAME.*.part") that never matches a block name
        atomic_write_bytes(path, data)


def open_existing(folder) -> BlockStore | None:
    """The store in ``folder`` with the identity its header records (for reading); None if none.

    A store of another format version is refused (InputError), never read as this one.
    """
    head = read_header(folder)
    if head is None:
        return None
    if head.get("version") != VERSION:
        raise InputError(f"store {folder} was written by another version of slipfield's store "
                         f"(version {head.get('version')}, this is {VERSION}); its arrays are laid out "
                         "differently: run it again into a new folder")
    ident = dict(head.get("identity") or {})
    task, block = ident.pop("task", "rlem"), ident.pop("block", BLOCK)
    return BlockStore(folder, ident, task=task, block=block)

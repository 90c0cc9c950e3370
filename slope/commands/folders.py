"""Output folders: slipfield writes only where it may, and replaces only its own files.

Every command that writes a folder (``run --out``, ``sweep --out``,
``simulate --out``, ``simulate --export-fields``) goes through
:class:`OutputFolder`:

1. **Up front**, before any computation, the folder is checked: a symbolic
   link, an existing file, the current folder (``--out .``) or one of its
   parents, and a place the user cannot write are refused. An existing
   folder that is not empty is used only when slipfield's marker file in it
   (:data:`MARKER`) says it holds an earlier output of the same command
   (``--overwrite`` allows the output of another slipfield command); any
   other non-empty folder is refused: slipfield never removes, renames or
   overwrites a file it did not write.
2. Outputs are written into a **staging folder** and moved into place only
   when the command succeeded (:meth:`OutputFolder.commit`), so a failed or
   interrupted run leaves nothing half-written. A new folder appears whole
   (one rename); in a reused folder the files listed by the old marker are
   replaced, stale ones of them removed, and files slipfield did not write
   are left alone.
3. Folders and files get the permissions the user's umask asks for.

The marker records the command and every file (and owned sub-folder, e.g.
``store/``) slipfield wrote there.
"""
from __future__ import annotations

import json
import os
import shutil
import tempfile
from pathlib import Path

from ..errors import InputError
from ..files import umask

__all__ = ["OutputFolder", "MARKER"]

MARKER = ".slipfield-output.json"
_STAGE_PREFIX = ".slipfield-partial-"


def _read_marker(folder: Path) -> dict | None:
    try:
        m = json.loads((folder / MARKER).read_text())
    except (OSError, ValueError):
        return None
    if not isinstance(m, dict) or m.get("format") != "slipfield-output" or not isinstance(m.get("files"), list):
        return None
    return m


def _owned(rel: str, listed: set[str]) -> bool:
    """Whether relative path ``rel`` is listed (as a file, or under a listed ``folder/``)."""
    if rel in listed:
        return True
    parts = rel.split("/")
    return any("/".join(parts[:i]) + "/" in listed for i in range(1, len(parts)))


class OutputFolder:
    """A folder a command writes, checked when made (see the module notes).

    Parameters
    ----------
    path : path-like
        The folder the user named.
    command : str
        What writes it (``"run"``, ``"sweep"``, ``"simulate"``,
        ``"simulate --export-fields"``); recorded in the marker.
    option : str
        The option that named it, for messages (``"--out"``).
    overwrite : bool
        Allow a folder holding another slipfield command's output (only the
        files its marker lists are replaced).

    Raises
    ------
    InputError
        The folder may not be written (the message names ``option`` and the fix).
    """

    def __init__(self, path, command: str, *, option: str = "--out", overwrite: bool = False):
        self.path = Path(path)
        self.command = command
        self.option = option
        self.overwrite = bool(overwrite)
        self.previous: dict | None = None  # marker of the output being replaced
        self._check()

    # ------------------------------------------------------------ checks
    def _refuse(self, why: str, fix: str = "give a new folder") -> None:
        raise InputError(f"{self.option} {self.path}: {why}; {fix}")

    def _check(self) -> None:
        p = self.path
        if p.is_symlink():
            self._refuse("is a symbolic link; slipfield writes only into a real folder it can check",
                         "give the folder itself or a new folder")
        if p.exists() and not p.is_dir():
            self._refuse("is an existing file, not a folder", "give a new folder name")
        here = Path.cwd().resolve()
        real = p.resolve()
        if real == here or real in here.parents:
            self._refuse("is the current folder (or holds it); outputs go into a folder of their own",
                         f"give a new folder, e.g. {self.option} results")
        if p.is_dir():
            entries = [e for e in p.iterdir() if not e.name.startswith(_STAGE_PREFIX)]
            if any(e.name != MARKER for e in entries):
                marker = _read_marker(p)
                if marker is None:
                    names = ", ".join(sorted(e.name for e in entries)[:3])
                    self._refuse(f"holds files slipfield did not write ({names}{', …' if len(entries) > 3 else ''}); "
                                 "slipfield never removes or replaces them", "give a new or empty folder")
                if marker.get("command") != self.command and not self.overwrite:
                    self._refuse(f"holds the output of 'slipfield {marker.get('command')}'",
                                 "give a new folder, or --overwrite to replace slipfield's own outputs there")
                self.previous = marker
            if not os.access(p, os.W_OK | os.X_OK):
                self._refuse("is not writable", "give a folder you can write to")
        else:
            a = p.absolute().parent
            while not a.exists():
                a = a.parent
            if not a.is_dir():
                self._refuse(f"cannot be created: {a} is a file", "give a new folder name")
            if not os.access(a, os.W_OK | os.X_OK):
                self._refuse(f"cannot be created: {a} is not writable", "give a folder you can write to")

    # ------------------------------------------------------------ writing
    def claim(self, folders=()) -> None:
        """Create the folder now (for outputs written while the command runs, e.g. ``store/``).

        ``folders``: sub-folders (names) slipfield owns entirely; recorded
        in the marker before anything is written into them.
        """
        self.path.mkdir(parents=True, exist_ok=True)
        listed = list((self.previous or {}).get("files", []))
        listed += [f.rstrip("/") + "/" for f in folders]
        self._write_marker(listed)
        self.previous = _read_marker(self.path)

    def stage(self) -> Path:
        """A new empty staging folder on the same file system as the target."""
        if self.path.is_dir():
            d = tempfile.mkdtemp(prefix=_STAGE_PREFIX, dir=self.path)
        else:
            self.path.parent.mkdir(parents=True, exist_ok=True)
            d = tempfile.mkdtemp(prefix=f".{self.path.name}.partial-", dir=self.path.parent)
        return Path(d)

    @staticmethod
    def discard(stage: Path) -> None:
        """Remove a staging folder (after a failure); it holds only slipfield's files."""
        shutil.rmtree(stage, ignore_errors=True)

    def commit(self, stage: Path) -> list[str]:
        """Move a finished staging folder's files into place; returns their relative paths."""
        stage = Path(stage)
        files = sorted(str(f.relative_to(stage)).replace(os.sep, "/") for f in stage.rglob("*") if f.is_file())
        _set_modes(stage)
        if not self.path.exists():
            (stage / MARKER).write_text(json.dumps(self._marker(files), indent=1))
            os.chmod(stage / MARKER, 0o666 & ~umask())
            try:
                stage.rename(self.path)
                return files
            except OSError:  # the folder appeared meanwhile: merge as below
                (stage / MARKER).unlink()
        prev = _read_marker(self.path) or {"files": []}
        listed = set(prev["files"])
        clash = [f for f in files if (self.path / f).exists() and not _owned(f, listed)]
        if clash:
            self.discard(stage)
            self._refuse(f"already holds {', '.join(clash[:3])}, which slipfield did not write",
                         "move those files away or give a new folder")
        owned_dirs = [f for f in listed if f.endswith("/")]
        # the marker first lists old and new files, so an interruption leaves every file accounted for
        self._write_marker(sorted(listed | set(files)))
        for f in files:
            dst = self.path / f
            _makedirs(dst.parent)
            os.replace(stage / f, dst)
        for f in sorted(listed - set(files) - set(owned_dirs)):  # stale outputs of the previous run
            (self.path / f).unlink(missing_ok=True)
            _prune(self.path, Path(f).parent)
        self._write_marker(sorted(set(files) | set(owned_dirs)))
        self.discard(stage)
        return files

    def _marker(self, files) -> dict:
        return {"format": "slipfield-output", "version": 1, "command": self.command,
                "note": "written by slipfield: the files below are its outputs and may be replaced by the next "
                        "run of the same command; files not listed are never touched",
                "files": list(files)}

    def _write_marker(self, files) -> None:
        from ..report import atomic_write_text

        atomic_write_text(self.path / MARKER, json.dumps(self._marker(files), indent=1))


def _makedirs(d: Path) -> None:
    if not d.is_dir():
        _makedirs(d.parent)
        d.mkdir(mode=0o777 & ~umask())


def _prune(root: Path, rel: Path) -> None:
    """Remove now-empty folders that held slipfield's stale files (never ``root``)."""
    while str(rel) not in ("", "."):
        try:
            (root / rel).rmdir()
        except OSError:
            return
        rel = rel.parent


def _set_modes(stage: Path) -> None:
    # mkdtemp/mkstemp make 0700/0600; outputs are ordinary files for colleagues too
    os.chmod(stage, 0o777 & ~umask())
    for p in stage.rglob("*"):
        if not p.is_symlink():
            os.chmod(p, 0o777 & ~umask() if p.is_dir() else 0o666 & ~umask())

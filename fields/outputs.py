"""Output files of the fields command line: written new, never over a file slipfield cannot tell it wrote.

A single output file (``slipfield fields sample --out f.npz``) carries no
record of who wrote it, so an existing file at the target, or beside it
(the ``.h5`` heavy-data file of an ``.xdmf``), is refused before anything is
computed: slipfield never deletes, renames or overwrites a file it did not
write. Folders of outputs follow the marker rules of
``slipfield.slope.commands.folders.OutputFolder`` instead.
"""
from __future__ import annotations

import os
from pathlib import Path

from .errors import InputError

__all__ = ["check_new_file", "companion_files"]


def companion_files(path) -> list[Path]:
    """Files written beside ``path`` by its format (``<stem>.h5`` for an ``.xdmf``)."""
    p = Path(path)
    return [p.with_suffix(".h5")] if p.suffix.lower() == ".xdmf" else []


def check_new_file(path, option: str) -> Path:
    """Refuse an output file that would replace something, or that cannot be written.

    Parameters
    ----------
    path : path-like
        The file the user named.
    option : str
        The option that named it (``"--out"``), for the message.

    Returns
    -------
    pathlib.Path

    Raises
    ------
    InputError
        The file (or its companion, :func:`companion_files`) exists, is a
        folder or a symbolic link, or its folder cannot be created or
        written. The message names ``option`` and the fix.
    """
    p = Path(path)
    for q in [p] + companion_files(p):
        if q.is_symlink() or q.exists():
            what = ("a symbolic link" if q.is_symlink() else "a folder" if q.is_dir() else "an existing file")
            where = "" if q == p else f" (written beside it: {q.name} is {what})"
            raise InputError(f"{option} {path}: {'is ' + what if q == p else 'would replace a file'}{where}; "
                             "slipfield writes new files only and never replaces one it cannot tell it wrote; "
                             "give a new file name, or move the old file away yourself")
    a = p.absolute().parent
    while not a.exists():
        a = a.parent
    if not a.is_dir():
        raise InputError(f"{option} {path}: its folder cannot be created ({a} is a file); give another file name")
    if not os.access(a, os.W_OK | os.X_OK):
        raise InputError(f"{option} {path}: {a} is not writable; give a file in a folder you can write to")
    return p

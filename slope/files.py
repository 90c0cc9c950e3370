"""Atomic file writes (a reader never sees a half-written output) and the umask every
output follows: one place for the report, the commands and the result store."""
from __future__ import annotations

import os
import tempfile
from pathlib import Path

__all__ = ["atomic_write_bytes", "atomic_write_text", "umask"]


# mkstemp creates files readable by the owner only; outputs are ordinary
# files, so give them the permissions the user's umask asks for.
def umask() -> int:
    """The process umask, read when a file is made (it may change after import)."""
    m = os.umask(0o022)
    os.umask(m)
    return m


def atomic_write_bytes(path: str | os.PathLike, data: bytes) -> Path:
    """Write ``data`` to ``path`` through a temporary file and a rename.

    The temporary file lives in the destination folder so that
    :func:`os.replace` is a same-filesystem rename (atomic on POSIX and
    Windows). On any failure the temporary file is removed and the previous
    content of ``path`` (if any) is left intact.

    Parameters
    ----------
    path : path-like
        Destination file; its folder must exist.
    data : bytes
        Full content.

    Returns
    -------
    pathlib.Path
        The destination path.
    """
    path = Path(path)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".part")
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, 0o666 & ~umask())
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
    return path


def atomic_write_text(path: str | os.PathLike, text: str, encoding: str = "utf-8") -> Path:
    """Text version of :func:`atomic_write_bytes` (UTF-8, ``\\n`` line ends)."""
    return atomic_write_bytes(path, text.encode(encoding))

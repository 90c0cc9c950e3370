"""Where numba keeps the compiled kernels when an installation cannot hold them.

Kernels compiled with ``cache=True`` are written next to their source
(``__pycache__``) or, when that folder is read-only, to the user's cache
folder. When neither can be written (a system-wide install used from an
account whose home is read-only, as in some containers) numba refuses to
decorate the function and the import fails with "no locator available".
Before numba is first imported, :func:`choose_cache_dir` then points
``NUMBA_CACHE_DIR`` at a folder of this user's in the temporary folder.
A folder the user set is never replaced.
"""
from __future__ import annotations

import os
import tempfile

__all__ = ["choose_cache_dir"]


def _writable(folder: str) -> bool:
    """Whether files can be created in ``folder`` or, if it does not exist yet, in its nearest parent."""
    while folder and not os.path.isdir(folder):
        parent = os.path.dirname(folder)
        if parent == folder:
            return False
        folder = parent
    return bool(folder) and os.access(folder, os.W_OK | os.X_OK)


def _user_cache_root(environ) -> str:
    """The folder numba's user-wide cache goes under on POSIX (XDG_CACHE_HOME, else ~/.cache)."""
    return environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")


def choose_cache_dir(package_dir: str, environ=os.environ, writable=_writable) -> str | None:
    """Set ``NUMBA_CACHE_DIR`` when neither the package folder nor the user cache can be written.

    Parameters
    ----------
    package_dir : str
        Folder of the installed package whose modules carry cached kernels.
    environ : mapping
        The environment to read and update (``os.environ`` by default).
    writable : callable
        ``folder -> bool``.

    Returns
    -------
    str or None
        The folder chosen, or None when numba's own places serve (or the
        user already set ``NUMBA_CACHE_DIR``).
    """
    if environ.get("NUMBA_CACHE_DIR"):
        return None
    if writable(package_dir) or writable(_user_cache_root(environ)):
        return None
    uid = os.getuid() if hasattr(os, "getuid") else "user"
    folder = os.path.join(tempfile.gettempdir(), f"slipfield-numba-cache-{uid}")
    environ["NUMBA_CACHE_DIR"] = folder
    return folder

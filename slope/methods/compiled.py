"""Compiling the methods' kernels once per machine, and ahead of the work that needs them.

numba compiles a kernel on its first call in a process and writes it to its
cache (``cache=True``); the next process loads it in a fraction of a second.
Several processes of one run (the command and its worker pool) that reach
the same kernel before its cache exists would each compile it -- seconds of
CPU each on a machine whose cores they share. :func:`first_call` makes the
first call of a kernel in a process wait for the same kernel's compilation
in any other process of this user, then load it from the cache.
:func:`warm_up` lets an idle worker compile what the command will call
next (e.g. Morgenstern-Price while the command searches with Bishop).
"""
from __future__ import annotations

import contextlib
import os
import tempfile
import threading

try:  # POSIX; elsewhere every process compiles for itself, as before
    import fcntl
except ImportError:  # pragma: no cover - Windows
    fcntl = None

__all__ = ["first_call", "skipping_busy", "CompilingElsewhere", "lock_path", "warm_up", "warm_up_scan",
           "kernel_groups", "uses_scan", "KERNEL_GROUPS",
           "CALLEE_ONLY", "FROM_PYTHON"]

#: ``njit`` options of a kernel that Python calls: no C wrapper, which numba otherwise generates and
#: optimises for every function and only a first-class function value needs (Morgenstern-Price's
#: three kernels: 0.3 s less CPU to compile into an empty cache).
FROM_PYTHON = {"no_cfunc_wrapper": True}
#: ``njit`` options of a compiled function that only other compiled functions call: neither the C
#: wrapper nor the Python one (unboxing every argument, boxing the result). Morgenstern-Price's
#: kernels and λ scan into an empty cache: 10.0 -> 9.0 s of CPU. Calling such a function from
#: Python raises.
CALLEE_ONLY = {**FROM_PYTHON, "no_cpython_wrapper": True}


def lock_path(kernel) -> str:
    """The lock file of ``kernel``: one per user, kernel and cache it compiles into.

    numba's cache of a kernel belongs to its source file (and to
    ``NUMBA_CACHE_DIR`` when set), so two installations of slipfield keep two
    caches; a lock named after the kernel alone made one installation's runs
    wait for the other's compilation, which fills a cache they never read.
    """
    import hashlib

    name = f"{kernel.py_func.__module__}.{kernel.py_func.__qualname__}"
    where = f"{os.path.realpath(kernel.py_func.__code__.co_filename)}\0{os.environ.get('NUMBA_CACHE_DIR', '')}"
    tag = hashlib.sha256(where.encode()).hexdigest()[:12]
    return os.path.join(tempfile.gettempdir(), f"slipfield-compile-{os.getuid()}-{name}-{tag}.lock")


class CompilingElsewhere(Exception):
    """:func:`first_call` within :func:`skipping_busy`: another process holds the kernel's lock."""


_SKIP_BUSY = threading.local()


@contextlib.contextmanager
def skipping_busy():
    """Within: :func:`first_call` of a kernel that another process is compiling raises
    :class:`CompilingElsewhere` at once instead of waiting for it (in this thread).

    For warm-ups, which only save time: a process that waited there sat idle on its core while
    the other compiled; it can compile or load the next kernel instead, and the first real call
    of the skipped one still waits for that compilation and loads it.
    """
    before = getattr(_SKIP_BUSY, "on", False)
    _SKIP_BUSY.on = True
    try:
        yield
    finally:
        _SKIP_BUSY.on = before


@contextlib.contextmanager
def first_call(kernel):
    """Around a call of numba dispatcher ``kernel``: hold its machine-wide lock if it has no
    compiled version in this process yet (the call compiles it or loads it from the cache)."""
    if fcntl is None or kernel.signatures:
        yield
        return
    path = lock_path(kernel)
    try:
        fh = open(path, "a")
    except OSError:  # no lock, no harm: the call compiles as it would have
        yield
        return
    with fh:
        if getattr(_SKIP_BUSY, "on", False):
            try:
                fcntl.flock(fh, fcntl.LOCK_EX | fcntl.LOCK_NB)
            except BlockingIOError:
                raise CompilingElsewhere(kernel.py_func.__qualname__) from None
        else:
            fcntl.flock(fh, fcntl.LOCK_EX)
        try:
            yield
        finally:
            fcntl.flock(fh, fcntl.LOCK_UN)


#: Groups of compiled kernels a method of slices may call (``MethodOfSlices.compiled``), each warmed
#: by one tiny call of the real types, longest compilation first (CPU into an empty cache, one
#: process, 2026-12-04, after that day's cuts): the general limit-equilibrium kernels of
#: Morgenstern-Price, with and without forces (the deterministic analysis writes its slice tables),
#: 4.0 s (6.5-7 s while the kernel was numba ``parallel=True`` with more levels of calls); the λ
#: scan over both signs that Spencer and Morgenstern-Price run on the cells their Newton missed
#: (only some searches reach it), 1.2 s after them; Bishop's and Janbu's single-equation kernel,
#: 0.75-0.85 s.
KERNEL_GROUPS = ("general", "lam-scan", "single-equation")


def kernel_groups(method) -> tuple:
    """The groups of :data:`KERNEL_GROUPS` that ``method`` (a registry name or alias) may call; none
    for a name the registry does not know (a warm-up never fails a run: the case is checked later)."""
    from . import method_spec

    try:
        return tuple(method_spec(method).compiled)
    except Exception:  # noqa: BLE001
        return ()


def warm_up(methods=(), *, scan=True):
    """Compile (or load from the cache) the kernels of ``methods`` with tiny inputs of the real types.

    Each method's groups of :data:`KERNEL_GROUPS` (``MethodOfSlices.compiled``), once each;
    ``scan`` False leaves out the ``"lam-scan"`` group (:func:`warm_up_scan`, a worker's step of its
    own). Names unknown to the registry are ignored: this only saves time.
    """
    from . import method_spec

    groups = {}
    for m in methods:
        for g in kernel_groups(m):
            groups.setdefault(g, method_spec(m).name)
    if not scan:
        groups.pop("lam-scan", None)
    if not groups:
        return
    terms, c, tp = _tiny_bank()
    for group, name in groups.items():
        _warm_group(group, name, terms, c, tp)


def uses_scan(methods) -> bool:
    """Whether any of ``methods`` may run the λ scan of :func:`warm_up_scan` (its ``"lam-scan"`` group)."""
    return any("lam-scan" in kernel_groups(m) for m in methods)


def warm_up_scan():
    """Compile (or load) the λ scan over both signs (``gle.bracketed_roots``)."""
    terms, c, tp = _tiny_bank()
    _warm_group("lam-scan", None, terms, c, tp)


def _warm_group(group, name, terms, c, tp):
    import numpy as np

    if group == "single-equation":
        from . import factor_of_safety

        factor_of_safety(terms, c, tp, name)
    elif group == "general":
        from .gle import morgenstern_price
        from .interslice import interslice_function

        # started from a given F, not Bishop's: this need not wait for Bishop's kernel
        f = interslice_function(terms.x_bound, "half-sine")
        morgenstern_price(terms, c, tp, f, F_start=np.ones((1, 1)))
        morgenstern_price(terms, c, tp, f, F_start=np.ones((1, 1)), return_forces=True)
    elif group == "lam-scan":
        from .gle import bracketed_roots

        one = np.zeros(1, dtype=np.int64)
        bracketed_roots(terms, c, tp, np.ones((1, 9)), (one, one), np.ones(1))


def _tiny_bank():
    """Terms of one circle of 8 slices on the example slope, and its strengths (c, tan phi)."""
    import numpy as np

    from . import prepare_bank
    from ..bank import build_bank
    from ..examples import simple_slope
    from ..surfaces import Circle

    bank = build_bank(simple_slope(), [Circle(8.0, 16.0, 14.0)], n_slices=8)
    return prepare_bank(bank), np.full((1, 1, 8), 10.0), np.full((1, 1, 8), 0.5)

"""Running a compiled kernel over the surfaces of a bank on several threads.

Morgenstern-Price's kernel was numba ``parallel=True`` over surfaces. numba's
parallel compilation (parfor passes and the gufunc around the loop) took
2 s of the kernel's 6.6 s of CPU on a first run, in every process that
compiled it. The kernel
is now serial over a range of surfaces and releases the GIL (``nogil``);
this module calls it on contiguous parts of the bank from a few Python
threads. Each surface is computed by the same code whatever the split, so
the results do not depend on the number of threads.

The number of threads is numba's for the calling thread
(``numba.get_num_threads()``), so the run's settings still apply unchanged:
``--jobs`` (``executors.limit_threads``), one thread beside a worker pool,
one thread for small banks (``limit_state``).
"""
from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor

from numba.extending import intrinsic

__all__ = ["over_surfaces", "borrowed", "PARTS_PER_THREAD", "MIN_SURFACES_PER_PART"]

#: parts of the bank per thread: surfaces differ in cost (a continuation, many iterations), and
#: threads that finish early take the next part
PARTS_PER_THREAD = 4
#: below this many surfaces per part a thread costs more than it saves (its start is ~0.1 ms;
#: one surface of 30 slices and one sample, about 5 µs)
MIN_SURFACES_PER_PART = 32


def over_surfaces(kernel, n_surfaces: int, *args) -> None:
    """Call ``kernel(m0, m1, *args)`` so that the ranges ``[m0, m1)`` cover ``0 .. n_surfaces - 1``.

    Parameters
    ----------
    kernel : numba dispatcher
        Compiled with ``nogil=True``; writes its outputs for surfaces ``m0 <= m < m1`` only.
    n_surfaces : int
        Surfaces of the bank.
    *args
        The kernel's other arguments, the same for every part.
    """
    import numba

    threads = numba.get_num_threads()
    parts = min(threads * PARTS_PER_THREAD, n_surfaces // MIN_SURFACES_PER_PART)
    if threads <= 1 or parts <= 1:
        kernel(0, n_surfaces, *args)
        return
    bounds = [round(k * n_surfaces / parts) for k in range(parts + 1)]
    ranges = list(zip(bounds[:-1], bounds[1:]))
    if not kernel.signatures:  # not compiled (or loaded) in this process yet: once, here, first
        kernel(*ranges.pop(0), *args)
    pool = ThreadPoolExecutor(max_workers=min(threads, len(ranges)), thread_name_prefix="slipfield-surfaces")
    try:
        for f in [pool.submit(kernel, m0, m1, *args) for m0, m1 in ranges]:
            f.result()
    finally:  # an error or Ctrl-C: the parts not started are dropped (a running part cannot be stopped)
        pool.shutdown(wait=True, cancel_futures=True)


@intrinsic
def borrowed(typingctx, arr):
    """In a compiled kernel: ``arr`` without its reference count (the same data, shape and strides).

    Every call of a compiled function adds and removes a reference to each array it is passed,
    atomically. On arrays shared by threads those counts contend for one cache line: the kernel
    ran 1.2x faster on two threads than on one. numba's ``parallel=True`` passes its loop body
    such uncounted arrays. Only for arrays the kernel's caller keeps alive for the whole call (its
    arguments); never for one the kernel allocates or returns.
    """
    def codegen(context, builder, sig, args):
        from numba.np.arrayobj import make_array, populate_array

        src = make_array(arr)(context, builder, value=args[0])
        out = make_array(arr)(context, builder)
        populate_array(out, data=src.data, shape=src.shape, strides=src.strides, itemsize=src.itemsize,
                       meminfo=None)
        return out._getvalue()

    return arr(arr), codegen

"""The same numbers whatever the number of threads: matrix products on one BLAS thread.

OpenBLAS (numpy's and scipy's) shares a matrix product among its threads in ways that depend on
their number, and the partial sums then round differently in the last bits: with 1 and 2 threads,
the bootstrap means of a 3,000-grain set, the harmonic sums of the J-index and the kernel sums of
the convergence curve differ by about 1e-16 relative, enough to flip the sixth decimal of a
rounded output now and then. Snakemake runs each workflow job with as many BLAS threads as the
rule asks for (one), so ``fabric2seis sample``, ``field`` and their library calls compute on one
BLAS thread too: the suite and the commands give the same bytes, on any number of cores.

The costliest loop (the bootstrap's J-index, ``fabric.texture_index.j_quadratic_forms``) is shared
among :func:`worker_count` Python threads instead, in blocks fixed in advance whose sums are added
in their order, so that the number of workers changes the time, not the bits.
"""

from __future__ import annotations

import contextlib
import os
from collections.abc import Iterator

from threadpoolctl import threadpool_limits


@contextlib.contextmanager
def blas_on_one_thread() -> Iterator[None]:
    """Run the block (or, as a decorator, the function) with every BLAS library on one thread.

    Yields
    ------
    None
        Nothing; the limit holds until the block ends, and is then lifted.
    """
    with threadpool_limits(limits=1, user_api="blas"):
        yield


#: most worker threads a loop uses (each holds a block of the J-index's pair matrix in memory)
MAX_WORKERS = 2


def worker_count() -> int:
    """Number of worker threads for the few loops shared among threads.

    ``OMP_NUM_THREADS`` when it is set (Snakemake sets it to a rule's ``threads``, one for the
    workflow's jobs), else the cores this process may use; at most :data:`MAX_WORKERS`.

    Returns
    -------
    int
        At least 1.
    """
    try:
        wanted = int(os.environ.get("OMP_NUM_THREADS", ""))
    except ValueError:
        wanted = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else (os.cpu_count() or 1)
    return max(1, min(MAX_WORKERS, wanted))

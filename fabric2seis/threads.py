"""How many threads a run may use, and the same numbers whatever that number is.

One place decides the threads of a run: :func:`threads_given` (``fabric2seis sample --threads N``,
the workflow's ``snakemake.threads``, ``pipeline.run_sample(threads=N)``) sets them for the block
it encloses; without it a run may use ``OMP_NUM_THREADS`` threads when that is set (Snakemake sets
it to a job's ``threads``), else the cores this process may use (:func:`available_cores`). Every
thread pool of a run asks :func:`thread_count` (or :func:`worker_count`, for the loops whose
workers each hold a large block in memory) and never starts more workers; a task running on a
pool's worker is given its share, ``thread_count() // workers`` (at least 1), so pools started
inside it (the J-index's blocks inside the fabric of one mineral) stay within the run's threads.

OpenBLAS (numpy's and scipy's) shares a matrix product among its threads in ways that depend on
their number, and the partial sums then round differently in the last bits: with 1 and 2 threads,
the bootstrap means of a 3,000-grain set, the harmonic sums of the J-index and the kernel sums of
the convergence curve differ by about 1e-16 relative, enough to flip the sixth decimal of a
rounded output now and then. So ``fabric2seis sample``, ``field`` and their library calls compute
on one BLAS thread (:func:`blas_on_one_thread`), and the run's threads are Python threads that
share work cut into parts fixed in advance, whose results are combined in their order
(:func:`shared_results`): the number of threads changes the time, not the bits.

Where the threads go (``pipeline``): the fabric of the minerals (indices, convergence curve and
random floor of each, nine independent parts for three minerals), the J-index's blocks of the
pair matrix (``fabric.texture_index.j_quadratic_forms``), the M-index pairs of the bootstrap
(``uncertainty.fabric_bootstrap``) and the draws of the resample counts
(``uncertainty.resample_counts``). Every random number of these parts comes from a seed or stream
of its own, fixed before the work is shared, never from a generator the parts share.
"""

from __future__ import annotations

import contextlib
import contextvars
import os
from collections.abc import Callable, Iterable, Iterator
from typing import TypeVar

from threadpoolctl import threadpool_limits

Item = TypeVar("Item")
Result = TypeVar("Result")

#: the threads the enclosing :func:`threads_given` block allows (None: the default of :func:`thread_count`)
_GIVEN: contextvars.ContextVar[int | None] = contextvars.ContextVar("fabric2seis_threads_given", default=None)

#: most worker threads of a loop whose workers each hold a block of the J-index's pair matrix
#: (chunk x N floats, about 120 MB at 30,000 grains) in memory
MAX_WORKERS = 2


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


def available_cores() -> int:
    """The cores this process may run on (its CPU affinity where the system tells it), at least 1.

    Returns
    -------
    int
        ``len(os.sched_getaffinity(0))``, else ``os.cpu_count()``, else 1.
    """
    if hasattr(os, "sched_getaffinity"):
        return max(1, len(os.sched_getaffinity(0)))
    return max(1, os.cpu_count() or 1)


def checked_thread_count(threads: int) -> int:
    """Return ``threads`` as an int, refused unless it is a whole number of at least 1.

    Parameters
    ----------
    threads : int
        Threads asked for.

    Returns
    -------
    int
        The same number.

    Raises
    ------
    ValueError
        If it is not a whole number of at least 1.
    """
    if isinstance(threads, bool) or not isinstance(threads, int) or threads < 1:
        raise ValueError(f"threads must be a whole number of at least 1, got {threads!r}")
    return threads


@contextlib.contextmanager
def threads_given(threads: int | None) -> Iterator[None]:
    """Let the block use at most ``threads`` threads (None: leave the current number).

    Parameters
    ----------
    threads : int or None
        Threads the block may use, at least 1.

    Yields
    ------
    None
        Nothing; :func:`thread_count` says ``threads`` until the block ends.

    Raises
    ------
    ValueError
        If ``threads`` is not None nor a whole number of at least 1.
    """
    if threads is None:
        yield
        return
    token = _GIVEN.set(checked_thread_count(threads))
    try:
        yield
    finally:
        _GIVEN.reset(token)


def default_thread_count() -> int:
    """Threads of a run that was given none: ``OMP_NUM_THREADS`` when set, else :func:`available_cores`.

    Returns
    -------
    int
        At least 1.
    """
    try:
        wanted = int(os.environ.get("OMP_NUM_THREADS", ""))
    except ValueError:
        return available_cores()
    return max(1, wanted)


def thread_count() -> int:
    """Threads the current work may use: the enclosing :func:`threads_given`, else the default.

    Returns
    -------
    int
        At least 1.
    """
    given = _GIVEN.get()
    return default_thread_count() if given is None else given


def worker_count() -> int:
    """Number of worker threads for the loops whose workers each hold a large block in memory.

    :func:`thread_count`, at most :data:`MAX_WORKERS`.

    Returns
    -------
    int
        At least 1.
    """
    return max(1, min(MAX_WORKERS, thread_count()))


def shared_results(work: Callable[[Item], Result], items: Iterable[Item],
                   most: int | None = None) -> Iterator[Result]:
    """``work(item)`` of every item, in the items' order, computed on up to :func:`thread_count` threads.

    With one thread (or one item) each result is computed in the caller's thread when the iterator
    reaches it, as a plain loop would. Otherwise all items are handed at once to a pool of
    ``min(thread_count(), len(items), most)`` workers, each task running with
    ``thread_count() // workers`` threads of its own (at least 1), and the results come back in the
    items' order, so that a caller combining them in that order gets the same numbers on any
    number of threads. An error of a task is raised when its result is reached; the tasks not yet
    started are then cancelled.

    Parameters
    ----------
    work : callable
        Computes the result of one item; must not depend on the other items' tasks.
    items : iterable
        The items, in the order of the results.
    most : int, optional
        At most this many workers (for work whose workers each hold much memory).

    Yields
    ------
    object
        ``work(item)`` for each item, in order.
    """
    items = list(items)
    allowed = thread_count()
    workers = min(allowed, len(items), allowed if most is None else max(1, most))
    if workers <= 1:
        for item in items:
            yield work(item)
        return
    from concurrent.futures import ThreadPoolExecutor

    share = max(1, allowed // workers)

    def task(item: Item) -> Result:
        with threads_given(share):
            return work(item)

    pool = ThreadPoolExecutor(max_workers=workers)
    try:
        futures = [pool.submit(task, item) for item in items]
        for future in futures:
            yield future.result()
    finally:
        pool.shutdown(wait=True, cancel_futures=True)

"""Work done in a second process while this one goes on: a sample's figures, drawn during the bootstrap.

Drawing the figures is a long step of a sample run (seconds at 10^6 pixels) that needs none of
the bootstrap's results, and the bootstrap barely uses a second core. A run allowed two threads or
more (``threads.thread_count``) on a system with ``os.fork`` therefore forks after the seismic
stage: the child draws into a folder of its own and reports back through a pipe; the parent
computes the intervals and writes the tables meanwhile, then waits for the child
(:meth:`SecondProcess.result`). Everything else about the figures is unchanged: the same code
draws them, so they are the same bytes as when drawn in the run's own process (one thread, or no
``fork``), where :meth:`SecondProcess.result` simply calls the work.

The child never returns into the caller's code: it leaves with ``os._exit``, so no ``finally``
block, ``atexit`` handler or buffered output of the parent runs twice. A failure in the child is
raised again in the parent when the result is asked for; leaving the ``with`` block early (an error
of the parent, Ctrl-C) stops the child and waits for it, so that nothing writes into a folder that
is being removed.
"""

from __future__ import annotations

import os
import pickle
import signal
import sys
import traceback
import warnings
from collections.abc import Sequence
from typing import Callable, Generic, TypeVar

from fabric2seis.threads import thread_count

Result = TypeVar("Result")


def can_fork() -> bool:
    """Whether work may go to a second process: ``os.fork`` exists and the run may use two threads.

    Returns
    -------
    bool
        True on Linux and other POSIX systems with ``fork`` (not macOS, whose system libraries do
        not support work after a fork without exec) when ``threads.thread_count()`` is at least 2.
    """
    return hasattr(os, "fork") and sys.platform != "darwin" and thread_count() >= 2


class SecondProcess(Generic[Result]):
    """Run ``work()`` in a forked process (``fork=True``) or, when asked for its result, in this one.

    Use as a context manager; :meth:`result` gives what ``work`` returned (pickled through a pipe
    from the child), or raises what it raised.

    Parameters
    ----------
    work : callable
        Takes no argument; its result must pickle.
    fork : bool
        Start it in a second process now (see :func:`can_fork`); otherwise it runs in
        :meth:`result`.
    """

    def __init__(self, work: Callable[[], Result], fork: bool) -> None:
        self.work = work
        self.pid: int | None = None
        self._reader: int | None = None
        self._done = False
        if fork:
            self._start()

    @property
    def forked(self) -> bool:
        """Whether the work runs in a second process."""
        return self.pid is not None

    def _start(self) -> None:
        sys.stdout.flush()
        sys.stderr.flush()
        reader, writer = os.pipe()
        with warnings.catch_warnings():
            # Python 3.12+ warns at any fork of a process with other threads. Ours are idle here:
            # the run's thread pools are shut down between stages (threads.shared_results), and
            # BLAS (OpenBLAS re-creates its pool in a forked child) is held to one thread
            warnings.filterwarnings("ignore", "This process .* is multi-threaded", DeprecationWarning)
            pid = os.fork()
        if pid == 0:                                       # the child: never returns
            os.close(reader)
            status = 0
            try:
                signal.signal(signal.SIGINT, signal.SIG_DFL)    # Ctrl-C ends it at once, like SIGTERM
                try:
                    payload = pickle.dumps(("ok", self.work()))
                except BaseException as error:           # noqa: BLE001 - every failure goes to the parent
                    status = 1
                    payload = _failure(error)
                with os.fdopen(writer, "wb") as pipe:
                    pipe.write(payload)
            finally:
                os._exit(status)
        os.close(writer)
        self.pid, self._reader = pid, reader

    def result(self) -> Result:
        """What ``work`` returned, waiting for the second process if there is one.

        Returns
        -------
        object
            ``work()``.

        Raises
        ------
        BaseException
            What ``work`` raised (from the second process: the same type where it pickles, with
            the child's traceback as a note), or RuntimeError if the second process died without
            a word (killed, out of memory).
        """
        if self.pid is None:
            return self.work()
        assert self._reader is not None
        with os.fdopen(self._reader, "rb") as pipe:
            payload = pipe.read()
        self._reader = None
        _, status = os.waitpid(self.pid, 0)
        self.pid, self._done = None, True
        if not payload:
            raise RuntimeError(f"the second process drawing the figures ended without a result "
                               f"({_how_it_ended(status)}); run with --threads 1 to draw them in this process")
        kind, value = pickle.loads(payload)
        if kind == "ok":
            return value
        raise value

    def stop(self) -> None:
        """Stop the second process, if still running, and wait for it."""
        if self.pid is None:
            return
        try:
            os.kill(self.pid, signal.SIGTERM)
        except ProcessLookupError:
            pass
        os.waitpid(self.pid, 0)
        if self._reader is not None:
            os.close(self._reader)
        self.pid = self._reader = None

    def __enter__(self) -> "SecondProcess[Result]":
        return self

    def __exit__(self, *exc) -> None:
        self.stop()


def shared_among_processes(tasks: Sequence[Callable[[], object]], processes: int,
                           done: Callable[[float], None] | None = None) -> None:
    """Run every task once, shared among this process and up to ``processes - 1`` forked ones.

    For work of many independent files, such as the figures of ``fabric2seis field`` (two per sample
    and station). Each process takes the next task of the list from a counter in shared memory
    until none is left, so give the longest first: the processes then finish close together. The
    tasks' results are not kept (they write files). Without ``fork`` (:func:`can_fork`'s systems),
    with one process or one task, the tasks run here in their order.

    Parameters
    ----------
    tasks : sequence of callables
        Each takes no argument.
    processes : int
        Processes in all, this one included (the threads the work was given).
    done : callable, optional
        Told the share of the tasks finished (0 to 1), by this process after each of its own
        tasks, for a progress bar (``progress.stage_bar``).

    Raises
    ------
    BaseException
        What a task raised, in any process (see :meth:`SecondProcess.result`); the other processes
        are then stopped.
    """
    import contextlib

    count = min(processes, len(tasks)) if hasattr(os, "fork") and sys.platform != "darwin" else 1
    counters = None
    if count >= 2:
        import multiprocessing

        try:        # the next task's number and the tasks finished (a system without shared semaphores: none)
            counters = multiprocessing.get_context("fork").Array("q", 2)
        except (OSError, ImportError):
            pass
    if counters is None:
        for k, task in enumerate(tasks):
            task()
            if done is not None:
                done((k + 1) / len(tasks))
        return

    def take_until_done(report: Callable[[float], None] | None = None) -> None:
        while True:
            with counters.get_lock():
                k = counters[0]
                counters[0] = k + 1
            if k >= len(tasks):
                return
            tasks[k]()
            with counters.get_lock():
                counters[1] += 1
                finished = counters[1]
            if report is not None:
                report(finished / len(tasks))

    with contextlib.ExitStack() as others:          # leaving early (an error here) stops the others
        children = [others.enter_context(SecondProcess(take_until_done, fork=True)) for _ in range(count - 1)]
        take_until_done(done)
        for child in children:
            child.result()
    if done is not None:
        done(1.0)


def _failure(error: BaseException) -> bytes:
    """The pickled ``("error", exception)`` for the parent, with the child's traceback as a note."""
    text = "".join(traceback.format_exception(error))
    try:
        error.add_note(f"(in the second process drawing the figures)\n{text}")
        return pickle.dumps(("error", error))
    except Exception:                                   # noqa: BLE001 - an exception that does not pickle
        return pickle.dumps(("error", RuntimeError(f"{type(error).__name__}: {error}\n{text}")))


def _how_it_ended(status: int) -> str:
    if os.WIFSIGNALED(status):
        return f"signal {os.WTERMSIG(status)}"
    return f"exit status {os.WEXITSTATUS(status)}"

"""Where independent pieces of work run: here, in local workers, or on a cluster.

Any ``concurrent.futures.Executor`` will do, such as a Dask client's executor.

Each task is a pure function of picklable arguments, so the result does not depend on where
or in which order the tasks ran. Local workers are spawned with their numerical libraries
held to one thread each: the planner's and the reference's linear algebra is small, and
several thread pools on two cores only fight each other. A failure or an interrupt in the
parent stops every local worker before it is re-raised.
"""

from __future__ import annotations

import contextlib
import multiprocessing
import os
import signal
import threading
from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import Executor, Future, ProcessPoolExecutor, as_completed
from typing import Any, TypeVar

R = TypeVar("R")

#: Thread-count variables of the numerical libraries (OpenMP, OpenBLAS, MKL, numba, BLIS).
THREAD_VARIABLES = (
    "OMP_NUM_THREADS",
    "OPENBLAS_NUM_THREADS",
    "MKL_NUM_THREADS",
    "NUMBA_NUM_THREADS",
    "BLIS_NUM_THREADS",
    "VECLIB_MAXIMUM_THREADS",
)


@contextlib.contextmanager
def single_threaded_children() -> Iterator[None]:
    """Processes started inside the block get one thread per numerical library.

    Variables the user has set are kept. The parent's own libraries are already loaded, so
    this changes nothing for the parent.
    """
    saved = {k: os.environ.get(k) for k in THREAD_VARIABLES}
    for k in THREAD_VARIABLES:
        os.environ.setdefault(k, "1")
    try:
        yield
    finally:
        for k, v in saved.items():
            if v is None:
                os.environ.pop(k, None)
            else:
                os.environ[k] = v


def _stop_local_workers(pool: ProcessPoolExecutor) -> None:
    """Cancel what has not started and end the workers now (a build that stops, stops)."""
    # The pool's management thread must be joined before the interpreter exits: its exit
    # hook wakes the thread through a pipe the thread closes as it ends, and the race
    # prints a traceback ("Bad file descriptor", CPython 3.11). The first shutdown drops
    # the pool's reference to the thread, so keep one to join it below.
    manager = getattr(pool, "_executor_manager_thread", None)
    pool.shutdown(wait=False, cancel_futures=True)
    for child in multiprocessing.active_children():
        child.terminate()
    for child in multiprocessing.active_children():
        child.join(timeout=5.0)
        if child.is_alive():
            child.kill()
    if isinstance(manager, threading.Thread):
        manager.join(timeout=10.0)
    with contextlib.suppress(Exception):
        pool.shutdown(wait=True, cancel_futures=True)


def _worker_init() -> None:
    """Leave Ctrl-C to the parent, which stops the workers.

    A terminal sends the interrupt to every process of the group, and a solver in a worker
    may swallow it.
    """
    signal.signal(signal.SIGINT, signal.SIG_IGN)


def run_tasks(
    fn: Callable[..., R],
    tasks: Sequence[tuple[Any, ...]],
    jobs: int = 1,
    executor: Executor | None = None,
    isolate: bool = False,
) -> Iterator[tuple[int, R]]:
    """Run ``fn(*tasks[k])`` for every ``k``; yield ``(k, result)`` as each finishes.

    Parameters
    ----------
    fn : callable
        A module-level function (picklable), pure in its arguments.
    tasks : sequence of tuple
        Arguments of each call.
    jobs : int
        Local worker processes when no ``executor`` is given (1: in this process).
    executor : concurrent.futures.Executor, optional
        Runs the tasks instead (e.g. ``distributed.Client(address).get_executor()``).
    isolate : bool
        Run even a single job in a worker process, so that an interrupt of this process
        stops the work at once (a numerical solver in this process may swallow Ctrl-C).

    Yields
    ------
    (int, object)
        Task index and its result, in order of completion.
    """
    if executor is not None:
        futures: dict[Future[R], int] = {executor.submit(fn, *t): k for k, t in enumerate(tasks)}
        try:
            for fut in as_completed(futures):
                yield futures[fut], fut.result()
        except BaseException:
            for fut in futures:
                fut.cancel()
            raise
        return
    workers = max(1, min(int(jobs), len(tasks)))
    if workers == 1 and not isolate:
        for k, t in enumerate(tasks):
            yield k, fn(*t)
        return
    ctx = multiprocessing.get_context("spawn")
    with single_threaded_children():
        pool = ProcessPoolExecutor(max_workers=workers, mp_context=ctx, initializer=_worker_init)
        try:
            futures = {pool.submit(fn, *t): k for k, t in enumerate(tasks)}
            for fut in as_completed(futures):
                yield futures[fut], fut.result()
        except BaseException:
            _stop_local_workers(pool)
            raise
        pool.shutdown(wait=True)

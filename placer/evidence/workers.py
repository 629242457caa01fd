"""Worker processes for the Monte Carlo and the comparison, ended at once on Ctrl-C.

:func:`worker_pool` is a :class:`multiprocessing.pool.Pool` whose workers
ignore SIGINT (a Ctrl-C at a terminal reaches every process of the group:
the parent alone stops, and no worker prints a traceback) and which, when
the block inside it raises (``KeyboardInterrupt`` above all), is
terminated: the tasks not started are dropped and the workers killed
instead of being waited for. :func:`results_in_order` and
:func:`results_as_completed` wait for tasks in short steps, so the main
thread sees a Ctrl-C within :data:`POLL_SECONDS`. :func:`worker_ranges`
cuts the samples into ranges that start at multiples of a chunk, so a
result does not depend on the number of workers; :func:`check_workers`
reads a worker count.

(``concurrent.futures.ProcessPoolExecutor`` is not used: it cannot end
running tasks, and its queue-feeder thread can block the interpreter's
exit while a large task is being sent.)
"""

from __future__ import annotations

import multiprocessing
import numbers
import os
import signal
from collections.abc import Iterable, Iterator
from contextlib import contextmanager
from multiprocessing.pool import AsyncResult, Pool
from typing import TypeVar

from ..errors import SpecError

__all__ = ["PARALLEL_MIN_SAMPLES", "POLL_SECONDS", "check_workers", "worker_ranges",
           "worker_pool", "results_in_order", "results_as_completed"]

#: Monte Carlo sample count from which worker processes are used.
PARALLEL_MIN_SAMPLES = 50_000
#: Seconds between looks at the futures: a Ctrl-C is seen at least this often.
#: (A wait without a timeout may never see it: the signal can reach another
#: thread, and the main thread's wait is not interrupted.)
POLL_SECONDS = 0.1

_T = TypeVar("_T")


def worker_ranges(total: int, workers: int, chunk: int) -> list[tuple[int, int]]:
    """(start, stop) ranges of `total` samples for `workers` processes.

    About four ranges per worker, each a whole number of `chunk`s and so
    starting at a multiple of `chunk`: evaluated `chunk` at a time from its
    start, every sample meets the same arithmetic as in one process.

    Examples
    --------
    >>> worker_ranges(20, 1, 2)
    [(0, 6), (6, 12), (12, 18), (18, 20)]
    """
    chunks = -(-total // chunk)
    size = chunk * max(1, -(-chunks // (4 * workers)))
    return [(start, min(start + size, total)) for start in range(0, total, size)]


def check_workers(workers: int | None) -> int:
    """A worker count: None means every core; else a whole number >= 1."""
    if workers is None:
        return os.cpu_count() or 1
    # int is named beside numbers.Integral for mypy, which does not count it as one.
    if not (isinstance(workers, (int, numbers.Integral)) and not isinstance(workers, bool)
            and workers >= 1):
        raise SpecError(f"workers must be a whole number >= 1, not {workers!r}")
    return int(workers)


def _ignore_sigint() -> None:
    """Worker initialiser: the parent handles Ctrl-C and ends the workers."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)


@contextmanager
def worker_pool(workers: int) -> Iterator[Pool]:
    """A process pool that is terminated at once if the block raises.

    On a normal exit the pool is closed and joined after its tasks; on any
    exception (a Ctrl-C, an error in a task) it is terminated (tasks not
    started dropped, workers killed, joined) before the exception goes on,
    so no worker outlives the command.
    """
    pool = multiprocessing.get_context().Pool(processes=workers, initializer=_ignore_sigint)
    try:
        yield pool
    except BaseException:
        pool.terminate()
        pool.join()
        raise
    pool.close()
    pool.join()


def results_in_order(tasks: Iterable[AsyncResult[_T]]) -> Iterator[_T]:
    """Each task's result in the given order, waiting in short steps.

    Every wait has a timeout of :data:`POLL_SECONDS`, so the main thread
    runs Python often enough for a Ctrl-C to raise ``KeyboardInterrupt``.
    """
    for task in tasks:
        while not task.ready():
            task.wait(POLL_SECONDS)
        yield task.get()


def results_as_completed(tasks: Iterable[AsyncResult[_T]]) -> Iterator[AsyncResult[_T]]:
    """The tasks as they finish, looked at every :data:`POLL_SECONDS`."""
    pending = list(tasks)
    while pending:
        done = [task for task in pending if task.ready()]
        if not done:
            pending[0].wait(POLL_SECONDS)
            continue
        pending = [task for task in pending if task not in done]
        yield from done

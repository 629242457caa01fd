"""Worker processes for the Monte Carlo and the comparison, ended at once on Ctrl-C.

:func:`worker_pool` is a :class:`concurrent.futures.ProcessPoolExecutor`
whose workers ignore SIGINT (a Ctrl-C at a terminal reaches every process
of the group: the parent alone stops, and no worker prints a traceback)
and which, when the block inside it raises (``KeyboardInterrupt`` above
all), cancels the futures not started and terminates the workers instead
of waiting for their tasks. :func:`worker_ranges` cuts the samples into
ranges that start at multiples of a chunk, so a result does not depend on
the number of workers; :func:`check_workers` reads a worker count.
"""

from __future__ import annotations

import numbers
import os
import signal
from collections.abc import Iterator
from concurrent.futures import ProcessPoolExecutor
from contextlib import contextmanager

from ..errors import SpecError

__all__ = ["PARALLEL_MIN_SAMPLES", "check_workers", "worker_ranges", "worker_pool",
           "end_pool"]

#: Monte Carlo sample count from which worker processes are used.
PARALLEL_MIN_SAMPLES = 50_000
#: Seconds to wait for a terminated worker to go.
_JOIN_SECONDS = 2.0


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
    if not (isinstance(workers, numbers.Integral) and not isinstance(workers, bool) and workers >= 1):
        raise SpecError(f"workers must be a whole number >= 1, not {workers!r}")
    return int(workers)


def _ignore_sigint() -> None:
    """Worker initialiser: the parent handles Ctrl-C and ends the workers."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)


def end_pool(pool: ProcessPoolExecutor) -> None:
    """Cancel the futures not started and terminate the workers now.

    Uses the executor's own process table (``_processes``, the standard
    library's; :meth:`terminate_workers` from Python 3.14), then joins each
    worker briefly so none is left behind.
    """
    pool.shutdown(wait=False, cancel_futures=True)
    terminate = getattr(pool, "terminate_workers", None)
    processes = list((getattr(pool, "_processes", None) or {}).values())
    if terminate is not None:
        terminate()
    else:
        for process in processes:
            if process.is_alive():
                process.terminate()
    for process in processes:
        process.join(_JOIN_SECONDS)
        if process.is_alive():
            process.kill()
            process.join(_JOIN_SECONDS)


@contextmanager
def worker_pool(workers: int) -> Iterator[ProcessPoolExecutor]:
    """A process pool that is ended at once if the block raises.

    On a normal exit the pool is shut down after its tasks, as ``with
    ProcessPoolExecutor(...)`` does; on any exception (a Ctrl-C, an error in
    a task) the futures are cancelled and the workers terminated
    (:func:`end_pool`) before the exception goes on.
    """
    pool = ProcessPoolExecutor(max_workers=workers, initializer=_ignore_sigint)
    try:
        yield pool
    except BaseException:
        end_pool(pool)
        raise
    pool.shutdown(wait=True)

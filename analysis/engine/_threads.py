"""Threads over tiles: the engine's share of the cores inside one process.

numpy releases the GIL inside its elementwise loops, so the tiles of a segment (blocks
of samples, or slices of one large state) can be computed by several threads at once,
each with its own scratch arrays and bound operations (:mod:`haarline.engine._tiles` keeps
them per thread). Processes (``Context.workers``, :mod:`haarline.engine.batching`) share
work by sample blocks and cost a start-up and a copy of the results; threads cost neither
and help where there are few samples of many qubits, which a process pool cannot split.

How many threads the engine may use is a context variable, 1 unless a caller says
otherwise with :func:`engine_threads` (``haarline.analyze`` gives it the context's worker
count). Threads change speed only: every tile sees the same operations whichever thread
runs it, so the numbers are bit-identical for any thread count (tested).
"""

from __future__ import annotations

import contextvars
import threading
from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import Future, ThreadPoolExecutor
from contextlib import contextmanager
from typing import TypeVar

import numpy as np

__all__ = ["MAX_THREADS", "engine_threads", "in_threads", "thread_count"]

MAX_THREADS = 64
"""Most threads the engine uses in one process."""

_THREADS: contextvars.ContextVar[int] = contextvars.ContextVar("haarline_threads", default=1)

T = TypeVar("T")


def thread_count() -> int:
    """The threads the engine may use here (1 unless :func:`engine_threads` says more)."""
    return _THREADS.get()


@contextmanager
def engine_threads(count: int) -> Iterator[None]:
    """Let the engine use up to ``count`` threads inside the ``with`` block.

    Examples
    --------
    >>> with engine_threads(2):
    ...     thread_count()
    2
    >>> thread_count()
    1
    """
    if isinstance(count, bool) or not isinstance(count, int) or not 1 <= count <= MAX_THREADS:
        raise ValueError(f"expected a thread count from 1 to {MAX_THREADS}, got {count!r}")
    token = _THREADS.set(count)
    try:
        yield
    finally:
        _THREADS.reset(token)


_pools: dict[int, ThreadPoolExecutor] = {}
_pools_lock = threading.Lock()


def _pool(threads: int) -> ThreadPoolExecutor:
    """A pool of ``threads - 1`` helper threads (the caller is the last), kept for reuse."""
    with _pools_lock:
        pool = _pools.get(threads)
        if pool is None:
            pool = _pools[threads] = ThreadPoolExecutor(
                max_workers=threads - 1, thread_name_prefix="haarline-tiles"
            )
        return pool


def _with_buffer(task: Callable[[], T], bufsize: int) -> T:
    """Run ``task`` with the caller's ufunc buffer size (numpy keeps it per thread)."""
    old = np.getbufsize()
    np.setbufsize(bufsize)
    try:
        return task()
    finally:
        np.setbufsize(old)


def in_threads(tasks: Sequence[Callable[[], T]], threads: int) -> list[T]:
    """``[task() for task in tasks]``, spread over up to ``threads`` threads.

    The calling thread runs the first task itself; every task has finished (or failed)
    before this returns, so none is left writing into shared arrays.
    """
    if threads <= 1 or len(tasks) <= 1:
        return [task() for task in tasks]
    pool = _pool(min(threads, len(tasks)))
    bufsize = np.getbufsize()
    futures: list[Future[T]] = [pool.submit(_with_buffer, t, bufsize) for t in tasks[1:]]
    try:
        first = tasks[0]()
    finally:
        for future in futures:  # wait for all, even when the first failed
            future.exception()
    return [first, *(future.result() for future in futures)]

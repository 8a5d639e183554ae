"""Shared loops: simulate parameter vectors chunk by chunk, in worker processes or on Dask.

Sample ``k`` of a stream always gets row ``k`` of the stream's random parameters
(:mod:`haarline.engine.sampling`) and the engine applies the same operations to it whatever the
chunk, so a per-sample result is a pure function of ``(program, seed, stream, k)``.
:func:`sample_map` and :func:`block_map` use that: with ``workers > 1`` (or a Dask
scheduler in the context) they cut the samples into blocks of whole
:data:`~haarline.engine.sampling.BLOCK_SIZE` rows, compute the blocks in a pool of worker
processes (or as Dask tasks, :mod:`haarline.engine.cluster`) and put the results back in
sample order, so the numbers are bit-identical to a single worker's. Progress is reported
as blocks finish, in whatever order; when the progress callback raises (a cancelled job)
or the caller is interrupted, the blocks not yet finished are cancelled.
"""

from __future__ import annotations

import functools
import multiprocessing
import queue
import threading
from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import Future, ProcessPoolExecutor
from concurrent.futures.process import BrokenProcessPool
from typing import Any

import numpy as np
from haarline.circuit.program import Program
from haarline.engine import cluster
from haarline.engine.context import Context, Progress
from haarline.engine.draws import Draws
from haarline.engine.sampling import BLOCK_SIZE
from haarline.engine.statevector import Complexes, Plan, compile_program, rows_per_chunk, run
from numpy.typing import NDArray

__all__ = [
    "block_map",
    "blocks_for",
    "chunked_states",
    "sample_map",
    "worker_count",
]


BLOCKS_PER_WORKER = 2
"""Blocks handed to each worker (two, so that a slow block does not idle the others for
long; every block costs a round trip to a worker)."""

HEARTBEAT_SECONDS = 1.0
"""While blocks run, the progress callback is called at least this often (with unchanged
numbers if no block finished), so that a cancel request is seen within about a second."""


def worker_count(context: Context, program: Program, samples: int, per_sample: int = 1) -> int:
    """The workers a call actually uses: the context's, the cluster's, or 1 for small work.

    The work of a sample is estimated as ``per_sample`` circuit runs of ``G`` gates on
    ``2**n`` amplitudes; below ``context.parallel_from`` the call runs in-process. With a
    Dask scheduler it is the cluster's worker threads, at least 2 (so that even a one-thread
    cluster gets the blocks and this process only gathers).
    """
    work = samples * per_sample * max(1, len(program.operations)) << program.qubits
    if work < context.parallel_from:
        return 1
    if context.scheduler is not None:
        return max(2, cluster.threads(context.scheduler))
    return context.workers


def chunked_states(
    program: Program,
    *,
    count: int,
    copies: int,
    seed: int,
    stream: int | tuple[int, ...],
    memory_budget: int,
    dtype: type = np.complex128,
    progress: Progress | None = None,
    stage: str = "",
    start: int = 0,
    draws: Draws | None = None,
) -> Iterator[tuple[int, Complexes]]:
    """Yield ``(offset, states)`` with ``states`` of shape ``(rows, copies, 2**n)``.

    Sample ``start + offset + i`` uses row ``start + offset + i`` of the stream, of width
    ``copies * P``: ``copies`` independent parameter vectors (2 for fidelity pairs); with
    ``draws``, its angle vectors follow :class:`~haarline.engine.draws.Draws`. The
    chunk size follows from the memory budget; the numbers do not. The yielded array is
    reused for the next chunk: use it before asking for the next one.
    """
    plan: Plan = compile_program(program)
    draws = draws or Draws()
    rows = max(1, min(count, rows_per_chunk(program.qubits, memory_budget, dtype) // copies))
    buffer: Complexes = np.empty((rows * copies, 1 << program.qubits), dtype=dtype)
    done = 0
    if progress is not None:
        progress(stage, 0, count)
    while done < count:
        k = min(rows, count - done)
        thetas = draws.angles(program, seed, stream, start + done, k, copies)
        states = buffer[: k * copies]
        states.fill(0)
        states[:, 0] = 1.0
        run(plan, thetas, states=states)
        yield done, states.reshape(k, copies, -1)
        done += k
        if progress is not None:
            progress(stage, done, count)


ChunkValues = Callable[[Complexes, int], NDArray[np.float64]]
"""What :func:`sample_map` maps over chunks: ``func(states, n)``, states
``(rows, copies, 2**n)``, to one value (or row of values) per sample."""


def _sample_block(
    func: ChunkValues,
    program: Program,
    start: int,
    count: int,
    options: dict[str, Any],
) -> NDArray[np.float64]:
    """Values of samples ``start .. start+count-1`` (runs in a worker process)."""
    out: NDArray[np.float64] | None = None
    for offset, states in chunked_states(program, count=count, start=start, **options):
        values = func(states, program.qubits)
        if out is None:
            out = np.empty((count, *values.shape[1:]), dtype=values.dtype)
        out[offset : offset + len(values)] = values
    assert out is not None
    return out


def sample_map(
    func: ChunkValues,
    program: Program,
    *,
    count: int,
    copies: int,
    seed: int,
    stream: int | tuple[int, ...],
    context: Context,
    stage: str = "",
    draws: Draws | None = None,
) -> NDArray[np.float64]:
    """``func(states, n)`` for every sample, in sample order: an array ``(count, ...)``.

    ``func`` maps a chunk of states ``(rows, copies, 2**n)`` to one value (or row of
    values) per sample; it must be a module-level function when the context has more
    than one worker. With ``w`` worker processes each holds its own chunk, so each gets
    ``memory_budget / w``.
    """
    workers = worker_count(context, program, count, copies)
    if count <= 0:
        return np.empty(0)
    share = context.for_workers(workers)
    options: dict[str, Any] = {
        "copies": copies,
        "seed": seed,
        "stream": stream,
        "memory_budget": share.memory_budget,
        "dtype": share.dtype,
        "draws": draws,
    }
    if workers == 1:
        options.update(progress=context.progress, stage=stage)
        return _sample_block(func, program, 0, count, options)
    blocks = blocks_for(count, workers)
    parts = block_map(
        _sample_block,
        [(func, program, s, c, options) for s, c in blocks],
        context=context,
        stage=stage,
        sizes=[c for _, c in blocks],
    )
    return np.concatenate(parts)


def blocks_for(count: int, workers: int) -> list[tuple[int, int]]:
    """Cut ``count`` samples into ``(start, count)`` blocks of whole sampling blocks.

    Examples
    --------
    >>> blocks_for(300, 2)
    [(0, 128), (128, 128), (256, 44)]
    """
    if workers <= 1:
        return [(0, count)]
    per = -(-count // (workers * BLOCKS_PER_WORKER))
    per = max(BLOCK_SIZE, -(-per // BLOCK_SIZE) * BLOCK_SIZE)
    return [(s, min(per, count - s)) for s in range(0, count, per)]


_pools: dict[int, ProcessPoolExecutor] = {}
_pools_lock = threading.Lock()


def _pool(workers: int) -> ProcessPoolExecutor:
    """A process pool of ``workers`` processes, started once and kept for later calls.

    Workers are started with ``spawn`` (no state inherited from the caller), like the
    service's own pool; the first call pays their start-up (about a second). As with any
    ``spawn`` pool, a script that asks for ``workers > 1`` must guard its entry point
    with ``if __name__ == "__main__":``.
    """
    with _pools_lock:
        pool = _pools.get(workers)
        if pool is None:
            pool = _pools[workers] = ProcessPoolExecutor(
                max_workers=workers,
                mp_context=multiprocessing.get_context("spawn"),
            )
        return pool


class _PoolBlocks:
    """The futures of one call's blocks in the local process pool (as :class:`Blocks`)."""

    def __init__(self, futures: list[Future[Any]]):
        self.futures = futures
        self.finished: queue.SimpleQueue[int] = queue.SimpleQueue()
        for i, future in enumerate(futures):
            future.add_done_callback(functools.partial(self._done, i))

    def _done(self, i: int, _: Future[Any]) -> None:
        self.finished.put(i)

    def next_done(self, timeout: float) -> int:
        return self.finished.get(timeout=timeout)

    def result(self, i: int) -> Any:
        return self.futures[i].result()

    def cancel(self) -> None:
        """Cancel the blocks that have not started (running ones cannot be stopped)."""
        for future in self.futures:
            future.cancel()


def _gather(
    blocks: _PoolBlocks | cluster.Blocks,
    *,
    sizes: Sequence[int],
    progress: Progress | None,
    stage: str,
) -> list[Any]:
    """Results of the blocks in task order; progress as they finish; cancel on any error.

    A block sent again (its shared arguments were lost with a Dask worker) is waited for
    again. While nothing finishes, progress is repeated every :data:`HEARTBEAT_SECONDS`.
    """
    total = sum(sizes)
    out: list[Any] = [None] * len(sizes)
    left, done = len(sizes), 0
    try:
        while left:
            try:
                i = blocks.next_done(HEARTBEAT_SECONDS)
            except queue.Empty:
                if progress is not None:  # may raise: a cancelled job
                    progress(stage, done, total)
                continue
            value = blocks.result(i)
            if value is cluster.AGAIN:
                continue
            out[i] = value
            left -= 1
            done += sizes[i]
            if progress is not None:
                progress(stage, done, total)
    except BaseException:
        blocks.cancel()
        raise
    return out


def block_map(
    func: Callable[..., Any],
    tasks: Sequence[tuple[Any, ...]],
    *,
    context: Context,
    stage: str = "",
    sizes: Sequence[int] | None = None,
) -> list[Any]:
    """``[func(*task) for task in tasks]``, computed by the context's workers.

    ``func`` and the task arguments must be picklable (module-level functions, plain
    data). ``sizes`` (samples per task) drives the progress callback. With a Dask
    scheduler in the context the tasks run on its cluster; an argument that every task
    shares (the same object) travels once per worker.
    """
    workers, progress = context.workers, context.progress
    sizes = list(sizes) if sizes is not None else [1] * len(tasks)
    total = sum(sizes)
    if progress is not None:
        progress(stage, 0, total)
    if context.scheduler is not None and len(tasks) > 1:
        sent = cluster.Blocks(context.scheduler, func, tasks, stage)
        try:
            return _gather(sent, sizes=sizes, progress=progress, stage=stage)
        finally:
            sent.close()
    if workers == 1 or len(tasks) <= 1:
        out, done = [], 0
        for task, size in zip(tasks, sizes, strict=True):
            out.append(func(*task))
            done += size
            if progress is not None:
                progress(stage, done, total)
        return out
    pool = _pool(workers)
    futures: list[Future[Any]] = []
    try:
        futures = [pool.submit(func, *task) for task in tasks]
        return _gather(_PoolBlocks(futures), sizes=sizes, progress=progress, stage=stage)
    except BrokenProcessPool:
        with _pools_lock:  # a dead pool is not kept for the next call
            if _pools.get(workers) is pool:
                del _pools[workers]
        raise

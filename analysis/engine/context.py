"""How a computation runs, as one value: memory budget, precision, workers, progress.

Every sampled metric takes a :class:`Context` instead of separate keywords. Of its fields
only ``precision`` can move a number (by rounding, within the bounds measured in
``bench/precision.json``); the memory budget, the worker count and the Dask scheduler
change speed only, and the results are bit-identical for any of them
(``tests/test_context.py``, ``tests/test_dask_blocks.py``).

Examples
--------
>>> ctx = Context(workers=2, precision="single")
>>> ctx.dtype.__name__, ctx.workers
('complex64', 2)
>>> ctx.for_workers(2).memory_budget == ctx.memory_budget // 2
True
>>> Context(scheduler="tcp://10.0.0.5:8786").for_workers(8).memory_budget == ctx.memory_budget
True
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, replace
from typing import Literal

import numpy as np
from haarline.engine.cluster import check_address
from haarline.engine.statevector import DEFAULT_MEMORY_BUDGET
from haarline.errors import OptionError, Problem

__all__ = [
    "MAX_WORKERS",
    "MIN_MEMORY_BUDGET",
    "PARALLEL_WORK",
    "Context",
    "Precision",
    "Progress",
]

Progress = Callable[[str, int, int], None]
"""Progress callback: ``(stage, done, total)``."""

Precision = Literal["double", "single"]
"""Engine precision: ``complex128`` or ``complex64`` amplitudes."""

MAX_WORKERS = 64
"""Most worker processes a sampled metric may use."""

PARALLEL_WORK = 1 << 21
"""Default ``parallel_from``: gate applications x amplitudes below which a call runs
in-process even when workers are asked for, because a round trip to the pool costs more
than such work (the numbers are the same either way)."""

MIN_MEMORY_BUDGET = 1 << 16
"""The smallest memory budget accepted (64 KiB): below it every chunk is one state and the
engine spends its time in Python, not in arithmetic."""

_DTYPES: dict[str, type] = {"double": np.complex128, "single": np.complex64}


@dataclass(frozen=True, kw_only=True)
class Context:
    """How to compute (never what): one value passed through every sampled metric.

    Parameters
    ----------
    memory_budget : int
        Bytes for state batches (split between workers); speed only.
    precision : {"double", "single"}
        Amplitude precision of the engine.
    workers : int
        Processes that share the sampled work; the numbers are the same for any count.
    progress : callable, optional
        ``progress(stage, done, total)``; never sent to a worker process.
    parallel_from : int
        Work (gate applications x amplitudes) from which a call uses the workers; smaller
        calls run in-process. Speed only.
    scheduler : str, optional
        Address of a Dask scheduler, ``tcp://HOST:PORT``: the blocks of every call above
        ``parallel_from`` run as Dask tasks on its workers (:mod:`haarline.engine.cluster`)
        instead of local processes, so ``workers`` stays 1; the memory budget then holds
        for each task. Speed only.
    """

    memory_budget: int = DEFAULT_MEMORY_BUDGET
    precision: Precision = "double"
    workers: int = 1
    progress: Progress | None = None
    parallel_from: int = PARALLEL_WORK
    scheduler: str | None = None

    def __post_init__(self) -> None:
        problems = []
        w = self.workers
        if isinstance(w, bool) or not isinstance(w, int) or not 1 <= w <= MAX_WORKERS:
            problems.append(
                Problem("workers", f"expected an integer from 1 to {MAX_WORKERS}, got {w!r}")
            )
        b = self.memory_budget
        if isinstance(b, bool) or not isinstance(b, int) or b < MIN_MEMORY_BUDGET:
            problems.append(
                Problem(
                    "memory_budget",
                    f"got {b!r} bytes; at least {MIN_MEMORY_BUDGET} bytes (64 KiB) needed",
                )
            )
        f = self.parallel_from
        if isinstance(f, bool) or not isinstance(f, int) or f < 0:
            problems.append(Problem("parallel_from", f"expected an integer >= 0, got {f!r}"))
        if self.scheduler is not None:
            try:
                check_address(self.scheduler)
            except OptionError as exc:
                problems.extend(exc.problems)
            if w != 1 and not problems:
                problems.append(
                    Problem(
                        "workers",
                        f"got {w} with a Dask scheduler; the cluster's workers share the "
                        "blocks, so leave the local workers at 1",
                    )
                )
        if self.precision not in _DTYPES:
            problems.append(
                Problem("precision", f"got {self.precision!r}; expected double or single")
            )
        if problems:
            raise OptionError(problems)

    @property
    def dtype(self) -> type:
        """The numpy complex type of the amplitudes."""
        return _DTYPES[self.precision]

    def for_workers(self, workers: int) -> Context:
        """The context of one of ``workers`` processes (or Dask tasks).

        Its share of the memory budget (on a Dask cluster each task gets the whole
        budget: the tasks run on other machines), one worker, no scheduler (a block never
        sends blocks of its own) and no progress callback (which cannot cross a process
        boundary).
        """
        share = self.memory_budget if self.scheduler else self.memory_budget // workers
        return replace(
            self,
            memory_budget=max(MIN_MEMORY_BUDGET, share),
            workers=1,
            progress=None,
            scheduler=None,
        )

    def report(self, stage: str, done: int, total: int) -> None:
        """Call the progress callback, if there is one."""
        if self.progress is not None:
            self.progress(stage, done, total)

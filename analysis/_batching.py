"""Shared loop: simulate a stream of parameter vectors chunk by chunk."""

from __future__ import annotations

from collections.abc import Callable, Iterator

import numpy as np
from numpy.typing import NDArray

from .engine import Plan, compile_program, rows_per_chunk, run
from .program import Program
from .sampling import draw_angles

__all__ = ["Progress", "chunked_states"]

Progress = Callable[[str, int, int], None]
"""Progress callback: ``(stage, done, total)``."""


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
) -> Iterator[tuple[int, NDArray]]:
    """Yield ``(start, states)`` with ``states`` of shape ``(rows, copies, 2**n)``.

    Sample ``k`` (``start <= k < start + rows``) uses row ``k`` of the stream, of width
    ``copies * P``: ``copies`` independent parameter vectors (2 for fidelity pairs).
    The chunk size follows from the memory budget; the numbers do not.
    """
    plan: Plan = compile_program(program)
    p = program.parameters
    rows = max(1, rows_per_chunk(program.qubits, memory_budget, dtype) // copies)
    done = 0
    if progress is not None:
        progress(stage, 0, count)
    while done < count:
        k = min(rows, count - done)
        thetas = draw_angles(seed, stream, done, k, copies * p).reshape(k * copies, p)
        states = run(plan, thetas, dtype=dtype)
        yield done, states.reshape(k, copies, -1)
        done += k
        if progress is not None:
            progress(stage, done, count)

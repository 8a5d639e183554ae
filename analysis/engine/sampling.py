"""Random parameters drawn per fixed-size block, so results never depend on chunking.

Every random number haarline uses comes from a *stream* (one per purpose, see
:class:`Stream`) cut into blocks of :data:`BLOCK_SIZE` draws. Block ``b`` of stream
``s`` under seed ``seed`` uses the generator seeded by
``numpy.random.SeedSequence(seed, spawn_key=(s, b))`` — child ``b`` of child ``s`` of
``SeedSequence(seed)``, exactly what ``SeedSequence(seed).spawn(...)`` hands out.
Whatever batch or chunk size, worker count or machine, sample ``k`` of a stream always
gets the same parameters.
"""

from __future__ import annotations

from enum import IntEnum

import numpy as np
from numpy.typing import NDArray

__all__ = ["BLOCK_SIZE", "MAX_SEED", "Stream", "block_rng", "draw_angles", "draw_normal"]

BLOCK_SIZE = 64
"""Parameter vectors per block."""

MAX_SEED = 2**63 - 1
"""Largest seed accepted."""


class Stream(IntEnum):
    """Independent random streams, one per purpose."""

    EXPRESSIBILITY = 0
    ENTANGLEMENT = 1
    BOOTSTRAP = 2
    GRADIENTS = 3
    CAPACITY = 4
    LOSS = 5
    IDEALS = 6
    INPUTS = 7
    """Input features; a sub-stream per using stream (sample k's x beside its θ)."""
    FIXED = 8
    """The one parameter vector (or input vector) held fixed while the other varies."""
    KERNEL = 9
    SPECTRUM = 10


def _key(stream: int | tuple[int, ...]) -> tuple[int, ...]:
    return tuple(int(s) for s in stream) if isinstance(stream, tuple) else (int(stream),)


def block_rng(seed: int, stream: int | tuple[int, ...], block: int) -> np.random.Generator:
    """Generator for block ``block`` of stream ``stream``.

    A stream is a :class:`Stream` member, or a tuple starting with one and followed by
    sub-stream numbers (a scan point's qubit and layer counts, say): block ``b`` of
    ``(s, i, j)`` uses ``SeedSequence(seed, spawn_key=(s, i, j, b))``.

    Examples
    --------
    >>> a = block_rng(7, 1, 3).random()
    >>> b = np.random.Generator(np.random.PCG64(
    ...     np.random.SeedSequence(7).spawn(2)[1].spawn(4)[3])).random()
    >>> a == b
    True
    """
    sequence = np.random.SeedSequence(seed, spawn_key=(*_key(stream), block))
    return np.random.Generator(np.random.PCG64(sequence))


def draw_angles(
    seed: int, stream: int | tuple[int, ...], start: int, count: int, width: int
) -> NDArray[np.float64]:
    """Rows ``start .. start+count-1`` of a stream of i.i.d. uniform angles on [0, 2π).

    Returns
    -------
    ndarray of float, shape (count, width)

    Examples
    --------
    >>> whole = draw_angles(3, 0, 0, 100, 5)
    >>> np.array_equal(whole[40:90], draw_angles(3, 0, 40, 50, 5))
    True
    """
    return _rows(seed, stream, start, count, width, normal=False)


def draw_normal(
    seed: int, stream: int | tuple[int, ...], start: int, count: int, width: int
) -> NDArray[np.float64]:
    """Rows ``start .. start+count-1`` of a stream of i.i.d. standard normal numbers.

    Examples
    --------
    >>> whole = draw_normal(3, 7, 0, 100, 2)
    >>> np.array_equal(whole[63:70], draw_normal(3, 7, 63, 7, 2))
    True
    """
    return _rows(seed, stream, start, count, width, normal=True)


def _rows(
    seed: int, stream: int | tuple[int, ...], start: int, count: int, width: int, *, normal: bool
) -> NDArray[np.float64]:
    out = np.empty((count, width), dtype=float)
    if count == 0 or width == 0:
        return out
    first, last = start // BLOCK_SIZE, (start + count - 1) // BLOCK_SIZE
    for block in range(first, last + 1):
        rng = block_rng(seed, stream, block)
        if normal:
            rows = rng.standard_normal(size=(BLOCK_SIZE, width))
        else:
            rows = rng.uniform(0.0, 2 * np.pi, size=(BLOCK_SIZE, width))
        lo = max(start, block * BLOCK_SIZE)
        hi = min(start + count, (block + 1) * BLOCK_SIZE)
        out[lo - start : hi - start] = rows[lo - block * BLOCK_SIZE : hi - block * BLOCK_SIZE]
    return out

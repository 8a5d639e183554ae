"""Tiles: a segment's operations bound to scratch arrays, and the per-thread scratch pool.

A :class:`Tile` holds a segment's kernels as short lists of in-place numpy calls
(:mod:`haarline.engine._ops`) bound once to two scratch arrays of shape
``(2**len(Q), columns)`` (one row per value of the segment's qubits ``Q``) and two
temporaries; :mod:`haarline.engine._execute` gathers a tile of states into them, calls the
operations and writes the tile back. The arrays come from a small per-thread pool and the
bound tiles are kept per thread (an LRU), so a run allocates (and page-faults) almost
nothing and threads never share scratch memory. A tile of real dtype (``float64`` or
``float32``) takes the real parts of the constants: the engine binds one for segments whose
coefficients are all real.
"""

from __future__ import annotations

import threading
from typing import Any

import numpy as np
from haarline.engine._ops import Op, ops_2x2
from haarline.engine._records import (
    Amplitudes,
    BlockKind,
    Coef,
    Complexes,
    Form,
    Schedule,
    Segment,
    is_block,
)
from numpy.typing import NDArray

__all__ = ["TILE_AMPLITUDES", "Tile", "bound_tile", "power_of_two", "scratch"]

TILE_AMPLITUDES = 1 << 18
"""Amplitudes per tile (4 MiB in double precision; the kernels' temporaries add as much
again, and a permutation kernel a second tile). Measured on the reference machine, numpy's
per-call cost and its inner loops over short rows matter more than the cache level: 2**18
ran as fast as 2**17 and faster than L2-sized tiles. Speed only: the numbers never depend
on it."""


class _Pool:
    """Per-thread flat scratch arrays, shared by every bound tile of that thread.

    Arrays of any dtype (complex, or real for real tiles), hence ``NDArray[Any]``.
    """

    def __init__(self) -> None:
        self.arrays: dict[tuple[str, int, int], NDArray[Any]] = {}

    def get(self, dtype: np.dtype[Any], index: int, size: int) -> NDArray[Any]:
        key = (np.dtype(dtype).str, index, size)
        arr = self.arrays.get(key)
        if arr is None:
            arr = self.arrays[key] = np.empty(size, dtype=dtype)
        return arr


class Tile:
    """A segment's operations bound to scratch arrays of one tile shape."""

    def __init__(
        self,
        seg: Segment,
        forms: list[Form],
        columns: int,
        dtype: np.dtype[Any],
        pool: _Pool,
        size: int,
    ) -> None:
        rows = 1 << len(seg.qubits)
        self.rows, self.columns = rows, columns
        n_amp = rows * columns
        self.buffers = [pool.get(dtype, i, size)[:n_amp].reshape(rows, columns) for i in (0, 1)]
        self.temps = [pool.get(dtype, i, max(1, size // 2)) for i in (2, 3)]
        self.local = {q: i for i, q in enumerate(seg.qubits)}
        self.groups: list[list[Op]] = []  # operations of each kernel
        self.holder: list[int] = []  # which buffer holds the data after each kernel
        current = 0
        for form in forms:
            self.groups.append([])
            current = self._bind(form, current, dtype)
            self.holder.append(current)
        self.ops = [op for group in self.groups for op in group]
        self.final = current

    def _temp(self, i: int, shape: tuple[int, ...]) -> Amplitudes:
        size = int(np.prod(shape))
        return self.temps[i][:size].reshape(shape)

    def _halves(self, buf: Amplitudes, q: int) -> tuple[Amplitudes, Amplitudes]:
        k = len(self.local)
        p = self.local[q]
        v = buf.reshape(1 << p, 2, 1 << (k - p - 1), self.columns)
        return v[:, 0], v[:, 1]

    def _quarters(
        self, buf: Amplitudes, first: int, second: int
    ) -> dict[tuple[int, int], Amplitudes]:
        k = len(self.local)
        p1, p2 = self.local[first], self.local[second]
        lo, hi = min(p1, p2), max(p1, p2)
        v = buf.reshape(1 << lo, 2, 1 << (hi - lo - 1), 2, 1 << (k - hi - 1), self.columns)
        out: dict[tuple[int, int], Amplitudes] = {}
        for bf in (0, 1):
            for bs in (0, 1):
                b_lo, b_hi = (bf, bs) if p1 < p2 else (bs, bf)
                out[(bf, bs)] = v[:, b_lo, :, b_hi]
        return out

    def _bind(self, form: Form, current: int, dtype: np.dtype[Any]) -> int:
        buf = self.buffers[current]
        k = form.kernel
        add = self.groups[-1].append
        if form.kind == "perm":
            assert k.perm is not None and k.phase is not None
            identity = np.array_equal(k.perm, np.arange(len(k.perm)))
            values = k.phase.real if dtype.kind == "f" else k.phase  # real: checked before
            phase = None if np.all(k.phase == 1) else values.astype(dtype)[:, None]
            if identity:
                if phase is not None:

                    def rephase(
                        c: Amplitudes, buf: Amplitudes = buf, ph: Amplitudes = phase
                    ) -> None:
                        np.multiply(buf, ph, out=buf)

                    add(rephase)
                return current
            other = self.buffers[1 - current]
            source = k.perm.astype(np.intp)

            def permute(
                c: Amplitudes,
                src: Amplitudes = buf,
                dst: Amplitudes = other,
                perm: NDArray[np.intp] = source,
                ph: Amplitudes | None = phase,
            ) -> None:
                np.take(src, perm, axis=0, out=dst, mode="clip")
                if ph is not None:
                    np.multiply(dst, ph, out=dst)

            add(permute)
            return 1 - current
        if form.kind == "phase":
            start, rows = (_slot(x) for x in form.coefs)

            def phases(
                c: Amplitudes, buf: Amplitudes = buf, lo: int = start, hi: int = start + rows
            ) -> None:
                np.multiply(buf, c[lo:hi], out=buf)

            add(phases)
            return current
        if k.kind == "one":
            a, b = self._halves(buf, k.qubits[0])
            u, v = self._temp(0, a.shape), self._temp(1, a.shape)
            for op in ops_2x2(_block_kind(form), form.coefs, a, b, u, v):
                add(op)
            return current
        quarters = self._quarters(buf, *k.qubits)
        shape = quarters[(0, 0)].shape
        u, v = self._temp(0, shape), self._temp(1, shape)
        if form.controlled:  # the target's block, where the control is |1>
            a, b = quarters[(1, 0)], quarters[(1, 1)]
            for op in ops_2x2(_block_kind(form), form.coefs, a, b, u, v):
                add(op)
            return current
        if form.kind == "diag4":
            for key, r in zip([(0, 1), (1, 0), (1, 1)], form.coefs, strict=True):
                for op in ops_2x2("diag", (r,), quarters[key], quarters[key], u, v):
                    add(op)
            return current
        if form.kind == "swap":

            def swap(
                c: Amplitudes,
                x: Amplitudes = quarters[(0, 1)],
                y: Amplitudes = quarters[(1, 0)],
                t: Amplitudes = u,
            ) -> None:
                np.copyto(t, x)
                np.copyto(x, y)
                np.copyto(y, t)

            add(swap)
            return current
        if form.kind == "pairs":
            outer, inner = form.coefs
            for op in ops_2x2("shear", (outer, outer), quarters[(0, 0)], quarters[(1, 1)], u, v):
                add(op)
            for op in ops_2x2("shear", (inner, inner), quarters[(0, 1)], quarters[(1, 0)], u, v):
                add(op)
            return current
        if form.kind != "general4":
            raise ValueError(f"a two-qubit kernel cannot have the form {form.kind!r}")
        # general 4x4 (not used by today's gate table beyond swap, kept for new gates)
        order = [(0, 0), (0, 1), (1, 0), (1, 1)]
        subs = [quarters[key] for key in order]
        olds = [np.empty(shape, dtype=dtype) for _ in range(4)]
        entries = [[form.coefs[4 * i + j] for j in range(4)] for i in range(4)]
        real = dtype.kind == "f"  # a real tile: every constant is real (checked before)

        def general4(c: Amplitudes) -> None:
            for s, o in zip(subs, olds, strict=True):
                np.copyto(o, s)
            for i in range(4):
                subs[i][...] = 0
                for j in range(4):
                    e = entries[i][j]
                    if isinstance(e, complex):
                        if e == 0:
                            continue
                        np.multiply(olds[j], e.real if real else e, out=u)
                    else:
                        np.multiply(olds[j], c[e], out=u)
                    np.add(subs[i], u, out=subs[i])

        add(general4)
        return current


def _block_kind(form: Form) -> BlockKind:
    """The one-qubit block kind of a form bound to two halves (or quarters) of a tile."""
    if is_block(form.kind):
        return form.kind
    raise ValueError(f"a one-qubit block cannot have the form {form.kind!r}")


def _slot(coef: Coef) -> int:
    """A coefficient that must be a slot number (a row of the coefficient table)."""
    if isinstance(coef, complex):
        raise ValueError(f"expected a slot of the coefficient table, got the constant {coef}")
    return coef


class _PerThread(threading.local):
    """Each thread's scratch pool and bound tiles (set up on a thread's first use).

    ``tiles`` maps (schedule id, segment, columns, dtype, scratch size) to the schedule
    and its bound tile; the schedule is kept to tell a reused id from the same schedule.
    """

    def __init__(self) -> None:
        self.pool = _Pool()
        self.tiles: dict[tuple[int, int, int, str, int], tuple[Schedule, Tile]] = {}


_local = _PerThread()


def scratch(dtype: np.dtype[Any], index: int, size: int) -> Complexes:
    """A flat complex scratch array of ``size`` elements from the per-thread pool.

    Indices 0-3 are the tiles'; the gate-by-gate path uses 10 and up.
    """
    out: Complexes = _local.pool.get(dtype, index, power_of_two(size))[:size]
    return out


def bound_tile(
    schedule: Schedule, s: int, forms: list[Form], columns: int, dtype: np.dtype[Any], size: int
) -> Tile:
    """Bound operations of segment ``s`` for a tile width, reused between calls (LRU)."""
    pool, tiles = _local.pool, _local.tiles
    key = (id(schedule), s, columns, np.dtype(dtype).str, size)
    entry = tiles.pop(key, None)
    if entry is None or entry[0] is not schedule:
        entry = (schedule, Tile(schedule.segments[s], forms, columns, dtype, pool, size))
    tiles[key] = entry
    while len(tiles) > 64:
        tiles.pop(next(iter(tiles)))
    return entry[1]


def power_of_two(x: int) -> int:
    """Smallest power of two >= x (pool arrays come in a few sizes)."""
    return 1 << max(0, (x - 1).bit_length())

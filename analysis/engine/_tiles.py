"""Apply a :class:`~haarline.engine._fusion.Schedule` to a batch of states, one tile at a time.

For each segment the batch is visited in *tiles* of about :data:`TILE_AMPLITUDES`
amplitudes. A tile is gathered into a contiguous scratch array of shape
``(2**len(Q), columns)``: one row per value of the segment's qubits ``Q`` (in index
order), and one column per sample (circuits of up to 12 qubits: the whole state is one
column) or per value of the lowest qubits outside ``Q`` (larger circuits: one sample,
and every value of the remaining qubits is its own tile). Every kernel of the segment
then runs on the scratch array, which stays in the CPU caches, with long contiguous inner
loops whatever qubit it acts on, and the tile is written back. Memory is streamed twice
per segment instead of several times per gate. Scratch arrays come from a small
per-thread pool, so a run allocates (and page-faults) almost nothing.

Kernels whose form leaves out a per-sample factor (shear and diagonal forms, see
:mod:`haarline.engine._coefficients`) have it multiplied in when the tile is written back, a
copy that happens anyway. Should a sample's running factor fall below :func:`_tiny`
inside a segment (rotations at θ ≈ π), its column is rescaled right there, so nothing
overflows.

**Real arithmetic.** When every coefficient of a segment is real (``ry``, ``cz``, ``cx``,
``h``, ``x``, ``z``, ``swap``, … at any angles: the fixed matrices, permutation phases and
the block's coefficient table have no imaginary part) and the states are real (the
sampled metrics start from |0…0⟩; :func:`execute` looks once), the tile holds only the
real parts (``float64``, or ``float32`` in single precision) and every operation
multiplies by the real coefficients: half the bytes, and a quarter of the flops of a
complex multiply. The results are the same doubles: a complex product whose imaginary
parts are zero computes ``x·c - 0·0 = x·c`` for its real part, and sums add parts
separately.

Every amplitude of sample ``k`` sees the same floating-point operations in the same order
whatever the batch size, tile size or layout (numpy's elementwise loops give the same
result for an element wherever it sits in an array), so the numbers never depend on
chunking or on how samples are split between processes.
"""

from __future__ import annotations

import threading
from functools import partial
from typing import Any, Literal, TypeAlias

import numpy as np
from haarline.engine._coefficients import evaluate
from haarline.engine._ops import Op, ops_2x2
from haarline.engine._records import (
    Amplitudes,
    BlockKind,
    Coef,
    Complexes,
    Form,
    Plan,
    Schedule,
    Segment,
    is_block,
)
from haarline.engine._threads import in_threads, thread_count
from numpy.typing import NDArray

__all__ = ["BUFFER_SIZE", "COEFFICIENT_BYTES", "TILE_AMPLITUDES", "execute", "scratch"]

TILE_AMPLITUDES = 1 << 18
"""Amplitudes per tile (4 MiB in double precision; the kernels' temporaries add as much
again, and a permutation kernel a second tile). Measured on the reference machine, numpy's
per-call cost and its inner loops over short rows matter more than the cache level: 2**18
ran as fast as 2**17 and faster than L2-sized tiles. Speed only: the numbers never depend
on it."""

COEFFICIENT_BYTES = 16 << 20
"""Most bytes of per-sample coefficients evaluated at once (bounds the columns of a tile
of a long circuit on few qubits)."""

BUFFER_SIZE = 256
"""numpy's ufunc buffer size while a schedule runs. With the default (8192 elements)
numpy copies strided operands whose contiguous runs are shorter than about 4096
elements through its buffers, which makes an in-place multiply on a tile's half-view
three times slower; with 256 it works on them directly. Copies only: the numbers do not
change."""


THREAD_QUBITS = 10
"""Smallest circuit (in qubits) whose tiles are shared between threads: below it a tile's
operations are too short for a thread to win back what handing it over costs. Speed
only."""


def _tiny(dtype: np.dtype[Any]) -> float:
    """Running factor below which a sample's tile column is rescaled mid-segment."""
    double = np.dtype(dtype).itemsize == (8 if np.dtype(dtype).kind == "f" else 16)
    return 1e-150 if double else 1e-18


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


class _Tile:
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


# -- gather and scatter -------------------------------------------------------------------


_Run = Literal["f", "q", "w"]
"""A qubit's part in a tile layout: selects the tile (f), local row (q) or column (w)."""


def _layout(
    n: int, local: tuple[int, ...], tile_log: int
) -> tuple[tuple[int, ...], tuple[int, ...], int, int]:
    """How one state of a large circuit is cut into a segment's tiles.

    Returns the reshape of the state into runs of adjacent qubits, the transpose that
    puts the (tile-selecting, local, column) runs in that order, the number of selecting
    runs and the column count.
    """
    others = [q for q in range(n) if q not in local]
    width = max(0, min(len(others), tile_log - len(local)))
    columns = set(others[len(others) - width :])
    cls: list[_Run] = ["q" if q in local else ("w" if q in columns else "f") for q in range(n)]
    runs: list[tuple[_Run, int]] = []
    for c in cls:
        if runs and runs[-1][0] == c:
            runs[-1] = (c, runs[-1][1] + 1)
        else:
            runs.append((c, 1))
    shape = tuple(1 << size for _, size in runs)
    kinds: tuple[_Run, ...] = ("f", "q", "w")
    order = [i for kind in kinds for i, (c, _) in enumerate(runs) if c == kind]
    select = sum(1 for c, _ in runs if c == "f")
    return shape, tuple(order), select, 1 << width


class _PerThread(threading.local):
    """Each thread's scratch pool and bound tiles (set up on a thread's first use).

    ``tiles`` maps (schedule id, segment, columns, dtype, scratch size) to the schedule
    and its bound tile; the schedule is kept to tell a reused id from the same schedule.
    """

    def __init__(self) -> None:
        self.pool = _Pool()
        self.tiles: dict[tuple[int, int, int, str, int], tuple[Schedule, _Tile]] = {}


_local = _PerThread()


def scratch(dtype: np.dtype[Any], index: int, size: int) -> Complexes:
    """A flat complex scratch array of ``size`` elements from the per-thread pool.

    Indices 0-3 are the tiles'; the gate-by-gate path uses 10 and up.
    """
    out: Complexes = _local.pool.get(dtype, index, _power_of_two(size))[:size]
    return out


def _bound(
    schedule: Schedule, s: int, forms: list[Form], columns: int, dtype: np.dtype[Any], size: int
) -> _Tile:
    """Bound operations of segment ``s`` for a tile width, reused between calls (LRU)."""
    pool, tiles = _local.pool, _local.tiles
    key = (id(schedule), s, columns, np.dtype(dtype).str, size)
    entry = tiles.pop(key, None)
    if entry is None or entry[0] is not schedule:
        entry = (schedule, _Tile(schedule.segments[s], forms, columns, dtype, pool, size))
    tiles[key] = entry
    while len(tiles) > 64:
        tiles.pop(next(iter(tiles)))
    return entry[1]


def _power_of_two(x: int) -> int:
    """Smallest power of two >= x (pool arrays come in a few sizes)."""
    return 1 << max(0, (x - 1).bit_length())


def _real_dtype(dtype: np.dtype[Any]) -> np.dtype[Any]:
    """The real type of a complex type's parts (``complex128`` → ``float64``)."""
    return np.dtype(np.float32 if dtype.itemsize == 8 else np.float64)


def _real_constants(schedule: Schedule, s: int, forms: list[Form]) -> bool:
    """Whether every constant of segment ``s`` is real (kept with the schedule).

    The constants are fixed by the plan (the forms' structure never depends on the
    angles): fixed matrix entries, factors and permutation phases.
    """
    found = schedule.real.get(s)
    if found is None:
        found = True
        for form in forms:
            constants = [x for x in (*form.coefs, form.factor) if isinstance(x, complex)]
            if any(x.imag != 0 for x in constants):
                found = False
            phase = form.kernel.phase if form.kind == "perm" else None
            if phase is not None and np.any(phase.imag != 0):
                found = False
        schedule.real[s] = found
    return found


def _block(
    schedule: Schedule, s: int, forms: list[Form], table: Amplitudes, real_states: bool
) -> tuple[Amplitudes, np.dtype[Any]] | None:
    """The real coefficient table and tile type of a block, or None to run it complex."""
    if not real_states or not _real_constants(schedule, s, forms) or np.any(table.imag):
        return None
    return table.real, _real_dtype(table.dtype)  # a view: its rows are read in place


def _slots(plan: Plan, schedule: Schedule, s: int, dtype: np.dtype[Any]) -> int:
    """Coefficient slots of segment ``s`` (one dry evaluation, kept with the schedule)."""
    found = schedule.slots.get(s)
    if found is None:
        _, table = evaluate(plan, schedule.segments[s], np.zeros((1, plan.parameters)), dtype)
        found = schedule.slots[s] = table.shape[0]
    return found


# quoted: numpy's runtime `inexact` takes one type argument, its stubs two
Rescale: TypeAlias = "tuple[int, np.inexact[Any, Any]]"
"""A mid-segment rescale: after the kernel at this position, multiply by this value."""


def _scale(
    forms: list[Form], table: Amplitudes, dtype: np.dtype[Any]
) -> tuple[Amplitudes | None, dict[int, list[Rescale]]]:
    """Running per-sample factor of a segment, and rare mid-segment rescales.

    The factor has shape (w,) (or is None); the rescales ``{column: [(kernel position,
    multiplier), ...]}`` keep it above :func:`_tiny`.
    """
    tiny = _tiny(dtype)
    width = table.shape[1]
    scale: Amplitudes | None = None
    marks: dict[int, list[Rescale]] = {}
    for pos, form in enumerate(forms):
        f = form.factor
        if f is None:
            continue
        constant = f.real if isinstance(f, complex) and dtype.kind == "f" else f
        value = table[f] if isinstance(f, int) else np.full(width, constant, dtype=dtype)
        scale = value.copy() if scale is None else scale * value
        low = np.flatnonzero(np.abs(scale) < tiny)
        for i in low.tolist():
            marks.setdefault(i, []).append((pos, scale[i]))
        scale[low] = 1.0
    return scale, marks


def execute(
    plan: Plan,
    schedule: Schedule,
    thetas: NDArray[np.float64],
    states: Amplitudes,
    *,
    tile: int = TILE_AMPLITUDES,
) -> None:
    """Apply ``schedule`` in place to ``states`` (shape ``(B, 2**n)``, C-contiguous).

    ``tile`` (amplitudes per tile, a power of two) changes speed only, and so does the
    number of threads over tiles (:func:`haarline.engine._threads.engine_threads`).
    """
    if states.shape[0] == 0:
        return
    old = np.getbufsize()
    np.setbufsize(BUFFER_SIZE)
    real = not np.any(states.imag)  # one look: real segments keep real states real
    threads = thread_count()
    try:
        for s in range(len(schedule.segments)):
            if len(schedule.segments[s].qubits) == schedule.qubits:
                real = _by_samples(plan, schedule, s, thetas, states, tile, real, threads)
            else:
                real = _by_tiles(plan, schedule, s, thetas, states, tile, real, threads)
    finally:
        np.setbufsize(old)


def _by_samples(
    plan: Plan,
    schedule: Schedule,
    s: int,
    thetas: NDArray[np.float64],
    states: Amplitudes,
    tile: int,
    real: bool,
    threads: int,
) -> bool:
    """A segment over every qubit: tiles are blocks of samples, one column each.

    ``real``: the states are real. Returns whether they still are. With ``threads > 1``
    the blocks are cut so that each thread gets some, and run in threads.
    """
    seg = schedule.segments[s]
    n = schedule.qubits
    batch = states.shape[0]
    dtype = states.dtype
    slots = _slots(plan, schedule, s, dtype)
    limit = max(1, COEFFICIENT_BYTES // max(1, slots * dtype.itemsize))
    width = max(1, min(batch, max(64, tile >> n), limit))
    if threads > 1 and n >= THREAD_QUBITS:
        width = min(width, -(-batch // threads))
    else:
        threads = 1

    def one(b0: int) -> bool:
        b1 = min(batch, b0 + width)
        forms, table = evaluate(plan, seg, thetas[b0:b1], dtype)
        found = _block(schedule, s, forms, table, real)
        coefs, kind = found if found is not None else (table, dtype)
        work = _bound(schedule, s, forms, b1 - b0, kind, _power_of_two((b1 - b0) << n))
        block = states[b0:b1]
        np.copyto(work.buffers[0], (block.real if found is not None else block).T)
        scale, marks = _scale(forms, coefs, kind)
        rescales: list[tuple[int | None, Rescale]] = [(i, e) for i, es in marks.items() for e in es]
        _run_ops(work, coefs, rescales, column=True)
        out = work.buffers[work.final]
        if scale is None:
            np.copyto(block, out.T)
        else:
            np.multiply(out.T, scale[:, None], out=block)
        return found is not None

    starts = range(0, batch, width)
    return all(in_threads([partial(one, b0) for b0 in starts], threads)) and real


def _by_tiles(
    plan: Plan,
    schedule: Schedule,
    s: int,
    thetas: NDArray[np.float64],
    states: Amplitudes,
    tile: int,
    real: bool,
    threads: int,
) -> bool:
    """A segment of a larger circuit: tiles are slices of one sample's state.

    ``real``: the states are real. Returns whether they still are. With ``threads > 1``
    the tiles of a block (every sample's every slice) are shared out between threads.
    """
    seg = schedule.segments[s]
    n = schedule.qubits
    batch = states.shape[0]
    dtype = states.dtype
    shape, order, select, columns = _layout(n, seg.qubits, tile.bit_length() - 1)
    fshape = tuple(shape[i] for i in order[:select])
    inner = tuple(shape[i] for i in order[select:])
    ones = (1,) * len(inner)
    size = _power_of_two(columns << len(seg.qubits))
    slots = _slots(plan, schedule, s, dtype)
    width = max(1, min(batch, COEFFICIENT_BYTES // max(1, slots * dtype.itemsize)))
    stays = real
    for b0 in range(0, batch, width):
        b1 = min(batch, b0 + width)
        forms, table = evaluate(plan, seg, thetas[b0:b1], dtype)
        found = _block(schedule, s, forms, table, real)
        coefs, kind = found if found is not None else (table, dtype)
        stays = stays and found is not None
        scale, marks = _scale(forms, coefs, kind)
        items = [(i, f) for i in range(b1 - b0) for f in np.ndindex(*fshape)]

        def some(
            mine: list[tuple[int, tuple[int, ...]]],
            b0: int = b0,
            forms: list[Form] = forms,
            coefs: Amplitudes = coefs,
            kind: np.dtype[Any] = kind,
            real_tile: bool = found is not None,
            scale: Amplitudes | None = scale,
            marks: dict[int, list[Rescale]] = marks,
        ) -> None:
            work = _bound(schedule, s, forms, columns, kind, size)  # this thread's tile
            first = work.buffers[0].reshape(inner)
            out = work.buffers[work.final].reshape(inner)
            for i, f in mine:
                c = coefs[:, i : i + 1]
                events: list[tuple[int | None, Rescale]] = [(None, e) for e in marks.get(i, ())]
                part = states[b0 + i].reshape(shape).transpose(order)[f]
                np.copyto(first, part.real if real_tile else part)
                _run_ops(work, c, events, column=False)
                if scale is None:
                    np.copyto(part, out)
                else:
                    np.multiply(out, scale[i : i + 1].reshape(ones), out=part)

        share = threads if threads > 1 and n >= THREAD_QUBITS else 1
        per = -(-len(items) // share)
        in_threads([partial(some, items[k : k + per]) for k in range(0, len(items), per)], share)
    return stays


def _run_ops(
    tile: _Tile, c: Amplitudes, events: list[tuple[int | None, Rescale]], *, column: bool
) -> None:
    """Run a tile's operations.

    ``events`` are rare mid-segment rescales ``(column or None, (kernel position,
    multiplier))``.
    """
    if not events:
        for op in tile.ops:
            op(c)
        return
    by_pos: dict[int, list[tuple[int | None, np.inexact[Any, Any]]]] = {}
    for col, (pos, mult) in events:
        by_pos.setdefault(pos, []).append((col, mult))
    for pos, group in enumerate(tile.groups):
        for op in group:
            op(c)
        for col, mult in by_pos.get(pos, ()):
            buf = tile.buffers[tile.holder[pos]]
            part = buf[:, col] if column else buf
            np.multiply(part, mult, out=part)

"""Apply a :class:`~haarline.engine._fusion.Schedule` to a batch of states, one tile at a time.

For each segment the batch is visited in *tiles* of about
:data:`~haarline.engine._tiles.TILE_AMPLITUDES` amplitudes. A tile is gathered into a
contiguous scratch array of shape ``(2**len(Q), columns)``: one row per value of the
segment's qubits ``Q`` (in index order), and one column per sample (circuits of up to 12
qubits: the whole state is one column) or per value of the lowest qubits outside ``Q``
(larger circuits: one sample, and every value of the remaining qubits is its own tile).
Every kernel of the segment then runs on the scratch array, which stays in the CPU
caches, with long contiguous inner loops whatever qubit it acts on, and the tile is
written back. Memory is streamed twice per segment instead of several times per gate.
The scratch arrays and the operations bound to them live in
:mod:`haarline.engine._tiles`.

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

from typing import Any, Literal, TypeAlias

import numpy as np
from haarline.engine._coefficients import evaluate
from haarline.engine._records import Amplitudes, Form, Plan, Schedule
from haarline.engine._tiles import TILE_AMPLITUDES, Tile, bound_tile, power_of_two
from numpy.typing import NDArray

__all__ = ["BUFFER_SIZE", "COEFFICIENT_BYTES", "execute"]

COEFFICIENT_BYTES = 16 << 20
"""Most bytes of per-sample coefficients evaluated at once (bounds the columns of a tile
of a long circuit on few qubits)."""

BUFFER_SIZE = 256
"""numpy's ufunc buffer size while a schedule runs. With the default (8192 elements)
numpy copies strided operands whose contiguous runs are shorter than about 4096
elements through its buffers, which makes an in-place multiply on a tile's half-view
three times slower; with 256 it works on them directly. Copies only: the numbers do not
change."""


def _tiny(dtype: np.dtype[Any]) -> float:
    """Running factor below which a sample's tile column is rescaled mid-segment."""
    double = np.dtype(dtype).itemsize == (8 if np.dtype(dtype).kind == "f" else 16)
    return 1e-150 if double else 1e-18


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

    ``tile`` (amplitudes per tile, a power of two) changes speed only.
    """
    if states.shape[0] == 0:
        return
    old = np.getbufsize()
    np.setbufsize(BUFFER_SIZE)
    real = not np.any(states.imag)  # one look: real segments keep real states real
    try:
        for s in range(len(schedule.segments)):
            if len(schedule.segments[s].qubits) == schedule.qubits:
                real = _by_samples(plan, schedule, s, thetas, states, tile, real)
            else:
                real = _by_tiles(plan, schedule, s, thetas, states, tile, real)
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
) -> bool:
    """A segment over every qubit: tiles are blocks of samples, one column each.

    ``real``: the states are real. Returns whether they still are.
    """
    seg = schedule.segments[s]
    n = schedule.qubits
    batch = states.shape[0]
    dtype = states.dtype
    slots = _slots(plan, schedule, s, dtype)
    limit = max(1, COEFFICIENT_BYTES // max(1, slots * dtype.itemsize))
    width = max(1, min(batch, max(64, tile >> n), limit))
    stays = real
    for b0 in range(0, batch, width):
        b1 = min(batch, b0 + width)
        forms, table = evaluate(plan, seg, thetas[b0:b1], dtype)
        found = _block(schedule, s, forms, table, real)
        coefs, kind = found if found is not None else (table, dtype)
        stays = stays and found is not None
        work = bound_tile(schedule, s, forms, b1 - b0, kind, power_of_two((b1 - b0) << n))
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
    return stays


def _by_tiles(
    plan: Plan,
    schedule: Schedule,
    s: int,
    thetas: NDArray[np.float64],
    states: Amplitudes,
    tile: int,
    real: bool,
) -> bool:
    """A segment of a larger circuit: tiles are slices of one sample's state.

    ``real``: the states are real. Returns whether they still are.
    """
    seg = schedule.segments[s]
    n = schedule.qubits
    batch = states.shape[0]
    dtype = states.dtype
    shape, order, select, columns = _layout(n, seg.qubits, tile.bit_length() - 1)
    fshape = tuple(shape[i] for i in order[:select])
    inner = tuple(shape[i] for i in order[select:])
    ones = (1,) * len(inner)
    size = power_of_two(columns << len(seg.qubits))
    slots = _slots(plan, schedule, s, dtype)
    width = max(1, min(batch, COEFFICIENT_BYTES // max(1, slots * dtype.itemsize)))
    stays = real
    for b0 in range(0, batch, width):
        b1 = min(batch, b0 + width)
        forms, table = evaluate(plan, seg, thetas[b0:b1], dtype)
        found = _block(schedule, s, forms, table, real)
        coefs, kind = found if found is not None else (table, dtype)
        stays = stays and found is not None
        work = bound_tile(schedule, s, forms, columns, kind, size)
        first = work.buffers[0].reshape(inner)
        out = work.buffers[work.final].reshape(inner)
        scale, marks = _scale(forms, coefs, kind)
        for i in range(b1 - b0):
            c = coefs[:, i : i + 1]
            events: list[tuple[int | None, Rescale]] = [(None, e) for e in marks.get(i, ())]
            factor = None if scale is None else scale[i : i + 1].reshape(ones)
            view = states[b0 + i].reshape(shape).transpose(order)
            for f in np.ndindex(*fshape):
                part = view[f]
                np.copyto(first, part.real if found is not None else part)
                _run_ops(work, c, events, column=False)
                if factor is None:
                    np.copyto(part, out)
                else:
                    np.multiply(out, factor, out=part)
    return stays


def _run_ops(
    tile: Tile, c: Amplitudes, events: list[tuple[int | None, Rescale]], *, column: bool
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

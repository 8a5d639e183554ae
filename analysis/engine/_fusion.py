"""Compile a plan into fused kernels grouped into segments (the fast engine's program).

A :class:`~haarline.engine._records.Schedule` is a fixed function of the plan: the order
of its kernels, and how gates are fused into them, never depend on the batch size, chunk
size, memory budget or worker count, so neither do the numbers (the engine applies the
same floating-point operations to every amplitude of sample ``k`` however the work is
cut).

Three steps:

1. **Order.** Gates form a partial order: on each qubit, gates that act diagonally on it
   (diagonal gates, and controlled gates on their control) commute with each other, so a
   gate waits only for the last gate before it that does not commute. Any linear
   extension of this order is the same unitary.
2. **Segments.** For more than :data:`WHOLE_QUBITS` qubits the gates are cut into
   segments that each touch at most ``segment_capacity(n)`` qubits (a greedy light-cone
   walk: take every ready gate inside the segment's qubit set, else widen the set by the
   ready gate that adds the fewest qubits). The engine applies a segment to one
   cache-sized tile of the state at a time, so memory is streamed once per segment, not
   once per gate. For up to :data:`WHOLE_QUBITS` qubits there is one segment.
3. **Kernels.** Inside a segment, consecutive one-qubit gates on a qubit become one 2x2
   kernel (per-sample matrices multiplied, batched), and runs of fixed gates that map
   basis states to basis states (``x y z s sdg t tdg cx cy cz swap``, fixed-angle ``rz
   crz rzz``) become one permutation-with-phases of the segment's local index.
"""

from __future__ import annotations

import heapq
from collections.abc import Sequence

import numpy as np
from haarline.engine._records import Kernel, Plan, PlanStep, Schedule, Segment
from numpy.typing import NDArray

__all__ = [
    "SEGMENT_QUBITS",
    "TAIL_QUBITS",
    "WHOLE_QUBITS",
    "build_schedule",
    "segment_capacity",
]

SEGMENT_QUBITS = 10
"""Most qubits one segment of a larger circuit may touch (a tile then holds ``2**10``
local amplitudes per column). Circuits of up to :data:`WHOLE_QUBITS` qubits are one
segment. Speed only: on the reference machine 10 (with 256 columns per tile) ran 5-10%
faster than 11 or 12 at n = 18..22."""

WHOLE_QUBITS = 12
"""Circuits of up to this many qubits run as a single segment (one column per sample)."""

TAIL_QUBITS = 6
"""Qubits always left outside a segment of a larger circuit, so every tile keeps at least
``2**6`` contiguous amplitudes per row (numpy's inner loops stay long)."""


def segment_capacity(qubits: int) -> int:
    """Most qubits a segment touches for an ``qubits``-qubit circuit (a function of n only).

    Examples
    --------
    >>> [segment_capacity(n) for n in (4, 12, 13, 16, 18, 24)]
    [4, 12, 7, 10, 10, 10]
    """
    if qubits <= WHOLE_QUBITS:
        return qubits
    return min(SEGMENT_QUBITS, qubits - TAIL_QUBITS)


def _is_monomial(m: NDArray[np.complex128]) -> bool:
    """Whether a matrix has exactly one non-zero entry in every row and column."""
    nz = np.abs(m) > 1e-14
    return bool(np.all(nz.sum(axis=0) == 1) and np.all(nz.sum(axis=1) == 1))


def _full_fixed(step: PlanStep) -> NDArray[np.complex128] | None:
    """The full fixed matrix of a step (controlled gates expanded to 4x4), or None."""
    if step.fixed is None:
        return None
    if step.spec.target is not None:
        out = np.eye(4, dtype=complex)
        out[2:, 2:] = step.fixed
        return out
    return step.fixed


def _commuting_flags(step: PlanStep) -> tuple[bool, ...]:
    """Per qubit of the step: whether the gate acts diagonally on that qubit."""
    spec = step.spec
    if spec.diagonal:
        return (True,) * len(step.qubits)
    if spec.target is not None:
        return (True, False)
    return (False,) * len(step.qubits)


def _predecessors(steps: Sequence[PlanStep]) -> list[set[int]]:
    """Gate ``g`` waits for the last gate on each qubit that does not commute with it."""
    preds: list[set[int]] = [set() for _ in steps]
    last: dict[int, int] = {}  # qubit -> last gate acting non-diagonally on it
    group: dict[int, list[int]] = {}  # qubit -> diagonal-acting gates since then
    for g, step in enumerate(steps):
        for q, diag in zip(step.qubits, _commuting_flags(step), strict=True):
            if diag:
                if q in last:
                    preds[g].add(last[q])
                group.setdefault(q, []).append(g)
            else:
                if group.get(q):
                    preds[g].update(group[q])
                elif q in last:
                    preds[g].add(last[q])
                last[q] = g
                group[q] = []
        preds[g].discard(g)
    return preds


class _Graph:
    """Ready-set bookkeeping over the partial order."""

    def __init__(self, steps: Sequence[PlanStep]) -> None:
        self.steps = steps
        preds = _predecessors(steps)
        self.waiting = [len(p) for p in preds]
        self.after: list[list[int]] = [[] for _ in steps]
        for g, ps in enumerate(preds):
            for p in ps:
                self.after[p].append(g)
        self.ready = {g for g, w in enumerate(self.waiting) if w == 0}

    def take(self, g: int) -> None:
        self.ready.discard(g)
        for h in self.after[g]:
            self.waiting[h] -= 1
            if self.waiting[h] == 0:
                self.ready.add(h)


def _segments(steps: Sequence[PlanStep], cap: int) -> list[tuple[tuple[int, ...], list[int]]]:
    """Cut the gates into segments that each touch at most ``cap`` qubits."""
    graph = _Graph(steps)
    remaining = len(steps)
    out = []
    while remaining:
        local: set[int] = set()
        taken: list[int] = []
        while True:
            fits = sorted(g for g in graph.ready if set(steps[g].qubits) <= local)
            while fits:
                for g in fits:
                    graph.take(g)
                    taken.append(g)
                remaining -= len(fits)
                fits = sorted(g for g in graph.ready if set(steps[g].qubits) <= local)
            best = None
            for g in sorted(graph.ready):
                grow = set(steps[g].qubits) - local
                if len(local) + len(grow) <= cap and (best is None or len(grow) < best[0]):
                    best = (len(grow), g)
            if best is None:
                break
            local |= set(steps[best[1]].qubits)
        out.append((tuple(sorted(local)), taken))
    return out


ORDINARY, DIAGONAL, PERMUTING = 0, 1, 2
"""Ordering classes of gates: one-qubit gates and mixing two-qubit gates; diagonal
two-qubit gates; fixed non-diagonal two-qubit gates that permute basis states."""


def _gate_class(step: PlanStep) -> int:
    """The ordering class of a gate (see :data:`ORDINARY`)."""
    if len(step.qubits) == 1:
        return ORDINARY
    if step.spec.diagonal:
        return DIAGONAL
    full = _full_fixed(step)
    if full is not None and _is_monomial(full):
        return PERMUTING
    return ORDINARY


def _order(steps: Sequence[PlanStep], members: list[int]) -> list[int]:
    """Topological order of ``members`` that groups diagonal and permuting gates.

    It cycles: every ready ordinary gate, then every ready diagonal two-qubit gate, then
    every ready permuting gate, and so on, so that those form long runs.
    """
    inside = set(members)
    preds = _predecessors([steps[g] for g in members])
    local = {g: i for i, g in enumerate(members)}
    waiting = {g: len(preds[local[g]]) for g in members}
    after: dict[int, list[int]] = {g: [] for g in members}
    for g in members:
        for p in preds[local[g]]:
            after[members[p]].append(g)
    ready: list[list[int]] = [[], [], []]
    for g in members:
        if waiting[g] == 0:
            heapq.heappush(ready[_gate_class(steps[g])], g)
    order: list[int] = []
    phase = ORDINARY
    while len(order) < len(inside):
        while ready[phase]:
            g = heapq.heappop(ready[phase])
            order.append(g)
            for h in after[g]:
                waiting[h] -= 1
                if waiting[h] == 0:
                    heapq.heappush(ready[_gate_class(steps[h])], h)
        phase = (phase + 1) % 3
    return order


def _permutation_of(
    steps: Sequence[PlanStep], group: list[int], local: tuple[int, ...]
) -> tuple[NDArray[np.intp], NDArray[np.complex128]]:
    """``(perm, phase)`` of a run of fixed basis-permuting gates.

    Over the ``2**len(local)`` local basis states: ``out[j] = phase[j] * in[perm[j]]``.
    """
    k = len(local)
    pos = {q: k - 1 - i for i, q in enumerate(local)}  # bit position in the local index
    index = np.arange(1 << k)
    perm = index.copy()
    phase = np.ones(1 << k, dtype=complex)
    for g in group:
        step = steps[g]
        m = _full_fixed(step)
        assert m is not None
        bits = [pos[q] for q in step.qubits]
        d = len(bits)
        # the gate maps column c to row r(c) with value v(c)
        rows = np.argmax(np.abs(m) > 1e-14, axis=0)
        vals = m[rows, np.arange(m.shape[0])]
        inv_rows = np.empty_like(rows)
        inv_rows[rows] = np.arange(len(rows))
        # for output index j: its gate-row r, the gate-column c feeding it, the input index
        r = np.zeros_like(index)
        for i, b in enumerate(bits):
            r |= ((index >> b) & 1) << (d - 1 - i)
        c = inv_rows[r]
        source = index.copy()
        for i, b in enumerate(bits):
            bit = (c >> (d - 1 - i)) & 1
            source = (source & ~(1 << b)) | (bit << b)
        phase = vals[c] * phase[source]
        perm = perm[source]
    return perm, phase


_MONOMIAL_COST = {"cz": 0.25, "z": 0.5, "s": 0.5, "sdg": 0.5, "t": 0.5, "tdg": 0.5}


def _kernels(
    steps: Sequence[PlanStep], order: list[int], local: tuple[int, ...], phases: bool
) -> list[Kernel]:
    """Fuse one-qubit gates per qubit and join runs of fixed basis-permuting gates.

    With ``phases`` (segmented schedules), runs of diagonal kernels are joined too.
    """
    raw: list[Kernel] = []
    open_blocks: dict[int, list[int]] = {}

    def flush(q: int) -> None:
        block = open_blocks.pop(q, None)
        if block:
            raw.append(Kernel(kind="one", qubits=(q,), steps=tuple(block)))

    previous_class = None
    for g in order:
        step = steps[g]
        cls = _gate_class(step)
        if cls != ORDINARY and previous_class == ORDINARY:
            for q in sorted(open_blocks):
                flush(q)
        previous_class = cls
        if len(step.qubits) == 1:
            open_blocks.setdefault(step.qubits[0], []).append(g)
            continue
        for q in step.qubits:
            flush(q)
        raw.append(Kernel(kind="two", qubits=step.qubits, steps=(g,)))
    for q in sorted(open_blocks):
        flush(q)

    def permuting(kernel: Kernel) -> bool:
        fulls = [_full_fixed(steps[g]) for g in kernel.steps]
        return all(m is not None and _is_monomial(m) for m in fulls)

    out: list[Kernel] = []
    run: list[Kernel] = []

    def close_run() -> None:
        if not run:
            return
        group = [g for k in run for g in k.steps]
        perm, phase = _permutation_of(steps, group, local)
        cost_joined = (0.0 if np.array_equal(perm, np.arange(len(perm))) else 1.0) + (
            0.0 if np.all(phase == 1) else 1.0
        )
        cost_apart = sum(
            _MONOMIAL_COST.get(steps[g].spec.name, 0.75 if len(steps[g].qubits) == 2 else 1.5)
            for g in group
        )
        if len(run) > 1 and cost_joined < cost_apart:
            qubits = tuple(sorted({q for k in run for q in k.qubits}))
            out.append(
                Kernel(kind="perm", qubits=qubits, steps=tuple(group), perm=perm, phase=phase)
            )
        else:
            out.extend(run)
        run.clear()

    for kernel in raw:
        if permuting(kernel):
            run.append(kernel)
        else:
            close_run()
            out.append(kernel)
    close_run()
    return _join_diagonal(steps, out) if phases else out


def _diagonal_kernel(steps: Sequence[PlanStep], kernel: Kernel) -> bool:
    if kernel.kind == "perm":
        assert kernel.perm is not None
        return bool(np.array_equal(kernel.perm, np.arange(len(kernel.perm))))
    return all(steps[g].spec.diagonal for g in kernel.steps)


def _join_diagonal(steps: Sequence[PlanStep], kernels: list[Kernel]) -> list[Kernel]:
    """Join runs of two or more diagonal kernels into one ``"phase"`` kernel."""
    out: list[Kernel] = []
    run: list[Kernel] = []

    def close() -> None:
        if len(run) > 1:
            qubits = tuple(sorted({q for k in run for q in k.qubits}))
            group = tuple(g for k in run for g in k.steps)
            out.append(Kernel(kind="phase", qubits=qubits, steps=group, members=tuple(run)))
        else:
            out.extend(run)
        run.clear()

    for kernel in kernels:
        if _diagonal_kernel(steps, kernel):
            run.append(kernel)
        else:
            close()
            out.append(kernel)
    close()
    return out


def build_schedule(plan: Plan, *, capacity: int | None = None) -> Schedule:
    """Compile a :class:`~haarline.engine._records.Plan` into segments of fused kernels.

    ``capacity`` (most qubits per segment) defaults to :func:`segment_capacity`; tests
    pass small values to exercise the segmented path on small circuits.
    """
    steps = plan.steps
    n = plan.qubits
    cap = segment_capacity(n) if capacity is None else max(2, min(capacity, n))
    if cap >= n:
        parts = [(tuple(range(n)), list(range(len(steps))))]
    else:
        parts = _segments(steps, cap)
    segments = []
    for local, members in parts:
        if not members:
            continue
        order = _order(steps, members)
        kernels = _kernels(steps, order, local, phases=len(local) < n)
        segments.append(Segment(local, tuple(kernels)))
    return Schedule(n, tuple(segments))

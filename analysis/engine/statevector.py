"""Batched statevector engine.

A batch of ``B`` states is a complex array of shape ``(B, 2**n)``; amplitude index
``i = Σ_q b_q 2**(n-1-q)``, so qubit 0 is the leftmost (most significant) bit of every
bitstring (textbook order). No ``2**n × 2**n`` matrix is ever built.

Two paths apply a plan:

* :func:`run` applies the plan's fused *schedule* (:mod:`haarline.engine._fusion`, built once
  per plan): consecutive one-qubit gates on a qubit multiplied into one 2x2, runs of
  fixed basis-permuting gates (``cz`` rings, ``cx`` ladders, ``s``, ``t``, …) as one
  permutation with phases, and the whole segment of gates applied to one cache-sized
  tile of the batch at a time (:mod:`haarline.engine._execute`), so that memory is streamed once
  per segment instead of several times per gate;
* :func:`apply_step`, :func:`apply_generator` and :func:`apply_pauli` apply one gate of
  the plan (its :class:`PlanStep`) in place, by viewing the batch as
  ``(B, 2**q, 2, 2**(n-q-1))`` or ``(B, 2**lo, 2, 2**(hi-lo-1), 2, 2**(n-hi-1))`` and
  combining the sub-blocks; adjoint differentiation and the state Jacobian need every
  gate on its own and use this path.

Both are checked against a dense ``np.kron`` reference in the tests; they agree to
rounding. Each applies the same operations to a sample whatever the batch, so a row's
result never depends on the batch size or chunking.

Peak working memory is about :data:`WORK_FACTOR` states per batch row (the fused path
adds a fixed few MiB of tile scratch per thread); :func:`rows_per_chunk` turns a memory
budget into a batch size.
"""

from __future__ import annotations

import threading
from typing import Any

import numpy as np
from haarline.circuit.gates import generator_matrix, lookup
from haarline.circuit.program import Program
from haarline.engine._execute import execute
from haarline.engine._fusion import build_schedule
from haarline.engine._records import Complexes, Plan, PlanStep, Schedule
from haarline.engine._tiles import scratch
from haarline.errors import LimitError
from numpy.typing import NDArray

__all__ = [
    "CHUNK_AMPLITUDES",
    "DEFAULT_MEMORY_BUDGET",
    "WORK_FACTOR",
    "Plan",
    "Complexes",
    "PlanStep",
    "apply_generator",
    "apply_pauli",
    "apply_step",
    "batch_bytes",
    "compile_program",
    "rows_per_chunk",
    "run",
    "step_matrix",
    "zero_states",
]

DEFAULT_MEMORY_BUDGET = 1 << 30
"""Default memory budget for state batches, in bytes (1 GiB)."""

WORK_FACTOR = 3
"""States' worth of memory per batch row at peak (the state, one copy, temporaries)."""

CHUNK_AMPLITUDES = 1 << 18
"""Preferred amplitudes per chunk of samples (4 MiB in double precision). The fused path
cuts a chunk into cache-sized tiles itself, so larger chunks measured no faster; the
gate-by-gate path works on pieces of at most :data:`PIECE_AMPLITUDES`. Speed only; the
numbers never depend on it."""


PLAN_CACHE_SIZE = 32
"""Compiled plans kept per process, so that repeated metric calls on one program (and
every block a worker process receives) reuse its plan and fused schedule."""

_plans: dict[Program, Plan] = {}
_plans_lock = threading.Lock()


def compile_program(program: Program) -> Plan:
    """Precompute what does not depend on the parameters.

    Equal programs share one plan (a small per-process cache): the fused schedule is
    built once, not on every call.
    """
    try:
        with _plans_lock:
            plan = _plans.pop(program, None)
            if plan is not None:
                _plans[program] = plan
                return plan
    except TypeError:  # an unhashable program (hand-built): no caching
        return _compile(program)
    plan = _compile(program)
    with _plans_lock:
        _plans[program] = plan
        while len(_plans) > PLAN_CACHE_SIZE:
            _plans.pop(next(iter(_plans)))
    return plan


def _compile(program: Program) -> Plan:
    steps = []
    for op in program.operations:
        spec = lookup(op.gate)
        if op.gate == "i":
            continue
        matrix_spec = lookup(spec.target) if spec.target is not None else spec
        fixed = None
        if op.param is None:
            fixed = matrix_spec.matrix(np.array([op.angle or 0.0]))[0]
        steps.append(PlanStep(spec, op.qubits, op.param, fixed))
    # the angle vector holds the trainable parameters, then the encoded inputs
    return Plan(program.qubits, program.columns, tuple(steps))


def zero_states(batch: int, qubits: int, dtype: type = np.complex128) -> Complexes:
    """Return ``batch`` copies of |0…0⟩, shape ``(batch, 2**qubits)``."""
    states: Complexes = np.zeros((batch, 1 << qubits), dtype=dtype)
    states[:, 0] = 1.0
    return states


def rows_per_chunk(qubits: int, memory_budget: int, dtype: type = np.complex128) -> int:
    """Largest batch size whose working memory fits ``memory_budget`` bytes.

    Raises
    ------
    LimitError
        If even one state does not fit.

    Examples
    --------
    >>> rows_per_chunk(10, 1 << 30), rows_per_chunk(10, 3 * 16 * 1024 * 5)
    (256, 5)
    """
    per_row = WORK_FACTOR * (1 << qubits) * np.dtype(dtype).itemsize
    rows = int(memory_budget // per_row)
    if rows < 1:
        raise LimitError(
            f"one {qubits}-qubit state needs {per_row / 2**20:.0f} MiB of working memory; "
            f"the memory budget is {memory_budget / 2**20:.0f} MiB"
        )
    return max(1, min(rows, CHUNK_AMPLITUDES >> qubits))


def batch_bytes(qubits: int, memory_budget: int, copies: int = 1) -> int:
    """Peak bytes of the double-precision state batches a sampled loop holds.

    ``copies`` states per sample (three for adjoint gradients). Used by the work estimate
    (:mod:`haarline.report.workload`) before anything runs.

    Examples
    --------
    >>> batch_bytes(10, 1 << 30) == WORK_FACTOR * 256 * 1024 * 16
    True
    """
    rows = min(rows_per_chunk(qubits, memory_budget), max(1, CHUNK_AMPLITUDES >> qubits))
    return WORK_FACTOR * copies * rows * (1 << qubits) * np.dtype(np.complex128).itemsize


def _coefficient(
    m: Complexes, i: int, j: int, ndim: int
) -> Complexes | np.complexfloating[Any, Any]:
    """Entry (i, j) of a fixed (d, d) or batched (B, d, d) matrix, shaped to broadcast."""
    if m.ndim == 2:
        entry: np.complexfloating[Any, Any] = m[i, j]
        return entry
    return m[:, i, j].reshape((-1,) + (1,) * (ndim - 1))


PIECE_AMPLITUDES = 1 << 15
"""Largest piece of a view the gate-by-gate path works on at once (its temporaries stay
in the caches and in the small scratch pool)."""


def _pieces(
    views: tuple[Complexes, ...], m: Complexes
) -> list[tuple[tuple[Complexes, ...], Complexes]]:
    """Cut equal-shaped views (and a batched matrix along with them) into small pieces.

    Pieces hold at most :data:`PIECE_AMPLITUDES` elements; the cut runs along the first
    axis longer than one.
    """
    size = views[0].size
    if size <= PIECE_AMPLITUDES:
        return [(views, m)]
    axis = next(i for i, d in enumerate(views[0].shape) if d > 1)
    length = views[0].shape[axis]
    step = max(1, length * PIECE_AMPLITUDES // size)
    out: list[tuple[tuple[Complexes, ...], Complexes]] = []
    for lo in range(0, length, step):
        index = (slice(None),) * axis + (slice(lo, lo + step),)
        part = m[lo : lo + step] if (axis == 0 and m.ndim == 3) else m
        out.extend(_pieces(tuple(v[index] for v in views), part))
    return out


def _apply_2x2(s0: Complexes, s1: Complexes, m: Complexes, diagonal: bool) -> None:
    """In place: (s0, s1) ← m @ (s0, s1), with m fixed or one per batch row.

    Large views go piece by piece; temporaries come from the per-thread scratch pool (a
    fresh array per call costs more in page faults than the arithmetic).
    """
    if s0.size > PIECE_AMPLITUDES:
        for (a, b), part in _pieces((s0, s1), m):
            _apply_2x2(a, b, part, diagonal)
        return
    nd = s0.ndim
    if diagonal:
        s0 *= _coefficient(m, 0, 0, nd)
        s1 *= _coefficient(m, 1, 1, nd)
        return
    if s0.ndim >= 2 and 1 < s0.shape[-1] <= 4 and s0.strides[-1] == s0.itemsize:
        # runs of 2 or 4 amplitudes make numpy's inner loops tiny: walk the run instead
        for r in range(s0.shape[-1]):
            _apply_2x2(s0[..., r], s1[..., r], m, diagonal)
        return
    m00, m01 = _coefficient(m, 0, 0, nd), _coefficient(m, 0, 1, nd)
    m10, m11 = _coefficient(m, 1, 0, nd), _coefficient(m, 1, 1, nd)
    t = scratch(s0.dtype, 10, s0.size).reshape(s0.shape)
    u = scratch(s0.dtype, 11, s0.size).reshape(s0.shape)
    np.multiply(s0, m00, out=t)
    np.multiply(s1, m01, out=u)
    np.add(t, u, out=t)
    np.multiply(s0, m10, out=u)
    np.multiply(s1, m11, out=s1)
    np.add(s1, u, out=s1)
    np.copyto(s0, t)


def step_matrix(
    step: PlanStep, angles: NDArray[np.float64] | None, dtype: type, *, adjoint: bool = False
) -> Complexes:
    """Matrix of one plan step: fixed ``(d, d)`` or batched ``(B, d, d)``.

    For controlled gates this is the one-qubit matrix acting on the target.
    """
    spec = step.spec
    if step.fixed is not None:
        m = step.fixed
    else:
        if angles is None:
            raise ValueError(f"step {spec.name} on {step.qubits} needs angles")
        source = lookup(spec.target) if spec.target is not None else spec
        m = source.matrix(angles)
    if adjoint:
        m = np.conj(np.swapaxes(m, -1, -2))
    return m.astype(dtype, copy=False)


def apply_step(
    states: Complexes,
    n: int,
    step: PlanStep,
    angles: NDArray[np.float64] | None,
    *,
    adjoint: bool = False,
) -> None:
    """Apply one plan step (or its inverse, ``adjoint=True``) to a batch in place."""
    _apply_matrix(states, n, step, step_matrix(step, angles, states.dtype.type, adjoint=adjoint))


_PAULI_MATRICES = {
    "X": np.array([[0, 1], [1, 0]], dtype=complex),
    "Y": np.array([[0, -1j], [1j, 0]], dtype=complex),
    "Z": np.array([[1, 0], [0, -1]], dtype=complex),
}


def apply_pauli(states: Complexes, n: int, paulis: str, qubits: tuple[int, ...]) -> None:
    """Multiply a batch in place by the Pauli string ``paulis`` on ``qubits``."""
    b = states.shape[0]
    for letter, q in zip(paulis, qubits, strict=True):
        if letter == "I":
            continue
        v = states.reshape(b, 1 << q, 2, 1 << (n - q - 1))
        if letter == "Z":
            np.negative(v[:, :, 1, :], out=v[:, :, 1, :])
            continue
        for (s0, s1), _ in _pieces((v[:, :, 0, :], v[:, :, 1, :]), _PAULI_MATRICES[letter]):
            t = scratch(states.dtype, 10, s0.size).reshape(s0.shape)
            if letter == "X":  # swap the halves
                np.copyto(t, s1)
                np.copyto(s1, s0)
            else:  # Y: (s0, s1) <- (-i s1, i s0)
                np.multiply(s1, -1j, out=t)
                np.multiply(s0, 1j, out=s1)
            np.copyto(s0, t)


def apply_generator(states: Complexes, n: int, step: PlanStep) -> None:
    """Multiply a batch in place by the generator ``G`` of a rotation step.

    A rotation is ``exp(-i θ G / 2)``; for a controlled rotation ``G = |1⟩⟨1|_c ⊗ P_t``,
    so the half of the batch where the control is |0⟩ is set to zero. A gate whose ``G``
    is not one Pauli string (``cphase``) is multiplied by the dense ``G`` of its
    ``generator_sum``, as a gate matrix is applied.
    """
    spec = step.spec
    if spec.generator is None:
        if not spec.generator_sum:
            raise ValueError(f"gate {spec.name} has no generator")
        g = generator_matrix(spec.name).astype(states.dtype.type)
        _apply_matrix(states, n, step, g)
        return
    if spec.target is None:
        apply_pauli(states, n, spec.generator, step.qubits)
        return
    control, target = step.qubits
    b = states.shape[0]
    v = states.reshape(b, 1 << control, 2, 1 << (n - control - 1))
    v[:, :, 0, :] = 0.0
    apply_pauli(states, n, spec.generator, (target,))


def _apply_matrix(states: Complexes, n: int, step: PlanStep, m: Complexes) -> None:
    spec = step.spec
    b = states.shape[0]
    if spec.qubits == 1:
        (q,) = step.qubits
        v = states.reshape(b, 1 << q, 2, 1 << (n - q - 1))
        _apply_2x2(v[:, :, 0, :], v[:, :, 1, :], m, spec.diagonal)
        return
    first, second = step.qubits
    lo, hi = min(first, second), max(first, second)
    v = states.reshape(b, 1 << lo, 2, 1 << (hi - lo - 1), 2, 1 << (n - hi - 1))

    def block(bf: int, bs: int) -> Complexes:
        b_lo, b_hi = (bf, bs) if first < second else (bs, bf)
        return v[:, :, b_lo, :, b_hi, :]

    if spec.target is not None:  # controlled one-qubit gate: act where control is |1>
        _apply_2x2(block(1, 0), block(1, 1), m, spec.diagonal)
        return
    subs = [block(0, 0), block(0, 1), block(1, 0), block(1, 1)]
    nd = subs[0].ndim
    if spec.diagonal:
        for k in range(4):
            subs[k] *= _coefficient(m, k, k, nd)
        return
    for pieces, part in _pieces(tuple(subs), m):
        _apply_4x4(pieces, part)


def _apply_4x4(subs: tuple[Complexes, ...], m: Complexes) -> None:
    """In place: the four quarter views ``subs`` (|00>, |01>, |10>, |11>) <- m @ subs."""
    nd = subs[0].ndim
    size = subs[0].size
    old = [scratch(subs[0].dtype, 12 + k, size).reshape(subs[0].shape) for k in range(4)]
    term = scratch(subs[0].dtype, 11, size).reshape(subs[0].shape)
    for sub, o in zip(subs, old, strict=True):
        np.copyto(o, sub)
    for k in range(4):
        subs[k][...] = 0
        for j in range(4):
            c = _coefficient(m, k, j, nd)
            if np.ndim(c) == 0 and c == 0:
                continue
            np.multiply(old[j], c, out=term)
            np.add(subs[k], term, out=subs[k])


def run(
    program: Program | Plan,
    thetas: NDArray[np.float64],
    *,
    states: Complexes | None = None,
    dtype: type = np.complex128,
) -> Complexes:
    """Run a program on a batch of parameter vectors.

    Parameters
    ----------
    program : Program or Plan
        The expanded circuit (a :class:`Plan` skips recompiling).
    thetas : ndarray of float, shape (B, C)
        One angle vector per batch row: the ``P`` trainable parameters, then, for a
        circuit with inputs, its encoded input angles (``C = program.columns``; build them
        with :meth:`~haarline.circuit.program.Program.angles`).
    states : ndarray of complex, shape (B, 2**n), optional
        Initial states, updated in place; default |0…0⟩ for every row.
    dtype : numpy complex dtype
        ``complex128`` (default) or ``complex64``.

    Returns
    -------
    ndarray of complex, shape (B, 2**n)
        The final states (the same array as ``states`` when it was given).

    Examples
    --------
    >>> from haarline.circuit.model import parse_circuit
    >>> from haarline.circuit.program import expand
    >>> p = expand(parse_circuit({"qubits": 2, "layer": [{"gate": "h", "on": [0]},
    ...                                                  {"gate": "cx", "on": "chain"}]}))
    >>> np.round(run(p, np.zeros((1, 0))), 4)
    array([[0.7071+0.j, 0.    +0.j, 0.    +0.j, 0.7071+0.j]])
    """
    plan = program if isinstance(program, Plan) else compile_program(program)
    thetas = np.asarray(thetas, dtype=float)
    if thetas.ndim != 2 or thetas.shape[1] != plan.parameters:
        raise ValueError(
            f"thetas must have shape (B, {plan.parameters}), got {thetas.shape}"
            + (
                ""
                if plan.parameters == thetas.shape[-1]
                else "; a circuit with inputs runs on Program.angles(thetas, x)"
            )
        )
    n = plan.qubits
    if states is None:
        states = zero_states(thetas.shape[0], n, dtype)
    elif states.shape != (thetas.shape[0], 1 << n):
        raise ValueError(f"states must have shape {(thetas.shape[0], 1 << n)}, got {states.shape}")
    if states.flags.c_contiguous and states.dtype in (np.complex128, np.complex64):
        execute(plan, schedule(plan), thetas, states)
        return states
    return run_steps(plan, thetas, states)


def schedule(plan: Plan) -> Schedule:
    """The fused schedule of a plan (built on first use and kept in ``plan.memo``)."""
    found = plan.memo.schedule
    if found is None:
        found = plan.memo.schedule = build_schedule(plan)
    return found


def run_steps(plan: Plan, thetas: NDArray[np.float64], states: Complexes) -> Complexes:
    """Apply the plan gate by gate, in place (the unfused path)."""
    for step in plan.steps:
        angles = thetas[:, step.param] if step.param is not None else None
        apply_step(states, plan.qubits, step, angles)
    return states

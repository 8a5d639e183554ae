"""Batched statevector engine.

A batch of ``B`` states is a complex array of shape ``(B, 2**n)``; amplitude index
``i = Σ_q b_q 2**(n-1-q)``, so qubit 0 is the leftmost (most significant) bit of every
bitstring (textbook order). Every gate is applied in place by viewing the batch as
``(B, 2**q, 2, 2**(n-q-1))`` (one qubit) or ``(B, 2**lo, 2, 2**(hi-lo-1), 2, 2**(n-hi-1))``
(two qubits) and combining the sub-blocks with per-sample coefficients; no ``2**n × 2**n``
matrix is ever built. Diagonal gates are a multiply of each sub-block; controlled gates
touch only the half of the batch where the control is |1⟩.

Peak working memory is about :data:`WORK_FACTOR` states per batch row;
:func:`rows_per_chunk` turns a memory budget into a batch size.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .errors import LimitError
from .gates import GateSpec, lookup
from .program import Program

__all__ = [
    "CHUNK_AMPLITUDES",
    "DEFAULT_MEMORY_BUDGET",
    "WORK_FACTOR",
    "Plan",
    "PlanStep",
    "apply_generator",
    "apply_pauli",
    "apply_step",
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
"""Preferred amplitudes per chunk (4 MiB in double precision): a chunk that stays in the
CPU caches through every gate runs several times faster than one streamed from memory.
Speed only; the numbers never depend on it."""


@dataclass(frozen=True)
class PlanStep:
    """One gate of a plan: its table row, qubits, parameter index and fixed matrix."""

    spec: GateSpec
    qubits: tuple[int, ...]
    param: int | None
    fixed: NDArray[np.complex128] | None  # matrix of a fixed gate or fixed-angle rotation


@dataclass(frozen=True)
class Plan:
    """A program prepared for the engine (matrices of fixed gates precomputed)."""

    qubits: int
    parameters: int
    steps: tuple[PlanStep, ...]


def compile_program(program: Program) -> Plan:
    """Precompute what does not depend on the parameters."""
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
    return Plan(program.qubits, program.parameters, tuple(steps))


def zero_states(batch: int, qubits: int, dtype: type = np.complex128) -> NDArray:
    """Return ``batch`` copies of |0…0⟩, shape ``(batch, 2**qubits)``."""
    states: NDArray = np.zeros((batch, 1 << qubits), dtype=dtype)
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


def _coefficient(m: NDArray, i: int, j: int, ndim: int) -> NDArray | complex:
    """Entry (i, j) of a fixed (d, d) or batched (B, d, d) matrix, shaped to broadcast."""
    if m.ndim == 2:
        return m[i, j]
    return m[:, i, j].reshape((-1,) + (1,) * (ndim - 1))


def _apply_2x2(s0: NDArray, s1: NDArray, m: NDArray, diagonal: bool) -> None:
    """In place: (s0, s1) ← m @ (s0, s1), with m fixed or one per batch row."""
    nd = s0.ndim
    if diagonal:
        s0 *= _coefficient(m, 0, 0, nd)
        s1 *= _coefficient(m, 1, 1, nd)
        return
    m00, m01 = _coefficient(m, 0, 0, nd), _coefficient(m, 0, 1, nd)
    m10, m11 = _coefficient(m, 1, 0, nd), _coefficient(m, 1, 1, nd)
    t = m00 * s0
    t += m01 * s1
    s1 *= m11
    s1 += m10 * s0
    s0[...] = t


def step_matrix(
    step: PlanStep, angles: NDArray | None, dtype: type, *, adjoint: bool = False
) -> NDArray:
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
    states: NDArray, n: int, step: PlanStep, angles: NDArray | None, *, adjoint: bool = False
) -> None:
    """Apply one plan step (or its inverse, ``adjoint=True``) to a batch in place."""
    _apply_matrix(states, n, step, step_matrix(step, angles, states.dtype.type, adjoint=adjoint))


_PAULI_MATRICES = {
    "X": np.array([[0, 1], [1, 0]], dtype=complex),
    "Y": np.array([[0, -1j], [1j, 0]], dtype=complex),
    "Z": np.array([[1, 0], [0, -1]], dtype=complex),
}


def apply_pauli(states: NDArray, n: int, paulis: str, qubits: tuple[int, ...]) -> None:
    """Multiply a batch in place by the Pauli string ``paulis`` on ``qubits``."""
    b = states.shape[0]
    for letter, q in zip(paulis, qubits, strict=True):
        if letter == "I":
            continue
        v = states.reshape(b, 1 << q, 2, 1 << (n - q - 1))
        _apply_2x2(v[:, :, 0, :], v[:, :, 1, :], _PAULI_MATRICES[letter], letter == "Z")


def apply_generator(states: NDArray, n: int, step: PlanStep) -> None:
    """Multiply a batch in place by the generator ``G`` of a rotation step.

    A rotation is ``exp(-i θ G / 2)``; for a controlled rotation ``G = |1⟩⟨1|_c ⊗ P_t``,
    so the half of the batch where the control is |0⟩ is set to zero.
    """
    spec = step.spec
    if spec.generator is None:
        raise ValueError(f"gate {spec.name} has no generator")
    if spec.target is None:
        apply_pauli(states, n, spec.generator, step.qubits)
        return
    control, target = step.qubits
    b = states.shape[0]
    v = states.reshape(b, 1 << control, 2, 1 << (n - control - 1))
    v[:, :, 0, :] = 0.0
    apply_pauli(states, n, spec.generator, (target,))


def _apply_matrix(states: NDArray, n: int, step: PlanStep, m: NDArray) -> None:
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

    def block(bf: int, bs: int) -> NDArray:
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
    old = [s.copy() for s in subs]
    for k in range(4):
        acc = None
        for j in range(4):
            c = _coefficient(m, k, j, nd)
            if np.ndim(c) == 0 and c == 0:
                continue
            term = c * old[j]
            acc = term if acc is None else acc + term
        subs[k][...] = 0 if acc is None else acc


def run(
    program: Program | Plan,
    thetas: NDArray[np.float64],
    *,
    states: NDArray | None = None,
    dtype: type = np.complex128,
) -> NDArray:
    """Run a program on a batch of parameter vectors.

    Parameters
    ----------
    program : Program or Plan
        The expanded circuit (a :class:`Plan` skips recompiling).
    thetas : ndarray of float, shape (B, P)
        One parameter vector per batch row; ``P = program.parameters`` (may be 0).
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
    >>> from analysis.circuit import parse_circuit
    >>> from analysis.program import expand
    >>> p = expand(parse_circuit({"qubits": 2, "layer": [{"gate": "h", "on": [0]},
    ...                                                  {"gate": "cx", "on": "chain"}]}))
    >>> np.round(run(p, np.zeros((1, 0))), 4)
    array([[0.7071+0.j, 0.    +0.j, 0.    +0.j, 0.7071+0.j]])
    """
    plan = program if isinstance(program, Plan) else compile_program(program)
    thetas = np.asarray(thetas, dtype=float)
    if thetas.ndim != 2 or thetas.shape[1] != plan.parameters:
        raise ValueError(f"thetas must have shape (B, {plan.parameters}), got {thetas.shape}")
    n = plan.qubits
    if states is None:
        states = zero_states(thetas.shape[0], n, dtype)
    elif states.shape != (thetas.shape[0], 1 << n):
        raise ValueError(f"states must have shape {(thetas.shape[0], 1 << n)}, got {states.shape}")
    for step in plan.steps:
        angles = thetas[:, step.param] if step.param is not None else None
        apply_step(states, n, step, angles)
    return states

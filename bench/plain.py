"""Deliberately plain statevector simulators: the baselines of the naive and peer ratios.

This is the way a first notebook does it: one state at a time, every gate turned into a
full ``2**n x 2**n`` matrix with ``np.kron`` and multiplied onto the state vector. The
gate matrices are written out here from their textbook definitions (rotations
``exp(-iθG/2) = cos(θ/2) I - i sin(θ/2) G``), independently of ``haarline.circuit.gates``.
Qubit 0 is the leftmost ``np.kron`` factor, the project's convention.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from haarline.circuit.program import Program

I2 = np.eye(2, dtype=complex)
X = np.array([[0, 1], [1, 0]], dtype=complex)
Y = np.array([[0, -1j], [1j, 0]], dtype=complex)
Z = np.array([[1, 0], [0, -1]], dtype=complex)
H = np.array([[1, 1], [1, -1]], dtype=complex) / np.sqrt(2)
S = np.diag([1, 1j])
T = np.diag([1, np.exp(1j * np.pi / 4)])
FIXED = {
    "i": I2,
    "h": H,
    "x": X,
    "y": Y,
    "z": Z,
    "s": S,
    "sdg": S.conj(),
    "t": T,
    "tdg": T.conj(),
    "sx": H @ S @ H,
}
PAULI = {"X": X, "Y": Y, "Z": Z}


def rotation(paulis: str, theta: float) -> np.ndarray:
    """``exp(-iθG/2)`` for a Pauli string ``G`` (``G² = I``)."""
    g = PAULI[paulis[0]]
    for letter in paulis[1:]:
        g = np.kron(g, PAULI[letter])
    return np.cos(theta / 2) * np.eye(len(g)) - 1j * np.sin(theta / 2) * g


def controlled(u: np.ndarray) -> np.ndarray:
    """The two-qubit gate that applies ``u`` to the second qubit when the first is |1>."""
    out = np.eye(4, dtype=complex)
    out[2:, 2:] = u
    return out


def gate(name: str, theta: float | None) -> np.ndarray:
    """Textbook matrix of a gate, in the basis ``|b_first b_second>``."""
    if name in FIXED:
        return FIXED[name]
    if name in ("cx", "cnot", "cy", "cz"):
        return controlled(PAULI[name[-1].upper()])
    if name == "swap":
        return np.eye(4, dtype=complex)[[0, 2, 1, 3]]
    if theta is None:
        raise ValueError(f"gate {name!r} needs an angle")
    if name in ("rx", "ry", "rz"):
        return rotation(name[1].upper(), theta)
    if name in ("rxx", "ryy", "rzz"):
        return rotation(name[1].upper() * 2, theta)
    if name in ("crx", "cry", "crz"):
        return controlled(rotation(name[2].upper(), theta))
    raise KeyError(name)


def full_matrix(m: np.ndarray, qubits: tuple[int, ...], n: int) -> np.ndarray:
    """The ``2**n x 2**n`` matrix of a one- or two-qubit gate, built with ``np.kron``."""
    if len(qubits) == 1:
        factors = [I2] * n
        factors[qubits[0]] = m
        out = factors[0]
        for f in factors[1:]:
            out = np.kron(out, f)
        return out
    out = np.zeros((2**n, 2**n), dtype=complex)
    for r in range(4):
        for c in range(4):
            if m[r, c] == 0:
                continue
            factors = [I2] * n
            for pos, q in enumerate(qubits):
                e = np.zeros((2, 2), dtype=complex)
                e[(r >> (1 - pos)) & 1, (c >> (1 - pos)) & 1] = 1.0
                factors[q] = e
            term = factors[0]
            for f in factors[1:]:
                term = np.kron(term, f)
            out += m[r, c] * term
    return out


def state(program: Program, theta: np.ndarray) -> np.ndarray:
    """One state: every operation's dense matrix applied to |0...0>."""
    n = program.qubits
    psi = np.zeros(2**n, dtype=complex)
    psi[0] = 1.0
    for op in program.operations:
        angle = op.angle if op.param is None else theta[op.param]
        psi = full_matrix(gate(op.gate, angle), op.qubits, n) @ psi
    return psi


def fidelities(program: Program, pairs: np.ndarray) -> np.ndarray:
    """``|<ψ(θ)|ψ(φ)>|²`` for rows ``[θ, φ]`` of ``pairs`` (shape ``(K, 2P)``)."""
    p = program.parameters
    out = np.empty(len(pairs))
    for k, row in enumerate(pairs):
        a = state(program, row[:p])
        b = state(program, row[p:])
        out[k] = abs(np.vdot(a, b)) ** 2
    return out


def _contract(psi: np.ndarray, m: np.ndarray, qubits: tuple[int, ...]) -> np.ndarray:
    """Apply a one- or two-qubit matrix to a state held as an ``n``-axis tensor."""
    k = len(qubits)
    gate_tensor = m.reshape((2,) * (2 * k))
    out = np.tensordot(gate_tensor, psi, axes=(list(range(k, 2 * k)), list(qubits)))
    return np.moveaxis(out, list(range(k)), list(qubits))


def tensordot_state(program: Program, theta: np.ndarray) -> np.ndarray:
    """One state, every gate contracted into the ``(2,)*n`` tensor with ``np.tensordot``.

    The way a practitioner who knows numpy writes it: no ``2**n x 2**n`` matrix, but still
    one state and one numpy call per gate at a time.
    """
    n = program.qubits
    psi = np.zeros((2,) * n, dtype=complex)
    psi[(0,) * n] = 1.0
    for op in program.operations:
        angle = op.angle if op.param is None else theta[op.param]
        psi = _contract(psi, gate(op.gate, angle), op.qubits)
    return psi.reshape(-1)


def tensordot_fidelities(program: Program, pairs: np.ndarray) -> np.ndarray:
    """``|<ψ(θ)|ψ(φ)>|²`` per row ``[θ, φ]``, with :func:`tensordot_state`."""
    p = program.parameters
    out = np.empty(len(pairs))
    for k, row in enumerate(pairs):
        out[k] = (
            abs(np.vdot(tensordot_state(program, row[:p]), tensordot_state(program, row[p:]))) ** 2
        )
    return out

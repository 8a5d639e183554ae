"""A slow, obviously correct statevector simulator for cross-checking the engine.

Every gate becomes a full 2**n x 2**n matrix built with np.kron, applied to one state at a
time. Gate matrices are written out here from the textbook definitions (Nielsen & Chuang,
Quantum Computation and Quantum Information, 2000, ch. 4), independently of
haarline.circuit.gates, with rotations taken as scipy.linalg.expm(-1j * theta / 2 * G).
"""

from __future__ import annotations

import numpy as np
from scipy.linalg import expm

I2 = np.eye(2, dtype=complex)
X = np.array([[0, 1], [1, 0]], dtype=complex)
Y = np.array([[0, -1j], [1j, 0]], dtype=complex)
Z = np.array([[1, 0], [0, -1]], dtype=complex)
PAULI = {"I": I2, "X": X, "Y": Y, "Z": Z}

FIXED_1Q = {
    "i": I2,
    "h": np.array([[1, 1], [1, -1]], dtype=complex) / np.sqrt(2),
    "x": X,
    "y": Y,
    "z": Z,
    "s": np.diag([1, 1j]),
    "sdg": np.diag([1, -1j]),
    "t": np.diag([1, np.exp(1j * np.pi / 4)]),
    "tdg": np.diag([1, np.exp(-1j * np.pi / 4)]),
    # sqrt(X) = H S H (Nielsen & Chuang exercise 4.2-style identity)
    "sx": None,
}
FIXED_1Q["sx"] = FIXED_1Q["h"] @ FIXED_1Q["s"] @ FIXED_1Q["h"]


def rot(generator: str, theta: float) -> np.ndarray:
    g = PAULI[generator[0]]
    for c in generator[1:]:
        g = np.kron(g, PAULI[c])
    return expm(-0.5j * theta * g)


def controlled(u: np.ndarray) -> np.ndarray:
    out = np.eye(4, dtype=complex)
    out[2:, 2:] = u
    return out


def gate(name: str, theta: float | None = None) -> np.ndarray:
    """Matrix in the basis |b_first b_second> of the listed qubits."""
    if name in FIXED_1Q:
        return FIXED_1Q[name]
    if name in ("rx", "ry", "rz"):
        return rot(name[1].upper(), theta)
    if name in ("rxx", "ryy", "rzz"):
        return rot(name[1].upper() * 2, theta)
    if name in ("cx", "cy", "cz"):
        return controlled(PAULI[name[1].upper()])
    if name in ("crx", "cry", "crz"):
        return controlled(rot(name[2].upper(), theta))
    if name == "cphase":  # controlled phase shift diag(1, 1, 1, e^{i theta}) (ch. 4.3)
        return controlled(np.diag([1, np.exp(1j * theta)]))
    if name == "swap":
        return np.array([[1, 0, 0, 0], [0, 0, 1, 0], [0, 1, 0, 0], [0, 0, 0, 1]], dtype=complex)
    raise KeyError(name)


def embed(m: np.ndarray, qubits: tuple[int, ...], n: int) -> np.ndarray:
    """Full 2**n matrix of a k-qubit gate on `qubits` (qubit 0 = leftmost kron factor)."""
    k = len(qubits)
    full = np.zeros((2**n, 2**n), dtype=complex)
    for r in range(2**k):
        for c in range(2**k):
            if m[r, c] == 0:
                continue
            factors = [I2] * n
            for pos, q in enumerate(qubits):
                rb = (r >> (k - 1 - pos)) & 1
                cb = (c >> (k - 1 - pos)) & 1
                e = np.zeros((2, 2), dtype=complex)
                e[rb, cb] = 1.0
                factors[q] = e
            term = factors[0]
            for f in factors[1:]:
                term = np.kron(term, f)
            # positions not in `qubits` carry identity; the sum over (r, c) covers the gate
            full += m[r, c] * term
    return full


def simulate(program, theta: np.ndarray) -> np.ndarray:
    """One state: apply every operation's dense matrix to |0...0>."""
    n = program.qubits
    psi = np.zeros(2**n, dtype=complex)
    psi[0] = 1.0
    for op in program.operations:
        angle = op.angle if op.param is None else theta[op.param]
        psi = embed(gate(op.gate, angle), op.qubits, n) @ psi
    return psi

"""The gate table: every gate haarline knows, as data.

Each :class:`GateSpec` row gives the gate's arity, whether it takes an angle, whether it
is diagonal in the computational basis, whether it is a controlled one-qubit gate, and a
function returning its matrix for a batch of angles. The engine, the tests and the
generated gate reference all read this one table, so adding a row is all it takes to add
a gate (the tests loop over every row).

Conventions
-----------
Rotations are ``exp(-i θ G / 2)`` with ``G`` the Pauli string in ``generator``:
``rx(θ) = exp(-i θ X / 2)``, ``rzz(θ) = exp(-i θ Z⊗Z / 2)``. Every gate with an angle
also gives ``G`` as a sum of Pauli strings in ``generator_sum``; for ``cphase``, the one
gate whose ``G`` is not a single Pauli string, that sum is all there is:
``cphase(θ) = diag(1, 1, 1, e^{iθ}) = exp(iθ |11⟩⟨11|)``, so
``G = -2 |11⟩⟨11| = (-II + IZ + ZI - ZZ) / 2`` (with ``|1⟩⟨1| = (I - Z) / 2``; its
eigenvalues are 0 and -2, so ``G / 2`` has two eigenvalues one apart, as a Pauli
string's ±1/2 are). Two-qubit matrices are
written in the basis ``|b_first b_second⟩`` of the qubits in the order the step lists
them (index ``2 b_first + b_second``); for controlled gates the first qubit is the
control, and the one-qubit gate ``target`` acts on the second when the control is |1⟩.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from functools import cache

import numpy as np
from numpy.typing import NDArray

__all__ = ["ALIASES", "GATES", "GateSpec", "gate_matrix", "generator_matrix", "lookup"]

Matrix = NDArray[np.complex128]

_S2 = 1.0 / np.sqrt(2.0)
_FIXED_1Q: dict[str, list[list[complex]]] = {
    "i": [[1, 0], [0, 1]],
    "h": [[_S2, _S2], [_S2, -_S2]],
    "x": [[0, 1], [1, 0]],
    "y": [[0, -1j], [1j, 0]],
    "z": [[1, 0], [0, -1]],
    "s": [[1, 0], [0, 1j]],
    "sdg": [[1, 0], [0, -1j]],
    "t": [[1, 0], [0, np.exp(1j * np.pi / 4)]],
    "tdg": [[1, 0], [0, np.exp(-1j * np.pi / 4)]],
    "sx": [[0.5 + 0.5j, 0.5 - 0.5j], [0.5 - 0.5j, 0.5 + 0.5j]],
}

_PAULI = {
    "I": np.eye(2, dtype=complex),
    "X": np.array(_FIXED_1Q["x"], dtype=complex),
    "Y": np.array(_FIXED_1Q["y"], dtype=complex),
    "Z": np.array(_FIXED_1Q["z"], dtype=complex),
}


def _rotation(generator: str) -> Callable[[NDArray[np.float64]], Matrix]:
    """Return θ ↦ exp(-i θ G/2) for a Pauli string G with G² = I, batched over θ."""
    g = _PAULI[generator[0]]
    for letter in generator[1:]:
        g = np.kron(g, _PAULI[letter])
    eye = np.eye(g.shape[0], dtype=complex)

    def matrix(theta: NDArray[np.float64]) -> Matrix:
        half: NDArray[np.float64] = np.asarray(theta, dtype=float)[..., None, None] / 2.0
        m: Matrix = np.cos(half) * eye - 1j * np.sin(half) * g
        return m

    return matrix


def _constant(m: Matrix) -> Callable[[NDArray[np.float64]], Matrix]:
    def matrix(theta: NDArray[np.float64]) -> Matrix:
        shape = np.shape(theta)
        return np.broadcast_to(m, (*shape, *m.shape)).copy()

    return matrix


def _phase_on_11(theta: NDArray[np.float64]) -> Matrix:
    """θ ↦ diag(1, 1, 1, e^{iθ}), batched over θ."""
    angle: NDArray[np.float64] = np.asarray(theta, dtype=float)
    m: Matrix = np.zeros((*angle.shape, 4, 4), dtype=complex)
    m[..., 0, 0] = m[..., 1, 1] = m[..., 2, 2] = 1.0
    m[..., 3, 3] = np.exp(1j * angle)
    return m


def _controlled(one: Callable[[NDArray[np.float64]], Matrix]) -> Callable[..., Matrix]:
    def matrix(theta: NDArray[np.float64]) -> Matrix:
        u = one(theta)
        out = np.zeros((*u.shape[:-2], 4, 4), dtype=complex)
        out[..., 0, 0] = 1.0
        out[..., 1, 1] = 1.0
        out[..., 2:, 2:] = u
        return out

    return matrix


@dataclass(frozen=True, kw_only=True)
class GateSpec:
    """One row of the gate table.

    Attributes
    ----------
    name : str
        Canonical lower-case name used in descriptions and reports.
    qubits : int
        Arity, 1 or 2.
    takes_angle : bool
        Whether the gate has one angle (a trainable parameter unless fixed).
    diagonal : bool
        Whether the matrix is diagonal in the computational basis for every angle.
    target : str or None
        For controlled gates, the one-qubit gate applied to the second qubit when the
        first is |1⟩; ``None`` otherwise.
    generator : str or None
        For Pauli rotations, the Pauli string ``G`` with gate ``exp(-i θ G / 2)`` (on the
        target for controlled rotations); ``None`` for fixed gates and for ``cphase``,
        whose ``G`` is not one Pauli string.
    generator_sum : tuple of (float, str)
        For every gate with an angle, ``G`` as real coefficients of Pauli strings on the
        gate's qubits (first qubit leftmost): ``((1.0, "X"),)`` for ``rx``,
        ``((0.5, "IX"), (-0.5, "ZX"))`` for ``crx`` (``|1⟩⟨1| ⊗ X``); empty for fixed
        gates. Adjoint differentiation (where ``generator`` is ``None``) and the Lie
        algebra read it.
    clifford : bool
        Whether the fixed gate is a Clifford gate (maps Pauli strings to Pauli strings).
    matrix : callable
        ``theta`` of shape ``(B,)`` ↦ complex array of shape ``(B, 2**qubits, 2**qubits)``;
        fixed gates ignore the values of ``theta`` but keep its shape.
    summary : str
        One line for the generated gate reference.
    """

    name: str
    qubits: int
    takes_angle: bool
    diagonal: bool
    target: str | None
    generator: str | None
    generator_sum: tuple[tuple[float, str], ...]
    clifford: bool
    matrix: Callable[[NDArray[np.float64]], Matrix]
    summary: str


def _build() -> dict[str, GateSpec]:
    table: dict[str, GateSpec] = {}
    summaries = {
        "i": "identity",
        "h": "Hadamard",
        "x": "Pauli X",
        "y": "Pauli Y",
        "z": "Pauli Z",
        "s": "phase gate diag(1, i)",
        "sdg": "inverse phase gate diag(1, -i)",
        "t": "T gate diag(1, e^{iπ/4})",
        "tdg": "inverse T gate diag(1, e^{-iπ/4})",
        "sx": "square root of X",
    }
    for name, m in _FIXED_1Q.items():
        arr = np.array(m, dtype=complex)
        table[name] = GateSpec(
            name=name,
            qubits=1,
            takes_angle=False,
            diagonal=bool(np.allclose(arr, np.diag(np.diag(arr)))),
            target=None,
            generator=None,
            generator_sum=(),
            clifford=name not in ("t", "tdg"),
            matrix=_constant(arr),
            summary=summaries[name],
        )
    for axis in "xyz":
        table[f"r{axis}"] = GateSpec(
            name=f"r{axis}",
            qubits=1,
            takes_angle=True,
            diagonal=axis == "z",
            target=None,
            generator=axis.upper(),
            generator_sum=((1.0, axis.upper()),),
            clifford=False,
            matrix=_rotation(axis.upper()),
            summary=f"rotation exp(-iθ{axis.upper()}/2)",
        )
    for base in "xyz":
        one = table[base]
        table[f"c{base}"] = GateSpec(
            name=f"c{base}",
            qubits=2,
            takes_angle=False,
            diagonal=one.diagonal,
            target=base,
            generator=None,
            generator_sum=(),
            clifford=True,
            matrix=_controlled(one.matrix),
            summary=f"controlled {base.upper()} (first qubit controls)",
        )
    swap = np.eye(4, dtype=complex)[[0, 2, 1, 3]]
    table["swap"] = GateSpec(
        name="swap",
        qubits=2,
        takes_angle=False,
        diagonal=False,
        target=None,
        generator=None,
        generator_sum=(),
        clifford=True,
        matrix=_constant(swap),
        summary="exchange of two qubits",
    )
    for axis in "xyz":
        one = table[f"r{axis}"]
        table[f"cr{axis}"] = GateSpec(
            name=f"cr{axis}",
            qubits=2,
            takes_angle=True,
            diagonal=one.diagonal,
            target=f"r{axis}",
            generator=axis.upper(),
            generator_sum=((0.5, "I" + axis.upper()), (-0.5, "Z" + axis.upper())),
            clifford=False,
            matrix=_controlled(one.matrix),
            summary=f"controlled rotation exp(-iθ{axis.upper()}/2) on the second qubit",
        )
    for axis in "xyz":
        p = axis.upper()
        table[f"r{axis}{axis}"] = GateSpec(
            name=f"r{axis}{axis}",
            qubits=2,
            takes_angle=True,
            diagonal=axis == "z",
            target=None,
            generator=p + p,
            generator_sum=((1.0, p + p),),
            clifford=False,
            matrix=_rotation(p + p),
            summary=f"two-qubit rotation exp(-iθ{p}⊗{p}/2)",
        )
    table["cphase"] = GateSpec(
        name="cphase",
        qubits=2,
        takes_angle=True,
        diagonal=True,
        target=None,
        generator=None,
        generator_sum=((-0.5, "II"), (0.5, "IZ"), (0.5, "ZI"), (-0.5, "ZZ")),
        clifford=False,
        matrix=_phase_on_11,
        summary="controlled phase diag(1, 1, 1, e^{iθ}) (the same for either qubit as control)",
    )
    return table


GATES: dict[str, GateSpec] = _build()
"""Every gate by canonical name."""

ALIASES: dict[str, str] = {"cnot": "cx"}
"""Other accepted spellings, mapped to canonical names."""


def lookup(name: str) -> GateSpec:
    """Return the table row for ``name`` (aliases accepted).

    Raises
    ------
    KeyError
        With a message listing every valid name.

    Examples
    --------
    >>> lookup("cnot").name
    'cx'
    """
    canonical = ALIASES.get(name, name)
    try:
        return GATES[canonical]
    except KeyError:
        valid = ", ".join([*GATES, *ALIASES])
        raise KeyError(f"unknown gate {name!r}; expected one of: {valid}") from None


def gate_matrix(name: str, theta: float = 0.0) -> Matrix:
    """Return the matrix of one gate at one angle, shape ``(2**k, 2**k)``.

    Examples
    --------
    >>> np.allclose(gate_matrix("rx", np.pi), [[0, -1j], [-1j, 0]])
    True
    """
    m: Matrix = lookup(name).matrix(np.array([theta]))[0]
    return m


@cache
def generator_matrix(name: str) -> Matrix:
    """Return the generator ``G`` of a gate with an angle as a dense matrix.

    Built from the row's ``generator_sum``, in the basis of the gate's qubits (first
    qubit leftmost). Cached; do not modify the result.

    Examples
    --------
    >>> generator_matrix("cphase").real.diagonal().tolist()
    [0.0, 0.0, 0.0, -2.0]
    """
    spec = lookup(name)
    if not spec.generator_sum:
        raise ValueError(f"gate {name!r} has no angle, so no generator")
    d = 1 << spec.qubits
    g: Matrix = np.zeros((d, d), dtype=complex)
    for coefficient, string in spec.generator_sum:
        term = _PAULI[string[0]]
        for letter in string[1:]:
            term = np.kron(term, _PAULI[letter])
        g += coefficient * term
    g.setflags(write=False)
    return g

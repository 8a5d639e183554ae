"""The OpenQASM standard gates as exact products of haarline gates and phases.

Reading a gate call produces :class:`Piece` objects: haarline gates, and two factors that
haarline has no gate for but that a gate modifier needs to see: :data:`PHASE`, the
one-qubit ``P(λ) = diag(1, e^{iλ})``, and :data:`GLOBAL`, the global phase ``e^{iγ}`` on
no qubit. Each standard name of :data:`STANDARD_GATES` is a :class:`Recipe`: its pieces,
equal to the gate's definition *exactly*, global phase included, so that ``ctrl @`` (for
which a global phase becomes a relative one) stays right. Once every modifier is applied,
a phase that remains uncontrolled is only a global phase, which no haarline metric sees:
``P(λ) = e^{iλ/2} rz(λ)`` is written as ``rz(λ)`` and ``GLOBAL`` is dropped
(:func:`haarline.circuit.qasm._modifiers.lowered`).

Sources of the definitions (from memory of the OpenQASM 3 specification, openqasm.com,
"Built-in gates" and "Standard library"; the standard's formulas, written as products):

- ``U(θ, φ, λ) = [[cos θ/2, -e^{iλ} sin θ/2], [e^{iφ} sin θ/2, e^{i(φ+λ)} cos θ/2]]``,
  the one built-in gate, is ``P(φ) Ry(θ) P(λ)`` exactly, so it is read as ``rz(λ)``,
  ``ry(θ)``, ``rz(φ)`` (in time order) up to the global phase ``e^{i(φ+λ)/2}``: each angle
  stays unscaled, and a ``U`` with three inputs is three trainable parameters;
- ``u3(θ, φ, λ)`` is ``gphase(-(φ+λ)/2); U(θ, φ, λ)``, that is ``Rz(φ) Ry(θ) Rz(λ)``
  exactly; ``u2(φ, λ)`` is the same with ``θ = π/2``;
- ``p(λ)`` is ``ctrl @ gphase(λ)``, ``phase(λ)`` and ``u1(λ)`` are ``U(0, 0, λ)``: all three
  are ``P(λ)``;
- ``rz(λ)`` is ``gphase(-λ/2); U(0, 0, λ)``, which is haarline's ``rz`` exactly, as
  ``rx ry`` and the fixed gates ``id x y z h s sdg t tdg sx`` are haarline's gates
  exactly (``tests/test_qasm.py`` compares each matrix);
- ``cx cy cz crx cry crz`` are ``ctrl @`` of ``x y z rx ry rz``: haarline's gates;
  ``swap`` is three ``cx``;
- ``cp(λ)`` is ``ctrl @ p(λ)`` and ``cphase(λ)`` is ``ctrl @ phase(λ)``: both are
  ``diag(1, 1, 1, e^{iλ})``, haarline's native ``cphase`` (it differs from ``crz(λ)`` by
  ``rz(λ/2)`` on the control, which format 1 cannot write with the same parameter);
- ``ch`` is ``ctrl @ h``; ``H = Ry(π/4) Z Ry(-π/4)`` gives ``ry(-π/4)`` on the target,
  ``cz``, ``ry(π/4)`` on the target, exactly;
- ``cu(θ, φ, λ, γ)`` is ``p(γ) c; ctrl @ U(θ, φ, λ) c, t;``, and ``ctrl @ P(φ) Ry(θ) P(λ)``
  is ``cphase(λ) cry(θ) cphase(φ)``, so it reads as ``rz(γ)`` on the control and those
  three: four parameters, each unscaled;
- from OpenQASM 2.0's ``qelib1.inc`` (Cross, Bishop, Smolin & Gambetta, "Open Quantum
  Assembly Language", 2017): ``u(θ, φ, λ)`` is ``U(θ, φ, λ)``, ``cu1(λ)`` is controlled
  ``u1`` (``cphase``), ``sxdg`` is the inverse of ``sx``
  (``sx = e^{iπ/4} rx(π/2)``, so ``sxdg = e^{-iπ/4} rx(-π/2)``), and ``CX`` is ``cx``;
- ``rxx ryy rzz`` are not in ``stdgates.inc``: they are haarline's
  ``exp(-iθ P⊗P/2)`` (and :func:`~haarline.circuit.qasm.export.to_qasm` defines them so).

Not read without a ``gate`` definition in the program: ``ccx``, ``cswap`` (three qubits)
and ``cu3``, whose two published ``qelib1.inc`` versions differ by a phase on the control.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace
from typing import Any

import numpy as np
from haarline.circuit.gates import GATES, gate_matrix
from haarline.circuit.qasm._syntax import _Value
from numpy.typing import NDArray

__all__ = [
    "GLOBAL",
    "PHASE",
    "STANDARD_GATES",
    "THREE_QUBIT_GATES",
    "Piece",
    "Recipe",
    "local_unitary",
    "piece_matrix",
]

PHASE = "phase"
"""Piece kind: ``P(λ) = diag(1, e^{iλ})`` on one qubit (not a haarline gate)."""

GLOBAL = "gphase"
"""Piece kind: the global phase ``e^{iγ}``, on no qubit."""

THREE_QUBIT_GATES = frozenset({"ccx", "cswap", "c3x", "c4x", "rccx", "rc3x", "c3sqrtx"})
"""Standard names of gates on three or more qubits (read only when the program defines them)."""


@dataclass(frozen=True)
class Piece:
    """One exact factor of a gate application.

    ``gate`` is a haarline gate name, :data:`PHASE` or :data:`GLOBAL`; ``qubits`` are
    register qubits (``()`` for a global phase); ``angle`` is the angle, affine in the
    inputs, or ``None``; ``node`` is the statement it came from and ``via`` is appended
    to error messages (where an enclosing definition was applied).
    """

    gate: str
    qubits: tuple[int, ...]
    angle: _Value | None = None
    node: Any = None
    via: str = ""

    def negated(self) -> Piece:
        """The same piece with its angle times -1."""
        return replace(self, angle=None if self.angle is None else self.angle.times(-1.0))


_Factor = tuple[str, tuple[int, ...], _Value | None]
"""A recipe's factor: kind, positions among the gate's qubits, angle."""


@dataclass(frozen=True)
class Recipe:
    """A standard gate: its angle and qubit counts and its exact factors."""

    name: str
    angles: int
    qubits: int
    factors: Callable[[Sequence[_Value]], list[_Factor]]

    def pieces(
        self, args: Sequence[_Value], qubits: tuple[int, ...], node: Any, via: str
    ) -> list[Piece]:
        """The gate's pieces on register ``qubits`` (one per factor, in time order)."""
        return [
            Piece(gate, tuple(qubits[k] for k in where), angle, node, via)
            for gate, where, angle in self.factors(args)
        ]


def _number(x: float) -> _Value:
    return _Value(x)


def _same(name: str) -> Recipe:
    spec = GATES[name]
    at = tuple(range(spec.qubits))
    if spec.takes_angle:
        return Recipe(name, 1, spec.qubits, lambda a: [(name, at, a[0])])
    return Recipe(name, 0, spec.qubits, lambda a: [(name, at, None)])


def _u(a: Sequence[_Value]) -> list[_Factor]:  # U(θ, φ, λ) = P(φ) Ry(θ) P(λ)
    theta, phi, lam = a
    return [(PHASE, (0,), lam), ("ry", (0,), theta), (PHASE, (0,), phi)]


def _u3(a: Sequence[_Value]) -> list[_Factor]:  # Rz(φ) Ry(θ) Rz(λ)
    theta, phi, lam = a
    return [("rz", (0,), lam), ("ry", (0,), theta), ("rz", (0,), phi)]


def _u2(a: Sequence[_Value]) -> list[_Factor]:  # Rz(φ) Ry(π/2) Rz(λ)
    phi, lam = a
    return [("rz", (0,), lam), ("ry", (0,), _number(math.pi / 2)), ("rz", (0,), phi)]


def _phase(a: Sequence[_Value]) -> list[_Factor]:
    return [(PHASE, (0,), a[0])]


def _sxdg(a: Sequence[_Value]) -> list[_Factor]:  # e^{-iπ/4} rx(-π/2)
    return [(GLOBAL, (), _number(-math.pi / 4)), ("rx", (0,), _number(-math.pi / 2))]


def _cphase(a: Sequence[_Value]) -> list[_Factor]:
    return [("cphase", (0, 1), a[0])]


def _ch(a: Sequence[_Value]) -> list[_Factor]:  # ctrl @ (Ry(π/4) Z Ry(-π/4))
    quarter = math.pi / 4
    return [("ry", (1,), _number(-quarter)), ("cz", (0, 1), None), ("ry", (1,), _number(quarter))]


def _cu(a: Sequence[_Value]) -> list[_Factor]:  # P(γ) on c; ctrl @ (P(φ) Ry(θ) P(λ))
    theta, phi, lam, gamma = a
    return [
        (PHASE, (0,), gamma),
        ("cphase", (0, 1), lam),
        ("cry", (0, 1), theta),
        ("cphase", (0, 1), phi),
    ]


def _table() -> dict[str, Recipe]:
    same = ("x", "y", "z", "h", "s", "sdg", "t", "tdg", "sx", "rx", "ry", "rz")
    two = ("cx", "cy", "cz", "swap", "crx", "cry", "crz", "rxx", "ryy", "rzz")
    table = {name: _same(name) for name in same}
    table["id"] = Recipe("id", 0, 1, lambda a: [("i", (0,), None)])
    for name in ("U", "u"):
        table[name] = Recipe(name, 3, 1, _u)
    table["u3"] = Recipe("u3", 3, 1, _u3)
    table["u2"] = Recipe("u2", 2, 1, _u2)
    for name in ("p", "phase", "u1"):
        table[name] = Recipe(name, 1, 1, _phase)
    table["sxdg"] = Recipe("sxdg", 0, 1, _sxdg)
    table.update({name: _same(name) for name in two})
    table["CX"] = Recipe("CX", 0, 2, lambda a: [("cx", (0, 1), None)])
    for name in ("cp", "cphase", "cu1"):
        table[name] = Recipe(name, 1, 2, _cphase)
    table["ch"] = Recipe("ch", 0, 2, _ch)
    table["cu"] = Recipe("cu", 4, 2, _cu)
    return table


STANDARD_GATES: dict[str, Recipe] = _table()
"""OpenQASM standard gate names and how each is read (sources in the module docstring)."""


def piece_matrix(piece: Piece, angle: float) -> NDArray[np.complex128]:
    """The exact matrix of a piece at a constant angle (``(1, 1)`` for a global phase)."""
    if piece.gate == GLOBAL:
        return np.array([[np.exp(1j * angle)]])
    if piece.gate == PHASE:
        return np.diag([1.0, np.exp(1j * angle)])
    return gate_matrix(piece.gate, angle)


def local_unitary(pieces: Sequence[Piece], k: int) -> NDArray[np.complex128]:
    """Dense exact unitary of pieces with constant angles on qubits ``0..k-1``, ``k`` ≤ 2.

    Qubit 0 is the leftmost (the first factor of the Kronecker product).
    """
    u: NDArray[np.complex128] = np.eye(1 << k, dtype=complex)
    swap = np.eye(4, dtype=complex)[[0, 2, 1, 3]]
    for piece in pieces:
        m = piece_matrix(piece, piece.angle.constant if piece.angle is not None else 0.0)
        full: NDArray[np.complex128]
        if not piece.qubits:
            full = np.eye(1 << k, dtype=complex) * complex(m[0, 0])
        elif len(piece.qubits) == 2:
            full = m if piece.qubits == (0, 1) else swap @ m @ swap
        elif k == 1:
            full = m
        else:
            eye = np.eye(2, dtype=complex)
            pair = (m, eye) if piece.qubits[0] == 0 else (eye, m)
            full = np.asarray(np.kron(*pair), dtype=np.complex128)
        u = full @ u
    return u

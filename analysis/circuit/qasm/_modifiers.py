"""Gate modifiers on exact pieces: ``inv @``, ``pow(k) @``, ``ctrl @``, ``negctrl @``.

The pieces (:class:`~haarline.circuit.qasm._standard.Piece`) of a call are its exact
factors, so each modifier is a rule on factors (OpenQASM 3 specification, "Quantum gate
modifiers"; from memory, the rules are the algebra of the standard's definitions):

- ``inv @ (A B)`` is ``B† A†``: the factors reversed, each inverted. Haarline's fixed gates
  are their own inverses or each other's (``s``/``sdg``, ``t``/``tdg``); ``sx† = e^{-iπ/4}
  rx(-π/2)``; a rotation, a phase or a global phase takes the negated angle. A negated
  input is a scaled parameter, which format 1 cannot write, so the step is refused then.
- ``pow(k) @`` with an integer ``k`` is ``k`` copies (of the inverse when ``k < 0``); other
  powers are refused, since a fractional power of a gate is not a product of haarline gates
  in general.
- ``ctrl @ (A B)`` is ``ctrl @ A · ctrl @ B``, factor by factor, on the first operand as the
  control: ``x y z rx ry rz`` become ``cx cy cz crx cry crz``; ``P(λ)`` becomes
  ``cphase(λ)``; ``s sdg t tdg`` (``P(±π/2)``, ``P(±π/4)``) become ``cphase`` at that angle;
  ``h = Ry(π/4) Z Ry(-π/4)`` becomes ``ry(-π/4)``, ``cz``, ``ry(π/4)``; ``sx = P(π/4)``
  (as a phase) times ``rx(π/2)`` becomes ``P(π/4)`` on the control and ``crx(π/2)``; a
  global phase ``e^{iγ}`` becomes ``P(γ)`` on the control; ``i`` disappears.
- ``negctrl @ A`` is ``x`` on the control, ``ctrl @ A``, ``x`` on the control.

:func:`lowered` then writes what is left as haarline gates: an uncontrolled ``P(λ)`` is
``e^{iλ/2} rz(λ)`` and becomes ``rz(λ)``, a global phase is dropped (no metric sees one).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import replace
from typing import Any

from haarline.circuit.gates import GATES
from haarline.circuit.qasm._standard import GLOBAL, PHASE, Piece
from haarline.circuit.qasm._syntax import _Fail, _Value

__all__ = ["controlled", "inverse", "lowered", "power", "without_identities"]

_SELF_INVERSE = frozenset({"i", "h", "x", "y", "z", "cx", "cy", "cz", "swap"})
_PARTNER = {"s": "sdg", "sdg": "s", "t": "tdg", "tdg": "t"}
_PHASE_OF = {"s": math.pi / 2, "sdg": -math.pi / 2, "t": math.pi / 4, "tdg": -math.pi / 4}


def _takes_angle(gate: str) -> bool:
    return gate in (PHASE, GLOBAL) or GATES[gate].takes_angle


def _inverse_of(piece: Piece, why: str) -> list[Piece]:
    if piece.gate in _SELF_INVERSE:
        return [piece]
    if piece.gate in _PARTNER:
        return [replace(piece, gate=_PARTNER[piece.gate])]
    if piece.gate == "sx":
        return [
            replace(piece, gate=GLOBAL, qubits=(), angle=_Value(-math.pi / 4)),
            replace(piece, gate="rx", angle=_Value(-math.pi / 2)),
        ]
    if _takes_angle(piece.gate):
        return [replace(piece.negated(), via=f" (after '{why}'){piece.via}")]
    raise ValueError(f"no inverse known for {piece.gate!r}")  # pragma: no cover


def inverse(pieces: Sequence[Piece], why: str = "inv @") -> list[Piece]:
    """The exact inverse: factors reversed, each inverted; ``why`` names the modifier."""
    out: list[Piece] = []
    for piece in reversed(pieces):
        out.extend(_inverse_of(piece, why))
    return out


def power(pieces: Sequence[Piece], k: int) -> list[Piece]:
    """``k`` copies in a row (of the inverse for ``k < 0``; none for 0)."""
    one = list(pieces) if k >= 0 else inverse(pieces, f"pow({k}) @")
    return one * abs(k)


def _controlled_one(piece: Piece, c: int) -> list[Piece]:
    gate, node, via = piece.gate, piece.node, piece.via
    if gate == GLOBAL:
        return [replace(piece, gate=PHASE, qubits=(c,))]
    if len(piece.qubits) != 1:
        raise _Fail(node, f"a controlled '{gate}' would act on three qubits{via}")
    (t,) = piece.qubits
    if gate == "i":
        return []
    if gate == PHASE:
        return [replace(piece, gate="cphase", qubits=(c, t))]
    if gate in ("x", "y", "z", "rx", "ry", "rz"):
        return [replace(piece, gate="c" + gate, qubits=(c, t))]
    if gate in _PHASE_OF:
        return [replace(piece, gate="cphase", qubits=(c, t), angle=_Value(_PHASE_OF[gate]))]
    quarter = math.pi / 4
    if gate == "h":
        return [
            Piece("ry", (t,), _Value(-quarter), node, via),
            Piece("cz", (c, t), None, node, via),
            Piece("ry", (t,), _Value(quarter), node, via),
        ]
    if gate == "sx":
        return [
            Piece(PHASE, (c,), _Value(quarter), node, via),
            Piece("crx", (c, t), _Value(math.pi / 2), node, via),
        ]
    raise ValueError(f"no controlled form known for {gate!r}")  # pragma: no cover


def controlled(pieces: Sequence[Piece], c: int, *, negative: bool, node: Any) -> list[Piece]:
    """``ctrl @`` (or ``negctrl @``) with control qubit ``c``, factor by factor."""
    out: list[Piece] = []
    for piece in pieces:
        out.extend(_controlled_one(piece, c))
    if negative:
        flip = Piece("x", (c,), None, node)
        out = [flip, *out, flip]
    return out


def without_identities(pieces: Sequence[Piece]) -> list[Piece]:
    """Leave out factors with the constant angle 0 (identities) of a product of several."""
    if len(pieces) < 2:
        return list(pieces)
    return [
        p
        for p in pieces
        if not (
            _takes_angle(p.gate)
            and p.angle is not None
            and not p.angle.symbolic
            and p.angle.constant == 0.0
        )
    ]


def lowered(pieces: Sequence[Piece]) -> list[Piece]:
    """Haarline gates only: ``P(λ)`` as ``rz(λ)`` (a global phase away), no global phases."""
    return [replace(p, gate="rz") if p.gate == PHASE else p for p in pieces if p.gate != GLOBAL]

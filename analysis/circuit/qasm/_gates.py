"""What gate names mean in an OpenQASM program: standard names and ``gate`` definitions.

:class:`GateBook` resolves a gate call to a haarline gate or to a ``gate`` definition,
checks its angle and qubit counts, records definitions (a definition named like a standard
gate becomes that gate when it agrees with haarline's matrix up to a global phase) and
inlines a call into haarline gate applications. The mapping of the standard names and why
each is sound is set out in :mod:`haarline.circuit.qasm.parse`.
"""

from __future__ import annotations

from collections import ChainMap
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np
from haarline.circuit.gates import GATES, gate_matrix
from haarline.circuit.model import MAX_STEPS
from haarline.circuit.qasm._syntax import _CONSTANTS, Scope, _angle, _Fail, _Value, _where
from haarline.circuit.qasm._unsupported import no_annotations, reject
from openqasm3 import ast

__all__ = ["STANDARD_GATES", "Application", "Definition", "Emit", "GateBook", "local_unitary"]

STANDARD_GATES: dict[str, str] = {
    "id": "i",
    **{g: g for g in ("h", "x", "y", "z", "s", "sdg", "t", "tdg", "sx", "rx", "ry", "rz")},
    "p": "rz",
    "phase": "rz",
    "u1": "rz",
    "cx": "cx",
    "CX": "cx",
    **{g: g for g in ("cy", "cz", "swap", "crx", "cry", "crz", "rxx", "ryy", "rzz")},
    "cp": "cphase",
    "cphase": "cphase",
    "cu1": "cphase",
}
"""OpenQASM standard gate names and the haarline gate each becomes (see :mod:`.parse`)."""

SUPPORTED_LIST = " ".join(STANDARD_GATES)


@dataclass(kw_only=True)
class Definition:
    """A ``gate`` definition; each body call is bound to its callee when it is defined."""

    name: str
    params: list[str]
    qubits: list[str]
    body: list[tuple[ast.QuantumGate, Definition | str]]
    node: Any
    native: str | None = None


@dataclass
class Application:
    """One haarline gate applied to register qubits, with where it came from."""

    gate: str
    qubits: tuple[int, ...]
    angle: _Value | None
    node: Any
    via: str


Emit = Callable[[Application], None]


class GateBook:
    """The gates a program can call: the standard names (once included) and its definitions.

    Parameters
    ----------
    version : str or None
        The program's version line (``"2.0"`` makes ``CX`` known without an include).
    constants : mapping
        The built-in constants, the scope of a definition's body besides its parameters.
    tick : callable
        Called once per body statement run, to bound the work of reading one program.
    """

    def __init__(
        self,
        version: str | None,
        constants: dict[str, int | _Value],
        tick: Callable[[Any], None],
    ):
        self.version = version
        self.standard = False
        self.gates: dict[str, Definition] = {}
        self.constants = constants
        self.tick = tick

    def resolve(self, name: str, node: Any) -> Definition | str:
        """What the gate name means here: a definition or a haarline gate name."""
        if name in self.gates:
            return self.gates[name]
        ours = STANDARD_GATES.get(name)
        if ours is not None and (self.standard or (name == "CX" and self.version == "2.0")):
            return ours
        if ours is not None:
            raise _Fail(node, f"gate '{name}' is not defined; add 'include \"stdgates.inc\";'")
        raise _Fail(
            node,
            f"gate '{name}' is not supported; supported gates: {SUPPORTED_LIST}, and gates "
            "defined with 'gate' from them",
        )

    def checked_call(self, statement: ast.QuantumGate) -> Definition | str:
        """Resolve a gate call and check its modifiers, duration and counts."""
        for modifier in statement.modifiers:
            raise _Fail(
                modifier, f"the gate modifier '{modifier.modifier.name} @' is not supported"
            )
        if statement.duration is not None:
            raise _Fail(statement, "gate durations are not supported (timing)")
        name = statement.name.name
        callee = self.resolve(name, statement)
        if isinstance(callee, str):
            qubits, angles = GATES[callee].qubits, int(GATES[callee].takes_angle)
        else:
            qubits, angles = len(callee.qubits), len(callee.params)
        if len(statement.arguments) != angles:
            raise _Fail(
                statement,
                f"gate '{name}' takes {angles} angle{'s' if angles != 1 else ''}, "
                f"got {len(statement.arguments)}",
            )
        if len(statement.qubits) != qubits:
            raise _Fail(
                statement,
                f"gate '{name}' acts on {qubits} qubit{'s' if qubits != 1 else ''}, "
                f"got {len(statement.qubits)}",
            )
        return callee

    def apply(
        self,
        callee: Definition | str,
        args: list[_Value],
        qubits: tuple[int, ...],
        node: Any,
        via: str,
        emit: Emit,
    ) -> None:
        """Inline a call on register ``qubits`` into haarline gates passed to ``emit``.

        ``via`` is appended to error messages: where the enclosing definition was applied.
        """
        if len(set(qubits)) != len(qubits):
            twice = next(q for q in qubits if qubits.count(q) > 1)
            label = f"gate '{node.name.name}'" if isinstance(node, ast.QuantumGate) else "the gate"
            raise _Fail(node, f"{label} uses qubit {twice} twice{via}")
        if isinstance(callee, str) or callee.native is not None:
            gate = callee if isinstance(callee, str) else str(callee.native)
            emit(Application(gate, qubits, args[0] if args else None, node, via))
            return
        bound: dict[str, int | _Value] = dict(zip(callee.params, args, strict=True))
        scope: Scope = ChainMap(bound, self.constants)
        frame = dict(zip(callee.qubits, qubits, strict=True))
        inner = f" (in gate '{callee.name}' applied at {_where(node)}){via}"
        for statement, target in callee.body:
            self.tick(statement)
            try:
                values = [_angle(a, scope) for a in statement.arguments]
            except _Fail as exc:
                raise _Fail(exc.node, exc.message + inner) from None
            on = tuple(frame[str(getattr(o, "name", ""))] for o in statement.qubits)
            self.apply(target, values, on, statement, inner, emit)

    def define(self, statement: ast.QuantumGateDefinition) -> None:
        """Record a ``gate`` definition, binding each body call to its callee."""
        name = statement.name.name
        params = [p.name for p in statement.arguments]
        qubits = [q.name for q in statement.qubits]
        if name in self.gates:
            raise _Fail(statement, f"gate '{name}' is defined twice")
        names = params + qubits
        if len(set(names)) != len(names):
            raise _Fail(statement, f"gate '{name}' repeats a parameter or qubit name")
        for clash in names:
            if clash in _CONSTANTS:
                raise _Fail(statement, f"gate '{name}' uses the constant '{clash}' as a name")
        body: list[tuple[ast.QuantumGate, Definition | str]] = []
        for inner in statement.body:
            no_annotations(inner)
            if isinstance(inner, ast.QuantumBarrier):
                continue
            if not isinstance(inner, ast.QuantumGate):
                if isinstance(inner, (ast.QuantumPhase, ast.QuantumReset, ast.DelayInstruction)):
                    reject(inner)
                raise _Fail(
                    inner, "only gate calls and barriers are supported inside gate definitions"
                )
            callee = self.checked_call(inner)
            for operand in inner.qubits:
                if not (isinstance(operand, ast.Identifier) and operand.name in qubits):
                    raise _Fail(
                        operand,
                        f"inside gate '{name}', gates act on its qubit arguments "
                        f"({', '.join(qubits)}) by name",
                    )
            body.append((inner, callee))
        d = Definition(name=name, params=params, qubits=qubits, body=body, node=statement)
        ours = STANDARD_GATES.get(name)
        if ours is not None:
            spec = GATES[ours]
            if len(qubits) == spec.qubits and len(params) == int(spec.takes_angle):
                d.native = ours if self._agrees(d, ours) else None
        self.gates[name] = d

    def _agrees(self, d: Definition, ours: str) -> bool:
        """Whether a definition equals haarline's gate ``ours`` up to a global phase."""
        spec = GATES[ours]
        for theta in (0.7, -2.3, 3.1) if spec.takes_angle else (0.0,):
            apps: list[Application] = []

            def collect(app: Application, apps: list[Application] = apps) -> None:
                if len(apps) >= MAX_STEPS:
                    raise _Fail(app.node, "too many gates")
                apps.append(app)

            args = [_Value(theta)] if spec.takes_angle else []
            try:
                self.apply(d, args, tuple(range(spec.qubits)), d.node, "", collect)
            except _Fail:
                return False
            have = local_unitary(apps, spec.qubits)
            want = gate_matrix(ours, theta)
            if abs(np.trace(want.conj().T @ have)) < want.shape[0] * (1 - 1e-9):
                return False
        return True


def local_unitary(apps: list[Application], k: int) -> np.ndarray:
    """Dense unitary of applications on ``k`` ≤ 2 local qubits (qubit 0 leftmost)."""
    u: np.ndarray = np.eye(1 << k, dtype=complex)
    swap = np.eye(4, dtype=complex)[[0, 2, 1, 3]]
    for app in apps:
        m: np.ndarray = gate_matrix(app.gate, app.angle.constant if app.angle is not None else 0.0)
        full: np.ndarray
        if len(app.qubits) == 2:
            full = m if app.qubits == (0, 1) else swap @ m @ swap
        elif k == 1:
            full = m
        else:
            eye = np.eye(2, dtype=complex)
            full = np.kron(m, eye) if app.qubits[0] == 0 else np.kron(eye, m)
        u = full @ u
    return u

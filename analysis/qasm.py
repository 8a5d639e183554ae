"""OpenQASM 3 import and export: read a gate program into format 1, write a program out.

:func:`parse_qasm` reads an OpenQASM program with the reference parser (the ``openqasm3``
package) and converts it into a format-1 description: ``qubits`` is the register size,
``layers`` is 1, and ``layer`` holds one step per gate application with an explicit ``on``
(``[q]`` or ``[[a, b]]``), a numeric ``angle`` or a named ``param``.
:func:`analysis.qasm_export.to_qasm` writes an expanded :class:`~analysis.program.Program`
as an equivalent OpenQASM 3 program.

Supported subset
----------------
- ``OPENQASM 3``, ``3.x`` or ``2.0`` as the version line (optional). The reference parser
  reads OpenQASM 2.0 headers and ``qreg q[n];``; such programs are read with the same rules
  as OpenQASM 3, so only the features below are accepted from them.
- ``include "stdgates.inc";`` (or ``"qelib1.inc"``): makes the standard gate names below
  available (``rxx ryy rzz`` too); without it only ``CX`` (built into OpenQASM 2.0) and gates
  defined with ``gate`` are known. No other file is read.
- Exactly one qubit register: ``qubit[n] q;``, ``qreg q[n];`` or ``qubit q;`` (one qubit,
  used as ``q``). The size is an integer expression, 1..24. ``q[k]`` is haarline qubit
  ``k``, the leftmost character of a bitstring; negative indices count from the end.
  (OpenQASM does not fix how states are printed; tools that print ``q[0]`` as the rightmost
  bit show the same circuit with bitstrings reversed.)
- ``input angle[...] NAME;`` and ``input float[...] NAME;`` (any size, or none): each input
  a gate uses becomes a named parameter (step key ``param``), numbered in order of first
  use; an input no gate uses is not a parameter of the circuit. Names are ASCII letters,
  digits and ``_``, at most 64 characters.
- Gate calls ``name(angles) operands;`` on ``q[i]``; a one-qubit gate may also be applied
  to the whole register ``q``, one application per qubit in index order.
- Angles: integer and floating-point literals, ``pi``/``π``, ``tau``/``τ``,
  ``euler``/``ℇ``, inputs, loop variables and ``+ - * / **`` with unary minus, evaluated by
  our own small evaluator over the syntax tree (never ``eval``). A gate's angle must come
  out as a number or as one input exactly as declared: ``theta``, ``(theta)`` or
  ``theta + 0`` give ``param: theta``, but ``2*theta``, ``-theta``, ``theta + pi/2`` and
  ``theta + phi`` are rejected, because format 1 has no scaled or shifted parameters
  (declare another input for such an angle).
- ``for int i in [a:b]``, ``[a:step:b]`` (both ends included) or ``{a, b, ...}``, with
  integer types (``int``, ``uint``, any size), constant bounds and nesting; qubit indices
  take integer expressions of loop variables with ``+ - * %`` (e.g. ``q[i+1]``,
  ``q[(i+1) % 4]``).
- ``barrier`` (ignored: it does not change the state).
- ``gate name(params) qubits { ... }`` whose body holds only calls of known gates (on the
  gate's qubit arguments) and barriers; every use is inlined. A definition whose name is
  one of the standard names below is compared with haarline's gate (at three angles); if
  they agree up to a global phase, its uses become that gate, otherwise the body is
  inlined. :func:`to_qasm` writes ``rxx``, ``ryy``, ``rzz`` this way, so they read back as
  themselves.

Standard gate names and what they become
----------------------------------------
``id``→``i``; ``h x y z s sdg t tdg sx`` and ``rx ry rz``; ``cx`` and ``CX``→``cx``;
``cy cz swap crx cry crz``: the stdgates.inc definitions (built from ``U(θ, φ, λ)``,
``ctrl @`` and ``pow(1/2) @``) equal haarline's matrices exactly (``rz`` there includes
``gphase(-λ/2)``, so ``rz(λ) = exp(-iλZ/2)``). ``p``, ``phase`` and ``u1``→``rz``: their
matrix ``diag(1, e^{iλ})`` is ``e^{iλ/2} rz(λ)``, a global phase, which no haarline metric
can see (fidelities, purities, expectation values and the quantum Fisher information all
ignore it). In OpenQASM 2.0's qelib1.inc ``rz`` is ``u1``, again a global phase away.
``rxx ryy rzz`` are not in stdgates.inc; they are accepted with haarline's definition
``exp(-iθ P⊗P/2)`` (or checked against a ``gate`` definition as above). Gates whose
definition differs by more than a global phase are not mapped: ``cp``/``cphase``/``cu1``
(``diag(1, 1, 1, e^{iλ})`` differs from ``crz`` by a phase on the control), and ``U``,
``u2``, ``u3``, ``cu``, ``ch``, ``ccx``, ``cswap``, ``sxdg`` have no haarline gate.

Everything else is rejected with :class:`~analysis.errors.CircuitError` naming the line,
the column and what is unsupported: measurement, reset, classical bits and variables,
``if``, ``while``, ``switch``, subroutines, ``defcal``/``cal``, ``delay``, ``box``,
``gphase``, gate modifiers (``ctrl @``, ``inv @``, ...), durations, pragmas, annotations,
more than one register, physical qubits ``$0``, slices, unknown gates and inputs of other
types. Syntax errors from the parser are reported the same way. At most 1000 gate
applications are read (format 1 allows 1000 steps in ``layer``), and at most 256 KiB of
text (the parser reads roughly 2000 lines a second).
"""

from __future__ import annotations

import re
from collections import ChainMap
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from pathlib import PurePath
from typing import Any

import numpy as np
from openqasm3 import ast

from ._qasm_syntax import (
    _CONSTANTS,
    Scope,
    _angle,
    _Fail,
    _integer,
    _problem,
    _syntax_tree,
    _Value,
    _where,
)
from .circuit import MAX_QUBITS, MAX_STEPS, Circuit, parse_circuit
from .errors import CircuitError, Problem
from .gates import GATES, gate_matrix

__all__ = ["MAX_QASM_BYTES", "STANDARD_GATES", "parse_qasm"]

MAX_QASM_BYTES = 262_144
"""Largest OpenQASM text accepted, in bytes (256 KiB)."""

_MAX_WORK = 100_000
"""Statements and loop iterations run while reading one program."""

STANDARD_GATES: dict[str, str] = {
    "id": "i",
    **{g: g for g in ("h", "x", "y", "z", "s", "sdg", "t", "tdg", "sx", "rx", "ry", "rz")},
    "p": "rz",
    "phase": "rz",
    "u1": "rz",
    "cx": "cx",
    "CX": "cx",
    **{g: g for g in ("cy", "cz", "swap", "crx", "cry", "crz", "rxx", "ryy", "rzz")},
}
"""OpenQASM standard gate names and the haarline gate each becomes (see module notes)."""

_PARAM_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]{0,63}")
_CIRCUIT_NAME = re.compile(r"[A-Za-z0-9][A-Za-z0-9 ._+#()-]{0,79}")
_NAME_COMMENT = re.compile(r"^[ \t]*//[ \t]*circuit:[ \t]*(.*?)[ \t]*$", re.M)


# --------------------------------------------------------------------------- reading


@dataclass
class _Definition:
    """A ``gate`` definition; each body call is bound to its callee when it is defined."""

    name: str
    params: list[str]
    qubits: list[str]
    body: list[tuple[ast.QuantumGate, _Definition | str]]
    node: Any
    native: str | None = None


@dataclass
class _Application:
    gate: str
    qubits: tuple[int, ...]
    angle: _Value | None
    node: Any
    via: str


Emit = Callable[[_Application], None]

_REJECTED: dict[type, str] = {
    ast.QuantumMeasurementStatement: "measurement is not supported "
    "(haarline analyzes unitary circuits)",
    ast.QuantumReset: "reset is not supported (haarline analyzes unitary circuits)",
    ast.ConstantDeclaration: "const declarations are not supported",
    ast.ClassicalAssignment: "classical assignment is not supported "
    "(haarline analyzes unitary circuits)",
    ast.BranchingStatement: "'if' is not supported (classical control)",
    ast.WhileLoop: "'while' loops are not supported (classical control)",
    ast.SwitchStatement: "'switch' is not supported (classical control)",
    ast.BreakStatement: "'break' is not supported (classical control)",
    ast.ContinueStatement: "'continue' is not supported (classical control)",
    ast.EndStatement: "'end' is not supported (classical control)",
    ast.ReturnStatement: "'return' is not supported",
    ast.SubroutineDefinition: "subroutines ('def') are not supported",
    ast.ExternDeclaration: "'extern' declarations are not supported",
    ast.AliasStatement: "aliases ('let') are not supported",
    ast.ExpressionStatement: "expression statements are not supported",
    ast.CompoundStatement: "bare scopes '{ ... }' are not supported",
    ast.CalibrationDefinition: "'defcal' (pulse-level calibration) is not supported",
    ast.CalibrationStatement: "'cal' blocks (pulse-level calibration) are not supported",
    ast.CalibrationGrammarDeclaration: "'defcalgrammar' (pulse-level calibration) is not supported",
    ast.DelayInstruction: "'delay' is not supported (timing)",
    ast.Box: "'box' is not supported (timing)",
    ast.QuantumPhase: "'gphase' is not supported (global phase instructions)",
    ast.Pragma: "pragmas are not supported",
    ast.Include: "'include' is allowed only at the top of the program",
    ast.QubitDeclaration: "qubit declarations are allowed only at the top level",
    ast.IODeclaration: "input declarations are allowed only at the top level",
    ast.QuantumGateDefinition: "gate definitions are allowed only at the top level",
}

_TYPE_WORDS: dict[type, str] = {
    ast.FloatType: "float",
    ast.AngleType: "angle",
    ast.IntType: "int",
    ast.UintType: "uint",
    ast.BoolType: "bool",
    ast.BitType: "bit",
    ast.ComplexType: "complex",
    ast.ArrayType: "array",
    ast.DurationType: "duration",
    ast.StretchType: "stretch",
}

_SUPPORTED_LIST = " ".join(STANDARD_GATES)


class _Reader:
    """Walk the syntax tree of one program and collect format-1 steps."""

    def __init__(self, version: str | None):
        self.version = version
        self.standard = False
        self.register: tuple[str, int, bool] | None = None  # name, size, declared as one qubit
        self.inputs: dict[str, int | _Value] = {}
        self.constants: dict[str, int | _Value] = {k: _Value(v) for k, v in _CONSTANTS.items()}
        self.scope: ChainMap[str, int | _Value] = ChainMap(self.inputs, self.constants)
        self.gates: dict[str, _Definition] = {}
        self.steps: list[dict[str, Any]] = []
        self.work = 0

    # ---- statements

    def read(self, program: ast.Program) -> list[dict[str, Any]]:
        for statement in program.statements:
            self._annotations(statement)
            if isinstance(statement, ast.Include):
                self._include(statement)
            elif isinstance(statement, ast.QubitDeclaration):
                self._register(statement)
            elif isinstance(statement, ast.IODeclaration):
                self._input(statement)
            elif isinstance(statement, ast.QuantumGateDefinition):
                self._define(statement)
            else:
                self._run(statement, self.scope)
        if self.register is None:
            raise _Fail(None, "no qubit register is declared (expected 'qubit[n] q;')")
        if not self.steps:
            raise _Fail(None, "the program applies no gates")
        return self.steps

    def _annotations(self, statement: Any) -> None:
        if getattr(statement, "annotations", None):
            raise _Fail(statement, "annotations ('@keyword') are not supported")

    def _tick(self, node: Any) -> None:
        self.work += 1
        if self.work > _MAX_WORK:
            raise _Fail(
                node,
                f"the program runs more than {_MAX_WORK} statements and loop iterations; "
                f"haarline reads at most {MAX_STEPS} gate applications",
            )

    def _run(self, statement: Any, scope: Scope) -> None:
        self._tick(statement)
        self._annotations(statement)
        if isinstance(statement, ast.QuantumGate):
            self._call(statement, scope)
        elif isinstance(statement, ast.QuantumBarrier):
            pass  # a barrier only orders gates; it does not change the state
        elif isinstance(statement, ast.ForInLoop):
            self._loop(statement, scope)
        else:
            self._reject(statement)

    def _reject(self, statement: Any) -> None:
        if isinstance(statement, ast.ClassicalDeclaration):
            if isinstance(statement.init_expression, ast.QuantumMeasurement):
                raise _Fail(statement, _REJECTED[ast.QuantumMeasurementStatement])
            if isinstance(statement.type, ast.BitType):
                raise _Fail(
                    statement,
                    "classical bits are not supported (haarline analyzes unitary circuits)",
                )
            raise _Fail(statement, "classical variables are not supported")
        if isinstance(statement, ast.IODeclaration) and statement.io_identifier.name == "output":
            raise _Fail(statement, "output declarations are not supported")
        message = _REJECTED.get(type(statement))
        raise _Fail(statement, message or f"{type(statement).__name__} is not supported")

    def _include(self, statement: ast.Include) -> None:
        if statement.filename not in ("stdgates.inc", "qelib1.inc"):
            raise _Fail(
                statement,
                f'include "{statement.filename}" is not supported; only "stdgates.inc" '
                '(or "qelib1.inc") can be included',
            )
        self.standard = True

    def _register(self, statement: ast.QubitDeclaration) -> None:
        name = statement.qubit.name
        if self.register is not None:
            raise _Fail(
                statement,
                f"a second qubit register '{name}' is declared; haarline reads programs with "
                f"exactly one register (the first is '{self.register[0]}')",
            )
        if name in self.scope:
            raise _Fail(statement, f"the name '{name}' is already used")
        size = 1 if statement.size is None else _integer(statement.size, {})
        if not 1 <= size <= MAX_QUBITS:
            raise _Fail(
                statement,
                f"register '{name}' has {size} qubits; the allowed range is 1..{MAX_QUBITS}",
            )
        self.register = (name, size, statement.size is None)

    def _input(self, statement: ast.IODeclaration) -> None:
        if statement.io_identifier.name != "input":
            raise _Fail(statement, "output declarations are not supported")
        kind = statement.type
        if not isinstance(kind, (ast.AngleType, ast.FloatType)):
            word = _TYPE_WORDS.get(type(kind), type(kind).__name__)
            raise _Fail(
                statement,
                f"input of type {word} is not supported; only 'input angle[...]' and "
                "'input float[...]' become parameters",
            )
        name = statement.identifier.name
        if name in self.scope or (self.register and name == self.register[0]):
            raise _Fail(statement, f"the name '{name}' is already used")
        if not _PARAM_NAME.fullmatch(name):
            raise _Fail(
                statement,
                f"the input name '{name}' cannot be a parameter name; use ASCII letters, digits "
                "and _, starting with a letter or _, at most 64 characters",
            )
        self.inputs[name] = _Value.of_input(name)

    # ---- gates

    def _resolve(self, name: str, node: Any) -> _Definition | str:
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
            f"gate '{name}' is not supported; supported gates: {_SUPPORTED_LIST}, and gates "
            "defined with 'gate' from them",
        )

    def _checked_call(self, statement: ast.QuantumGate) -> _Definition | str:
        """Resolve a gate call and check its modifiers, duration and counts."""
        for modifier in statement.modifiers:
            raise _Fail(
                modifier, f"the gate modifier '{modifier.modifier.name} @' is not supported"
            )
        if statement.duration is not None:
            raise _Fail(statement, "gate durations are not supported (timing)")
        name = statement.name.name
        callee = self._resolve(name, statement)
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

    def _call(self, statement: ast.QuantumGate, scope: Scope) -> None:
        callee = self._checked_call(statement)
        args = [_angle(a, scope) for a in statement.arguments]
        operands = [self._operand(o, scope) for o in statement.qubits]
        targets: list[tuple[int, ...]]
        if len(operands) == 1:
            targets = [(q,) for q in operands[0]]
        elif any(len(o) != 1 for o in operands):
            raise _Fail(
                statement,
                "a gate on more than one qubit needs single qubits such as q[0]; a whole "
                "register is accepted only by one-qubit gates",
            )
        else:
            targets = [tuple(o[0] for o in operands)]
        for target in targets:
            self._apply(callee, args, target, statement, "", self._emit)

    def _operand(self, node: Any, scope: Scope) -> list[int]:
        if self.register is None:
            raise _Fail(node, "no qubit register is declared before this point")
        reg, size, single = self.register
        name = node.name if isinstance(node, ast.Identifier) else node.name.name
        if name.startswith("$"):
            raise _Fail(node, f"physical qubits such as {name} are not supported")
        if name != reg:
            raise _Fail(node, f"unknown qubit register '{name}' (the register is '{reg}')")
        if isinstance(node, ast.Identifier):
            return list(range(size))
        if single:
            raise _Fail(node, f"'{reg}' is a single qubit, not a register; write {reg}")
        index = node.indices[0] if len(node.indices) == 1 else None
        if not isinstance(index, list) or len(index) != 1:
            raise _Fail(node, f"only single indices such as {reg}[0] are supported")
        if isinstance(index[0], ast.RangeDefinition):
            raise _Fail(node, f"register slices such as {reg}[0:2] are not supported")
        i = _integer(index[0], scope)
        if not -size <= i < size:
            raise _Fail(
                node,
                f"qubit {reg}[{i}] is out of range for {size} qubit{'s' if size != 1 else ''} "
                f"(0..{size - 1})",
            )
        return [i % size]

    def _apply(
        self,
        callee: _Definition | str,
        args: list[_Value],
        qubits: tuple[int, ...],
        node: Any,
        via: str,
        emit: Emit,
    ) -> None:
        if len(set(qubits)) != len(qubits):
            twice = next(q for q in qubits if qubits.count(q) > 1)
            label = f"gate '{node.name.name}'" if isinstance(node, ast.QuantumGate) else "the gate"
            raise _Fail(node, f"{label} uses qubit {twice} twice{via}")
        if isinstance(callee, str) or callee.native is not None:
            gate = callee if isinstance(callee, str) else str(callee.native)
            emit(_Application(gate, qubits, args[0] if args else None, node, via))
            return
        bound: dict[str, int | _Value] = dict(zip(callee.params, args, strict=True))
        scope: Scope = ChainMap(bound, self.constants)
        frame = dict(zip(callee.qubits, qubits, strict=True))
        inner = f" (in gate '{callee.name}' applied at {_where(node)}){via}"
        for statement, target in callee.body:
            self._tick(statement)
            try:
                values = [_angle(a, scope) for a in statement.arguments]
            except _Fail as exc:
                raise _Fail(exc.node, exc.message + inner) from None
            on = tuple(frame[str(getattr(o, "name", ""))] for o in statement.qubits)
            self._apply(target, values, on, statement, inner, emit)

    def _emit(self, app: _Application) -> None:
        if len(self.steps) >= MAX_STEPS:
            raise _Fail(
                app.node,
                f"the program applies more than {MAX_STEPS} gates{app.via}; haarline reads at "
                f"most {MAX_STEPS} gate applications (format 1 allows {MAX_STEPS} steps in "
                "'layer')",
            )
        on: list[Any] = [app.qubits[0]] if len(app.qubits) == 1 else [list(app.qubits)]
        step: dict[str, Any] = {"gate": app.gate, "on": on}
        if app.angle is not None:
            value = app.angle
            if not value.terms:
                step["angle"] = value.constant
            elif value.constant == 0.0 and len(value.terms) == 1 and value.terms[0][1] == 1.0:
                step["param"] = value.terms[0][0]
            else:
                raise _Fail(
                    app.node,
                    f"the angle {value} cannot be represented{app.via}: a haarline step takes a "
                    "number or one input exactly as declared, not a scaled or shifted input "
                    "(declare a separate input for this angle)",
                )
        self.steps.append(step)

    def _define(self, statement: ast.QuantumGateDefinition) -> None:
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
        body: list[tuple[ast.QuantumGate, _Definition | str]] = []
        for inner in statement.body:
            self._annotations(inner)
            if isinstance(inner, ast.QuantumBarrier):
                continue
            if not isinstance(inner, ast.QuantumGate):
                if isinstance(inner, (ast.QuantumPhase, ast.QuantumReset, ast.DelayInstruction)):
                    self._reject(inner)
                raise _Fail(
                    inner, "only gate calls and barriers are supported inside gate definitions"
                )
            callee = self._checked_call(inner)
            for operand in inner.qubits:
                if not (isinstance(operand, ast.Identifier) and operand.name in qubits):
                    raise _Fail(
                        operand,
                        f"inside gate '{name}', gates act on its qubit arguments "
                        f"({', '.join(qubits)}) by name",
                    )
            body.append((inner, callee))
        d = _Definition(name, params, qubits, body, statement)
        ours = STANDARD_GATES.get(name)
        if ours is not None:
            spec = GATES[ours]
            if len(qubits) == spec.qubits and len(params) == int(spec.takes_angle):
                d.native = ours if self._agrees(d, ours) else None
        self.gates[name] = d

    def _agrees(self, d: _Definition, ours: str) -> bool:
        """Whether a definition equals haarline's gate ``ours`` up to a global phase."""
        spec = GATES[ours]
        for theta in (0.7, -2.3, 3.1) if spec.takes_angle else (0.0,):
            apps: list[_Application] = []

            def collect(app: _Application, apps: list[_Application] = apps) -> None:
                if len(apps) >= MAX_STEPS:
                    raise _Fail(app.node, "too many gates")
                apps.append(app)

            args = [_Value(theta)] if spec.takes_angle else []
            try:
                self._apply(d, args, tuple(range(spec.qubits)), d.node, "", collect)
            except _Fail:
                return False
            have = _local_unitary(apps, spec.qubits)
            want = gate_matrix(ours, theta)
            if abs(np.trace(want.conj().T @ have)) < want.shape[0] * (1 - 1e-9):
                return False
        return True

    def _loop(self, statement: ast.ForInLoop, scope: Scope) -> None:
        if not isinstance(statement.type, (ast.IntType, ast.UintType)):
            word = _TYPE_WORDS.get(type(statement.type), type(statement.type).__name__)
            raise _Fail(statement, f"loop variables of type {word} are not supported; use int")
        var = statement.identifier.name
        if var in scope or (self.register and var == self.register[0]) or var in self.gates:
            raise _Fail(statement, f"the loop variable '{var}' hides another name")
        for value in self._loop_values(statement.set_declaration, scope):
            self._tick(statement)
            inner: Scope = ChainMap({var: value}, scope)
            for child in statement.block:
                self._run(child, inner)

    def _loop_values(self, spec: Any, scope: Scope) -> Iterable[int]:
        if isinstance(spec, ast.DiscreteSet):
            return [_integer(v, scope) for v in spec.values]
        if isinstance(spec, ast.RangeDefinition):
            if spec.start is None or spec.end is None:
                raise _Fail(spec, "a loop range needs a start and an end, as in [0:3]")
            start, end = _integer(spec.start, scope), _integer(spec.end, scope)
            step = 1 if spec.step is None else _integer(spec.step, scope)
            if step == 0:
                raise _Fail(spec, "a loop range cannot have step 0")
            return range(start, end + (1 if step > 0 else -1), step)
        raise _Fail(spec, "loops run over a range [a:b] or a set {a, b, ...} of integers")


def _local_unitary(apps: list[_Application], k: int) -> np.ndarray:
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


def _circuit_name(text: str, source: str | None) -> str:
    found = _NAME_COMMENT.search(text)
    if found and _CIRCUIT_NAME.fullmatch(found[1]):
        return found[1]
    if source:
        stem = PurePath(source).stem
        if _CIRCUIT_NAME.fullmatch(stem):
            return stem
    return "circuit"


def parse_qasm(text: str | bytes, *, source: str | None = None) -> Circuit:
    """Read an OpenQASM program into a format-1 description.

    Parameters
    ----------
    text : str or bytes
        The program (bytes are read as UTF-8; a leading byte order mark is ignored). The
        supported subset is listed in the module docstring.
    source : str, optional
        Where it came from (a file name), prefixed to error messages; its stem names the
        circuit unless a ``// circuit: NAME`` comment (as :func:`to_qasm` writes) does.

    Returns
    -------
    Circuit
        ``qubits`` = register size, ``layers`` = 1, ``layer`` = one step per gate
        application in program order, with ``on`` explicit and ``angle`` or ``param`` set
        for rotations.

    Raises
    ------
    CircuitError
        For syntax errors and unsupported features, naming the line and column (1-based)
        and what is unsupported.

    Examples
    --------
    >>> c = parse_qasm('''OPENQASM 3.0;
    ... include "stdgates.inc";
    ... input angle[32] theta;
    ... qubit[2] q;
    ... h q[0];
    ... for uint i in [0:0] { cx q[i], q[i+1]; }
    ... rz(theta) q[1];
    ... rx(pi/4) q[0];''')
    >>> c.qubits, c.layers
    (2, 1)
    >>> for step in c.layer:
    ...     print(step.model_dump(exclude_none=True, exclude={"reverse"}))
    {'gate': 'h', 'on': [0]}
    {'gate': 'cx', 'on': [[0, 1]]}
    {'gate': 'rz', 'on': [1], 'param': 'theta'}
    {'gate': 'rx', 'on': [0], 'angle': 0.7853981633974483}
    >>> parse_qasm("qubit[1] q; bit c;")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    analysis.errors.CircuitError: (root): line 1, column 13: classical bits are not supported (...)
    """
    if isinstance(text, bytes):
        if len(text) > MAX_QASM_BYTES:
            raise _too_big(len(text), source)
        try:
            text = text.decode("utf-8-sig")
        except UnicodeDecodeError as exc:
            raise CircuitError(
                [Problem("(root)", f"not UTF-8 text (byte {exc.start})")], source=source
            ) from None
    size = len(text.encode("utf-8", "surrogatepass"))
    if size > MAX_QASM_BYTES:
        raise _too_big(size, source)
    text = text.removeprefix("\ufeff")
    tree = _syntax_tree(text, source)
    reader = _Reader(tree.version)
    try:
        steps = reader.read(tree)
    except _Fail as exc:
        where = _where(exc.node)
        raise _problem(f"{where}: {exc.message}" if where else exc.message, source) from None
    except RecursionError:
        raise _problem("the program is nested too deeply", source) from None
    data = {
        "name": _circuit_name(text, source),
        "qubits": reader.register[1] if reader.register else 1,
        "layers": 1,
        "layer": steps,
    }
    return parse_circuit(data, source=source)


def _too_big(size: int, source: str | None) -> CircuitError:
    return CircuitError(
        [Problem("(root)", f"the program is {size} bytes; the limit is {MAX_QASM_BYTES} bytes")],
        source=source,
    )

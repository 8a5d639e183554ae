"""The walk over one OpenQASM program's statements that collects format-1 steps.

:class:`Reader` handles the top-level declarations (include, the one qubit register,
inputs), runs gate calls, ``gphase``, barriers and ``for`` loops, bounds the work, and turns
each haarline gate a call expands to into a format-1 step (``on`` explicit, ``angle``,
``param`` or a data ``input``). Inputs that the data marker (:data:`DATA_PRAGMA`) names
are data features (feature ``k`` is the ``k``-th name), every other input is a trainable
parameter. What a gate call means is :mod:`haarline.circuit.qasm._gates`; the entry point
and the supported subset are :mod:`haarline.circuit.qasm.parse`.
"""

from __future__ import annotations

import math
import re
from collections import ChainMap
from collections.abc import Iterable
from typing import Any

from haarline.circuit.model import MAX_QUBITS, MAX_STEPS
from haarline.circuit.qasm._gates import GateBook, arguments, too_many_gates
from haarline.circuit.qasm._modifiers import lowered
from haarline.circuit.qasm._standard import Piece
from haarline.circuit.qasm._syntax import _CONSTANTS, Scope, _angle, _Fail, _integer, _Value
from haarline.circuit.qasm._unsupported import TYPE_WORDS, no_annotations, reject
from openqasm3 import ast

__all__ = ["Reader"]

_MAX_WORK = 100_000
"""Statements and loop iterations run while reading one program."""

_PARAM_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]{0,63}")

DATA_PRAGMA = "haarline data"
"""What marks inputs as data features, in order: the pragma ``pragma haarline data x0 x1``
or the comment ``// haarline data: x0 x1`` (which :func:`to_qasm` writes, since some
widely used importers refuse every pragma, and a comment leaves the file readable there,
with the data inputs read as ordinary parameters)."""

DATA_COMMENT = re.compile(r"^[ \t]*//[ \t]*haarline data:(.*)$", re.M)
"""The comment form of the data marker (one per program)."""

_REL = 1e-12
"""Relative tolerance when matching the constant of a product map ``s (π - a)(π - b)``."""


MAX_FAILURES = 20
"""Most statement failures one reading reports."""


class Failures(Exception):
    """Several statements failed; each keeps its node (for line and column)."""

    def __init__(self, failures: list[_Fail]):
        super().__init__("; ".join(f.message for f in failures))
        self.failures = failures


class Reader:
    """Walk the syntax tree of one program and collect format-1 steps."""

    def __init__(self, version: str | None):
        self.register: tuple[str, int, bool] | None = None  # name, size, declared as one qubit
        self.inputs: dict[str, int | _Value] = {}
        self.constants: dict[str, int | _Value] = {k: _Value(v) for k, v in _CONSTANTS.items()}
        self.scope: ChainMap[str, int | _Value] = ChainMap(self.inputs, self.constants)
        self.steps: list[dict[str, Any]] = []
        self.data: dict[str, int] = {}  # data input name -> feature index
        self.data_node: ast.Pragma | None = None
        self.data_marker: str | None = None  # what named the data inputs, for messages
        self.work = 0
        self.book = GateBook(version, self.constants, self._tick)

    def read(
        self, program: ast.Program, comment: tuple[int, list[str]] | None = None
    ) -> list[dict[str, Any]]:
        """Read the program; return its format-1 steps in program order.

        Every statement is read even after one fails, so one run reports the problems of
        all of them (up to :data:`MAX_FAILURES`); a failed declaration (include, register,
        input) stops the reading there, since what follows depends on it.

        Raises
        ------
        Failures
            When any statement failed, with every failure in order.
        """
        failures: list[_Fail] = []
        if comment is not None:
            line, names = comment
            self._mark(names, None, f"the comment '// {DATA_PRAGMA}:' on line {line}")
        for statement in program.statements:
            if isinstance(statement, ast.Pragma):
                try:
                    self._pragma(statement)
                except _Fail as exc:
                    raise Failures([exc]) from None
        for statement in program.statements:
            if isinstance(statement, ast.Pragma):
                continue
            declaration = isinstance(
                statement, (ast.Include, ast.QubitDeclaration, ast.IODeclaration)
            )
            try:
                self._statement(statement)
            except _Fail as exc:
                failures.append(exc)
                if declaration or len(failures) >= MAX_FAILURES:
                    break
        if failures:
            raise Failures(failures)
        undeclared = [name for name in self.data if name not in self.inputs]
        if undeclared:
            raise _Fail(
                self.data_node,
                f"{self.data_marker} names {', '.join(map(repr, undeclared))}, which no "
                "'input angle[...]' or 'input float[...]' declares",
            )
        if self.register is None:
            raise _Fail(None, "no qubit register is declared (expected 'qubit[n] q;')")
        if not self.steps:
            raise _Fail(None, "the program applies no gates")
        return self.steps

    def _statement(self, statement: Any) -> None:
        no_annotations(statement)
        if isinstance(statement, ast.Include):
            self._include(statement)
        elif isinstance(statement, ast.QubitDeclaration):
            self._register(statement)
        elif isinstance(statement, ast.IODeclaration):
            self._input(statement)
        elif isinstance(statement, ast.QuantumGateDefinition):
            self.book.define(statement)
        else:
            self._run(statement, self.scope)

    def _pragma(self, statement: ast.Pragma) -> None:
        command = statement.command.strip()
        words = (command[:-1] if command.endswith(";") else command).split()
        if words[:2] != DATA_PRAGMA.split():
            raise _Fail(
                statement,
                f"the pragma '{command[:60]}' is not supported; the one pragma read is "
                f"'pragma {DATA_PRAGMA} NAME ...', which marks inputs as data features",
            )
        self._mark(words[2:], statement, f"'pragma {DATA_PRAGMA}'")

    def _mark(self, names: list[str], node: Any, what: str) -> None:
        """Make ``names`` the data features, in order (from the pragma or the comment)."""
        if self.data_marker is not None:
            raise _Fail(
                node,
                f"{what} names data inputs a second time (after {self.data_marker}); name "
                "every feature once",
            )
        self.data_marker = what
        self.data_node = node
        if not names:
            raise _Fail(node, f"{what} names no input; give the names of the data inputs")
        for name in names:
            if not _PARAM_NAME.fullmatch(name):
                raise _Fail(node, f"{what}: '{name[:70]}' is not an input name")
            if name in self.data:
                raise _Fail(node, f"{what} names the data input '{name}' twice")
            self.data[name] = len(self.data)

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
        no_annotations(statement)
        if isinstance(statement, (ast.QuantumGate, ast.QuantumPhase)):
            self._call(statement, scope)
        elif isinstance(statement, ast.QuantumBarrier):
            pass  # a barrier only orders gates; it does not change the state
        elif isinstance(statement, ast.ForInLoop):
            self._loop(statement, scope)
        else:
            reject(statement)

    def _include(self, statement: ast.Include) -> None:
        if statement.filename not in ("stdgates.inc", "qelib1.inc"):
            raise _Fail(
                statement,
                f'include "{statement.filename}" is not supported; only "stdgates.inc" '
                '(or "qelib1.inc") can be included',
            )
        self.book.standard = True

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
            word = TYPE_WORDS.get(type(kind), type(kind).__name__)
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

    def _call(self, statement: ast.QuantumGate | ast.QuantumPhase, scope: Scope) -> None:
        call = self.book.checked_call(statement)
        args = [_angle(a, scope) for a in arguments(statement)]
        operands = [self._operand(o, scope) for o in statement.qubits]
        targets: list[tuple[int, ...]]
        if call.callee is None and not call.control_count:
            targets = [()]  # a global phase: once, whatever its operands
        elif len(operands) == 1:
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
            for piece in lowered(self.book.pieces(call, args, target, scope, "")):
                self._emit(piece)

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

    def _emit(self, app: Piece) -> None:
        if len(self.steps) >= MAX_STEPS:
            raise too_many_gates(app.node, app.via)
        on: list[Any] = [app.qubits[0]] if len(app.qubits) == 1 else [list(app.qubits)]
        step: dict[str, Any] = {"gate": app.gate, "on": on}
        if app.angle is not None:
            step.update(self._angle_keys(app))
        self.steps.append(step)

    def _angle_keys(self, app: Piece) -> dict[str, Any]:
        """The step keys of a gate's angle: ``angle``, ``param`` or ``input`` and ``scale``."""
        value = app.angle
        assert value is not None
        if not value.symbolic:
            return {"angle": value.constant}
        names = {n for n, _ in value.terms} | {n for pair, _ in value.pairs for n in pair}
        data = names & self.data.keys()
        if not data:
            if value.constant == 0.0 and len(value.terms) == 1 and value.terms[0][1] == 1.0:
                return {"param": value.terms[0][0]}
            if value.pairs:
                raise _Fail(
                    app.node,
                    f"the angle {value} cannot be represented{app.via}: a product of inputs "
                    f"is read only for data inputs (named by 'pragma {DATA_PRAGMA} ...')",
                )
            raise _Fail(
                app.node,
                f"the angle {value} cannot be represented{app.via}: a trainable angle is a "
                "number or one input exactly as declared, not a scaled or shifted input "
                "(declare a separate input for this angle, or mark data inputs with "
                f"'pragma {DATA_PRAGMA} ...')",
            )
        if data != names:
            raise _Fail(
                app.node,
                f"the angle {value} mixes data inputs ({', '.join(sorted(data))}) and trainable "
                f"inputs ({', '.join(sorted(names - data))}){app.via}; a haarline angle is "
                "either trainable or computed from the data",
            )
        if not value.pairs:
            if len(value.terms) == 1 and value.constant == 0.0:
                name, scale = value.terms[0]
                return _scaled({"input": self.data[name]}, scale)
            raise _Fail(
                app.node,
                f"the angle {value} cannot be represented{app.via}: a data angle is s*x for "
                "one data input x, or s*(pi - x_a)*(pi - x_b) on a two-qubit gate, with no "
                "offset",
            )
        return self._product(app, value)

    def _product(self, app: Piece, value: _Value) -> dict[str, Any]:
        """``s (π - x_a)(π - x_b)`` on qubits ``(a, b)``: format 1's ``"input": "product"``."""
        ((a, b), s) = value.pairs[0]
        pi = math.pi
        expected = {a: -pi * s, b: -pi * s}
        matches = (
            len(value.pairs) == 1
            and a != b
            and len(value.terms) == 2
            and all(math.isclose(c, expected.get(n, 0.0), rel_tol=_REL) for n, c in value.terms)
            and math.isclose(value.constant, pi * pi * s, rel_tol=_REL)
        )
        if not matches:
            raise _Fail(
                app.node,
                f"the angle {value} cannot be represented{app.via}: a product of data inputs is "
                "read only in the form s*(pi - x_a)*(pi - x_b)",
            )
        features = sorted((self.data[a], self.data[b]))
        if len(app.qubits) != 2 or sorted(app.qubits) != features:
            raise _Fail(
                app.node,
                f"the product map of features {features[0]} and {features[1]} is applied to "
                f"qubits {', '.join(map(str, app.qubits))}{app.via}; format 1 applies "
                "s*(pi - x_a)*(pi - x_b) only to the qubit pair (a, b) itself",
            )
        return _scaled({"input": "product"}, s)

    def _loop(self, statement: ast.ForInLoop, scope: Scope) -> None:
        if not isinstance(statement.type, (ast.IntType, ast.UintType)):
            word = TYPE_WORDS.get(type(statement.type), type(statement.type).__name__)
            raise _Fail(statement, f"loop variables of type {word} are not supported; use int")
        var = statement.identifier.name
        if var in scope or (self.register and var == self.register[0]) or var in self.book.gates:
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


def _scaled(step: dict[str, Any], scale: float) -> dict[str, Any]:
    return step if scale == 1.0 else {**step, "scale": scale}

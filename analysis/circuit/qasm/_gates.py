"""What gate calls mean in an OpenQASM program: standard names, ``gate`` definitions, modifiers.

:class:`GateBook` resolves a gate call (or a ``gphase``) to a standard
:class:`~haarline.circuit.qasm._standard.Recipe` or to a ``gate`` definition, checks its
modifiers, angle and qubit counts (:class:`Call`), records definitions and expands a call
into exact pieces (:meth:`GateBook.pieces`). A definition named like a standard gate
becomes that gate when it agrees with it up to a global phase; under ``ctrl @`` its own
body is used, since there a global phase matters. The standard names and why each is
sound are in :mod:`haarline.circuit.qasm._standard`, the modifiers in
:mod:`haarline.circuit.qasm._modifiers`.
"""

from __future__ import annotations

from collections import ChainMap
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from haarline.circuit.model import MAX_STEPS
from haarline.circuit.qasm._modifiers import controlled, inverse, power, without_identities
from haarline.circuit.qasm._standard import (
    GLOBAL,
    STANDARD_GATES,
    THREE_QUBIT_GATES,
    Piece,
    Recipe,
    local_unitary,
)
from haarline.circuit.qasm._syntax import (
    _CONSTANTS,
    Scope,
    _angle,
    _Fail,
    _integer,
    _number,
    _Value,
    _where,
)
from haarline.circuit.qasm._unsupported import no_annotations, reject
from openqasm3 import ast

__all__ = ["Call", "Definition", "GateBook", "arguments", "too_many_gates"]

SUPPORTED_LIST = " ".join(STANDARD_GATES)

_MAX_PIECES = 8 * MAX_STEPS
"""Most pieces one call may expand to before the walk gives up (the program may keep at
most MAX_STEPS gates; the margin is for global phases and identities left out)."""

_TRIALS = ((0.7, -1.1, 2.5, 0.4), (-2.3, 0.9, -0.6, 1.7), (3.1, 2.2, -2.9, -1.3))
"""Angles at which a definition is compared with the standard gate of its name."""

_NO_DEFINITION = {
    "cu3": "gate 'cu3' is read only with its 'gate' definition in the program: the published "
    "qelib1.inc versions differ by a phase on the control (write 'ctrl @ u3(θ, φ, λ)' for "
    "controlled Rz(φ) Ry(θ) Rz(λ), or 'cu(θ, φ, λ, 0)' for controlled U(θ, φ, λ))",
}


def too_many_gates(node: Any, via: str) -> _Fail:
    """The error for a program that applies more gates than format 1 holds."""
    return _Fail(
        node,
        f"the program applies more than {MAX_STEPS} gates{via}; haarline reads at most "
        f"{MAX_STEPS} gate applications (format 1 allows {MAX_STEPS} steps in 'layer')",
    )


def arguments(statement: ast.QuantumGate | ast.QuantumPhase) -> list[Any]:
    """The angle expressions of a gate call or ``gphase``."""
    if isinstance(statement, ast.QuantumPhase):
        return [statement.argument]
    return list(statement.arguments)


@dataclass(kw_only=True)
class Definition:
    """A ``gate`` definition; each body call is bound to its callee when it is defined."""

    name: str
    params: list[str]
    qubits: list[str]
    body: list[tuple[ast.QuantumGate | ast.QuantumPhase, Call]]
    node: Any
    native: Recipe | None = None


@dataclass(frozen=True, kw_only=True)
class Call:
    """A gate call or ``gphase`` bound to what it calls, with its checked modifiers.

    ``callee`` is ``None`` for ``gphase``; ``controls`` holds, per modifier, the number of
    control qubits it takes (0 for ``inv`` and ``pow``).
    """

    node: ast.QuantumGate | ast.QuantumPhase
    callee: Definition | Recipe | None
    controls: tuple[int, ...] = field(default=())

    @property
    def control_count(self) -> int:
        """Control qubits taken by all modifiers (the first operands)."""
        return sum(self.controls)


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

    def resolve(self, name: str, node: Any) -> Definition | Recipe:
        """What the gate name means here: a definition or a standard recipe."""
        if name in self.gates:
            return self.gates[name]
        recipe = STANDARD_GATES.get(name)
        built_in = name == "U" or (name == "CX" and self.version == "2.0")
        if recipe is not None and (self.standard or built_in):
            return recipe
        if recipe is not None:
            raise _Fail(node, f"gate '{name}' is not defined; add 'include \"stdgates.inc\";'")
        if name in THREE_QUBIT_GATES:
            raise _Fail(
                node,
                f"gate '{name}' acts on three or more qubits; haarline reads gates on one or "
                "two qubits (a 'gate' definition of it from one- and two-qubit gates is read)",
            )
        if name in _NO_DEFINITION:
            raise _Fail(node, _NO_DEFINITION[name])
        raise _Fail(
            node,
            f"gate '{name}' is not supported; supported gates: {SUPPORTED_LIST}, and gates "
            "defined with 'gate' from them",
        )

    def checked_call(self, statement: ast.QuantumGate | ast.QuantumPhase) -> Call:
        """Resolve a gate call (or ``gphase``) and check its modifiers, duration and counts."""
        callee: Definition | Recipe | None
        if isinstance(statement, ast.QuantumPhase):
            name, callee, angles, qubits = "gphase", None, 1, 0
        else:
            if statement.duration is not None:
                raise _Fail(statement, "gate durations are not supported (timing)")
            name = statement.name.name
            callee = self.resolve(name, statement)
            if isinstance(callee, Recipe):
                angles, qubits = callee.angles, callee.qubits
            else:
                angles, qubits = len(callee.params), len(callee.qubits)
        given = len(arguments(statement))
        if given != angles:
            raise _Fail(
                statement,
                f"gate '{name}' takes {angles} angle{'s' if angles != 1 else ''}, got {given}",
            )
        controls = tuple(self._controls(m) for m in statement.modifiers)
        words = " @ ".join(m.modifier.name for m in statement.modifiers)
        label = f"gate '{name}'" + (f" with '{words} @'" if words else "")
        count: int = sum(controls)
        total = qubits + count
        if count and total > 2:
            raise _Fail(
                statement,
                f"{label} acts on {total} qubits; haarline reads gates on one or two qubits, "
                "so 'ctrl @' and 'negctrl @' take one control on a one-qubit gate",
            )
        if (callee is not None or count) and len(statement.qubits) != total:
            raise _Fail(
                statement,
                f"{label} acts on {total} qubit{'s' if total != 1 else ''}, "
                f"got {len(statement.qubits)}",
            )
        return Call(node=statement, callee=callee, controls=controls)

    def _controls(self, modifier: ast.QuantumGateModifier) -> int:
        kind = modifier.modifier.name
        if kind not in ("ctrl", "negctrl"):
            return 0
        count = 1 if modifier.argument is None else _integer(modifier.argument, {})
        if count < 1:
            raise _Fail(modifier, f"'{kind}({count}) @' needs at least one control qubit")
        return count

    def pieces(
        self,
        call: Call,
        args: Sequence[_Value],
        qubits: tuple[int, ...],
        scope: Scope,
        via: str,
        *,
        exact: bool = False,
    ) -> list[Piece]:
        """Expand a call on register ``qubits`` into pieces, in time order.

        The pieces are exact when ``exact`` (inside ``ctrl @``), else exact up to a global
        phase (a definition named like a standard gate may then stand for it). ``scope``
        evaluates ``pow`` exponents; ``via`` is appended to error messages.
        """
        node = call.node
        if call.callee is None and not call.control_count:
            qubits = ()  # gphase with no control: its operands (if any) do not matter
        if len(set(qubits)) != len(qubits):
            twice = next(q for q in qubits if qubits.count(q) > 1)
            label = f"gate '{node.name.name}'" if isinstance(node, ast.QuantumGate) else "the gate"
            raise _Fail(node, f"{label} uses qubit {twice} twice{via}")
        count = call.control_count
        controls, targets = qubits[:count], qubits[count:]
        exact = exact or count > 0
        out: list[Piece]
        if call.callee is None:
            out = [Piece(GLOBAL, (), args[0], node, via)]
        elif isinstance(call.callee, Recipe):
            out = without_identities(call.callee.pieces(args, targets, node, via))
        else:
            out = self._inline(call.callee, args, targets, node, via, exact)
        if node.modifiers:
            out = without_identities(self._modified(call, out, controls, scope, via))
        return out

    def _modified(
        self,
        call: Call,
        pieces: list[Piece],
        controls: tuple[int, ...],
        scope: Scope,
        via: str,
    ) -> list[Piece]:
        """Apply the call's modifiers, innermost (rightmost) first."""
        mine: list[tuple[int, ...]] = []  # each modifier's control qubits, left to right
        start = 0
        for count in call.controls:
            mine.append(controls[start : start + count])
            start += count
        for modifier, qubits in reversed(list(zip(call.node.modifiers, mine, strict=True))):
            kind = modifier.modifier.name
            if kind == "inv":
                pieces = inverse(pieces)
            elif kind == "pow":
                k = self._exponent(modifier, scope, via)
                if len(pieces) * abs(k) > _MAX_PIECES:
                    raise too_many_gates(modifier, via)
                pieces = power(pieces, k)
            else:
                for c in reversed(qubits):
                    pieces = controlled(pieces, c, negative=kind == "negctrl", node=call.node)
        return pieces

    def _exponent(self, modifier: ast.QuantumGateModifier, scope: Scope, via: str) -> int:
        if modifier.argument is None:  # pragma: no cover - the grammar requires one
            raise _Fail(modifier, "'pow @' needs an exponent")
        value = _angle(modifier.argument, scope)
        if value.symbolic:
            raise _Fail(modifier, f"the exponent of 'pow({value}) @' must be a number{via}")
        k = value.constant
        if not k.is_integer():
            raise _Fail(
                modifier,
                f"'pow({_number(k)}) @' is not supported{via}: only integer powers are read "
                "(a fractional power of a gate is not a product of haarline gates in general)",
            )
        return int(k)

    def _inline(
        self,
        definition: Definition,
        args: Sequence[_Value],
        qubits: tuple[int, ...],
        node: Any,
        via: str,
        exact: bool,
    ) -> list[Piece]:
        """A definition's pieces: its standard gate's, or its body's, call by call.

        The standard gate's stands for it when they agree and ``exact`` is not asked for.
        """
        if definition.native is not None and not exact:
            return without_identities(definition.native.pieces(args, qubits, node, via))
        bound: dict[str, int | _Value] = dict(zip(definition.params, args, strict=True))
        scope: Scope = ChainMap(bound, self.constants)
        frame = dict(zip(definition.qubits, qubits, strict=True))
        inner = f" (in gate '{definition.name}' applied at {_where(node)}){via}"
        out: list[Piece] = []
        for statement, call in definition.body:
            self.tick(statement)
            try:
                values = [_angle(a, scope) for a in arguments(statement)]
            except _Fail as exc:
                raise _Fail(exc.node, exc.message + inner) from None
            on = tuple(frame[str(getattr(o, "name", ""))] for o in statement.qubits)
            out.extend(self.pieces(call, values, on, scope, inner, exact=exact))
            if len(out) > _MAX_PIECES:
                raise too_many_gates(statement, inner)
        return out

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
        body: list[tuple[ast.QuantumGate | ast.QuantumPhase, Call]] = []
        for inner in statement.body:
            no_annotations(inner)
            if isinstance(inner, ast.QuantumBarrier):
                continue
            if not isinstance(inner, (ast.QuantumGate, ast.QuantumPhase)):
                if isinstance(inner, (ast.QuantumReset, ast.DelayInstruction)):
                    reject(inner)
                raise _Fail(
                    inner, "only gate calls and barriers are supported inside gate definitions"
                )
            call = self.checked_call(inner)
            for operand in inner.qubits:
                if not (isinstance(operand, ast.Identifier) and operand.name in qubits):
                    raise _Fail(
                        operand,
                        f"inside gate '{name}', gates act on its qubit arguments "
                        f"({', '.join(qubits)}) by name",
                    )
            body.append((inner, call))
        d = Definition(name=name, params=params, qubits=qubits, body=body, node=statement)
        recipe = STANDARD_GATES.get(name)
        if recipe is not None and (len(qubits), len(params)) == (recipe.qubits, recipe.angles):
            d.native = recipe if self._agrees(d, recipe) else None
        self.gates[name] = d

    def _agrees(self, d: Definition, recipe: Recipe) -> bool:
        """Whether a definition equals a standard gate up to a global phase."""
        k = recipe.qubits
        where = tuple(range(k))
        for trial in _TRIALS if recipe.angles else _TRIALS[:1]:
            args = [_Value(a) for a in trial[: recipe.angles]]
            try:
                have = local_unitary(self._inline(d, args, where, d.node, "", True), k)
            except _Fail:
                return False
            want = local_unitary(recipe.pieces(args, where, d.node, ""), k)
            if abs(np.trace(want.conj().T @ have)) < want.shape[0] * (1 - 1e-9):
                return False
        return True

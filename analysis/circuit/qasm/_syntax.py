"""OpenQASM syntax trees and our evaluator of angle and index expressions (never ``eval``).

Used by :mod:`haarline.circuit.qasm.parse` and its private reading modules.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping, MutableMapping
from dataclasses import dataclass
from typing import Any, TypeVar

from antlr4 import CommonTokenStream, InputStream
from antlr4.error.ErrorListener import ErrorListener
from antlr4.error.Errors import InputMismatchException, ParseCancellationException
from antlr4.error.ErrorStrategy import BailErrorStrategy
from haarline.errors import CircuitError, Problem
from openqasm3 import ast
from openqasm3._antlr.qasm3Lexer import qasm3Lexer
from openqasm3._antlr.qasm3Parser import qasm3Parser
from openqasm3.parser import QASM3ParsingError, QASMNodeVisitor

_CONSTANTS = {
    "pi": math.pi,
    "π": math.pi,
    "tau": math.tau,
    "τ": math.tau,
    "euler": math.e,
    "ℇ": math.e,
}

# --------------------------------------------------------------------------- angles

_K = TypeVar("_K", str, tuple[str, str])


@dataclass(frozen=True)
class _Value:
    """An angle that is a polynomial of degree two at most in the inputs.

    ``constant + Σ coefficient · input + Σ coefficient · input_a · input_b``: affine forms
    are trainable angles (one input, coefficient 1) and scaled data inputs; the product
    terms carry the second-order feature map ``s (π - x_a)(π - x_b)``.
    """

    constant: float
    terms: tuple[tuple[str, float], ...] = ()
    pairs: tuple[tuple[tuple[str, str], float], ...] = ()

    @staticmethod
    def of_input(name: str) -> _Value:
        return _Value(0.0, ((name, 1.0),))

    @property
    def symbolic(self) -> bool:
        """Whether the value depends on any input."""
        return bool(self.terms or self.pairs)

    def plus(self, other: _Value, sign: float = 1.0) -> _Value:
        coef = dict(self.terms)
        for name, c in other.terms:
            coef[name] = coef.get(name, 0.0) + sign * c
        pair = dict(self.pairs)
        for key, c in other.pairs:
            pair[key] = pair.get(key, 0.0) + sign * c
        return _Value(self.constant + sign * other.constant, _clean(coef), _clean(pair))

    def times(self, factor: float) -> _Value:
        return _Value(
            self.constant * factor,
            _clean({n: c * factor for n, c in self.terms}),
            _clean({k: c * factor for k, c in self.pairs}),
        )

    def over(self, divisor: float) -> _Value:
        return _Value(
            self.constant / divisor,
            _clean({n: c / divisor for n, c in self.terms}),
            _clean({k: c / divisor for k, c in self.pairs}),
        )

    def product(self, other: _Value) -> _Value:
        """The product of two affine values (a polynomial of degree two)."""
        out = other.times(self.constant)
        coef = dict(out.terms)
        for name, c in self.terms:
            coef[name] = coef.get(name, 0.0) + c * other.constant
        pair: dict[tuple[str, str], float] = dict(out.pairs)
        for a, ca in self.terms:
            for b, cb in other.terms:
                key = (min(a, b), max(a, b))
                pair[key] = pair.get(key, 0.0) + ca * cb
        return _Value(out.constant, _clean(coef), _clean(pair))

    def finite(self) -> bool:
        return (
            math.isfinite(self.constant)
            and all(math.isfinite(c) for _, c in self.terms)
            and all(math.isfinite(c) for _, c in self.pairs)
        )

    def __str__(self) -> str:
        parts = []
        named = [(f"{a}*{b}", c) for (a, b), c in self.pairs] + list(self.terms)
        for name, c in named:
            text = name if abs(c) == 1.0 else f"{_number(abs(c))}*{name}"
            parts.append(("- " if c < 0 else "+ ") + text)
        if self.constant or not parts:
            parts.append(("- " if self.constant < 0 else "+ ") + _number(abs(self.constant)))
        out = " ".join(parts)
        return out[2:] if out.startswith("+ ") else "-" + out[2:]


def _number(x: float) -> str:
    return str(int(x)) if x.is_integer() and abs(x) < 1e15 else repr(x)


def _clean(coef: Mapping[_K, float]) -> tuple[tuple[_K, float], ...]:
    return tuple(sorted(((n, c) for n, c in coef.items() if c != 0.0), key=lambda item: item[0]))


Scope = MutableMapping[str, "int | _Value"]


class _Fail(Exception):
    """A problem at a node of the tree; turned into a CircuitError with line and column."""

    def __init__(self, node: Any, message: str):
        super().__init__(message)
        self.node = node
        self.message = message


def _where(node: Any) -> str:
    """``line L, column C`` (1-based) of a node, or ``""`` for the whole program."""
    span = getattr(node, "span", None)
    if span is None or isinstance(node, ast.Program):
        return ""
    return f"line {span.start_line}, column {span.start_column + 1}"


def _describe_node(node: Any) -> str:
    words = {
        ast.FloatLiteral: "a floating-point number",
        ast.BooleanLiteral: "a boolean",
        ast.BitstringLiteral: "a bit string",
        ast.DurationLiteral: "a duration",
        ast.ImaginaryLiteral: "an imaginary number",
        ast.Cast: "a type cast",
        ast.IndexExpression: "an indexed expression",
        ast.ArrayLiteral: "an array",
        ast.SizeOf: "sizeof",
        ast.DurationOf: "durationof",
        ast.QuantumMeasurement: "measurement",
    }
    if isinstance(node, ast.FunctionCall):
        return f"the function call '{node.name.name}(...)'"
    return words.get(type(node), f"this expression ({type(node).__name__})")


def _lookup(node: ast.Identifier, scope: Scope) -> int | _Value:
    if node.name in scope:
        return scope[node.name]
    if node.name.startswith("$"):
        raise _Fail(node, f"physical qubits such as {node.name} are not supported")
    raise _Fail(node, f"unknown name '{node.name}'")


def _angle(node: Any, scope: Scope) -> _Value:
    """Evaluate an angle expression into a polynomial (degree two at most) in the inputs."""
    if isinstance(node, ast.IntegerLiteral):
        try:
            value = _Value(float(node.value))
        except OverflowError:
            raise _Fail(node, "the number is too large for an angle") from None
    elif isinstance(node, ast.FloatLiteral):
        value = _Value(float(node.value))
    elif isinstance(node, ast.Identifier):
        found = _lookup(node, scope)
        value = found if isinstance(found, _Value) else _Value(float(found))
    elif isinstance(node, ast.UnaryExpression):
        if node.op.name != "-":
            raise _Fail(node, f"the operator '{node.op.name}' is not supported in angles")
        value = _angle(node.expression, scope).times(-1.0)
    elif isinstance(node, ast.BinaryExpression):
        value = _binary_angle(node, scope)
    else:
        raise _Fail(node, f"{_describe_node(node)} is not supported in angles")
    if not value.finite():
        raise _Fail(node, "the angle is not a finite number")
    return value


def _binary_angle(node: ast.BinaryExpression, scope: Scope) -> _Value:
    op = node.op.name
    if op not in ("+", "-", "*", "/", "**"):
        raise _Fail(node, f"the operator '{op}' is not supported in angles")
    a, b = _angle(node.lhs, scope), _angle(node.rhs, scope)
    if op in ("+", "-"):
        return a.plus(b, 1.0 if op == "+" else -1.0)
    if op == "*":
        if not a.symbolic:
            return b.times(a.constant)
        if not b.symbolic:
            return a.times(b.constant)
        if a.pairs or b.pairs:
            raise _Fail(node, f"the product ({a}) * ({b}) has a degree above two in the inputs")
        return a.product(b)
    if b.symbolic:
        raise _Fail(node, f"dividing by or raising to an input ({b}) is not supported")
    if op == "/":
        if b.constant == 0.0:
            raise _Fail(node, "division by zero")
        return a.over(b.constant)
    if a.symbolic:
        raise _Fail(node, f"raising an input ({a}) to a power is not supported")
    try:
        return _Value(math.pow(a.constant, b.constant))
    except (OverflowError, ValueError):
        raise _Fail(node, f"{a.constant!r} ** {b.constant!r} is not a finite real number") from None


def _integer(node: Any, scope: Scope) -> int:
    """Evaluate an integer expression (qubit index, loop bound, register size)."""
    if isinstance(node, ast.IntegerLiteral):
        value = node.value
    elif isinstance(node, ast.Identifier):
        found = _lookup(node, scope)
        if isinstance(found, _Value):
            raise _Fail(
                node,
                f"'{node.name}' is not an integer; qubit indices, sizes and loop ranges are "
                "built from integers and loop variables",
            )
        value = found
    elif isinstance(node, ast.UnaryExpression) and node.op.name == "-":
        value = -_integer(node.expression, scope)
    elif isinstance(node, ast.BinaryExpression) and node.op.name in ("+", "-", "*", "%"):
        a, b = _integer(node.lhs, scope), _integer(node.rhs, scope)
        op = node.op.name
        if op == "%":
            if a < 0 or b <= 0:
                raise _Fail(node, f"'%' needs a left side >= 0 and a right side > 0, got {a} % {b}")
            value = a % b
        else:
            value = a + b if op == "+" else a - b if op == "-" else a * b
    elif isinstance(node, (ast.UnaryExpression, ast.BinaryExpression)):
        raise _Fail(node, f"the operator '{node.op.name}' is not supported in integer expressions")
    else:
        raise _Fail(node, f"{_describe_node(node)} is not supported where an integer is expected")
    if abs(value) > 2**40:
        raise _Fail(node, f"the integer {value if abs(value) < 10**30 else '...'} is too large")
    return value


# --------------------------------------------------------------------------- syntax


class _SyntaxStop(Exception):
    def __init__(self, line: int, column: int, message: str):
        super().__init__(message)
        self.line, self.column, self.message = line, column, message


class _RaiseFirst(ErrorListener):
    """Stop at the first lexer or parser error (and print nothing, unlike ANTLR's default)."""

    def syntaxError(
        self, recognizer: Any, offendingSymbol: Any, line: int, column: int, msg: str, e: Any
    ) -> None:
        if len(msg) > 200:
            msg = msg[:197] + "..."
        raise _SyntaxStop(line, column + 1, f"syntax error: {msg}")


class _StopAtFirstError(BailErrorStrategy):
    """Bail out at the first error, reporting it (the base class skips the report here)."""

    def recoverInline(self, recognizer: Any) -> None:
        error = InputMismatchException(recognizer)
        self.reportError(recognizer, error)
        self.recover(recognizer, error)


def _problem(message: str, source: str | None) -> CircuitError:
    return CircuitError([Problem("(root)", message)], source=source)


def _syntax_tree(text: str, source: str | None) -> ast.Program:
    """Parse with the reference parser: its lexer, grammar and tree builder.

    This is what ``openqasm3.parse`` does, with our error listener in place of ANTLR's
    console one, so a syntax error becomes a message with its line and column instead of
    text printed on stderr and an exception without a position.
    """
    lexer = qasm3Lexer(InputStream(text))
    lexer.removeErrorListeners()
    lexer.addErrorListener(_RaiseFirst())
    parser = qasm3Parser(CommonTokenStream(lexer))
    parser.removeErrorListeners()
    parser.addErrorListener(_RaiseFirst())
    parser._errHandler = _StopAtFirstError()
    try:
        tree = parser.program()
        if tree.stop is None:
            raise _SyntaxStop(1, 1, "the program is empty")
        version = tree.version()
        if version is not None:
            number = version.VersionSpecifier().getText()
            if number != "2.0" and number.split(".")[0] != "3":
                raise _SyntaxStop(
                    version.start.line,
                    version.start.column + 1,
                    f"OPENQASM {number} is not supported; expected 3, 3.x or 2.0",
                )
        program: ast.Program = QASMNodeVisitor().visitProgram(tree)
        return program
    except _SyntaxStop as stop:
        raise _problem(f"line {stop.line}, column {stop.column}: {stop.message}", source) from None
    except QASM3ParsingError as exc:  # the tree builder's own checks, 'L3:C0: message'
        found = re.match(r"L(\d+):C(\d+): (.*)", str(exc), re.S)
        if found:
            where = f"line {found[1]}, column {int(found[2]) + 1}"
            raise _problem(f"{where}: {found[3]}", source) from None
        raise _problem(f"syntax error: {exc}", source) from None
    except ParseCancellationException as exc:
        token = getattr(exc.args[0] if exc.args else None, "offendingToken", None)
        where = f"line {token.line}, column {token.column + 1}: " if token is not None else ""
        raise _problem(f"{where}syntax error", source) from None
    except RecursionError:
        raise _problem("syntax error: the program is nested too deeply", source) from None
    except Exception as exc:  # the tree builder fails in other ways on some odd inputs
        raise _problem(f"the OpenQASM parser could not read the program ({exc})", source) from None

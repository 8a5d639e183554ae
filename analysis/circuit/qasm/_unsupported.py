"""What lies outside the supported OpenQASM subset, and the message each statement gets.

The subset itself is described in :mod:`haarline.circuit.qasm.parse`; the statement walk
(:mod:`haarline.circuit.qasm._walk`) and the gate definitions (:mod:`haarline.circuit.qasm._gates`)
reject through :func:`reject` and :func:`no_annotations` so that a feature gets the same
message wherever it appears.
"""

from __future__ import annotations

from typing import Any, NoReturn

from haarline.circuit.qasm._syntax import _Fail
from openqasm3 import ast

__all__ = ["REJECTED", "TYPE_WORDS", "no_annotations", "reject"]

REJECTED: dict[type, str] = {
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
    ast.Pragma: "pragmas are not supported",
    ast.Include: "'include' is allowed only at the top of the program",
    ast.QubitDeclaration: "qubit declarations are allowed only at the top level",
    ast.IODeclaration: "input declarations are allowed only at the top level",
    ast.QuantumGateDefinition: "gate definitions are allowed only at the top level",
}

TYPE_WORDS: dict[type, str] = {
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


def no_annotations(statement: Any) -> None:
    """Reject a statement that carries ``@keyword`` annotations."""
    if getattr(statement, "annotations", None):
        raise _Fail(statement, "annotations ('@keyword') are not supported")


def reject(statement: Any) -> NoReturn:
    """Raise the message for a statement outside the subset."""
    if isinstance(statement, ast.ClassicalDeclaration):
        if isinstance(statement.init_expression, ast.QuantumMeasurement):
            raise _Fail(statement, REJECTED[ast.QuantumMeasurementStatement])
        if isinstance(statement.type, ast.BitType):
            raise _Fail(
                statement,
                "classical bits are not supported (haarline analyzes unitary circuits)",
            )
        raise _Fail(statement, "classical variables are not supported")
    if isinstance(statement, ast.IODeclaration) and statement.io_identifier.name == "output":
        raise _Fail(statement, "output declarations are not supported")
    message = REJECTED.get(type(statement))
    raise _Fail(statement, message or f"{type(statement).__name__} is not supported")

"""The bundled reference circuits: what they expand to, and how they re-size.

``reference_programs.json`` beside this file holds the gate program of every bundled
reference at its own size, generated from the reference files as they stood before they
were rewritten with placement patterns (one operation per line: gate, qubits, parameter
column, fixed angle, step path, layer). It is a regression pin, not a correctness check:
a rewritten description must expand to exactly the same program (same gates, qubits,
order, parameter numbering and step paths), so that every report of it stays the same.
"""

from __future__ import annotations

import json
from pathlib import Path

import haarline
import pytest
from haarline.circuit.program import Operation, Program

FROZEN = json.loads((Path(__file__).parent / "reference_programs.json").read_text())


def op_text(op: Operation) -> str:
    """One operation in the frozen file's notation."""
    qubits = ",".join(map(str, op.qubits))
    param = "-" if op.param is None else f"p{op.param}"
    angle = "-" if op.angle is None else repr(op.angle)
    layer = "-" if op.layer is None else str(op.layer)
    return f"{op.gate} {qubits} {param} {angle} {op.step} {layer}"


def program_record(program: Program) -> dict[str, object]:
    return {
        "qubits": program.qubits,
        "layers": program.layers,
        "parameters": program.parameters,
        "parameter_steps": list(program.parameter_steps),
        "operations": [op_text(op) for op in program.operations],
    }


def test_every_reference_has_a_frozen_program() -> None:
    assert sorted(FROZEN) == haarline.reference_names()


@pytest.mark.parametrize("name", haarline.reference_names())
def test_reference_expands_to_its_frozen_program(name: str) -> None:
    program = haarline.expand(haarline.load_reference(name))
    assert program_record(program) == FROZEN[name]
    assert program.inputs == 0 and program.encodings == ()
    assert set(program.parameter_names) <= {None}

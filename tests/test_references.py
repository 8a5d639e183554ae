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
from haarline.circuit.program import Operation, Program, expand_at
from haarline.metrics.trainability import uses_only_patterns
from haarline.service.cli import main as cli

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


# ------------------------------------------------------------------- re-sizing


def ring_pairs(n: int) -> int:
    return n if n > 2 else 1


def odd_brick_qubits(n: int) -> int:
    return 2 * ((n - 1) // 2)


# Trainable parameters of one layer at n qubits, counted by hand from the structure of
# each circuit (NOTES.md): 2n for rx and rz on every qubit, n - 1 for a ladder, n(n - 1)
# for every ordered pair, and so on. At n = 4 these are the counts of Sim et al. 2019.
PARAMETERS = {
    "sim2019-01": lambda n: 2 * n,
    "sim2019-02": lambda n: 2 * n,
    "sim2019-03": lambda n: 2 * n + n - 1,
    "sim2019-04": lambda n: 2 * n + n - 1,
    "sim2019-05": lambda n: 4 * n + n * (n - 1),
    "sim2019-06": lambda n: 4 * n + n * (n - 1),
    "sim2019-07": lambda n: 4 * n + n - 1,
    "sim2019-08": lambda n: 4 * n + n - 1,
    "sim2019-09": lambda n: n,
    "sim2019-10": lambda n: 2 * n,
    "sim2019-11": lambda n: 2 * n + 2 * odd_brick_qubits(n),
    "sim2019-12": lambda n: 2 * n + 2 * odd_brick_qubits(n),
    "sim2019-13": lambda n: 2 * n + 2 * ring_pairs(n),
    "sim2019-14": lambda n: 2 * n + 2 * ring_pairs(n),
    "sim2019-15": lambda n: 2 * n,
    "sim2019-16": lambda n: 2 * n + n - 1,
    "sim2019-17": lambda n: 2 * n + n - 1,
    "sim2019-18": lambda n: 2 * n + ring_pairs(n),
    "sim2019-19": lambda n: 2 * n + ring_pairs(n),
}


def test_every_bundled_reference_is_written_with_placement_patterns() -> None:
    # so that every one of them exists at any qubit count; a reference drawn for one size
    # only would need its own entry here and a test of the error that says so
    fixed = [
        name
        for name in haarline.reference_names()
        if not uses_only_patterns(haarline.load_reference(name))
    ]
    assert fixed == []


@pytest.mark.parametrize("name", haarline.reference_names())
@pytest.mark.parametrize("n", [2, 4, 6])
def test_reference_expands_at_2_4_6_qubits(name: str, n: int) -> None:
    circuit = haarline.load_reference(name)
    program = expand_at(circuit, n, circuit.layers)
    assert program.qubits == n
    assert all(q < n for op in program.operations for q in op.qubits)
    if name in PARAMETERS:
        assert program.parameters == PARAMETERS[name](n)
    if n == circuit.qubits:
        assert program_record(program) == FROZEN[name]


def test_sim2019_11_at_6_qubits() -> None:
    # written out by hand: the even pairs pointing up, then rotations on the qubits of the
    # odd pairs and the odd pairs pointing up
    program = expand_at(haarline.load_reference("sim2019-11"), 6, 1)
    got = [(op.gate, op.qubits) for op in program.operations]
    assert got == [
        *[("ry", (q,)) for q in range(6)],
        *[("rz", (q,)) for q in range(6)],
        ("cx", (1, 0)), ("cx", (3, 2)), ("cx", (5, 4)),
        *[("ry", (q,)) for q in (1, 2, 3, 4)],
        *[("rz", (q,)) for q in (1, 2, 3, 4)],
        ("cx", (2, 1)), ("cx", (4, 3)),
    ]  # fmt: skip


@pytest.mark.parametrize("name", haarline.reference_names())
def test_reference_trainability_scan_at_2_4_6_runs(name: str, capsys) -> None:
    argv = ["analyze", f"ref:{name}", "--metrics", "trainability", "--grad-samples", "4"]
    code = cli.main([*argv, "--scan", "2,4,6", "--format", "json"])
    out, err = capsys.readouterr()
    assert code == 0, err
    points = json.loads(out)["trainability"]["points"]
    assert [p["qubits"] for p in points] == [2, 4, 6]


def test_a_description_drawn_for_one_size_says_so_when_resized() -> None:
    # sim2019-11 as it was written before its rewrite: explicit pairs and qubits
    text = json.dumps(
        {
            "name": "sim2019-11-as-drawn",
            "qubits": 4,
            "layer": [
                {"gate": "ry", "on": "all"},
                {"gate": "rz", "on": "all"},
                {"gate": "cx", "on": [[1, 0], [3, 2]]},
                {"gate": "ry", "on": [1, 2]},
                {"gate": "rz", "on": [1, 2]},
                {"gate": "cx", "on": "brick-odd", "reverse": True},
            ],
        }
    )
    circuit = haarline.parse_circuit_text(text, source="drawn.json")
    assert program_record(haarline.expand(circuit)) == FROZEN["sim2019-11"]
    for n in (2, 3):
        with pytest.raises(haarline.CircuitError) as info:
            expand_at(circuit, n, 1, during=" (trainability scan)")
        (problem,) = info.value.problems
        assert problem.path == "layer[2].on"
        assert problem.message.startswith(f"at {n} qubits (trainability scan): this step lists")
        assert "cannot be re-sized below 4 qubits" in problem.message
        assert "--scan 4" in problem.message and "placement pattern" in problem.message
    assert expand_at(circuit, 6, 1).qubits == 6  # listed qubits exist at larger sizes

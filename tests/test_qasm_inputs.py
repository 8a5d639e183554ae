"""OpenQASM 3 with data inputs: the data marker, scaled and product angles, both ways.

OpenQASM 3 declares every free angle with ``input``; nothing in the language says which are
trained and which carry data. haarline writes ``// haarline data: x_0 x_1 ...`` after the
declarations (a comment keeps the file readable by importers that refuse every pragma,
which then see the features as ordinary parameters) and reads that comment or the
``pragma haarline data x_0 ...`` directive. A data angle is ``s*x`` or, on a two-qubit
rotation of qubits (a, b), ``s*(pi - x_a)*(pi - x_b)`` (the second-order map of Havlíček et
al., Nature 567, 209, 2019).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from haarline.circuit.model import parse_circuit
from haarline.circuit.program import expand
from haarline.circuit.qasm.export import to_qasm
from haarline.circuit.qasm.parse import parse_qasm
from haarline.engine.statevector import run
from haarline.errors import CircuitError

# descriptions with every way of encoding an input (format 1, issue 14)
WITH_INPUTS = {
    "re-uploaded by qubit": {
        "qubits": 3,
        "inputs": 3,
        "layers": 3,
        "layer": [
            {"gate": "rx", "input": "qubit"},
            {"gate": "ry"},
            {"gate": "cz", "on": "chain"},
        ],
    },
    "scaled feature and product map": {
        "qubits": 3,
        "inputs": 3,
        "prepare": [{"gate": "h"}, {"gate": "rz", "input": "qubit", "scale": 2.0}],
        "layer": [
            {"gate": "rzz", "input": "product", "on": "chain", "scale": 0.5},
            {"gate": "ry", "param": "w"},
            {"gate": "crx", "on": [[2, 0]]},
        ],
        "finish": [{"gate": "ry", "input": 1, "scale": -0.25}],
    },
    "pure feature map": {
        "qubits": 2,
        "inputs": 4,
        "layer": [
            {"gate": "rx", "input": 3, "on": [0]},
            {"gate": "ryy", "input": "product", "on": [[1, 0]]},
            {"gate": "rz", "input": 2, "scale": 3.0},
        ],
    },
}


def _program(data):
    return expand(parse_circuit(data))


@pytest.mark.parametrize("name", list(WITH_INPUTS))
def test_export_reads_back_into_the_same_program(name):
    program = _program(WITH_INPUTS[name])
    text = to_qasm(program)
    again = expand(parse_qasm(text))
    assert again.inputs == program.inputs
    assert again.encodings == program.encodings
    assert [(o.gate, o.qubits, o.param, o.angle, o.encoding) for o in again.operations] == [
        (o.gate, o.qubits, o.param, o.angle, o.encoding) for o in program.operations
    ]
    assert again.parameters == program.parameters


@pytest.mark.parametrize("name", list(WITH_INPUTS))
def test_export_reads_back_into_the_same_states(name):
    program = _program(WITH_INPUTS[name])
    again = expand(parse_qasm(to_qasm(program)))
    rng = np.random.default_rng(7)
    thetas = rng.uniform(0, 2 * np.pi, (3, program.parameters))
    x = rng.uniform(0, 2 * np.pi, (3, program.inputs))
    np.testing.assert_allclose(
        run(again, again.angles(thetas, x)), run(program, program.angles(thetas, x)), atol=1e-13
    )


def test_export_writes_float_inputs_and_the_data_comment():
    text = to_qasm(_program(WITH_INPUTS["scaled feature and product map"]))
    assert "input angle[64] w;" in text
    assert "input float[64] x_0;\ninput float[64] x_1;\ninput float[64] x_2;\n" in text
    assert "// haarline data: x_0 x_1 x_2\n" in text
    assert "rz(2.0*x_0) q[0];" in text
    assert "rzz(0.5*(pi - x_0)*(pi - x_1)) q[0], q[1];" in text
    assert "ry(-0.25*x_1) q[0];" in text or "ry(-0.25*x_1) q[2];" in text


def test_feature_names_avoid_parameter_names():
    data = {
        "qubits": 1,
        "inputs": 1,
        "layer": [{"gate": "ry", "param": "x_0"}, {"gate": "rx", "input": 0}],
    }
    text = to_qasm(_program(data))
    assert "input angle[64] x_0;" in text and "input float[64] x_0_1;" in text
    assert "// haarline data: x_0_1" in text
    again = expand(parse_qasm(text))
    assert again.parameter_names == ("x_0",) and again.inputs == 1


HEAD = 'OPENQASM 3.0;\ninclude "stdgates.inc";\ninput float x;\ninput float y;\nqubit[2] q;\n'


def test_pragma_and_comment_mark_the_same_features():
    body = "rx(x) q[0];\nrzz((pi - x)*(pi - y)) q[0], q[1];\nry(3*y) q[1];\n"
    by_pragma = parse_qasm(HEAD + "pragma haarline data x y\n" + body)
    by_comment = parse_qasm(HEAD + "// haarline data: x y\n" + body)
    assert by_pragma.model_dump() == by_comment.model_dump()
    steps = [s.model_dump(exclude_none=True, exclude={"reverse"}) for s in by_pragma.layer]
    assert by_pragma.inputs == 2
    assert steps == [
        {"gate": "rx", "on": [0], "input": 0},
        {"gate": "rzz", "on": [[0, 1]], "input": "product"},
        {"gate": "ry", "on": [1], "input": 1, "scale": 3.0},
    ]


def test_without_the_marker_inputs_stay_trainable():
    circuit = parse_qasm(HEAD + "rx(x) q[0];\nry(y) q[1];\n")
    assert circuit.inputs == 0 and [s.param for s in circuit.layer] == ["x", "y"]


def test_feature_order_follows_the_marker_not_the_declarations():
    circuit = parse_qasm(HEAD + "pragma haarline data y x\nrx(x) q[0];\nrx(y) q[1];\n")
    assert [s.input for s in circuit.layer] == [1, 0]


def test_a_declared_feature_no_gate_uses_still_counts():
    circuit = parse_qasm(HEAD + "// haarline data: x y\nrx(x) q[0];\n")
    assert circuit.inputs == 2


def test_a_data_angle_may_be_scaled_inside_a_gate_definition():
    # a trainable angle cannot be halved in format 1 (see test_qasm.py), a data angle can:
    # the step reads as feature x with scale 1/2
    text = HEAD + "pragma haarline data x y\ngate half(a) b { ry(a/2) b; }\nhalf(x) q[1];\n"
    steps = [s.model_dump(exclude_none=True, exclude={"reverse"}) for s in parse_qasm(text).layer]
    assert steps == [{"gate": "ry", "on": [1], "input": 0, "scale": 0.5}]


REFUSED = [
    ("pragma haarline data\nrx(x) q[0];\n", "'pragma haarline data' names no input"),
    ("pragma haarline data x x\nrx(x) q[0];\n", "names the data input 'x' twice"),
    ("pragma haarline data x z\nrx(x) q[0];\n", "names 'z', which no 'input angle[...]'"),
    (
        "pragma haarline data x\n// haarline data: y\nrx(x) q[0];\n",
        "names data inputs a second time",
    ),
    ("pragma haarline data 2x\nrx(x) q[0];\n", "'2x' is not an input name"),
    ("pragma other thing\nrx(x) q[0];\n", "the pragma 'other thing' is not supported"),
    ("pragma haarline data x\nrx(x + y) q[0];\n", "mixes data inputs (x) and trainable inputs"),
    ("pragma haarline data x\nrx(x + 1) q[0];\n", "a data angle is s*x for one data input"),
    ("pragma haarline data x y\nrx(x + y) q[0];\n", "a data angle is s*x for one data input"),
    ("pragma haarline data x y\nrzz(x*y) q[0], q[1];\n", "only in the form s*(pi - x_a)"),
    ("pragma haarline data x y\nrzz(x*x) q[0], q[1];\n", "only in the form s*(pi - x_a)"),
    (
        "input float z;\npragma haarline data z x y\nrzz((pi - x)*(pi - y)) q[0], q[1];\n",
        "the product map of features 1 and 2 is applied to qubits 0, 1",
    ),
    (
        "pragma haarline data x y\nrzz((pi - x)*(pi - y)*x) q[0], q[1];\n",
        "has a degree above two in the inputs",
    ),
    ("pragma haarline data x y\nrx((pi - x)*(pi - y)) q[0];\n", "only to the qubit pair (a, b)"),
]


@pytest.mark.parametrize(("body", "message"), REFUSED, ids=[m[:40] for _, m in REFUSED])
def test_bad_data_markers_and_angles_are_refused_with_the_reason(body, message):
    with pytest.raises(CircuitError) as caught:
        parse_qasm(HEAD + body)
    assert message in str(caught.value), str(caught.value)
    assert "line " in str(caught.value)


def test_cli_exports_a_circuit_with_inputs_and_analyzes_it_the_same(tmp_path, capsys):
    # the bundled classifier demo encodes data: exported at one layer (an export is one
    # flat layer, and the random streams follow the layer structure) and read back, it
    # gives the kernel and spectrum numbers of the description at one layer
    from haarline.service.cli import main as cli

    examples = Path(__file__).parent.parent / "examples"
    demo = json.loads((examples / "greenhouse-classifier.json").read_text())
    described = tmp_path / "one-layer.json"
    described.write_text(json.dumps({**demo, "layers": 1}))
    out = tmp_path / "classifier.qasm"
    assert cli.main(["export", str(described), "--to", "qasm", "-o", str(out)]) == 0
    assert "// haarline data: x_0 x_1 x_2 x_3\n" in out.read_text()
    flags = ["--metrics", "kernel,spectrum", "--scan", "4", "--kernel-pairs", "300"]
    flags += ["--spectrum-samples", "40", "--format", "json"]
    assert cli.main(["analyze", str(out), *flags]) == 0
    from_qasm = json.loads(capsys.readouterr().out)
    assert cli.main(["analyze", str(described), *flags]) == 0
    direct = json.loads(capsys.readouterr().out)
    for key in ("mean", "variance", "interval"):
        assert from_qasm["kernel"][key] == pytest.approx(direct["kernel"][key], rel=1e-12)
    pairs = zip(from_qasm["spectrum"]["features"], direct["spectrum"]["features"], strict=True)
    for got, want in pairs:
        assert got["frequencies"] == want["frequencies"]
        assert got["weights"] == pytest.approx(want["weights"], rel=1e-12)

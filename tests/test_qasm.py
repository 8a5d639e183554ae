"""OpenQASM import and export (haarline.circuit.qasm.parse).

The hand-written programs below follow the examples of the OpenQASM 3 specification
(openqasm.com, "Language" chapter) for the features haarline reads; the section named beside
each was recalled from memory, not copied. The expected gate programs are written out by
hand, and states are checked against the dense reference in tests/reference_sim.py.
"""

from __future__ import annotations

import math
import re

import haarline
import numpy as np
import pytest
from haarline import CircuitError, Operation, Program, expand, parse_circuit, run
from haarline.circuit.qasm.export import to_qasm
from haarline.circuit.qasm.parse import MAX_QASM_BYTES, parse_qasm
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from reference_sim import simulate
from test_engine import random_description

HEAD = 'OPENQASM 3.0;\ninclude "stdgates.inc";\n'


def ops(program: Program) -> list[tuple]:
    return [(op.gate, op.qubits, op.param, op.angle) for op in program.operations]


def hand_program(qubits: int, expected: list[tuple]) -> Program:
    """A Program built from (gate, qubits, param, angle) tuples, independent of expand()."""
    params = [p for _, _, p, _ in expected if p is not None]
    return Program(
        name="expected",
        qubits=qubits,
        layers=1,
        operations=tuple(Operation(gate=g, qubits=q, param=p, angle=a) for g, q, p, a in expected),
        parameters=max(params) + 1 if params else 0,
    )


def error_of(text: str) -> str:
    with pytest.raises(CircuitError) as info:
        parse_qasm(text)
    return str(info.value)


# ----------------------------------------------------------------- programs from the spec

PI = math.pi

SPEC_PROGRAMS = {
    # OpenQASM 3 spec, "Gates" section: the standard-library two-qubit example (from memory)
    "bell": (
        HEAD + "qubit[2] q;\nh q[0];\ncx q[0], q[1];\n",
        2,
        [("h", (0,), None, None), ("cx", (0, 1), None, None)],
        (),
    ),
    # OpenQASM 3 spec, "Input and output" section: input angles as circuit parameters
    "inputs": (
        HEAD
        + "input angle[16] theta;\ninput float[64] phi;\nqubit[3] q;\n"
        + "rx(theta) q[0];\nry(phi) q[1];\nrz(theta) q[2];\ncrz(phi) q[0], q[2];\n",
        3,
        [
            ("rx", (0,), 0, None),
            ("ry", (1,), 1, None),
            ("rz", (2,), 0, None),
            ("crz", (0, 2), 1, None),
        ],
        ("theta", "phi"),
    ),
    # OpenQASM 3 spec, "Loops" section: for loops over ranges [a:b], [a:step:b] and sets
    "loops": (
        HEAD
        + "qubit[5] q;\n"
        + "for uint i in [0:3] { cx q[i], q[i+1]; }\n"
        + "for int i in [0:2:4] { h q[i]; }\n"
        + "for int[32] i in {1, 3} { x q[i]; }\n"
        + "for uint i in [0:1] {\n  for uint j in [0:1] { cz q[i], q[j + 2]; }\n}\n"
        + "for uint i in [3:-1:2] { swap q[i], q[(i + 1) % 5]; }\n",
        5,
        [("cx", (i, i + 1), None, None) for i in range(4)]
        + [("h", (i,), None, None) for i in (0, 2, 4)]
        + [("x", (i,), None, None) for i in (1, 3)]
        + [("cz", (i, j + 2), None, None) for i in (0, 1) for j in (0, 1)]
        + [("swap", (3, 4), None, None), ("swap", (2, 3), None, None)],
        (),
    ),
    # OpenQASM 3 spec, "Gates" section: hierarchically defined gates, used after definition
    "definitions": (
        HEAD
        + "input angle theta;\nqubit[2] q;\n"
        + "gate rot(a, b) c { rz(a) c; ry(b) c; rz(-a) c; }\n"
        + "gate entangle(t) x, y { h x; cx x, y; rz(t) y; barrier x, y; cx x, y; }\n"
        + "gate twice(t) x, y { entangle(t) x, y; entangle(t) y, x; }\n"
        + "rot(pi/2, theta) q[0];\ntwice(theta) q[1], q[0];\n",
        2,
        [("rz", (0,), None, PI / 2), ("ry", (0,), 0, None), ("rz", (0,), None, -PI / 2)]
        + [("h", (1,), None, None), ("cx", (1, 0), None, None), ("rz", (0,), 0, None)]
        + [("cx", (1, 0), None, None)]
        + [("h", (0,), None, None), ("cx", (0, 1), None, None), ("rz", (1,), 0, None)]
        + [("cx", (0, 1), None, None)],
        ("theta",),
    ),
    # OpenQASM 3 spec, "Types and casting" / "Expressions": built-in constants pi, π, tau,
    # euler and arithmetic on angles; an input used as it is stays a parameter
    "arithmetic": (
        HEAD
        + "input angle[32] theta;\nqubit[1] q;\n"
        + "rx(pi/4) q[0];\nry(-π/2) q[0];\nrz(2*pi/3) q[0];\nrx(tau/8 - 0.25) q[0];\n"
        + "ry(euler) q[0];\nrz(2**-1) q[0];\nrx((1 + 2) * pi / 6) q[0];\nry(3) q[0];\n"
        + "rz((theta)) q[0];\nrx(theta + 0) q[0];\nry(theta * 1) q[0];\n"
        + "rz(theta - theta + 0.5) q[0];\nrx(-(-theta)) q[0];\n",
        1,
        [
            ("rx", (0,), None, PI / 4),
            ("ry", (0,), None, -PI / 2),
            ("rz", (0,), None, 2 * PI / 3),
            ("rx", (0,), None, math.tau / 8 - 0.25),
            ("ry", (0,), None, math.e),
            ("rz", (0,), None, 0.5),
            ("rx", (0,), None, (1 + 2) * PI / 6),
            ("ry", (0,), None, 3.0),
            ("rz", (0,), 0, None),
            ("rx", (0,), 0, None),
            ("ry", (0,), 0, None),
            ("rz", (0,), None, 0.5),
            ("rx", (0,), 0, None),
        ],
        ("theta",),
    ),
    # OpenQASM 3 spec, "Gates" section: a gate applied to a whole register acts on each
    # qubit ("broadcast"); "Quantum instructions": barrier; "Registers": negative indices
    "broadcast": (
        HEAD + "qubit[3] q;\nh q;\nbarrier q;\nbarrier q[0], q[1];\ncx q[-1], q[0];\nbarrier;\n",
        3,
        [("h", (i,), None, None) for i in range(3)] + [("cx", (2, 0), None, None)],
        (),
    ),
    # OpenQASM 3 spec, "Qubits" section: a single qubit declared without a size
    "single qubit": (
        HEAD + "qubit q;\nh q;\nrx(0.25) q;\n",
        1,
        [("h", (0,), None, None), ("rx", (0,), None, 0.25)],
        (),
    ),
    # OpenQASM 3 spec, "Standard library" section: the other names haarline maps
    "standard names": (
        HEAD
        + "qubit[2] q;\nid q[0];\ny q[0];\nz q[1];\ns q[0];\nsdg q[1];\nt q[0];\ntdg q[1];\n"
        + "sx q[0];\ncy q[0], q[1];\nCX q[1], q[0];\ncrx(0.1) q[0], q[1];\n"
        + "cry(0.2) q[1], q[0];\n",
        2,
        [
            ("i", (0,), None, None),
            ("y", (0,), None, None),
            ("z", (1,), None, None),
            ("s", (0,), None, None),
            ("sdg", (1,), None, None),
            ("t", (0,), None, None),
            ("tdg", (1,), None, None),
            ("sx", (0,), None, None),
            ("cy", (0, 1), None, None),
            ("cx", (1, 0), None, None),
            ("crx", (0, 1), None, 0.1),
            ("cry", (1, 0), None, 0.2),
        ],
        (),
    ),
    # rxx, ryy, rzz are not in stdgates.inc; haarline reads them with its own definition
    "two-qubit rotations": (
        HEAD + "input angle a;\nqubit[3] q;\nrxx(a) q[0], q[1];\nryy(0.3) q[2], q[0];\n"
        "rzz(a) q[1], q[2];\n",
        3,
        [("rxx", (0, 1), 0, None), ("ryy", (2, 0), None, 0.3), ("rzz", (1, 2), 0, None)],
        ("a",),
    ),
    # Cross, Bishop, Smolin & Gambetta, "Open Quantum Assembly Language" (2017), the qreg and
    # qelib1.inc style of OpenQASM 2.0 (from memory); the version line is optional in 3
    "openqasm 2": (
        'OPENQASM 2.0;\ninclude "qelib1.inc";\nqreg q[3];\nh q[0];\nCX q[0],q[1];\n'
        "cx q[1],q[2];\nrz(0.1) q[1];\ncrz(pi/8) q[0],q[2];\n",
        3,
        [
            ("h", (0,), None, None),
            ("cx", (0, 1), None, None),
            ("cx", (1, 2), None, None),
            ("rz", (1,), None, 0.1),
            ("crz", (0, 2), None, PI / 8),
        ],
        (),
    ),
    # OpenQASM 3 spec, "Built-in gates" and "Quantum gate modifiers" sections: U, gphase,
    # ctrl @, negctrl @, inv @ and pow(k) @ (the matrices are checked in test_qasm_gates.py)
    "modifiers": (
        HEAD
        + "input angle theta;\nqubit[2] q;\nU(theta, 0, pi) q[0];\ngphase(pi/4);\n"
        + "ctrl @ x q[0], q[1];\nnegctrl @ rz(theta) q[1], q[0];\ninv @ s q[1];\n"
        + "pow(2) @ t q[0];\nctrl @ p(theta) q[0], q[1];\nctrl @ gphase(0.5) q[1];\n",
        2,
        [
            ("rz", (0,), None, PI),
            ("ry", (0,), 0, None),
            ("cx", (0, 1), None, None),
            ("x", (1,), None, None),
            ("crz", (1, 0), 0, None),
            ("x", (1,), None, None),
            ("sdg", (1,), None, None),
            ("t", (0,), None, None),
            ("t", (0,), None, None),
            ("cphase", (0, 1), 0, None),
            ("rz", (1,), None, 0.5),
        ],
        ("theta",),
    ),
    "no version line": (
        'include "stdgates.inc";\nqubit[1] q;\nx q[0];\n',
        1,
        [("x", (0,), None, None)],
        (),
    ),
}


@pytest.mark.parametrize("case", sorted(SPEC_PROGRAMS))
def test_programs_from_the_specification(case):
    text, qubits, expected, names = SPEC_PROGRAMS[case]
    circuit = parse_qasm(text)
    assert (circuit.qubits, circuit.layers) == (qubits, 1)
    program = expand(circuit)
    assert ops(program) == expected
    assert program.parameter_names == names
    want = hand_program(qubits, expected)
    rng = np.random.default_rng(len(case))
    thetas = rng.uniform(0, 2 * np.pi, size=(3, program.parameters))
    states = run(program, thetas)
    for b in range(3):
        np.testing.assert_allclose(states[b], simulate(want, thetas[b]), atol=1e-12, rtol=0)


def test_steps_are_explicit_with_angle_or_param():
    circuit = parse_qasm(HEAD + "input angle t;\nqubit[2] q;\nry(t) q[1];\ncz q[0], q[1];\n")
    assert [s.model_dump(exclude_none=True, exclude={"reverse"}) for s in circuit.layer] == [
        {"gate": "ry", "on": [1], "param": "t"},
        {"gate": "cz", "on": [[0, 1]]},
    ]


def test_inputs_are_numbered_by_first_use_and_unused_inputs_dropped():
    text = HEAD + "input angle a;\ninput angle b;\ninput float c;\nqubit[1] q;\n"
    program = expand(parse_qasm(text + "rx(b) q[0];\nry(a) q[0];\nrz(b) q[0];\n"))
    assert program.parameter_names == ("b", "a")
    assert [op.param for op in program.operations] == [0, 1, 0]


# ----------------------------------------------------------------- round trips


def check_round_trip(circuit, seed: int) -> Program:
    program = expand(circuit)
    text = to_qasm(program)
    again = expand(parse_qasm(text))
    assert ops(again) == ops(program)
    assert again.qubits == program.qubits
    assert again.parameters == program.parameters
    rng = np.random.default_rng(seed)
    thetas = rng.uniform(0, 2 * np.pi, size=(4, program.parameters))
    np.testing.assert_allclose(run(again, thetas), run(program, thetas), atol=1e-12, rtol=0)
    return again


def same_numbers(a, b) -> bool:
    """Equal structure and equal numbers to rounding (the engine may order sums differently)."""
    if isinstance(a, dict):
        return (
            isinstance(b, dict)
            and a.keys() == b.keys()
            and all(same_numbers(a[k], b[k]) for k in a)
        )
    if isinstance(a, list):
        return isinstance(b, list) and len(a) == len(b) and all(map(same_numbers, a, b))
    if isinstance(a, float) and isinstance(b, float):
        return a == pytest.approx(b, rel=1e-9, abs=1e-12)
    return a == b


def strip_steps(value):
    """Drop step paths (layer[k] differs when layers are flattened) from a report section."""
    if isinstance(value, dict):
        words = ("step", "layers", "layer", "flat_places")  # where a parameter sits, in words
        return {k: strip_steps(v) for k, v in value.items() if k not in words}
    if isinstance(value, list):
        return [strip_steps(v) for v in value]
    return value


OPTIONS = haarline.AnalysisOptions(
    metrics=["expressibility", "entanglement", "trainability", "capacity"],
    pairs=120,
    samples=60,
    grad_samples=12,
    capacity_points=2,
    seed=7,
)


def check_same_report(circuit) -> None:
    metrics = OPTIONS.metrics if expand(circuit).parameters else ["expressibility", "entanglement"]
    options = OPTIONS.model_copy(update={"scan": [circuit.qubits], "metrics": metrics})
    first = haarline.analyze(circuit, options)
    again = haarline.analyze(parse_qasm(to_qasm(expand(circuit))), options)
    assert same_numbers(first["expressibility"], again["expressibility"])
    assert same_numbers(first["entanglement"], again["entanglement"])
    if "capacity" not in metrics:
        return
    if circuit.layers == 1:
        assert same_numbers(strip_steps(first["capacity"]), strip_steps(again["capacity"]))
        assert same_numbers(strip_steps(first["trainability"]), strip_steps(again["trainability"]))
    else:
        # capacity and gradient draws are keyed by (qubits, layers); a flattened program has
        # layers = 1, so it gets other draws of the same distribution; the rank is generic
        assert first["capacity"]["qfi_rank"] == again["capacity"]["qfi_rank"]


@pytest.mark.parametrize("name", haarline.reference_names())
def test_reference_circuits_round_trip(name):
    circuit = haarline.load_reference(name)
    again = check_round_trip(circuit, seed=len(name))
    assert again.name == circuit.name
    check_same_report(circuit)


@pytest.mark.parametrize("n", [1, 2, 3, 4, 5])
@pytest.mark.parametrize("case", range(6))
def test_random_descriptions_round_trip(n, case):
    rng = np.random.default_rng(1000 * n + case)
    circuit = parse_circuit(random_description(rng, n))
    check_round_trip(circuit, seed=case)
    if case < 2:
        check_same_report(circuit)


def test_random_round_trips_cover_every_gate_share_and_angle():
    gates, keys = set(), set()
    for n in [1, 2, 3, 4, 5]:
        for case in range(6):
            data = random_description(np.random.default_rng(1000 * n + case), n)
            circuit = parse_circuit(data)
            gates |= {op.gate for op in expand(circuit).operations}
            keys |= {k for step in data["layer"] for k in step} | {
                f"share={step['share']}" for step in data["layer"] if "share" in step
            }
    assert gates == set(haarline.GATES)
    assert {"angle", "share=step", "share=layers", "reverse"} <= keys


def test_round_trip_keeps_fixed_angles_exactly():
    angles = [0.1, -0.0, 1e-300, 5e-324, 1e16, -2.5e-7, math.pi, 1 / 3, 123456.789]
    circuit = parse_circuit(
        {"qubits": 1, "layer": [{"gate": "rx", "on": [0], "angle": a} for a in angles]}
    )
    again = expand(parse_qasm(to_qasm(expand(circuit))))
    got = [op.angle for op in again.operations]
    assert got == angles
    assert math.copysign(1, got[1]) == -1


def test_export_names_parameters_and_avoids_clashes():
    circuit = parse_circuit(
        {
            "name": "clash",
            "qubits": 2,
            "layer": [
                {"gate": "rx", "on": [0]},
                {"gate": "ry", "on": [0], "param": "theta_0"},
                {"gate": "rz", "on": [1], "param": "pi"},
                {"gate": "rx", "on": [1], "param": "q"},
                {"gate": "crx", "on": [[0, 1]], "param": "theta_0"},
                {"gate": "i", "on": [1]},
            ],
        }
    )
    program = expand(circuit)
    text = to_qasm(program)
    assert text.splitlines()[:3] == [
        "// circuit: clash",
        "OPENQASM 3.0;",
        'include "stdgates.inc";',
    ]
    declared = re.findall(r"^input angle\[64\] (\w+);$", text, flags=re.M)
    assert declared == ["theta_0_1", "theta_0", "pi_1", "q_1"]
    assert "id q[1];" in text
    again = expand(parse_qasm(text))
    assert ops(again) == ops(program)
    assert again.parameter_names == tuple(declared)


def test_name_comes_from_the_comment_then_the_file_name():
    body = HEAD + "qubit q;\nx q;\n"
    assert parse_qasm("// circuit: my ring (v2)\n" + body).name == "my ring (v2)"
    assert parse_qasm(body, source="dir/bell-pair.qasm").name == "bell-pair"
    assert parse_qasm(body, source="dir/~weird~.qasm").name == "circuit"
    assert parse_qasm(body).name == "circuit"


# ----------------------------------------------------------------- rejections

Q2 = HEAD + "qubit[2] q;\n"  # the feature under test is on line 4
Q2T = HEAD + "input angle theta;\ninput angle phi;\nqubit[2] q;\n"  # feature on line 6

REJECTED = [
    (Q2 + "bit[2] c;\n", "line 4, column 1: classical bits are not supported"),
    (
        Q2 + "measure q[0];\n",
        "line 4, column 1: measurement is not supported (haarline analyzes unitary circuits)",
    ),
    (Q2 + "measure q[0] -> c[0];\n", "line 4, column 1: measurement is not supported"),
    (Q2 + "reset q[0];\n", "line 4, column 1: reset is not supported"),
    (Q2 + "int n = 3;\n", "line 4, column 1: classical variables are not supported"),
    (Q2 + "const int n = 3;\n", "line 4, column 1: const declarations are not supported"),
    (Q2 + "if (true) { x q[0]; }\n", "line 4, column 1: 'if' is not supported"),
    (Q2 + "while (false) { x q[0]; }\n", "line 4, column 1: 'while' loops are not supported"),
    (Q2 + "def f(qubit a) { x a; }\n", "line 4, column 1: subroutines ('def')"),
    (Q2 + 'defcalgrammar "openpulse";\n', "line 4, column 1: 'defcalgrammar'"),
    (Q2 + "cal { }\n", "line 4, column 1: 'cal' blocks (pulse-level calibration)"),
    (Q2 + "defcal x $0 { }\n", "line 4, column 1: 'defcal' (pulse-level calibration)"),
    (Q2 + "delay[100ns] q[0];\n", "line 4, column 1: 'delay' is not supported"),
    (Q2 + "box { x q[0]; }\n", "line 4, column 1: 'box' is not supported"),
    # gate modifiers: one control on a one-qubit gate, integer powers, no scaled inputs
    (
        Q2 + "ctrl @ cx q[0], q[1];\n",
        "line 4, column 1: gate 'cx' with 'ctrl @' acts on 3 qubits; haarline reads gates on "
        "one or two qubits, so 'ctrl @' and 'negctrl @' take one control on a one-qubit gate",
    ),
    (Q2 + "ctrl(2) @ x q[0], q[1];\n", "line 4, column 1: gate 'x' with 'ctrl @' acts on 3"),
    (Q2 + "negctrl @ ctrl @ h q[0], q[1];\n", "gate 'h' with 'negctrl @ ctrl @' acts on 3"),
    (Q2 + "ctrl @ x q[0];\n", "line 4, column 1: gate 'x' with 'ctrl @' acts on 2 qubits, got 1"),
    (Q2 + "ctrl @ gphase(1) q[0], q[1];\n", "gate 'gphase' with 'ctrl @' acts on 1 qubit, got 2"),
    (Q2 + "ctrl(0) @ x q[0];\n", "line 4, column 1: 'ctrl(0) @' needs at least one control"),
    (
        Q2 + "pow(1/2) @ x q[0];\n",
        "line 4, column 1: 'pow(0.5) @' is not supported: only integer powers are read (a "
        "fractional power of a gate is not a product of haarline gates in general)",
    ),
    (Q2 + "inv @ pow(2.5) @ s q[0];\n", "line 4, column 7: 'pow(2.5) @' is not supported"),
    (Q2 + "pow(10000) @ x q[0];\n", "line 4, column 1: the program applies more than 1000"),
    (Q2 + "rx(0.5)[20ns] q[0];\n", "line 4, column 1: gate durations are not supported"),
    (Q2 + "qubit[2] r;\n", "line 4, column 1: a second qubit register 'r'"),
    (Q2 + "u4(0.1, 0.2, 0.3) q[0];\n", "line 4, column 1: gate 'u4' is not supported"),
    (
        Q2 + "ccx q[0], q[1], q[0];\n",
        "line 4, column 1: gate 'ccx' acts on three or more qubits; haarline reads gates on one "
        "or two qubits (a 'gate' definition of it from one- and two-qubit gates is read)",
    ),
    (Q2 + "cswap q[0], q[1], q[0];\n", "line 4, column 1: gate 'cswap' acts on three or more"),
    (
        Q2 + "cu3(0.1, 0.2, 0.3) q[0], q[1];\n",
        "line 4, column 1: gate 'cu3' is read only with its 'gate' definition in the program: "
        "the published qelib1.inc versions differ by a phase on the control",
    ),
    (Q2 + "input int n;\n", "line 4, column 1: input of type int is not supported"),
    (Q2 + "input bit b;\n", "line 4, column 1: input of type bit is not supported"),
    (Q2 + "input angle[64] θ;\n", "line 4, column 1: the input name 'θ' cannot be"),
    (Q2 + "input angle pi;\n", "line 4, column 1: the name 'pi' is already used"),
    (Q2 + "output float f;\n", "line 4, column 1: output declarations are not supported"),
    (Q2 + "x $0;\n", "line 4, column 3: physical qubits such as $0 are not supported"),
    (Q2 + "x q[0:1];\n", "line 4, column 3: register slices such as q[0:2]"),
    (Q2 + "x q[{0, 1}];\n", "line 4, column 3: only single indices such as q[0]"),
    (Q2 + "x q[0][0];\n", "line 4, column 3: only single indices such as q[0]"),
    (Q2 + "x q[5];\n", "line 4, column 3: qubit q[5] is out of range for 2 qubits (0..1)"),
    (Q2 + "x q[-3];\n", "line 4, column 3: qubit q[-3] is out of range"),
    (Q2 + "x r[0];\n", "line 4, column 3: unknown qubit register 'r'"),
    (Q2 + "x q[0.5];\n", "line 4, column 5: a floating-point number is not supported where"),
    (Q2 + "cx q[0], q;\n", "line 4, column 1: a gate on more than one qubit needs single"),
    (Q2 + "cx q[0], q[0];\n", "line 4, column 1: gate 'cx' uses qubit 0 twice"),
    (Q2 + "cx q[0];\n", "line 4, column 1: gate 'cx' acts on 2 qubits, got 1"),
    (Q2 + "rx q[0];\n", "line 4, column 1: gate 'rx' takes 1 angle, got 0"),
    (Q2 + "rx(sin(0.3)) q[0];\n", "line 4, column 4: the function call 'sin(...)'"),
    (Q2 + "rx(1 < 2) q[0];\n", "line 4, column 4: the operator '<' is not supported in angles"),
    (Q2 + "rx(1/0) q[0];\n", "line 4, column 4: division by zero"),
    (Q2 + "rx(1e999) q[0];\n", "line 4, column 4: the angle is not a finite number"),
    (Q2 + "rx(1e300 * 1e300) q[0];\n", "line 4, column 4: the angle is not a finite number"),
    (Q2 + "rx((-8) ** 0.5) q[0];\n", "line 4, column 4: -8.0 ** 0.5 is not a finite real"),
    (Q2 + "rx(theta) q[0];\n", "line 4, column 4: unknown name 'theta'"),
    (Q2 + "let a = q;\n", "line 4, column 1: aliases ('let')"),
    (Q2 + "pragma anything\n", "line 4, column 1: the pragma 'anything' is not supported"),
    (Q2 + "@mark\nx q[0];\n", "line 4, column 1: annotations ('@keyword')"),
    (Q2 + "extern f(int) -> int;\n", "line 4, column 1: 'extern' declarations"),
    (Q2 + "end;\n", "line 4, column 1: 'end' is not supported"),
    (Q2 + "{ x q[0]; }\n", "line 4, column 1: bare scopes"),
    (Q2 + "for float x in [0:1] { }\n", "line 4, column 1: loop variables of type float"),
    (Q2 + "for int i in [0:] { }\n", "line 4, column 15: a loop range needs a start and an end"),
    (Q2 + "for int i in [0:0:3] { }\n", "line 4, column 15: a loop range cannot have step 0"),
    (Q2 + "for int i in [0:2] { x q[i]; }\n", "line 4, column 24: qubit q[2] is out of range"),
    (Q2 + "for int pi in [0:1] { }\n", "line 4, column 1: the loop variable 'pi' hides"),
    (Q2 + "for int i in [0:1] { measure q[i]; }\n", "line 4, column 22: measurement is not"),
    (Q2 + 'include "mylib.inc";\n', 'line 4, column 1: include "mylib.inc" is not supported'),
    (Q2 + "gate g a { reset a; }\n", "line 4, column 12: cannot have a non-unitary 'reset'"),
    (Q2 + "gate g a { for int i in [0:1] { } }\n", "line 4, column 12: only gate calls and"),
    (Q2 + "gate g a { h q[0]; }\n", "line 4, column 14: inside gate 'g', gates act on its"),
    (Q2 + "gate g a { ctrl @ x a; }\n", "line 4, column 12: gate 'x' with 'ctrl @' acts on 2"),
    (Q2 + "gate g a { ccx a, a, a; }\n", "line 4, column 12: gate 'ccx' acts on three or more"),
    (Q2 + "gate g a { g a; }\n", "line 4, column 12: gate 'g' is not supported"),
    (Q2 + "gate g a { x a; }\ngate g b { y b; }\n", "line 5, column 1: gate 'g' is defined twice"),
    (Q2 + "gate g(a) b { rx(a/0) b; }\ng(1) q[0];\n", "line 4, column 18: division by zero"),
    (Q2T + "rx(2*theta) q[0];\n", "line 6, column 1: the angle 2*theta cannot be represented"),
    (Q2T + "rx(-theta) q[0];\n", "line 6, column 1: the angle -theta cannot be represented"),
    (
        Q2T + "rx(theta + pi/2) q[0];\n",
        "line 6, column 1: the angle theta + 1.5707963267948966 cannot be represented",
    ),
    (Q2T + "rx(theta + phi) q[0];\n", "line 6, column 1: the angle phi + theta cannot be"),
    (
        Q2T + "rx(theta * phi) q[0];\n",
        "line 6, column 1: the angle phi*theta cannot be represented: a product of inputs is "
        "read only for data inputs",
    ),
    (Q2T + "rx(theta * phi * theta) q[0];\n", "line 6, column 4: the product (phi*theta) *"),
    (Q2T + "rx(1 / theta) q[0];\n", "line 6, column 4: dividing by or raising to an input"),
    (Q2T + "x q[theta];\n", "line 6, column 5: 'theta' is not an integer"),
    (Q2T + "pow(theta) @ x q[0];\n", "line 6, column 1: the exponent of 'pow(theta) @' must be"),
    (
        Q2T + "inv @ rx(theta) q[0];\n",
        "line 6, column 1: the angle -theta cannot be represented (after 'inv @'): a trainable "
        "angle is a number or one input exactly as declared, not a scaled or shifted input",
    ),
    (Q2T + "pow(-1) @ rz(theta) q[0];\n", "-theta cannot be represented (after 'pow(-1) @')"),
    (Q2T + "U(2*theta, 0, 0) q[0];\n", "line 6, column 1: the angle 2*theta cannot be"),
    # the general rotation r(θ, φ) as a common exporter defines it: shifted inputs
    (
        Q2T + "gate r(a, b) x { U(a, -pi/2 + b, pi/2 - b) x; }\nr(theta, phi) q[0];\n",
        "line 6, column 18: the angle -phi + 1.5707963267948966 cannot be represented (in gate "
        "'r' applied at line 7, column 1)",
    ),
    (
        Q2T + "gate half(a) b { ry(a/2) b; }\nhalf(theta) q[1];\n",
        "line 6, column 18: the angle 0.5*theta cannot be represented (in gate 'half' applied "
        "at line 7, column 1)",
    ),
    ("OPENQASM 3.0;\nqubit[2] q;\nh q[0];\n", "line 3, column 1: gate 'h' is not defined; add"),
    ("OPENQASM 4.0;\nqubit q;\n", "line 1, column 1: OPENQASM 4.0 is not supported"),
    (HEAD + "qubit[25] q;\n", "line 3, column 1: register 'q' has 25 qubits; the allowed"),
    (HEAD + "qubit[0] q;\n", "line 3, column 1: register 'q' has 0 qubits"),
    (HEAD + "h q[0];\n", "line 3, column 3: no qubit register is declared before this point"),
    (HEAD + "qubit[2] q;\n", "(root): the program applies no gates"),
    (HEAD, "(root): no qubit register is declared"),
    ("", "line 1, column 1: the program is empty"),
    ("// nothing here\n", "line 1, column 1: the program is empty"),
    # syntax errors from the parser, with the position of the offending token
    (Q2 + "x q[0]\n", "line 5, column 1: syntax error: mismatched input '<EOF>' expecting"),
    (Q2 + "rx( q[0];\n", "line 4, column 9: syntax error: no viable alternative"),
    (Q2 + 'x q[0]; "open\n', "line 4, column 9: syntax error: token recognition error"),
    (Q2 + "rx(+0.5) q[0];\n", "line 4, column 4: syntax error"),
    (Q2 + "for i in [0:1] { x q[i]; }\n", "line 4, column 5: syntax error"),
    (Q2 + "gate g a { gate h b { } }\n", "line 4, column 12: gate definitions must be global"),
    (Q2 + "gate g a { measure a; }\n", "line 4, column 12: cannot have a non-unitary 'measure'"),
    (HEAD + "qubit[2] q;\n" + "(" * 2000 + "1" + ")" * 2000 + ";\n", "nested too deeply"),
]


@pytest.mark.parametrize(("text", "message"), REJECTED, ids=[m[:50] for _, m in REJECTED])
def test_unsupported_features_name_line_and_column(text, message):
    got = error_of(text)
    assert message in got, got
    assert got.startswith("(root): ")


def test_error_names_the_source():
    with pytest.raises(CircuitError) as info:
        parse_qasm(Q2 + "measure q[0];\n", source="prog.qasm")
    assert str(info.value) == (
        "prog.qasm: (root): line 4, column 1: measurement is not supported "
        "(haarline analyzes unitary circuits)"
    )
    assert info.value.problems[0].path == "(root)"


def test_parser_prints_nothing(capfd):
    for text in ("rx( q[0];", '"open', "qubit[2] q; h q[0]"):
        with pytest.raises(CircuitError):
            parse_qasm(text)
    assert capfd.readouterr() == ("", "")


def test_size_limits():
    with pytest.raises(CircuitError, match=f"the limit is {MAX_QASM_BYTES} bytes"):
        parse_qasm("// " + "x" * MAX_QASM_BYTES)
    with pytest.raises(CircuitError, match=f"the limit is {MAX_QASM_BYTES} bytes"):
        parse_qasm(b"// " + b"x" * MAX_QASM_BYTES)
    many = Q2 + "for uint i in [0:1000] { x q[0]; }\n"
    assert "more than 1000 gates" in error_of(many)
    nested = (
        Q2
        + "gate a0 x { h x; h x; }\n"
        + "".join(f"gate a{k} x {{ a{k - 1} x; a{k - 1} x; }}\n" for k in range(1, 12))
    )
    assert "more than 1000 gates (in gate 'a0' applied at" in error_of(nested + "a11 q[0];\n")
    endless = Q2 + "for uint i in [0:1000000000] { }\n"
    assert "more than 100000 statements and loop iterations" in error_of(endless)
    exact = Q2 + "for uint i in [1:1000] { x q[0]; }\n"
    assert len(parse_qasm(exact).layer) == 1000


def test_bytes_and_byte_order_mark():
    text = HEAD + "qubit q;\nx q;\n"
    assert parse_qasm(("\ufeff" + text).encode()).layer == parse_qasm(text).layer
    assert parse_qasm("\ufeff" + text).layer == parse_qasm(text).layer
    with pytest.raises(CircuitError, match="not UTF-8 text"):
        parse_qasm(b"\xff\xfe" + text.encode())


# ----------------------------------------------------------------- any input: CircuitError only

TOKENS = (
    'OPENQASM 3.0;|OPENQASM 2.0;|include|"stdgates.inc"|qubit|qreg|creg|bit|[|]|q|r|2|0|1|-1|'
    "99999999999999|h|x|cx|rx|rzz|U|u3|p|(|)|pi|π|theta|input|output|angle|float|int|uint|for|"
    "in|:|{|}|,|;|gate|g|a|b|-|+|*|/|**|%|<|measure|reset|->|=|barrier|ctrl|inv|@|$0|1e999|"
    "negctrl|pow|ctrl(2)|pow(-1)|pow(0.5)|cu|ch|cp|sxdg|u2|"
    '0.5|if|while|def|let|const|delay|box|gphase|defcal|cal|pragma|end|return|\n|// c|"|#'
).split("|")

VALID = [text for text, *_ in SPEC_PROGRAMS.values()] + [
    to_qasm(expand(haarline.load_reference("zz-x-ring"))),
    to_qasm(expand(parse_circuit(random_description(np.random.default_rng(3), 3)))),
]


def only_circuit_errors(text: str) -> None:
    try:
        circuit = parse_qasm(text)
    except CircuitError as exc:
        assert exc.problems and all(p.message for p in exc.problems)
    else:
        program = expand(circuit)
        assert program.operations
        expand(parse_qasm(to_qasm(program)))


FUZZ = {"deadline": None, "database": None, "suppress_health_check": [HealthCheck.too_slow]}


@settings(max_examples=300, **FUZZ)
@given(st.text(max_size=300))
def test_random_text_gives_only_circuit_errors(text):
    only_circuit_errors(text)


@settings(max_examples=400, **FUZZ)
@given(st.lists(st.sampled_from(TOKENS), max_size=60))
def test_random_token_soup_gives_only_circuit_errors(tokens):
    only_circuit_errors(" ".join(tokens))


@settings(max_examples=500, **FUZZ)
@given(
    st.sampled_from(VALID),
    st.lists(
        st.tuples(st.sampled_from(["delete", "insert", "replace", "repeat"]), st.floats(0, 1),
                  st.integers(1, 12), st.sampled_from(TOKENS)),
        min_size=1,
        max_size=4,
    ),
)  # fmt: skip
def test_mutated_programs_give_only_circuit_errors(text, edits):
    for kind, where, length, token in edits:
        i = int(where * len(text))
        if kind == "delete":
            text = text[:i] + text[i + length :]
        elif kind == "insert":
            text = text[:i] + " " + token + " " + text[i:]
        elif kind == "replace":
            text = text[:i] + token + text[i + length :]
        else:
            text = text[:i] + text[i : i + length] * 3 + text[i + length :]
    only_circuit_errors(text)


# --- the CLI and the service accept OpenQASM programs ------------------------------------


def test_cli_export_then_analyze_gives_the_same_numbers(tmp_path, capsys):
    import json

    from haarline.service.cli import main as cli

    out = tmp_path / "ring.qasm"
    assert (
        cli.main(["export", "ref:ry-cz-ring", "--to", "qasm", "--layers", "1", "-o", str(out)]) == 0
    )
    assert out.read_text().startswith("// circuit: ry-cz-ring\nOPENQASM 3.0;")
    flags = ["--pairs", "300", "--samples", "100", "--format", "json"]
    assert cli.main(["analyze", str(out), *flags]) == 0
    from_qasm = json.loads(capsys.readouterr().out)
    assert cli.main(["analyze", "ref:ry-cz-ring", *flags]) == 0  # 3 layers, for contrast
    capsys.readouterr()
    one_layer = haarline.analyze(
        haarline.load_reference("ry-cz-ring").with_size(layers=1),
        haarline.AnalysisOptions(pairs=300, samples=100),
    )
    assert from_qasm["expressibility"]["kl"] == one_layer["expressibility"]["kl"]
    assert from_qasm["entanglement"] == json.loads(json.dumps(one_layer["entanglement"]))


def test_cli_rejects_unsupported_qasm_with_line_and_column(tmp_path, capsys):
    from haarline.service.cli import main as cli

    bad = tmp_path / "bad.qasm"
    bad.write_text('OPENQASM 3.0;\ninclude "stdgates.inc";\nqubit[2] q;\nreset q[0];\n')
    assert cli.main(["check", str(bad)]) == 2
    err = capsys.readouterr().err
    assert "line 4, column 1" in err and "Traceback" not in err
    assert cli.main(["check", str(tmp_path / "missing.qasm")]) == 2


def test_service_accepts_a_qasm_body(tmp_path):
    from fastapi.testclient import TestClient
    from haarline.service.api.app import create_app
    from haarline.service.settings import Settings

    program = (
        'OPENQASM 3.0;\ninclude "stdgates.inc";\ninput angle a;\nqubit[2] q;\n'
        "h q[0];\nrx(a) q[1];\ncx q[0], q[1];\n"
    )
    settings = Settings.from_env({}, data_dir=str(tmp_path), dev_mode=True)
    with TestClient(create_app(settings, start_runner=False)) as c:
        facts = c.post("/v1/check", json={"qasm": program}).json()
        assert facts["parameters"] == 1 and facts["gates"] == 3
        r = c.post("/v1/check", json={"qasm": program.replace("h q[0]", "measure q[0]")})
        assert r.status_code == 422 and "line 5, column 1" in r.json()["detail"]


def test_every_failing_statement_is_reported_in_one_run():
    # one line per problem, each with its line and column (issue 18: all problems at once)
    text = (
        'OPENQASM 3;\ninclude "stdgates.inc";\nqubit[2] q;\n'
        "ccx q[0], q[1], q[0];\nrx(0.1) q[5];\nmeasure q[0];\nh q[0];\n"
    )
    with pytest.raises(haarline.CircuitError) as info:
        parse_qasm(text)
    messages = [p.message for p in info.value.problems]
    assert [m.split(":")[0] for m in messages] == [
        "line 4, column 1",
        "line 5, column 9",
        "line 6, column 1",
    ]


def test_a_failed_declaration_stops_the_reading_there():
    with pytest.raises(haarline.CircuitError) as info:
        parse_qasm("OPENQASM 3;\nqubit[0] q;\nh q[0];\nx q[0];\n")
    assert len(info.value.problems) == 1

"""OpenQASM standard gates and gate modifiers: what each is read as.

Every matrix below is built from the gate's definition, not from haarline's reading of it:
the OpenQASM 3 specification (openqasm.com; "Built-in gates" for U and gphase, "Standard
library" for stdgates.inc, "Quantum gate modifiers" for ctrl @, negctrl @, inv @ and
pow(k) @; recalled from memory, the standard's formulas only), and for the OpenQASM 2.0
names qelib1.inc (Cross, Bishop, Smolin & Gambetta, "Open Quantum Assembly Language",
2017). States of the programs haarline reads come from the dense reference
(tests/reference_sim.py); they must equal the definitions' states up to a global phase,
which no metric sees (a phase on a superposition would show: the programs first prepare
an entangled state with unequal amplitudes).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from haarline import expand, gate_matrix, parse_circuit, run
from haarline.circuit.qasm._standard import local_unitary
from haarline.circuit.qasm._syntax import _Value
from haarline.circuit.qasm.export import to_qasm
from haarline.circuit.qasm.parse import STANDARD_GATES, parse_qasm
from reference_sim import embed, simulate
from reference_sim import gate as textbook_gate
from scipy.linalg import sqrtm
from test_qasm import HEAD, error_of, hand_program, ops

PI = math.pi


def u_matrix(theta: float, phi: float, lam: float) -> np.ndarray:
    """U(θ, φ, λ) as the OpenQASM 3 spec's "Built-in gates" section defines it."""
    c, s = np.cos(theta / 2), np.sin(theta / 2)
    return np.array(
        [[c, -np.exp(1j * lam) * s], [np.exp(1j * phi) * s, np.exp(1j * (phi + lam)) * c]]
    )


def controlled(u: np.ndarray) -> np.ndarray:
    """ctrl @ u: u on the second qubit when the first is |1> (basis |b_first b_second>)."""
    out = np.eye(4, dtype=complex)
    out[2:, 2:] = u
    return out


def phase(lam: float) -> np.ndarray:
    """p(λ) = ctrl @ gphase(λ): the global phase e^{iλ} where the qubit is |1>."""
    return np.diag([1, np.exp(1j * lam)])


X = u_matrix(PI, 0, PI)
Z = phase(PI)
I2 = np.eye(2)
# cx with the second qubit as control, in the basis |b_first b_second>: |a b> -> |a^b, b>
CX_REVERSED = np.eye(4)[:, [0, 3, 2, 1]]

# stdgates.inc (and the built-in U): name -> (number of angles, matrix of the angles), each
# built from its definition in terms of U, gphase, ctrl @ and pow(1/2) @
STDGATES = {
    "U": (3, u_matrix),
    "id": (0, lambda: u_matrix(0, 0, 0)),
    "x": (0, lambda: X),
    "y": (0, lambda: u_matrix(PI, PI / 2, PI / 2)),
    "z": (0, lambda: Z),  # p(π)
    "h": (0, lambda: u_matrix(PI / 2, 0, PI)),
    "s": (0, lambda: sqrtm(Z.astype(complex))),  # pow(1/2) @ z
    "sdg": (0, lambda: np.linalg.inv(sqrtm(Z.astype(complex)))),  # inv @ pow(1/2) @ z
    "t": (0, lambda: sqrtm(sqrtm(Z.astype(complex)))),  # pow(1/2) @ s
    "tdg": (0, lambda: np.linalg.inv(sqrtm(sqrtm(Z.astype(complex))))),
    "sx": (0, lambda: sqrtm(X)),  # pow(1/2) @ x
    "rx": (1, lambda t: u_matrix(t, -PI / 2, PI / 2)),
    "ry": (1, lambda t: u_matrix(t, 0, 0)),
    "rz": (1, lambda t: np.exp(-0.5j * t) * u_matrix(0, 0, t)),  # gphase(-λ/2); U(0, 0, λ)
    "p": (1, phase),
    "phase": (1, lambda t: u_matrix(0, 0, t)),
    "u1": (1, lambda t: u_matrix(0, 0, t)),
    "u2": (2, lambda f, lam: np.exp(-0.5j * (f + lam)) * u_matrix(PI / 2, f, lam)),
    "u3": (3, lambda t, f, lam: np.exp(-0.5j * (f + lam)) * u_matrix(t, f, lam)),
    "cx": (0, lambda: controlled(X)),
    "CX": (0, lambda: controlled(u_matrix(PI, 0, PI))),
    "cy": (0, lambda: controlled(u_matrix(PI, PI / 2, PI / 2))),
    "cz": (0, lambda: controlled(Z)),
    "ch": (0, lambda: controlled(u_matrix(PI / 2, 0, PI))),
    "crx": (1, lambda t: controlled(u_matrix(t, -PI / 2, PI / 2))),
    "cry": (1, lambda t: controlled(u_matrix(t, 0, 0))),
    "crz": (1, lambda t: controlled(np.exp(-0.5j * t) * u_matrix(0, 0, t))),
    "cp": (1, lambda t: controlled(phase(t))),  # ctrl @ p(λ)
    "cphase": (1, lambda t: controlled(u_matrix(0, 0, t))),  # ctrl @ phase(λ)
    # p(γ) c; ctrl @ U(θ, φ, λ) c, t;
    "cu": (4, lambda t, f, lam, g: controlled(u_matrix(t, f, lam)) @ np.kron(phase(g), I2)),
    "swap": (0, lambda: controlled(X) @ CX_REVERSED @ controlled(X)),  # cx a,b; cx b,a; cx a,b
}
# qelib1.inc (OpenQASM 2.0): u is U; cu1 is controlled u1; sxdg is the inverse of sx
QELIB1 = {
    "u": (3, u_matrix),
    "cu1": (1, lambda t: controlled(phase(t))),
    "sxdg": (0, lambda: np.linalg.inv(sqrtm(X))),
}
# not in stdgates.inc: haarline's own exp(-iθ P⊗P/2), the textbook matrices
OURS = {name: (1, lambda t, name=name: textbook_gate(name, t)) for name in ("rxx", "ryy", "rzz")}
DEFINED = STDGATES | QELIB1 | OURS
ONE_QUBIT = sorted(name for name, (k, f) in DEFINED.items() if f(*[0.3] * k).shape == (2, 2))


def angles_of(name: str, rng: np.random.Generator) -> list[float]:
    return [float(a) for a in rng.uniform(-PI, PI, DEFINED[name][0])]


def matrix_of(name: str, angles: list[float]) -> np.ndarray:
    return np.asarray(DEFINED[name][1](*angles), dtype=complex)


def test_every_standard_name_is_checked():
    assert set(DEFINED) == set(STANDARD_GATES)


@pytest.mark.parametrize("name", sorted(DEFINED))
def test_each_standard_name_is_its_definition_exactly(name):
    # the recipe's factors (haarline gates, phases, global phases) multiply to the
    # definition's matrix, global phase included: what ctrl @ relies on
    recipe = STANDARD_GATES[name]
    rng = np.random.default_rng(len(name))
    for _ in range(3):
        angles = angles_of(name, rng)
        k = recipe.qubits
        pieces = recipe.pieces([_Value(a) for a in angles], tuple(range(k)), None, "")
        np.testing.assert_allclose(local_unitary(pieces, k), matrix_of(name, angles), atol=1e-12)


# --------------------------------------------------------------- states of read programs

PREPARE = "h q[0];\nry(0.7) q[1];\ncx q[0], q[1];\nrz(0.4) q[0];\nry(1.1) q[0];\n"


def prepared_state() -> np.ndarray:
    prep = hand_program(
        2,
        [
            ("h", (0,), None, None),
            ("ry", (1,), None, 0.7),
            ("cx", (0, 1), None, None),
            ("rz", (0,), None, 0.4),
            ("ry", (0,), None, 1.1),
        ],
    )
    return simulate(prep, np.zeros(0))


def read_state(text: str, values: dict[str, float]) -> tuple[np.ndarray, object]:
    """Read a program, then its state at the given input values (dense reference)."""
    program = expand(parse_qasm(text))
    thetas = np.array([values[name] for name in program.parameter_names])
    state = simulate(program, thetas)
    np.testing.assert_allclose(run(program, thetas[None, :])[0], state, atol=1e-12)
    return state, program


def assert_same_state(have: np.ndarray, want: np.ndarray) -> None:
    assert abs(abs(np.vdot(want, have)) - 1) < 1e-10, abs(np.vdot(want, have))


def program_text(inputs: list[str], call: str) -> str:
    declared = "".join(f"input angle {name};\n" for name in inputs)
    return HEAD + declared + "qubit[2] q;\n" + PREPARE + call + "\n"


def operands(matrix: np.ndarray, flipped: bool) -> tuple[str, np.ndarray]:
    """Operand text on two qubits, and the matrix on |q0 q1> (qubit 0 leftmost)."""
    if matrix.shape == (2, 2):
        return ("q[1]", np.kron(I2, matrix)) if flipped else ("q[0]", np.kron(matrix, I2))
    swap = controlled(X) @ CX_REVERSED @ controlled(X)
    return ("q[1], q[0]", swap @ matrix @ swap) if flipped else ("q[0], q[1]", matrix)


@pytest.mark.parametrize("flipped", [False, True])
@pytest.mark.parametrize("name", sorted(DEFINED))
def test_each_standard_name_reads_as_its_definition(name, flipped):
    # every angle an input of its own: the parameter count follows the decomposition
    rng = np.random.default_rng(7 + len(name) + flipped)
    angles = angles_of(name, rng)
    inputs = [f"a{k}" for k in range(len(angles))]
    m = matrix_of(name, angles)
    where, full = operands(m, flipped)
    args = f"({', '.join(inputs)})" if inputs else ""
    have, program = read_state(
        program_text(inputs, f"{name}{args} {where};"), dict(zip(inputs, angles, strict=True))
    )
    assert_same_state(have, full @ prepared_state())
    assert program.parameters == len(inputs)
    # the same gate at constant angles: fixed gates only
    constant = f"({', '.join(repr(a) for a in angles)})" if angles else ""
    fixed, program = read_state(program_text([], f"{name}{constant} {where};"), {})
    assert_same_state(fixed, full @ prepared_state())
    assert program.parameters == 0


CONTROL_FORMS = {
    # modifier text -> the matrix on |control target> of a one-qubit gate u
    "ctrl @": controlled,
    "ctrl(1) @": controlled,
    "negctrl @": lambda u: np.kron(X, I2) @ controlled(u) @ np.kron(X, I2),
}


@pytest.mark.parametrize("modifier", sorted(CONTROL_FORMS))
@pytest.mark.parametrize("name", ONE_QUBIT)
def test_control_modifiers_on_every_one_qubit_gate(name, modifier):
    rng = np.random.default_rng(len(name) + len(modifier))
    angles = angles_of(name, rng)
    inputs = [f"a{k}" for k in range(len(angles))]
    args = f"({', '.join(inputs)})" if inputs else ""
    want = CONTROL_FORMS[modifier](matrix_of(name, angles))
    for flipped in (False, True):
        where, full = operands(want, flipped)
        text = program_text(inputs, f"{modifier} {name}{args} {where};")
        have, program = read_state(text, dict(zip(inputs, angles, strict=True)))
        assert_same_state(have, full @ prepared_state())
        assert program.parameters == len(inputs)  # each angle still one unscaled parameter


POWERS = {
    "inv @": lambda u: np.linalg.inv(u),
    "pow(3) @": lambda u: np.linalg.matrix_power(u, 3),
    "pow(-2) @": lambda u: np.linalg.matrix_power(np.linalg.inv(u), 2),
    "pow(0) @": lambda u: np.eye(len(u)),
    "inv @ pow(2) @": lambda u: np.linalg.inv(u @ u),
    "pow(2) @ inv @": lambda u: np.linalg.inv(u @ u),
}


@pytest.mark.parametrize("modifier", sorted(POWERS))
@pytest.mark.parametrize("name", sorted(DEFINED))
def test_inverse_and_integer_powers_of_every_gate(name, modifier):
    # constant angles: a negated input would be a scaled parameter (refused, see below)
    rng = np.random.default_rng(3 * len(name) + len(modifier))
    angles = angles_of(name, rng)
    args = f"({', '.join(repr(a) for a in angles)})" if angles else ""
    where, full = operands(POWERS[modifier](matrix_of(name, angles)), False)
    have, _ = read_state(program_text([], f"{modifier} {name}{args} {where};"), {})
    assert_same_state(have, full @ prepared_state())


FLIP = np.kron(X, I2)  # x on the first qubit


@pytest.mark.parametrize(
    ("call", "want"),
    [
        # ctrl @ gphase(γ) q is p(γ) on q; two controls make cp(γ)
        ("ctrl @ gphase(a0) q[1];", lambda a: np.kron(I2, phase(a))),
        ("negctrl @ gphase(a0) q[0];", lambda a: np.kron(X @ phase(a) @ X, I2)),
        ("ctrl @ ctrl @ gphase(a0) q[0], q[1];", lambda a: controlled(phase(a))),
        ("ctrl(2) @ gphase(a0) q[1], q[0];", lambda a: controlled(phase(a))),
        # gphase alone changes no state: its input is not a parameter of the circuit
        ("gphase(a0);", lambda a: np.eye(4)),
        ("gphase(a0) q[0];", lambda a: np.eye(4)),
        # modifiers stack: the one nearest the gate first
        ("ctrl @ inv @ s q[0], q[1];", lambda a: controlled(phase(-PI / 2))),
        ("inv @ ctrl @ t q[1], q[0];", lambda a: controlled(phase(-PI / 4))),
        ("ctrl @ pow(2) @ t q[0], q[1];", lambda a: controlled(phase(PI / 2))),
        ("pow(2) @ ctrl @ rx(a0) q[0], q[1];", lambda a: controlled(STDGATES["rx"][1](2 * a))),
        ("negctrl @ inv @ sx q[0], q[1];", lambda a: FLIP @ controlled(QELIB1["sxdg"][1]()) @ FLIP),
    ],
)  # fmt: skip
def test_stacked_modifiers_and_global_phases(call, want):
    value = 0.83
    have, program = read_state(program_text(["a0"], call), {"a0": value})
    assert_same_state(have, want(value) @ prepared_state())
    assert program.parameters == ("a0" in call and not call.startswith("gphase"))


# --------------------------------------------------------------- parameters and steps


def test_parameter_count_and_order_follow_the_decomposition():
    # U(θ, φ, λ) is rz(λ), ry(θ), rz(φ) in time order: three parameters, numbered by first
    # use (λ first); a constant 0 factor is an identity and is left out; an input used twice
    # is one shared parameter
    text = HEAD + "input angle a;\ninput angle b;\ninput angle c;\ninput angle d;\nqubit[2] q;\n"
    program = expand(parse_qasm(text + "U(a, b, c) q[0];\n"))
    assert ops(program) == [("rz", (0,), 0, None), ("ry", (0,), 1, None), ("rz", (0,), 2, None)]
    assert program.parameter_names == ("c", "a", "b")
    assert ops(expand(parse_qasm(text + "U(a, 0, 0) q[0];\n"))) == [("ry", (0,), 0, None)]
    shared = expand(parse_qasm(text + "u3(a, b, a) q[1];\n"))
    assert shared.parameters == 2 and [op.param for op in shared.operations] == [0, 0, 1]
    cu = expand(parse_qasm(text + "cu(a, b, c, d) q[1], q[0];\n"))
    assert ops(cu) == [
        ("rz", (1,), 0, None),
        ("cphase", (1, 0), 1, None),
        ("cry", (1, 0), 2, None),
        ("cphase", (1, 0), 3, None),
    ]
    assert cu.parameter_names == ("d", "c", "a", "b")
    # a gate the user wrote at angle 0 stays a step; a lone global phase is no step at all
    assert ops(expand(parse_qasm(text + "rz(0) q[0];\n"))) == [("rz", (0,), None, 0.0)]
    assert ops(expand(parse_qasm(text + "gphase(a);\nx q[0];\n"))) == [("x", (0,), None, None)]


def test_controlled_phase_is_the_native_cphase_not_crz():
    # cp(λ) = ctrl @ p(λ) puts e^{iλ/2} on the control's |1> compared with crz(λ): a
    # relative phase, so cp, cphase and cu1 are haarline's own gate cphase
    cp = controlled(phase(0.8))
    assert abs(abs(np.trace(cp.conj().T @ gate_matrix("crz", 0.8))) - 4) > 1e-3
    np.testing.assert_allclose(cp, gate_matrix("cphase", 0.8), atol=1e-15)
    text = HEAD + "input angle a;\nqubit[2] q;\ncp(a) q[0], q[1];\ncu1(0.8) q[1], q[0];\n"
    text += "ctrl @ p(a) q[0], q[1];\nctrl @ u1(a) q[1], q[0];\n"
    assert ops(expand(parse_qasm(text))) == [
        ("cphase", (0, 1), 0, None),
        ("cphase", (1, 0), None, 0.8),
        ("cphase", (0, 1), 0, None),
        ("cphase", (1, 0), 0, None),
    ]


def test_phase_gates_differ_from_rz_by_a_global_phase_only():
    circuit = parse_qasm(HEAD + "qubit[2] q;\nh q;\np(0.4) q[0];\nphase(1.1) q[1];\nu1(-2) q[0];\n")
    assert [op.gate for op in expand(circuit).operations] == ["h", "h", "rz", "rz", "rz"]
    state = run(expand(circuit), np.zeros((1, 0)))[0]
    want = np.kron(phase(-2) @ phase(0.4), phase(1.1)) @ np.full(4, 0.5)
    assert_same_state(state, want)


def test_definitions_under_ctrl_use_their_own_body():
    # a definition that agrees with a standard gate up to a global phase stands for it,
    # but under ctrl @ that phase is a relative phase, so its body is controlled instead:
    # rz(π/2) is s only up to e^{-iπ/4}, and ctrl @ rz(π/2) is crz, not cphase(π/2)
    text = HEAD + "gate s a { rz(pi/2) a; }\nqubit[2] q;\ns q[0];\nctrl @ s q[0], q[1];\n"
    assert ops(expand(parse_qasm(text))) == [("s", (0,), None, None), ("crz", (0, 1), None, PI / 2)]
    mine = HEAD + "input angle a;\ngate g(t) x { p(t) x; }\nqubit[2] q;\nctrl @ g(a) q[1], q[0];\n"
    assert ops(expand(parse_qasm(mine))) == [("cphase", (1, 0), 0, None)]
    # a two-qubit definition under inv @: its body reversed and inverted
    pair = HEAD + "gate e a, b { h a; cx a, b; t b; }\nqubit[2] q;\ninv @ e q[1], q[0];\n"
    assert ops(expand(parse_qasm(pair))) == [
        ("tdg", (0,), None, None),
        ("cx", (1, 0), None, None),
        ("h", (1,), None, None),
    ]


def test_sxdg_as_qelib1_defines_it_is_read_as_sxdg():
    # qelib1.inc writes sxdg as s; h; s, which is e^{iπ/4} sx†: up to a global phase, so the
    # definition stands for sxdg, read as rx(-π/2)
    text = HEAD + "gate sxdg a { s a; h a; s a; }\nqubit q;\nsxdg q;\n"
    assert ops(expand(parse_qasm(text))) == [("rx", (0,), None, -PI / 2)]


@pytest.mark.parametrize("gate", ["rxx", "ryy", "rzz"])
def test_exported_definitions_of_two_qubit_rotations_are_exact(gate):
    # to_qasm defines rxx/ryy/rzz from stdgates gates; renamed, the body is inlined, and its
    # state must equal the textbook exp(-iθ P⊗P/2) exactly (not only up to a phase)
    text = to_qasm(expand(parse_circuit({"qubits": 2, "layer": [{"gate": gate, "on": "chain"}]})))
    definition = next(line for line in text.splitlines() if line.startswith(f"gate {gate}("))
    renamed = definition.replace(f"gate {gate}(", "gate body(")
    program = expand(
        parse_qasm(HEAD + renamed + "\ninput angle t;\nqubit[2] q;\nh q[0];\nbody(t) q[0], q[1];\n")
    )
    want = hand_program(2, [("h", (0,), None, None), (gate, (0, 1), 0, None)])
    for theta in (0.4, 2.2, -3.0):
        state = run(program, np.array([[theta]]))[0]
        np.testing.assert_allclose(state, simulate(want, np.array([theta])), atol=1e-12)


def test_definition_with_a_standard_name_becomes_that_gate_only_if_it_agrees():
    same = "gate rzz(t) a, b { cx a, b; rz(t) b; cx a, b; }\n"
    # cx, u1(t), cx is diag(1, e^{it}, e^{it}, 1) = e^{it/2} rzz(t): a global phase away
    phased = "gate rzz(t) a, b { cx a, b; u1(t) b; cx a, b; }\n"
    other = "gate rzz(t) a, b { rz(t) a; }\n"
    use = "input angle t;\nqubit[2] q;\nrzz(t) q[0], q[1];\n"
    assert ops(expand(parse_qasm(HEAD + same + use))) == [("rzz", (0, 1), 0, None)]
    assert ops(expand(parse_qasm(HEAD + phased + use))) == [("rzz", (0, 1), 0, None)]
    assert ops(expand(parse_qasm(HEAD + other + use))) == [("rz", (0,), 0, None)]
    # the same rule for the fixed gates: H Z H = X exactly, so x stays x; Z is not S
    agrees = HEAD + "gate x a { h a; z a; h a; }\nqubit q;\nx q;\n"
    assert ops(expand(parse_qasm(agrees))) == [("x", (0,), None, None)]
    differs = HEAD + "gate s a { z a; }\nqubit q;\ns q;\n"
    assert ops(expand(parse_qasm(differs))) == [("z", (0,), None, None)]
    # and for gates of several angles: U written as u3 and a global phase
    u = "gate U(a, b, c) x { u3(a, b, c) x; }\ninput angle t;\nqubit q;\nU(t, 0.2, 0.3) q;\n"
    assert [op.gate for op in expand(parse_qasm(HEAD + u)).operations] == ["rz", "ry", "rz"]
    # without the include there are no standard gates to define anything from
    alone = "OPENQASM 3.0;\ngate x a { y a; }\nqubit q;\nx q;\n"
    assert "line 2, column 12: gate 'y' is not defined; add 'include" in error_of(alone)


def test_builtin_u_needs_no_include():
    text = "OPENQASM 3.0;\nqubit q;\nU(pi, 0, pi) q;\n"  # U(π, 0, π) is x
    state = run(expand(parse_qasm(text)), np.zeros((1, 0)))[0]
    assert_same_state(state, np.array([0, 1]))


def test_gate_bodies_are_bound_when_defined():
    # h inside g means the standard h; the later definition of h (calling g) cannot recurse
    text = HEAD + "qubit[1] q;\ngate g a { h a; }\ngate h a { g a; }\nh q[0];\ng q[0];\n"
    assert ops(expand(parse_qasm(text))) == [("h", (0,), None, None)] * 2


def test_embedding_helper_orders_qubits_like_the_reader():
    # the check's own plumbing: operands() puts a one-qubit matrix on q[0] as the left factor
    where, full = operands(np.diag([1, -1]), False)
    assert where == "q[0]"
    np.testing.assert_allclose(full, embed(np.diag([1, -1]), (0,), 2))

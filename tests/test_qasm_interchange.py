"""OpenQASM 3 both ways with an independent exporter, importer and simulator.

A general-purpose SDK from PyPI (a test-only dependency, behind ``tests/reference_sdk.py``)
serves only as a black-box reference here: its exporter writes the programs haarline
reads, its importer reads the programs haarline writes, and its statevector gives the
states to compare with.

Qubit order: its qubit k is the program's ``q[k]``, which is haarline's qubit k, but its
amplitude index is Σ b_k 2^k (qubit 0 the least significant bit) where haarline's is
Σ b_k 2^(n-1-k), so ``reference_sdk.state`` reverses the bit order of its states. States
are compared up to a global phase: haarline reads ``P(λ)`` as ``rz(λ)`` and drops global phases (see
``analysis/circuit/qasm/_standard.py`` for the source of each gate's reading), and the
exporter leaves global phases out of the definitions it writes.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pytest
import reference_sdk as sdk
from haarline import (
    GATES,
    CircuitError,
    expand,
    load_reference,
    parse_circuit,
    reference_names,
    run,
)
from haarline.circuit.qasm.export import to_qasm
from haarline.circuit.qasm.parse import parse_qasm
from test_engine import random_description

LIBRARY = sdk.gate_table()

# what haarline reads of the library's gates as the exporter writes them (each gate alone,
# tests below): with every angle an input, the angles reach haarline's gates unscaled
READ = {
    "id", "x", "y", "z", "h", "s", "sdg", "t", "tdg", "sx", "sxdg",
    "rx", "ry", "rz", "p", "u1", "u2", "u3", "u",
    "cx", "cy", "cz", "ch", "cp", "crx", "cry", "crz", "cu", "cu1", "swap",
    "cs", "csdg", "csx", "dcx", "ecr", "iswap", "rxx", "ryy", "rzz", "rzx",
    "rccx", "rcccx", "c3sx",
}  # fmt: skip
# read at constant angles only: the exporter's definitions scale or shift their inputs
# (cu3: (φ+λ)/2 on the control; r: U(θ, φ-π/2, π/2-φ); xx_plus_yy, xx_minus_yy: θ/2, -β),
# which format 1 cannot write
CONSTANT_ONLY = {"cu3", "r", "xx_plus_yy", "xx_minus_yy"}
# refused with the line and the column: three-qubit standard gates (ccz is defined with
# ccx), and a zero-qubit gate definition, which the reference grammar does not accept
REFUSED = {"ccx", "ccz", "cswap", "global_phase"}
NOT_GATES = {"measure", "reset", "delay", "barrier"}


def assert_same_state(have: np.ndarray, want: np.ndarray) -> None:
    overlap = abs(np.vdot(want, have))
    assert abs(overlap - 1) < 1e-10, overlap


def library_state(circuit: Any, values: dict[str, float]) -> np.ndarray:
    return sdk.state(circuit, values)


def haarline_state(text: str, values: dict[str, float]) -> np.ndarray:
    program = expand(parse_qasm(text))
    thetas = np.array([[values[name] for name in program.parameter_names]])
    return run(program, thetas)[0]


def one_gate(name: str, inputs: bool) -> Any:
    gate = LIBRARY[name]
    k = len(gate.params)
    if inputs:
        angles = [sdk.symbol(f"w{i}") for i in range(k)]
    else:
        angles = [0.3 + 0.4 * i for i in range(k)]
    circuit = sdk.new_circuit(max(gate.num_qubits, 1))
    circuit.append(type(gate)(*angles) if k else gate, range(gate.num_qubits))
    return circuit


def test_every_library_gate_is_read_or_refused_with_line_and_column():
    known = READ | CONSTANT_ONLY | REFUSED
    assert known <= set(LIBRARY)
    for name in sorted(set(LIBRARY) - NOT_GATES):
        for inputs in (True, False):
            text = sdk.write_qasm(one_gate(name, inputs))
            should_read = name in READ or (name in CONSTANT_ONLY and not inputs)
            if name not in known:  # a gate of a newer version: read, or refused cleanly
                try:
                    parse_qasm(text)
                except CircuitError:
                    pass
                continue
            if should_read:
                parse_qasm(text)
                continue
            with pytest.raises(CircuitError, match=r"line \d+, column \d+: "):
                parse_qasm(text)


@pytest.mark.parametrize("name", sorted(READ | CONSTANT_ONLY))
def test_each_gate_alone_gives_the_same_state(name):
    rng = np.random.default_rng(len(name))
    for inputs in (True, False) if name in READ else (False,):
        gate = one_gate(name, inputs)
        n = gate.num_qubits
        # a non-trivial start, so that relative phases show
        circuit = sdk.new_circuit(n)
        for q in range(n):
            circuit.ry(float(rng.uniform(0.3, 2.8)), q)
            circuit.rz(float(rng.uniform(0.3, 2.8)), q)
        for q in range(n - 1):
            circuit.cx(q, q + 1)
        circuit.compose(gate, inplace=True)
        values = {p.name: float(rng.uniform(-np.pi, np.pi)) for p in circuit.parameters}
        text = sdk.write_qasm(circuit)
        assert_same_state(haarline_state(text, values), library_state(circuit, values))
        if inputs:  # every angle an input of its own: one parameter each, as declared
            program = expand(parse_qasm(text))
            assert program.parameters == len(gate.parameters)


def random_library_circuit(rng: np.random.Generator, n: int) -> Any:
    """Every readable gate that fits on n qubits (in a random order), then random extras.

    An angle of a gate read with inputs is a new input, sometimes an input used before
    (a shared parameter) or a constant; the other gates get constants.
    """
    pool = [name for name in sorted(READ | CONSTANT_ONLY) if LIBRARY[name].num_qubits <= n]
    names = list(rng.permutation(pool)) + list(rng.choice(pool, size=10))
    circuit = sdk.new_circuit(n)
    made: list[Any] = []

    def angle(name: str) -> Any:
        r = rng.random()
        if name in CONSTANT_ONLY or r >= 0.85:
            return float(rng.uniform(-np.pi, np.pi))
        if r < 0.65 or not made:
            made.append(sdk.symbol(f"w{len(made)}"))
            return made[-1]
        return made[int(rng.integers(len(made)))]

    for name in names:
        gate = LIBRARY[name]
        angles = [angle(name) for _ in gate.params]
        qubits = [int(q) for q in rng.choice(n, size=gate.num_qubits, replace=False)]
        circuit.append(type(gate)(*angles) if angles else gate, qubits)
    return circuit


@pytest.mark.parametrize("n", [2, 3, 4])
@pytest.mark.parametrize("case", range(3))
def test_random_circuits_written_by_the_library_read_with_equal_states(n, case):
    rng = np.random.default_rng(100 * n + case)
    circuit = random_library_circuit(rng, n)
    text = sdk.write_qasm(circuit)
    program = expand(parse_qasm(text))
    assert program.qubits == n
    assert set(program.parameter_names) <= {p.name for p in circuit.parameters}
    again = sdk.read_qasm(to_qasm(program))  # and back: haarline's export of what it read
    for _ in range(3):
        values = {p.name: float(rng.uniform(0, 2 * np.pi)) for p in circuit.parameters}
        want = library_state(circuit, values)
        assert_same_state(haarline_state(text, values), want)
        assert_same_state(library_state(again, values), want)


def test_random_library_circuits_cover_every_readable_gate():
    seen: set[str] = set()
    for n in [2, 3, 4]:
        for case in range(3):
            circuit = random_library_circuit(np.random.default_rng(100 * n + case), n)
            seen |= {instruction.operation.name for instruction in circuit.data}
    assert seen == READ | CONSTANT_ONLY


def exported_names(text: str) -> tuple[str, ...]:
    """The input names of an export, in parameter order (haarline reads them back so)."""
    return expand(parse_qasm(text)).parameter_names


def check_export(program, seed: int) -> None:
    text = to_qasm(program)
    loaded = sdk.read_qasm(text)
    assert loaded.num_qubits == program.qubits
    names = exported_names(text)
    assert {p.name for p in loaded.parameters} == set(names)
    rng = np.random.default_rng(seed)
    thetas = rng.uniform(0, 2 * np.pi, size=(2, program.parameters))
    states = run(program, thetas)
    for b in range(2):
        values = dict(zip(names, thetas[b].tolist(), strict=True))
        assert_same_state(library_state(loaded, values), states[b])


@pytest.mark.parametrize("name", reference_names())
def test_every_bundled_reference_exported_reads_back_with_equal_states(name):
    check_export(expand(load_reference(name)), seed=len(name))


@pytest.mark.parametrize("n", [1, 2, 3, 4])
@pytest.mark.parametrize("case", range(4))
def test_random_descriptions_over_every_gate_export_with_equal_states(n, case):
    rng = np.random.default_rng(1000 * n + case)
    check_export(expand(parse_circuit(random_description(rng, n))), seed=case)


def test_random_exports_cover_every_gate():
    seen: set[str] = set()
    for n in [1, 2, 3, 4]:
        for case in range(4):
            data = random_description(np.random.default_rng(1000 * n + case), n)
            seen |= {op.gate for op in expand(parse_circuit(data)).operations}
    assert seen == set(GATES)


def test_cphase_is_written_as_the_standard_cp_exactly():
    # stdgates.inc's cp(λ) = ctrl @ p(λ) = diag(1, 1, 1, e^{iλ}) is cphase with its global
    # phase: the export needs no definition of its own, and the importer's matrix agrees
    program = expand(parse_circuit({"qubits": 2, "layer": [{"gate": "cphase", "on": [[1, 0]]}]}))
    text = to_qasm(program)
    assert "cp(theta_0) q[1], q[0];" in text and "gate cp" not in text
    loaded = sdk.bind(sdk.read_qasm(text), [0.9])
    matrix = sdk.matrix(loaded)  # little-endian: q[1] is the high bit, so this is cp(1 -> 0)
    np.testing.assert_allclose(np.diag(matrix), [1, 1, 1, np.exp(0.9j)], atol=1e-12)


@pytest.mark.parametrize("name", ["re-uploaded by qubit", "scaled feature and product map"])
def test_exports_with_data_inputs_read_by_the_library_give_equal_states(name):
    # the importer knows nothing of the data comment: the features arrive as ordinary
    # symbols, and binding them to x gives haarline's state at (θ, x)
    from test_qasm_inputs import WITH_INPUTS

    program = expand(parse_circuit(WITH_INPUTS[name]))
    text = to_qasm(program)
    loaded = sdk.read_qasm(text)
    again = expand(parse_qasm(text))
    features = [f"x_{k}" for k in range(program.inputs)]
    assert {p.name for p in loaded.parameters} == set(again.parameter_names) | set(features)
    rng = np.random.default_rng(11)
    thetas = rng.uniform(0, 2 * np.pi, (2, program.parameters))
    x = rng.uniform(0, 2 * np.pi, (2, program.inputs))
    states = run(program, program.angles(thetas, x))
    for b in range(2):
        values = dict(zip(again.parameter_names, thetas[b].tolist(), strict=True))
        values |= dict(zip(features, x[b].tolist(), strict=True))
        assert_same_state(library_state(loaded, values), states[b])

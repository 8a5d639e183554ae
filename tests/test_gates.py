"""Every row of the gate table, checked against textbook matrices (tests/reference_sim.py)."""

import numpy as np
import pytest
from haarline import GATES, gate_matrix, lookup
from haarline.circuit.gates import generator_matrix
from reference_sim import PAULI
from reference_sim import gate as textbook_gate
from scipy.linalg import expm

ANGLES = [0.0, 0.3, -1.7, np.pi, 2 * np.pi - 0.01]


@pytest.mark.parametrize("name", sorted(GATES))
@pytest.mark.parametrize("theta", ANGLES)
def test_matrix_is_unitary_and_matches_textbook(name, theta):
    spec = GATES[name]
    m = gate_matrix(name, theta)
    d = 2**spec.qubits
    assert m.shape == (d, d)
    np.testing.assert_allclose(m @ m.conj().T, np.eye(d), atol=1e-13)
    want = textbook_gate(name, theta if spec.takes_angle else None)
    np.testing.assert_allclose(m, want, atol=1e-13)


@pytest.mark.parametrize("name", sorted(GATES))
def test_flags_agree_with_matrices(name):
    spec = GATES[name]
    m = spec.matrix(np.array([0.37, 1.9]))
    assert m.shape[0] == 2
    if spec.diagonal:
        for k in range(2):
            assert np.allclose(m[k], np.diag(np.diag(m[k])))
    else:
        assert not np.allclose(m[1], np.diag(np.diag(m[1])))
    if not spec.takes_angle:  # fixed gates ignore the angle values
        np.testing.assert_array_equal(m[0], m[1])
    if spec.target is not None:  # controlled: identity where the control is |0>
        np.testing.assert_allclose(m[:, :2, :2], np.broadcast_to(np.eye(2), (2, 2, 2)))
        np.testing.assert_allclose(m[:, :2, 2:], 0)


@pytest.mark.parametrize("name", [n for n, s in GATES.items() if s.generator])
def test_rotation_generator_convention(name):
    # exp(-i theta G / 2): the derivative at theta = 0 is -i G / 2 (DESIGN section 3)
    spec = GATES[name]
    g = PAULI[spec.generator[0]]
    for letter in spec.generator[1:]:
        g = np.kron(g, PAULI[letter])
    if spec.target is not None:  # controlled: G acts on the control-|1> block only
        g = np.block([[np.zeros((2, 2)), np.zeros((2, 2))], [np.zeros((2, 2)), g]])
    h = 1e-6
    d = (gate_matrix(name, h) - gate_matrix(name, -h)) / (2 * h)
    np.testing.assert_allclose(d, -0.5j * g, atol=1e-8)


def pauli_sum(terms) -> np.ndarray:
    total = 0
    for coefficient, string in terms:
        g = PAULI[string[0]]
        for letter in string[1:]:
            g = np.kron(g, PAULI[letter])
        total = total + coefficient * g
    return total


@pytest.mark.parametrize("name", [n for n, s in GATES.items() if s.takes_angle])
def test_generator_sum_reproduces_the_textbook_gate(name):
    # every gate with an angle is exp(-i theta G / 2) with G = generator_sum, exactly
    # (global phase included), and G / 2 has eigenvalues one apart (the two-term shift
    # rule) or, for the controlled rotations, 0 and +-1/2 (the four-term rule)
    spec = GATES[name]
    g = pauli_sum(spec.generator_sum)
    np.testing.assert_allclose(generator_matrix(name), g, atol=0)
    for theta in ANGLES:
        want = textbook_gate(name, theta)
        np.testing.assert_allclose(expm(-0.5j * theta * g), want, atol=1e-12)
    values = np.linalg.eigvalsh(g / 2)
    gaps = {round(abs(a - b), 9) for a in values for b in values}
    assert gaps == ({0.0, 0.5, 1.0} if spec.target is not None else {0.0, 1.0})


def test_generator_sum_is_empty_for_fixed_gates_only():
    for name, spec in GATES.items():
        assert bool(spec.generator_sum) is spec.takes_angle, name
        assert spec.generator is None or spec.generator_sum


def test_controlled_phase_is_symmetric_and_not_a_controlled_rotation():
    # cphase(theta) = diag(1, 1, 1, e^{i theta}): the same with either qubit as control, and
    # crz(theta) only up to a relative phase on the control (e^{i theta/4} rz(theta/2) on
    # it), so no haarline product with the same unscaled angle gives it
    theta = 0.9
    m = gate_matrix("cphase", theta)
    swap = gate_matrix("swap")
    np.testing.assert_allclose(swap @ m @ swap, m, atol=0)
    on_control = np.kron(gate_matrix("rz", theta / 2), np.eye(2))
    np.testing.assert_allclose(
        np.exp(0.25j * theta) * on_control @ gate_matrix("crz", theta), m, atol=1e-12
    )


def test_unknown_gate_lists_valid_names():
    with pytest.raises(KeyError, match="expected one of: i, h, x"):
        lookup("toffoli")


def test_alias():
    assert lookup("cnot") is GATES["cx"]

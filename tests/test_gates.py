"""Every row of the gate table, checked against textbook matrices (tests/reference_sim.py)."""

import numpy as np
import pytest
from haarline import GATES, gate_matrix, lookup
from reference_sim import PAULI
from reference_sim import gate as textbook_gate

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


def test_unknown_gate_lists_valid_names():
    with pytest.raises(KeyError, match="expected one of: i, h, x"):
        lookup("toffoli")


def test_alias():
    assert lookup("cnot") is GATES["cx"]

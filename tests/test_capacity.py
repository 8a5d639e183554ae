"""QFI rank against the published checks and against finite-difference Jacobians."""

import numpy as np
import pytest
from haarline import expand, parse_circuit
from haarline.engine.statevector import run
from haarline.metrics.capacity import capacity, quantum_fisher, state_jacobian


@pytest.mark.parametrize("n", [1, 2, 3, 6])
def test_ry_product_has_rank_n(n):
    # independent one-qubit rotations: n independent directions (Haug, Bharti & Kim,
    # PRX Quantum 2, 040309, 2021)
    c = capacity(expand(parse_circuit({"qubits": n, "layer": [{"gate": "ry"}]})))
    assert (c.qfi_rank, c.redundant, c.max_rank) == (n, 0, 2 ** (n + 1) - 2)


def test_rz_on_zero_state_is_redundant_and_named():
    # RZ applied first to |0> only adds a global phase: its parameter is inactive
    p = expand(parse_circuit({"qubits": 2, "layer": [{"gate": "rz", "on": [0]}, {"gate": "ry"}]}))
    c = capacity(p)
    assert c.qfi_rank == 2 and c.redundant == 1
    assert c.redundant_parameters == [
        {
            "parameter": 0,
            "step": "layer[0]",
            "layer": 1,
            "gate": "rz",
            "qubits": [0],
            "kind": "inactive",
        }
    ]


def test_deep_three_qubit_circuit_reaches_the_ceiling():
    # 2^(n+1) - 2 = 14 for n = 3 (Haug, Bharti & Kim 2021)
    p = expand(
        parse_circuit(
            {
                "qubits": 3,
                "layers": 6,
                "layer": [{"gate": "rx"}, {"gate": "rz"}, {"gate": "cz", "on": "ring"}],
            }
        )
    )
    c = capacity(p)
    assert c.qfi_rank == 14 == c.max_rank
    assert c.redundant == p.parameters - 14


def test_dependent_parameters_are_named():
    # two ry on the same qubit in a row: only their sum matters
    p = expand(parse_circuit({"qubits": 1, "layer": [{"gate": "ry"}, {"gate": "ry"}]}))
    c = capacity(p)
    assert c.qfi_rank == 1 and c.redundant_parameters[0]["kind"] == "dependent"


def test_jacobian_and_qfi_against_finite_differences():
    # F_ij = 4 Re[<d_i psi|d_j psi> - <d_i psi|psi><psi|d_j psi>] (Haug, Bharti & Kim 2021);
    # Jacobian by central differences of the engine's states (common practice)
    p = expand(
        parse_circuit(
            {
                "qubits": 3,
                "layers": 2,
                "layer": [
                    {"gate": "ry"},
                    {"gate": "crz", "on": "ring"},
                    {"gate": "rxx", "on": "chain", "share": "step"},
                ],
            }
        )
    )
    rng = np.random.default_rng(4)
    theta = rng.uniform(0, 2 * np.pi, p.parameters)
    psi, jac = state_jacobian(p, theta)
    np.testing.assert_allclose(psi, run(p, theta[None])[0], atol=1e-13)
    h = 1e-6
    fd = np.zeros_like(jac)
    for k in range(p.parameters):
        e = np.zeros(p.parameters)
        e[k] = h
        fd[:, k] = (run(p, (theta + e)[None])[0] - run(p, (theta - e)[None])[0]) / (2 * h)
    np.testing.assert_allclose(jac, fd, atol=1e-8)
    f = quantum_fisher(p, theta)
    want = 4 * (fd.conj().T @ fd - np.outer(fd.conj().T @ psi, psi.conj() @ fd)).real
    np.testing.assert_allclose(f, want, atol=1e-7)
    assert np.all(np.linalg.eigvalsh(f) > -1e-10)  # positive semi-definite

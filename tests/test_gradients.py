"""Adjoint gradients against parameter shift and central finite differences."""

import numpy as np
import pytest
from haarline import GATES, expand, parse_circuit
from haarline.metrics.gradients import adjoint_gradients, cost_values, shift_gradients
from haarline.metrics.observables import make_observable
from test_engine import random_description

COSTS = ["global", "local", "zz"]


def finite_differences(program, thetas, obs, h=1e-5):
    # central differences, error O(h^2) ~ 1e-10 (common practice)
    out = np.zeros_like(thetas)
    for p in range(thetas.shape[1]):
        plus, minus = thetas.copy(), thetas.copy()
        plus[:, p] += h
        minus[:, p] -= h
        out[:, p] = (cost_values(program, plus, obs) - cost_values(program, minus, obs)) / (2 * h)
    return out


@pytest.mark.parametrize("n", [2, 3, 4])
@pytest.mark.parametrize("case", range(6))
def test_adjoint_equals_shift_and_finite_differences(n, case):
    rng = np.random.default_rng(500 + 10 * n + case)
    program = expand(parse_circuit(random_description(rng, n, steps=12)))
    if program.parameters == 0:
        pytest.skip("no parameters drawn")
    thetas = rng.uniform(0, 2 * np.pi, size=(3, program.parameters))
    for cost in COSTS + [[[0.7, "X" + "Y" * (n - 1)], [-0.4, "Z" * n]]]:
        obs = make_observable(cost, n)
        costs, adj = adjoint_gradients(program, thetas, obs)
        np.testing.assert_allclose(costs, cost_values(program, thetas, obs), atol=1e-12)
        np.testing.assert_allclose(adj, shift_gradients(program, thetas, obs), atol=1e-10)
        np.testing.assert_allclose(adj, finite_differences(program, thetas, obs), atol=1e-8)


def test_every_parameterized_gate_is_differentiated():
    seen = set()
    for n in [2, 3, 4]:
        for case in range(6):
            rng = np.random.default_rng(500 + 10 * n + case)
            program = expand(parse_circuit(random_description(rng, n, steps=12)))
            seen |= {op.gate for op in program.operations if op.param is not None}
    assert seen == {name for name, spec in GATES.items() if spec.takes_angle}


def test_shared_parameters_sum_their_occurrences():
    desc = {
        "qubits": 3,
        "layers": 2,
        "layer": [
            {"gate": "ry", "share": "layers"},
            {"gate": "crx", "on": "ring", "share": "step"},
            {"gate": "rz", "angle": 0.4},
        ],
    }
    program = expand(parse_circuit(desc))
    assert program.parameters == 3 + 2
    rng = np.random.default_rng(1)
    thetas = rng.uniform(0, 2 * np.pi, size=(2, program.parameters))
    obs = make_observable("local", 3)
    _, adj = adjoint_gradients(program, thetas, obs)
    np.testing.assert_allclose(adj, finite_differences(program, thetas, obs), atol=1e-8)


def test_rx_product_closed_form():
    # C_global = 1 - prod cos^2(theta_j/2): dC/dtheta_1 = (1/2) sin(theta_1) prod_{j>1} cos^2
    program = expand(parse_circuit({"qubits": 3, "layer": [{"gate": "rx"}]}))
    t = np.array([[0.3, 1.1, 2.5]])
    _, g = adjoint_gradients(program, t, make_observable("global", 3))
    c2 = np.cos(t[0] / 2) ** 2
    assert g[0, 0] == pytest.approx(0.5 * np.sin(0.3) * c2[1] * c2[2], abs=1e-14)

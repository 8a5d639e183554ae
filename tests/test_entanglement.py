"""Meyer-Wallach against states whose value is known in closed form, and against QuTiP."""

import math
import warnings

import numpy as np
import pytest
from haarline import (
    entangling_capability,
    expand,
    haar_meyer_wallach,
    meyer_wallach,
    parse_circuit,
    qubit_purities,
    run,
)
from haarline.metrics.entanglement import summarize_meyer_wallach
from scipy import stats


def program(desc):
    return expand(parse_circuit(desc))


@pytest.mark.parametrize("n", [1, 2, 3, 5])
def test_product_circuit_is_zero(n):
    # Q = 0 exactly for product states (Meyer & Wallach, J. Math. Phys. 43, 4273, 2002)
    p = program({"qubits": n, "layers": 2, "layer": [{"gate": "rx"}, {"gate": "ry"}]})
    e = entangling_capability(p, samples=200)
    assert e.meyer_wallach == pytest.approx(0.0, abs=1e-12)
    assert e.std == pytest.approx(0.0, abs=1e-12)


@pytest.mark.parametrize("n", [2, 3, 4, 6])
def test_ghz_is_one(n):
    # GHZ: every one-qubit reduced state is I/2, so Q = 1 (Meyer & Wallach 2002)
    p = program({"qubits": n, "layer": [{"gate": "h", "on": [0]}, {"gate": "cx", "on": "chain"}]})
    state = run(p, np.zeros((1, 0)))
    assert meyer_wallach(state, n)[0] == pytest.approx(1.0, abs=1e-12)


@pytest.mark.parametrize("n", [2, 3, 4, 5, 7])
def test_w_state(n):
    # W state: Q = 4(n-1)/n^2 (Meyer & Wallach 2002; Brennen, QIC 3, 619, 2003)
    w = np.zeros((1, 2**n))
    for q in range(n):
        w[0, 1 << (n - 1 - q)] = 1 / math.sqrt(n)
    assert meyer_wallach(w, n)[0] == pytest.approx(4 * (n - 1) / n**2, abs=1e-12)


@pytest.mark.parametrize("n", [2, 3, 5])
def test_graph_state_with_local_rotations_is_one_for_every_parameter(n):
    # H on all then a CZ chain prepares a graph state (no isolated vertex), whose one-qubit
    # reduced states are all maximally mixed (Hein, Eisert & Briegel, PRA 69, 062311, 2004);
    # one-qubit rotations afterwards do not change purities, so Q = 1 for every parameter.
    p = program(
        {
            "qubits": n,
            "prepare": [{"gate": "h"}, {"gate": "cz", "on": "chain"}],
            "layer": [{"gate": "rx"}, {"gate": "rz"}, {"gate": "ry"}],
        }
    )
    rng = np.random.default_rng(n)
    states = run(p, rng.uniform(0, 2 * np.pi, size=(50, p.parameters)))
    np.testing.assert_allclose(meyer_wallach(states, n), 1.0, atol=1e-12)


def test_purities_agree_with_qutip_ptrace():
    # QuTiP (Johansson, Nation & Nori, Comput. Phys. Commun. 184, 1234, 2013): Qobj.ptrace
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        import qutip
    n = 4
    p = program(
        {
            "qubits": n,
            "layers": 2,
            "layer": [{"gate": "ry"}, {"gate": "rz"}, {"gate": "cx", "on": "ring"}],
        }
    )
    rng = np.random.default_rng(3)
    states = run(p, rng.uniform(0, 2 * np.pi, size=(6, p.parameters)))
    ours = qubit_purities(states, n)
    for b in range(len(states)):
        ket = qutip.Qobj(states[b].reshape(-1, 1), dims=[[2] * n, [1] * n])
        rho = ket * ket.dag()
        for k in range(n):
            rk = rho.ptrace(k)
            assert ours[b, k] == pytest.approx((rk * rk).tr().real, abs=1e-12)


@pytest.mark.parametrize("n", [2, 3, 4])
def test_haar_random_states_reach_haar_value(n):
    # scipy.stats.unitary_group (Haar measure); mean Q = (2^n - 2)/(2^n + 1) from the mean
    # purity of a random pure state (Lubkin, J. Math. Phys. 19, 1978; Page, PRL 71, 1993)
    u = stats.unitary_group.rvs(2**n, size=3000, random_state=np.random.default_rng(20 + n))
    values = meyer_wallach(u[:, :, 0], n)
    e = summarize_meyer_wallach(values, n)
    assert e.interval[0] <= haar_meyer_wallach(n) <= e.interval[1]
    assert e.haar_meyer_wallach == (2**n - 2) / (2**n + 1)


def test_bounds_and_distribution():
    p = program(
        {"qubits": 3, "layers": 2, "layer": [{"gate": "ry"}, {"gate": "crx", "on": "ring"}]}
    )
    e = entangling_capability(p, samples=300)
    assert 0.0 <= e.interval[0] <= e.meyer_wallach <= e.interval[1] <= 1.0
    assert math.isclose(sum(e.distribution), 1.0)
    assert e.samples == 300

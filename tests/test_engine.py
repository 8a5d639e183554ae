"""The batched engine against the dense np.kron reference (tests/reference_sim.py)."""

import numpy as np
import pytest
from reference_sim import simulate as dense_simulate

from analysis import GATES, LimitError, expand, parse_circuit, rows_per_chunk, run
from analysis.circuit import TWO_QUBIT_PATTERNS


def random_description(rng: np.random.Generator, n: int, steps: int = 10) -> dict:
    """A random description over the whole gate set, every pattern, reverse, angle, share."""
    names = sorted(GATES) + ["cnot"]
    layer = []
    for _ in range(steps):
        name = str(rng.choice(names))
        spec = GATES["cx" if name == "cnot" else name]
        step: dict = {"gate": name}
        if spec.qubits == 1:
            if rng.random() < 0.5:
                k = int(rng.integers(1, n + 1))
                step["on"] = [int(q) for q in rng.choice(n, size=k, replace=False)]
        else:
            if n < 2:
                continue
            if rng.random() < 0.6:
                pattern = str(rng.choice(TWO_QUBIT_PATTERNS))
                if pattern == "brick-odd" and n < 3:
                    pattern = "chain"
                step["on"] = pattern
                if rng.random() < 0.4:
                    step["reverse"] = True
            else:
                pairs = []
                for _ in range(int(rng.integers(1, 4))):
                    a, b = rng.choice(n, size=2, replace=False)
                    pairs.append([int(a), int(b)])
                step["on"] = pairs
        if spec.takes_angle:
            r = rng.random()
            if r < 0.2:
                step["angle"] = float(rng.uniform(-4, 4))
            elif r < 0.4:
                step["share"] = "step"
            elif r < 0.6:
                step["share"] = "layers"
        layer.append(step)
    if not layer:
        layer = [{"gate": "rx"}]
    return {
        "qubits": n,
        "layers": int(rng.integers(1, 3)),
        "prepare": [{"gate": "h", "on": [0]}],
        "layer": layer,
    }


@pytest.mark.parametrize("n", [1, 2, 3, 4, 5])
@pytest.mark.parametrize("case", range(6))
def test_engine_matches_dense_reference(n, case):
    rng = np.random.default_rng(1000 * n + case)
    program = expand(parse_circuit(random_description(rng, n)))
    thetas = rng.uniform(0, 2 * np.pi, size=(3, program.parameters))
    states = run(program, thetas)
    for b in range(3):
        want = dense_simulate(program, thetas[b])
        np.testing.assert_allclose(states[b], want, atol=1e-12, rtol=0)
    np.testing.assert_allclose(np.linalg.norm(states, axis=1), 1.0, atol=1e-12)


def test_every_gate_is_covered_by_the_random_circuits():
    seen = set()
    for n in [1, 2, 3, 4, 5]:
        for case in range(6):
            rng = np.random.default_rng(1000 * n + case)
            seen |= {op.gate for op in expand(parse_circuit(random_description(rng, n))).operations}
    assert seen == set(GATES)


def test_batch_of_one_equals_row_of_batch():
    rng = np.random.default_rng(5)
    program = expand(parse_circuit(random_description(rng, 4)))
    thetas = rng.uniform(0, 2 * np.pi, size=(5, program.parameters))
    whole = run(program, thetas)
    for b in range(5):
        np.testing.assert_array_equal(run(program, thetas[b : b + 1])[0], whole[b])


def test_zero_parameters():
    program = expand(parse_circuit({"qubits": 3, "layer": [{"gate": "h"}]}))
    states = run(program, np.zeros((2, 0)))
    np.testing.assert_allclose(states, np.full((2, 8), 8**-0.5))


def test_single_precision_close_to_double():
    rng = np.random.default_rng(9)
    program = expand(parse_circuit(random_description(rng, 5, steps=20)))
    thetas = rng.uniform(0, 2 * np.pi, size=(4, program.parameters))
    single = run(program, thetas, dtype=np.complex64)
    assert single.dtype == np.complex64
    np.testing.assert_allclose(single, run(program, thetas), atol=1e-5)


def test_qubit_order_is_textbook():
    # x on qubit 0 of 3 gives |100>, amplitude index 4 (DESIGN section 3)
    program = expand(parse_circuit({"qubits": 3, "layer": [{"gate": "x", "on": [0]}]}))
    state = run(program, np.zeros((1, 0)))[0]
    assert np.argmax(abs(state)) == 4


def test_shape_errors():
    program = expand(parse_circuit({"qubits": 2, "layer": [{"gate": "rx"}]}))
    with pytest.raises(ValueError, match=r"shape \(B, 2\)"):
        run(program, np.zeros((1, 3)))


def test_memory_budget_too_small_for_one_state():
    with pytest.raises(LimitError, match="memory budget"):
        rows_per_chunk(20, 1 << 20)

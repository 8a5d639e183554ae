"""The batched engine against the dense np.kron reference (tests/reference_sim.py)."""

import numpy as np
import pytest
from haarline import GATES, LimitError, expand, parse_circuit, rows_per_chunk, run
from haarline.circuit.model import TWO_QUBIT_PATTERNS
from haarline.circuit.placements import placement
from haarline.engine.context import Context
from reference_sim import simulate as dense_simulate


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
                if not placement(pattern, n):  # a pattern with no pairs at this size
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


# -- the fused, tiled engine ----------------------------------------------------------------
# The per-gate path (run_steps) is the one checked against the dense reference above; the
# fused schedule must agree with it to rounding, whatever the segment size and tile size.

from haarline.engine._execute import execute  # noqa: E402
from haarline.engine._fusion import build_schedule  # noqa: E402
from haarline.engine.statevector import (  # noqa: E402
    compile_program,
    run_steps,
    schedule,
    zero_states,
)


def _fused(plan, thetas, *, capacity=None, tile=1 << 17, dtype=np.complex128):
    states = zero_states(thetas.shape[0], plan.qubits, dtype)
    execute(plan, build_schedule(plan, capacity=capacity), thetas, states, tile=tile)
    return states


@pytest.mark.parametrize("n", [3, 5, 7])
@pytest.mark.parametrize("capacity", [2, 3, 4])
@pytest.mark.parametrize("tile", [16, 64, 1 << 17])
def test_segmented_schedule_matches_gate_by_gate(n, capacity, tile):
    rng = np.random.default_rng(77 * n + capacity)
    plan = compile_program(expand(parse_circuit(random_description(rng, n, steps=14))))
    thetas = rng.uniform(0, 2 * np.pi, size=(5, plan.parameters))
    want = run_steps(plan, thetas, zero_states(5, n))
    got = _fused(plan, thetas, capacity=capacity, tile=tile)
    np.testing.assert_allclose(got, want, atol=1e-12, rtol=0)


@pytest.mark.parametrize("n", [13, 14])
def test_large_circuits_match_gate_by_gate(n):
    # more than 12 qubits: several segments, each applied to tiles of one sample's state
    rng = np.random.default_rng(n)
    plan = compile_program(expand(parse_circuit(random_description(rng, n, steps=12))))
    thetas = rng.uniform(0, 2 * np.pi, size=(2, plan.parameters))
    np.testing.assert_allclose(
        run(plan, thetas), run_steps(plan, thetas, zero_states(2, n)), atol=1e-12, rtol=0
    )


def test_rotations_at_pi_do_not_overflow():
    # every ry at θ = π has cos(θ/2) ≈ 6e-17: the running factor must be rescaled in time
    circuit = parse_circuit(
        {
            "qubits": 3,
            "layers": 60,
            "layer": [
                {"gate": "ry"},
                {"gate": "cz", "on": "ring"},
                {"gate": "rx"},
                {"gate": "cx", "on": "chain"},
            ],
        }
    )
    plan = compile_program(expand(circuit))
    thetas = np.full((3, plan.parameters), np.pi)
    thetas[1] = np.random.default_rng(0).uniform(0, 2 * np.pi, plan.parameters)
    got = run(plan, thetas)
    assert np.all(np.isfinite(got))
    np.testing.assert_allclose(got, run_steps(plan, thetas, zero_states(3, 3)), atol=1e-10)


REAL_LAYER = [
    {"gate": "ry"},
    {"gate": "h", "on": [0]},
    {"gate": "cz", "on": "ring"},
    {"gate": "ry", "on": "brick-odd"},
    {"gate": "cx", "on": "chain"},
    {"gate": "x", "on": [1]},
    {"gate": "swap", "on": [[0, 2]]},
    {"gate": "z", "on": [2]},
]


@pytest.mark.parametrize(
    ("n", "layers", "dtype"),
    [(4, 3, np.complex128), (8, 8, np.complex128), (14, 2, np.complex128), (5, 3, np.complex64)],
)
def test_real_circuits_on_real_states_give_the_complex_paths_numbers(n, layers, dtype):
    # a circuit of real gates runs real states on real tiles (half the bytes); the same
    # linear map on i·x runs on complex tiles, and since (0 + i x)(c + 0i) = x·c i exactly,
    # its imaginary parts must be the real path's real parts, bit for bit; n = 14 runs
    # several segments on tiles of one sample, n = 8 x 8 layers rescales mid-segment
    circuit = parse_circuit({"qubits": n, "layers": layers, "layer": REAL_LAYER})
    plan = compile_program(expand(circuit))
    rng = np.random.default_rng(n)
    thetas = rng.uniform(0, 2 * np.pi, size=(3, plan.parameters))
    thetas[0, :4] = np.pi  # cos(θ/2) ≈ 6e-17: the running factor is rescaled
    x = rng.normal(size=(3, 1 << n)).astype(dtype)
    real = run(plan, thetas, states=x.copy())
    rotated = run(plan, thetas, states=(1j * x).astype(dtype))
    assert np.array_equal(real.real, rotated.imag) and not np.any(real.imag)
    assert not np.any(rotated.real)
    found = schedule(plan).real  # the real path did run: every segment was found real
    assert len(found) == len(schedule(plan).segments) and all(found.values())
    np.testing.assert_allclose(real, run_steps(plan, thetas, x.copy()), atol=1e-5 * np.abs(x).max())


@pytest.mark.parametrize("n", [4, 13])
def test_rows_never_depend_on_the_batch(n):
    # bit for bit: a row of a big batch equals the same row run alone or in another batch
    rng = np.random.default_rng(3 + n)
    plan = compile_program(expand(parse_circuit(random_description(rng, n, steps=16))))
    rows = 300 if n == 4 else 3
    thetas = rng.uniform(0, 2 * np.pi, size=(rows, plan.parameters))
    whole = run(plan, thetas)
    for lo, hi in [(0, 1), (1, 3), (rows - 2, rows)]:
        np.testing.assert_array_equal(run(plan, thetas[lo:hi]), whole[lo:hi])
    small_tiles = _fused(plan, thetas, tile=1 << 9)
    np.testing.assert_array_equal(small_tiles, whole)


RING = parse_circuit(
    {
        "qubits": 10,
        "layers": 3,
        "layer": [{"gate": "rx"}, {"gate": "rz"}, {"gate": "crz", "on": "ring"}],
    }
)


def test_metrics_with_two_workers_are_bit_identical():
    from haarline import entangling_capability, fidelities
    from haarline.engine.batching import worker_count
    from haarline.metrics.gradient_variance import gradient_samples

    program = expand(RING)
    # big enough that the work really goes to the pool
    assert worker_count(Context(workers=2), program, 200, 1) == 2
    one = fidelities(program, pairs=300, seed=5)
    two = fidelities(program, pairs=300, seed=5, context=Context(workers=2))
    small = fidelities(program, pairs=300, seed=5, context=Context(memory_budget=3 * 16 * 1024 * 7))
    np.testing.assert_array_equal(one, two)
    np.testing.assert_array_equal(one, small)
    a = entangling_capability(program, samples=200, seed=5)
    b = entangling_capability(program, samples=200, seed=5, context=Context(workers=2))
    assert a == b
    c1, g1 = gradient_samples(program, "local", samples=150, seed=5)
    c2, g2 = gradient_samples(program, "local", samples=150, seed=5, context=Context(workers=2))
    c3, g3 = gradient_samples(
        program, "local", samples=150, seed=5, context=Context(memory_budget=3 * 16 * 1024 * 5)
    )
    np.testing.assert_array_equal(g1, g2)
    np.testing.assert_array_equal(c1, c2)
    np.testing.assert_array_equal(g1, g3)


def test_bad_worker_count_is_an_option_error():
    from haarline import OptionError, fidelities

    with pytest.raises(OptionError, match="workers"):
        fidelities(expand(RING), pairs=10, seed=1, context=Context(workers=0))


def test_single_precision_through_the_metrics():
    from haarline import entangling_capability, expressibility

    program = expand(RING)
    double = expressibility(program, pairs=500, seed=2)
    single = expressibility(program, pairs=500, seed=2, context=Context(precision="single"))
    assert single.kl == pytest.approx(double.kl, abs=1e-3)
    q2 = entangling_capability(program, samples=200, seed=2).meyer_wallach
    q1 = entangling_capability(
        program, samples=200, seed=2, context=Context(precision="single")
    ).meyer_wallach
    assert q1 == pytest.approx(q2, abs=1e-5)

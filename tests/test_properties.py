"""Property tests across ``analysis``: hypothesis draws circuits over the whole gate set.

* every circuit is unitary and keeps states normalized;
* the metrics stay in their ranges: KL >= 0 (Gibbs' inequality, the Haar masses sum to 1),
  Meyer-Wallach in [0, 1] (Meyer & Wallach, J. Math. Phys. 43, 4273, 2002: Q = 2(1 - mean
  purity) and a one-qubit purity lies in [1/2, 1]), gradient variances >= 0, QFI rank
  between 0 and min(P, 2^(n+1) - 2) (Haug, Bharti & Kim, PRX Quantum 2, 040309, 2021);
* relabelling the qubits of a circuit written with explicit qubit lists changes no metric;
* descriptions and reports survive a JSON round trip unchanged.

Why the relabelling check can be exact, sample by sample: parameters are numbered in order
of first use, walking the steps and each step's list in the order written. Relabelling
maps every listed qubit ``q`` to ``pi(q)`` *in place*, so operation ``k`` keeps its gate
and its parameter index, and ``psi'(theta) = P_pi psi(theta)`` for every ``theta``, with
``P_pi`` the qubit permutation. Sample ``k`` of every stream draws the same ``theta``
(the streams are keyed by sample index and the parameter count is unchanged), so:

* fidelities ``|<psi'(a)|psi'(b)>|^2 = |<psi(a)|psi(b)>|^2`` pair by pair: the histogram,
  KL, interval, bias and E[F^2] agree;
* Meyer-Wallach averages the purities of all qubits, which ``P_pi`` only reorders;
* the ``global`` cost ``1 - |<0..0|psi>|^2`` and the ``local`` cost (an average over all
  qubits) are invariant because ``P_pi |0..0> = |0..0>`` and the average is symmetric, so
  every gradient component, and each variance, agrees; ``zz`` (Z on qubits 0 and 1) is
  invariant only when ``pi`` maps {0, 1} onto itself, and is checked only then;
* the state Jacobian is multiplied by the unitary ``P_pi``, so the QFI and its rank agree.

The agreement is exact in exact arithmetic; in floating point the two circuits apply their
gates to different axes, so values agree to rounding (1e-9 here). A fidelity within
rounding of a bin edge could in principle fall into the neighbouring bin; with continuous
fidelity distributions that has probability ~1e-13 per pair and is ignored.

Circuits written with placement patterns (``all``, ``ring``, ...) are *not* relabelled
sample by sample: ``all`` always numbers qubit 0 first, so a relabelled circuit pairs the
parameters with other qubits, and only the distributions (not the samples) agree.
"""

import json

import haarline
import numpy as np
from haarline.circuit.gates import GATES
from haarline.circuit.model import TWO_QUBIT_PATTERNS
from haarline.circuit.placements import placement
from haarline.circuit.program import expand
from haarline.engine.sampling import draw_angles
from haarline.engine.statevector import run
from haarline.metrics.entanglement import meyer_wallach
from haarline.metrics.gradient_variance import gradient_samples, summarize_gradients
from hypothesis import given, settings
from hypothesis import strategies as st

QUICK = settings(max_examples=20, deadline=None, derandomize=True)
NAMES = sorted(GATES) + ["cnot"]


@st.composite
def steps(draw, n: int, explicit: bool) -> dict:
    """One step: any gate, any placement (or only explicit lists), any parameter mode."""
    names = NAMES if n >= 2 else [g for g in NAMES if g in GATES and GATES[g].qubits == 1]
    name = draw(st.sampled_from(names))
    spec = GATES["cx" if name == "cnot" else name]
    step: dict = {"gate": name}
    if spec.qubits == 1:
        if explicit or draw(st.booleans()):
            qubits = draw(st.permutations(range(n)))
            step["on"] = qubits[: draw(st.integers(1, n))]
        elif draw(st.booleans()):
            step["on"] = "all"
    else:
        patterns = [p for p in TWO_QUBIT_PATTERNS if placement(p, n)]
        if not explicit and draw(st.booleans()):
            step["on"] = draw(st.sampled_from(patterns))
            if draw(st.booleans()):
                step["reverse"] = True
        else:
            pair = st.lists(st.integers(0, n - 1), min_size=2, max_size=2, unique=True)
            step["on"] = draw(st.lists(pair, min_size=1, max_size=3))
    if spec.takes_angle:
        mode = draw(st.sampled_from(["fresh", "angle", "step", "layers", "named"]))
        if mode == "angle":
            step["angle"] = draw(st.floats(-4, 4, allow_nan=False))
        elif mode in ("step", "layers"):
            step["share"] = mode
        elif mode == "named":
            step["param"] = draw(st.sampled_from(["alpha", "beta"]))
    return step


@st.composite
def descriptions(draw, *, explicit: bool = False, max_qubits: int = 4) -> dict:
    """A valid description; two-qubit gates only when there are two qubits."""
    n = draw(st.integers(1 if not explicit else 2, max_qubits))
    layer = draw(st.lists(steps(n, explicit), min_size=0, max_size=6))
    # one trainable rotation on an explicit qubit, so every metric has a parameter
    first = {"gate": draw(st.sampled_from(["rx", "ry"])), "on": [draw(st.integers(0, n - 1))]}
    return {
        "name": "drawn",
        "qubits": n,
        "layers": draw(st.integers(1, 2)),
        "prepare": [{"gate": "h", "on": [0]}],
        "layer": [first, *layer],
    }


def relabel(description: dict, pi: list[int]) -> dict:
    """Map every listed qubit q to pi[q], keeping the order of every list."""

    def on(value):
        if isinstance(value, str):
            return value  # a pattern: not relabelled (see the module docstring)
        if isinstance(value, list):
            return [on(v) for v in value]
        return pi[value]

    out = json.loads(json.dumps(description))
    for part in ("prepare", "layer", "finish"):
        for step in out.get(part, []):
            step["on"] = on(step.get("on", "all"))
    return out


# --- the engine -----------------------------------------------------------------------------


@QUICK
@given(descriptions(), st.integers(0, 2**32 - 1))
def test_every_circuit_is_unitary_and_keeps_the_norm(description, seed):
    program = expand(haarline.parse_circuit(description))
    dim = program.dimension
    theta = draw_angles(seed, 0, 0, 1, program.parameters)
    # row j starts as basis state e_j; all rows share theta, so the rows are U e_j
    columns = run(program, np.repeat(theta, dim, axis=0), states=np.eye(dim, dtype=complex))
    np.testing.assert_allclose(columns @ columns.conj().T, np.eye(dim), atol=1e-10)
    batch = run(program, draw_angles(seed, 1, 0, 7, program.parameters))
    np.testing.assert_allclose(np.linalg.norm(batch, axis=1), 1.0, atol=1e-12)


# --- metric ranges --------------------------------------------------------------------------


@QUICK
@given(descriptions(), st.integers(0, 2**32 - 1))
def test_metrics_stay_in_their_ranges(description, seed):
    program = expand(haarline.parse_circuit(description))
    n, p = program.qubits, program.parameters
    expr = haarline.expressibility(program, pairs=40, bins=12, seed=seed)
    assert expr.kl >= 0 and expr.kl_corrected >= 0 and expr.bias >= 0
    assert 0 <= expr.interval[0] <= expr.interval[1]
    assert abs(sum(expr.histogram) - 1) < 1e-12 and abs(sum(expr.haar) - 1) < 1e-9
    assert 0 <= expr.second_moment <= 1 and 0 <= expr.mean_fidelity <= 1

    states = run(program, draw_angles(seed, 1, 0, 30, p))
    values = meyer_wallach(states, n)
    assert np.all((values >= 0) & (values <= 1))
    ent = haarline.entangling_capability(program, samples=30, seed=seed)
    assert 0 <= ent.interval[0] <= ent.meyer_wallach <= ent.interval[1] <= 1 and ent.std >= 0

    for cost in ("global", "local") + (("zz",) if n >= 2 else ()):
        costs, grads = gradient_samples(program, cost, samples=8, seed=seed)
        point = summarize_gradients(n, program.layers, costs, grads)
        assert point.variance >= 0 and point.smallest >= 0 and point.largest >= point.smallest
        assert 0 <= point.interval[0] <= point.interval[1]

    cap = haarline.capacity(program, points=2, seed=seed).to_dict()
    assert 0 <= cap["qfi_rank"] <= min(p, 2 ** (n + 1) - 2)
    assert cap["redundant"] == p - cap["qfi_rank"]


# --- relabelling qubits ---------------------------------------------------------------------


def assert_same(a, b, path="report"):
    """Equal structure, exact ints, strings and booleans, floats to rounding."""
    if isinstance(a, dict):
        assert isinstance(b, dict) and a.keys() == b.keys(), path
        for k in a:
            if k not in ("flat_places", "qubits") or not isinstance(a[k], (str, list)):
                # words and qubit lists name qubits, which relabelling renames by design
                assert_same(a[k], b[k], f"{path}.{k}")
    elif isinstance(a, list):
        assert isinstance(b, list) and len(a) == len(b), path
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            assert_same(x, y, f"{path}[{i}]")
    elif isinstance(a, float) and not isinstance(b, bool):
        assert abs(a - b) <= 1e-9 * max(1.0, abs(a)), (path, a, b)
    else:
        assert a == b, (path, a, b)


@st.composite
def relabelled(draw):
    description = draw(descriptions(explicit=True))
    pi = draw(st.permutations(range(description["qubits"])))
    return description, list(pi)


@settings(max_examples=15, deadline=None, derandomize=True)
@given(relabelled(), st.integers(0, 2**32 - 1))
def test_relabelling_qubits_changes_no_metric(drawn, seed):
    description, pi = drawn
    keeps_zz = sorted(pi[:2]) == [0, 1]
    cost = "zz" if keeps_zz and seed % 3 == 0 else ("global", "local")[seed % 2]
    options = haarline.AnalysisOptions(
        metrics=["expressibility", "entanglement", "trainability", "capacity"],
        pairs=40,
        bins=12,
        samples=30,
        grad_samples=8,
        capacity_points=2,
        cost=cost,
        seed=seed,
    )
    one = haarline.analyze(haarline.parse_circuit(description), options)
    other = haarline.analyze(haarline.parse_circuit(relabel(description, pi)), options)
    for report in (one, other):
        del report["timings"]
        # the light-cone caution names qubits, which relabelling renames by design
        report["cautions"] = [c for c in report["cautions"] if "light cone" not in c]
    assert_same(one, other)


def test_patterns_are_not_relabelled_sample_by_sample():
    # why the check above uses explicit lists: 'all' numbers qubit 0 first whatever the
    # labels, so relabelling the explicit step alone pairs parameters with other qubits
    base = {"qubits": 2, "layer": [{"gate": "ry"}, {"gate": "rx", "on": [0]}]}
    moved = relabel(base, [1, 0])  # 'all' stays 'all'; rx moves to qubit 1
    theta = np.array([[0.3, 1.1, 2.0]])
    a = run(expand(haarline.parse_circuit(base)), theta)
    b = run(expand(haarline.parse_circuit(moved)), theta)
    swapped = a.reshape(2, 2).T.reshape(1, 4)  # P_pi psi: exchange the two qubits
    assert not np.allclose(b, swapped)
    explicit = {"qubits": 2, "layer": [{"gate": "ry", "on": [0, 1]}, {"gate": "rx", "on": [0]}]}
    c = run(expand(haarline.parse_circuit(explicit)), theta)
    d = run(expand(haarline.parse_circuit(relabel(explicit, [1, 0]))), theta)
    np.testing.assert_allclose(d, c.reshape(2, 2).T.reshape(1, 4), atol=1e-14)


# --- JSON round trips -----------------------------------------------------------------------


@QUICK
@given(descriptions())
def test_descriptions_survive_a_json_round_trip(description):
    circuit = haarline.parse_circuit(description)
    text = json.dumps(circuit.model_dump(mode="json", exclude_none=True))
    again = haarline.parse_circuit_text(text)
    assert again == circuit
    assert expand(again) == expand(circuit)


@settings(max_examples=10, deadline=None, derandomize=True)
@given(descriptions(max_qubits=3), st.integers(0, 2**32 - 1))
def test_reports_survive_a_json_round_trip(description, seed):
    options = haarline.AnalysisOptions(
        metrics=["expressibility", "entanglement", "trainability", "capacity"],
        pairs=20,
        samples=20,
        grad_samples=6,
        capacity_points=1,
        layers_sweep=[1, 2],
        seed=seed,
    )
    report = haarline.analyze(haarline.parse_circuit(description), options)
    text = json.dumps(report, allow_nan=False)
    assert json.loads(text) == report  # only JSON types: no tuples, no NaN
    assert json.dumps(json.loads(text), allow_nan=False) == text

"""Lie-algebraic diagnosis: Pauli algebra, generators, closure, predictions, report, plot.

References for the checks:
- Dense matrices: textbook gate definitions in tests/reference_sim.py (Nielsen & Chuang).
- Open transverse-field Ising chain {X_i}, {Z_i Z_i+1}: dimension n(2n - 1), so(2n)
  (free-fermion mapping; Wiersema et al., "Classification of dynamical Lie algebras of
  2-local spin systems on linear, circular and fully connected topologies", npj Quantum
  Inf. 10, 110, 2024).
- Periodic Ising chain with one parameter for all ZZ and one for all X (the QAOA ring):
  dimension 3n - 1 for n >= 3 (D'Alessandro & Isik, arXiv:2405.00898).
- Deep-circuit loss variance Var = sum_j P_gj(rho) P_gj(O) / dim g_j (Ragone et al.,
  "A Lie algebraic theory of barren plateaus for deep parameterized quantum circuits",
  Nat. Commun. 2024, arXiv:2309.09342, Theorem 1).
"""

import itertools
import json
import math

import haarline
import numpy as np
import pytest
from haarline import expand, parse_circuit
from haarline.circuit.gates import GATES
from haarline.engine.context import Context
from haarline.lie.algebra import ClosureStop, generate_algebra, independent_count
from haarline.lie.diagnosis import growth_fit, lie_diagnosis
from haarline.lie.generators import circuit_generators, rotation_generator
from haarline.lie.ideals import simple_algebra_names
from haarline.lie.pauli import (
    PauliExpansion,
    anticommutes,
    bracket,
    conjugate,
    diagonal_expansion,
    is_clifford,
    parse_pauli,
    pauli_label,
    pauli_values,
    product_phase,
)
from haarline.lie.variance import observable_expansion, predict_variance
from haarline.metrics.sampled_loss import deep_layers, deep_loss_variance, loss_variance
from haarline.plots.algebra import algebra_dimension_png, algebra_dimension_series
from reference_sim import embed, gate
from scipy.linalg import expm


def strings(n):
    return ["".join(p) for p in itertools.product("IXYZ", repeat=n)]


def dense(label):
    m = np.eye(1, dtype=complex)
    for letter in label:
        m = np.kron(
            m,
            {
                "I": np.eye(2),
                "X": np.array([[0, 1], [1, 0]]),
                "Y": np.array([[0, -1j], [1j, 0]]),
                "Z": np.diag([1, -1]),
            }[letter],
        )
    return m


def single(label, coef=1.0):
    return PauliExpansion.from_labels([(coef, label)], len(label))


def letters(n, placed):
    out = ["I"] * n
    for q, letter in placed:
        out[q] = letter
    return "".join(out)


# ------------------------------------------------------------------ Pauli algebra


def test_products_and_anticommutation_match_dense_matrices():
    # every pair of two-qubit strings
    n = 2
    labels = strings(n)
    xz = np.array([parse_pauli(s) for s in labels])
    x1, z1 = xz[:, None, 0], xz[:, None, 1]
    x2, z2 = xz[None, :, 0], xz[None, :, 1]
    k = product_phase(x1, z1, x2, z2)
    anti = anticommutes(x1, z1, x2, z2)
    for i, a in enumerate(labels):
        for j, b in enumerate(labels):
            ab, ba = dense(a) @ dense(b), dense(b) @ dense(a)
            r = pauli_label(int(xz[i, 0] ^ xz[j, 0]), int(xz[i, 1] ^ xz[j, 1]), n)
            assert np.allclose(ab, 1j ** int(k[i, j]) * dense(r))
            assert bool(anti[i, j]) is (not np.allclose(ab, ba))


def test_bracket_is_i_times_commutator():
    rng = np.random.default_rng(11)
    labels = strings(3)
    for _ in range(30):
        a = PauliExpansion.from_labels([(rng.normal(), s) for s in rng.choice(labels, 4)], 3)
        b = PauliExpansion.from_labels([(rng.normal(), s) for s in rng.choice(labels, 4)], 3)
        ma, mb = a.matrix(), b.matrix()
        assert np.allclose(bracket(a, b).matrix(), 1j * (ma @ mb - mb @ ma))


@pytest.mark.parametrize("name", sorted(GATES))
def test_conjugation_by_every_gate_matches_dense(name):
    spec = GATES[name]
    rng = np.random.default_rng(5)
    n = 3
    qubits = (1,) if spec.qubits == 1 else (2, 0)
    for angle in [None] if not spec.takes_angle else [0.37, np.pi / 2]:
        v = embed(gate(name, angle), qubits, n)
        for _ in range(4):
            a = PauliExpansion.from_labels(
                [(rng.normal(), s) for s in rng.choice(strings(n), 5)], n
            )
            moved = conjugate(a, name, qubits, angle)
            assert np.allclose(moved.matrix(), v.conj().T @ a.matrix() @ v)
            back = conjugate(a, name, qubits, angle, adjoint=True)
            assert np.allclose(back.matrix(), v @ a.matrix() @ v.conj().T)
        # Clifford gates (the table's flag; Pauli rotations at a quarter turn, but not
        # controlled ones, nor cphase, a controlled S there) map each Pauli string to one
        # signed Pauli string
        pauli_rotation = spec.generator is not None and spec.target is None
        clifford = spec.clifford or (angle == np.pi / 2 and pauli_rotation)
        assert is_clifford(name, angle) is clifford
        if clifford:
            for s in strings(n):
                (term,) = conjugate(single(s), name, qubits, angle).labels()
                assert abs(abs(term[0]) - 1) < 1e-12


def test_pauli_values_and_diagonal_expansion():
    rng = np.random.default_rng(2)
    psi = rng.normal(size=8) + 1j * rng.normal(size=8)
    psi /= np.linalg.norm(psi)
    labels = strings(3)
    xz = np.array([parse_pauli(s) for s in labels])
    values = pauli_values(psi, xz[:, 0], xz[:, 1])
    assert np.allclose(values, [np.vdot(psi, dense(s) @ psi).real for s in labels])
    d = rng.normal(size=8)
    assert np.allclose(diagonal_expansion(d).matrix(), np.diag(d))


# ---------------------------------------------------------------------- generators


@pytest.mark.parametrize("name", sorted(k for k, s in GATES.items() if s.takes_angle))
def test_rotation_generators_reproduce_the_gate(name):
    # a rotation is exp(-i theta G / 2); controlled ones have G = (I - Z_c) P_t / 2
    qubits = (0,) if GATES[name].qubits == 1 else (0, 1)
    g = rotation_generator(name, qubits, len(qubits))
    assert np.allclose(expm(-0.5j * 0.81 * g.matrix()), gate(name, 0.81))


MIXED = {
    "qubits": 3,
    "layers": 2,
    "prepare": [{"gate": "h"}, {"gate": "t", "on": [1]}],
    "layer": [
        {"gate": "ry"},
        {"gate": "cz", "on": "ring"},
        {"gate": "crx", "on": "chain"},
        {"gate": "s", "on": [0]},
        {"gate": "t", "on": [2]},
        {"gate": "rzz", "on": "chain", "share": "step"},
        {"gate": "rx", "angle": 0.7, "on": [1]},
        {"gate": "sx", "on": [2]},
    ],
    "finish": [{"gate": "ry", "on": [0]}, {"gate": "cx", "on": [[2, 0]]}, {"gate": "h", "on": [1]}],
}


def test_moving_fixed_gates_to_the_end_keeps_the_circuit():
    # U = W_end · prod_k exp(-i theta_k G'_k / 2) on the input state, with G' = W† G W for
    # the fixed gates W before each rotation, and O' = W_end† O W_end (dense matrices)
    program = expand(parse_circuit(MIXED))
    gens = circuit_generators(program)
    n, d = 3, 8
    rng = np.random.default_rng(7)
    theta = rng.uniform(0, 2 * np.pi, program.parameters)
    u = np.eye(d, dtype=complex)
    for op in program.operations:
        u = (
            embed(gate(op.gate, op.angle if op.param is None else theta[op.param]), op.qubits, n)
            @ u
        )
    order = list(dict.fromkeys(op.param for op in program.operations if op.param is not None))
    v = np.eye(d, dtype=complex)
    for p in order:
        v = expm(-0.5j * theta[p] * gens.generators[p].matrix()) @ v
    w = np.eye(d, dtype=complex)
    for op in gens.moved:
        w = embed(gate(op.gate, op.angle), op.qubits, n) @ w
    zero = np.eye(d)[0]
    assert np.allclose(u @ zero, w @ v @ gens.input_state)
    head = np.eye(d, dtype=complex)
    for op in program.operations[: gens.prefix_gates]:
        head = embed(gate(op.gate, op.angle), op.qubits, n) @ head
    assert np.allclose(gens.input_state, head @ zero)
    obs = PauliExpansion.from_labels([(0.3, "XYZ"), (1.0, "ZII")], 3)
    assert np.allclose(gens.moved_observable(obs).matrix(), w.conj().T @ obs.matrix() @ w)
    assert not gens.clifford_moves  # t and the fixed-angle rx give Pauli sums
    assert gens.sharing == "shared" and not gens.interleaved  # rzz share: adjacent, commuting


def test_conjugation_direction_on_a_two_gate_example():
    # rz, then cx, then rz on the target: moving cx to the end turns the second Z_1 into
    # CX† Z_1 CX = Z_0 Z_1 (and not the first one)
    program = expand(
        parse_circuit(
            {
                "qubits": 2,
                "layer": [
                    {"gate": "rz", "on": [1]},
                    {"gate": "cx", "on": [[0, 1]]},
                    {"gate": "rz", "on": [1]},
                ],
            }
        )
    )
    gens = circuit_generators(program)
    assert [g.labels() for g in gens.generators] == [[(1.0, "IZ")], [(1.0, "ZZ")]]
    assert [op.gate for op in gens.moved] == ["cx"]


def test_stabilizers_of_a_clifford_input_state():
    # GHZ then S on qubit 2: stabilizers X X Y, Z Z I, I Z Z
    program = expand(
        parse_circuit(
            {
                "qubits": 3,
                "prepare": [
                    {"gate": "h", "on": [0]},
                    {"gate": "cx", "on": "chain"},
                    {"gate": "s", "on": [2]},
                ],
                "layer": [{"gate": "rx"}],
            }
        )
    )
    gens = circuit_generators(program)
    assert gens.stabilizers == ("+XXY", "+ZZI", "+IZZ")
    for s in gens.stabilizers:
        assert np.allclose(dense(s[1:]) @ gens.input_state, gens.input_state)


def test_interleaved_shared_parameter_is_flagged():
    # one parameter for rx in every layer, with an independent rzz between: the circuit is
    # not exp(-i theta (G_1 + G_2) / 2)
    c = parse_circuit(
        {
            "qubits": 2,
            "layers": 2,
            "layer": [{"gate": "rx", "share": "layers"}, {"gate": "rzz", "on": "chain"}],
        }
    )
    gens = circuit_generators(expand(c))
    assert gens.sharing == "shared-interleaved" and len(gens.interleaved) == 2
    p = lie_diagnosis(c, scan=[2]).points[0]
    assert p.prediction is not None and not p.prediction.applies
    assert "non-adjacent" in p.prediction.reason


# ------------------------------------------------------------------------- closure


def dense_closure(mats, tol=1e-9):
    """Brute force: Gram-Schmidt over all pairwise commutators until nothing new appears.

    Returns the dimension of the real span and of the centre (elements of the span that
    commute with every generator).
    """
    d = mats[0].shape[0]
    basis = np.zeros((0, 2 * d * d))
    elems = []

    def add(m):
        nonlocal basis
        v = np.concatenate([m.real.ravel(), m.imag.ravel()])
        scale = np.linalg.norm(v)
        for _ in range(2):
            v = v - basis.T @ (basis @ v)
        if np.linalg.norm(v) > tol * max(1.0, scale):
            basis = np.vstack([basis, v / np.linalg.norm(v)])
            elems.append(m / scale)
            return True
        return False

    for m in mats:
        add(m)
    done = 0
    while done < len(elems):  # every new element against every element so far
        a = elems[done]
        for b in list(elems[: done + 1]):
            add(a @ b - b @ a)
        done += 1
    blocks = []
    for g in mats:
        c = np.array([e @ g - g @ e for e in elems])
        blocks.append(np.concatenate([c.real, c.imag], axis=1).reshape(len(elems), -1).T)
    sv = np.linalg.svd(np.vstack(blocks), compute_uv=False)
    centre = len(elems) - int(np.sum(sv > 1e-8 * max(sv.max(initial=0), 1)))
    return len(elems), centre


@pytest.mark.parametrize("n", [1, 2, 3])
@pytest.mark.parametrize("kind", ["strings", "sums"])
def test_closure_agrees_with_dense_brute_force(n, kind):
    rng = np.random.default_rng(100 * n + len(kind))
    labels = [s for s in strings(n) if set(s) != {"I"}]
    for trial in range(4):
        k = int(rng.integers(1, 4))
        if kind == "strings":
            gens = [single(s) for s in rng.choice(labels, k, replace=False)]
        else:
            gens = [
                PauliExpansion.from_labels(
                    [(rng.normal(), s) for s in rng.choice(labels, 2, replace=False)], n
                )
                for _ in range(k)
            ]
        ours = generate_algebra(gens)
        dim, centre = dense_closure([1j * g.matrix() for g in gens])
        assert ours.complete
        assert (ours.dimension, ours.centre_dimension) == (dim, centre), (trial, gens)
        semisimple = sum(i.dimension for i in ours.ideals)
        assert semisimple + centre == dim


ISING_PLUS = {
    "name": "ising-plus",
    "qubits": 3,
    "prepare": [{"gate": "h"}],
    "layer": [{"gate": "rzz", "on": "chain"}, {"gate": "rx"}],
}
ISING_ZERO = {
    "name": "ising-zero",
    "qubits": 3,
    "layer": [{"gate": "rzz", "on": "chain"}, {"gate": "rx"}],
}


def test_open_ising_chain_is_so_2n():
    # Wiersema et al., npj Quantum Inf. 10, 110 (2024): dim n(2n - 1), so(2n)
    lie = lie_diagnosis(parse_circuit(ISING_PLUS), scan=[2, 3, 4, 5, 6])
    for p in lie.points:
        n, a = p.qubits, p.algebra
        assert a.dimension == n * (2 * n - 1) and a.centre_dimension == 0
        assert a.pauli_strings and p.generators.sharing == "independent"
        if n == 2:  # so(4) = su(2) + su(2)
            assert sorted(i.dimension for i in a.ideals) == [3, 3]
        else:
            (ideal,) = a.ideals
            assert ideal.rank == n
            assert any(f"so({2 * n})" in name for name in ideal.names)


@pytest.mark.parametrize("n", [3, 4, 5, 6, 7])
def test_qaoa_ring_has_dimension_3n_minus_1(n):
    # D'Alessandro & Isik, arXiv:2405.00898: one parameter for all ZZ on the ring and one for
    # all X gives dimension 3n - 1 for n >= 3 (our closure also finds a 2-dimensional centre
    # and n - 1 copies of su(2))
    c = parse_circuit(
        {
            "qubits": n,
            "layer": [
                {"gate": "rzz", "on": "ring", "share": "step"},
                {"gate": "rx", "share": "step"},
            ],
        }
    )
    gens = circuit_generators(expand(c))
    a = generate_algebra(list(gens.generators))
    assert gens.sharing == "shared"
    assert a.dimension == 3 * n - 1
    assert a.centre_dimension == 2 and [i.dimension for i in a.ideals] == [3] * (n - 1)


@pytest.mark.parametrize("n", [1, 3, 6])
def test_one_qubit_rotations(n):
    # RX alone: n commuting generators (abelian); RX and RZ on every qubit: su(2)^n, 3n
    rx = parse_circuit({"qubits": n, "layer": [{"gate": "rx"}]})
    a = lie_diagnosis(rx, scan=[n]).points[0].algebra
    assert a.dimension == n and a.centre_dimension == n and a.ideals == ()
    both = parse_circuit({"qubits": n, "layer": [{"gate": "rx"}, {"gate": "rz"}]})
    b = lie_diagnosis(both, scan=[n]).points[0].algebra
    assert b.dimension == 3 * n and b.centre_dimension == 0
    assert [i.dimension for i in b.ideals] == [3] * n


def dense_generators(program):
    """Generators straight from dense matrices: W† G W, W the fixed gates before each."""
    n = program.qubits
    first = next(k for k, op in enumerate(program.operations) if op.param is not None)
    w = np.eye(2**n, dtype=complex)
    out = {}
    for op in program.operations[first:]:
        if op.param is None:
            w = embed(gate(op.gate, op.angle), op.qubits, n) @ w
            continue
        # the generator as i d/dtheta of the gate at theta = 0, embedded
        h = 1e-6
        dg = (gate(op.gate, h) - gate(op.gate, -h)) / (2 * h)
        g = embed(2j * dg, op.qubits, n)
        out[op.param] = out.get(op.param, 0) + w.conj().T @ g @ w
    # the identity part (cphase's generator has one) only turns the global phase: the
    # algebra is that of the traceless parts (generate_algebra ignores identity terms)
    eye = np.eye(2**n)
    return [out[p] - np.trace(out[p]) / 2**n * eye for p in sorted(out)]


@pytest.mark.parametrize(
    "desc",
    [
        MIXED,
        {"qubits": 3, "layers": 3, "layer": [{"gate": "ry"}, {"gate": "cz", "on": "ring"}]},
        {
            "qubits": 3,
            "layers": 2,
            "layer": [
                {"gate": "rx", "on": [0]},
                {"gate": "t", "on": [0]},
                {"gate": "cx", "on": "chain"},
            ],
        },
        {
            "qubits": 3,
            "layers": 2,
            "layer": [
                {"gate": "rx"},
                {"gate": "cphase", "on": "chain"},
                {"gate": "h", "on": [1]},
                {"gate": "cphase", "on": [[2, 0]], "angle": 0.4},
            ],
        },
    ],
)
def test_pipeline_agrees_with_dense_generators_and_closure(desc):
    # the whole chain (moved fixed gates, Pauli sums, closure, centre) against generators
    # built from dense gate matrices and the dense brute-force closure
    program = expand(parse_circuit(desc))
    ours = generate_algebra(list(circuit_generators(program).generators))
    dim, centre = dense_closure([1j * g for g in dense_generators(program)])
    assert (ours.dimension, ours.centre_dimension) == (dim, centre)


HEA = {
    "name": "rx-rz-rzz",
    "qubits": 3,
    "layer": [{"gate": "rx"}, {"gate": "rz"}, {"gate": "rzz", "on": "chain"}],
}


def test_hardware_efficient_layer_is_all_of_su():
    # rx, rz on all qubits and an rzz chain: 4^n - 1, all of su(2^n), for n = 2..5
    lie = lie_diagnosis(parse_circuit(HEA), scan=[2, 3, 4, 5])
    assert [p.algebra.dimension for p in lie.points] == [15, 63, 255, 1023]
    assert all(p.algebra.full and p.algebra.complete for p in lie.points)
    assert lie.growth["better"] == "exponential"
    assert lie.growth["exponential"]["base"] == pytest.approx(4.0, abs=0.1)


def test_sum_closure_reaches_su_with_controlled_rotations():
    # crx is a Pauli sum (I - Z_c) X_t / 2; with ry on all qubits the algebra is su(2^n)
    c = parse_circuit(
        {"qubits": 3, "layer": [{"gate": "ry"}, {"gate": "rz"}, {"gate": "crx", "on": "ring"}]}
    )
    a = lie_diagnosis(c, scan=[3]).points[0].algebra
    assert not a.pauli_strings and a.full


def test_cap_gives_a_lower_bound():
    a = generate_algebra(
        [single(letters(4, [(q, p)])) for q in range(4) for p in "XZ"]
        + [single(letters(4, [(q, "Z"), (q + 1, "Z")])) for q in range(3)],
        cap=100,
    )
    assert not a.complete and a.dimension >= 100 and a.centre_dimension is None
    assert a.stop is ClosureStop.CAP
    assert a.to_dict()["stop_reason"] == "cap of 100 elements reached"


def test_closure_stop_texts_are_pinned():
    # a regression pin: the report's stop_reason strings are part of report_format 1
    texts = {stop: stop.text(cap=100, budget=1000) for stop in ClosureStop}
    assert texts == {
        ClosureStop.CLOSED: "closed",
        ClosureStop.FULL: "all of su(2^n)",
        ClosureStop.EMPTY: "no generators",
        ClosureStop.CAP: "cap of 100 elements reached",
        ClosureStop.WORK: "work budget of 16000 string products reached",
        ClosureStop.COEFFICIENTS: "coefficient budget of 1000 reached",
    }
    assert [s for s in ClosureStop if s.complete] == [
        ClosureStop.CLOSED,
        ClosureStop.FULL,
        ClosureStop.EMPTY,
    ]


def test_names_of_simple_algebras():
    # Cartan's list: dimension and rank
    assert simple_algebra_names(3, 1) == ("su(2) = so(3) = sp(1)",)
    assert simple_algebra_names(45, 5) == ("so(10)",)
    assert simple_algebra_names(35, 5) == ("su(6)",)
    assert simple_algebra_names(78, 6) == ("so(13)", "sp(6)", "e6")
    assert simple_algebra_names(6, 2) == ()


def test_independent_count():
    a, b = single("XZ"), single("ZX")
    assert independent_count([a, b, a.plus(b), a.scaled(-3.0)]) == 2


@pytest.mark.parametrize("seed", range(5))
def test_independent_count_agrees_with_numpy_rank(seed):
    # reference: numpy.linalg.matrix_rank of the coefficient matrix over all 4^n strings.
    # Random sums over a few strings, plus combinations of earlier ones with a small
    # independent part (cancellation close to the tolerance, where Gram-Schmidt needs its
    # second projection) and exact combinations (dependent).
    rng = np.random.default_rng(seed)
    n, labels = 3, ["".join(p) for p in itertools.product("IXYZ", repeat=3)][1:]
    items = []
    for _ in range(30):
        kind = rng.integers(3) if len(items) >= 2 else 0
        if kind == 0:
            picks = rng.choice(len(labels), size=rng.integers(1, 5), replace=False)
            items.append(PauliExpansion.from_labels([(rng.normal(), labels[i]) for i in picks], n))
        else:
            a, b = (items[i] for i in rng.choice(len(items), size=2, replace=False))
            mix = a.scaled(rng.normal()).plus(b.scaled(rng.normal()))
            if kind == 2:
                mix = mix.plus(PauliExpansion.from_labels([(1e-3, labels[rng.integers(63)])], n))
            items.append(mix)
    dense = np.zeros((len(items), 4**n))
    for row, e in enumerate(items):
        for coef, label in e.labels():
            dense[row, labels.index(label) + 1] = coef
    assert independent_count(items) == np.linalg.matrix_rank(dense, tol=1e-9)


def test_ry_cz_ring_dimensions_are_pinned():
    # regression pin (our own numbers, no external source): ry on all and a cz ring
    c = parse_circuit({"qubits": 4, "layer": [{"gate": "ry"}, {"gate": "cz", "on": "ring"}]})
    lie = lie_diagnosis(c, scan=[2, 3, 4, 5, 6])
    assert [p.algebra.dimension for p in lie.points] == [6, 15, 24, 45, 60]
    assert [p.layers for p in lie.points] == [2, 2, 2, 2, 2]


# -------------------------------------------------------------- predicted variance


def x0(n):
    return [[1.0, "X" + "I" * (n - 1)]]


def z0(n):
    return [[1.0, "Z" + "I" * (n - 1)]]


def predicted(desc, n, cost):
    p = lie_diagnosis(parse_circuit(desc), cost=cost, scan=[n]).points[0]
    assert p.prediction is not None and p.prediction.applies, p.prediction
    return p.prediction.variance


@pytest.mark.parametrize("n", [2, 3, 4, 5])
def test_predicted_variances_match_closed_forms(n):
    # su(2^n), Pauli observable, pure state: P(rho) = 1 - 2^-n, P(O) = 2^n, so
    # Var = (2^n - 1)/(4^n - 1) = 1/(2^n + 1) (Ragone et al., Theorem 1; the Haar value)
    assert predicted(HEA, n, z0(n)) == pytest.approx(1 / (2**n + 1), rel=1e-12)
    # open Ising chain, O = X_0, derived from Ragone et al.'s formula: so(2n) is spanned by
    # X_i and {Y,Z}_i X..X {Y,Z}_j (Jordan-Wigner); O lies in it, P(O) = 2^n.
    # |+>^n = 2^-n sum_S X_S has only the n single X_i inside: P(rho) = n / 2^n, so
    # Var = 1/(2n - 1). |0>^n = 2^-n sum_S Z_S has the n - 1 strings Z_i Z_i+1 inside:
    # P(rho) = (n - 1) / 2^n, Var = (n - 1)/(n(2n - 1)). At n = 2, so(4) = su(2) + su(2)
    # and the two ideals give the same numbers.
    assert predicted(ISING_PLUS, n, x0(n)) == pytest.approx(1 / (2 * n - 1), rel=1e-12)
    assert predicted(ISING_ZERO, n, x0(n)) == pytest.approx((n - 1) / (n * (2 * n - 1)), rel=1e-12)


def test_purity_normalization_against_dense_projection():
    # P_g(rho) = Tr(rho_g^2) with rho_g the Hilbert-Schmidt projection onto the real span of
    # the algebra, computed here from dense matrices (orthonormal basis by QR)
    n = 3
    c = parse_circuit(ISING_ZERO)
    gens = circuit_generators(expand(c, qubits=n))
    algebra = generate_algebra(list(gens.generators))
    pred = predict_variance(gens, algebra, observable_expansion("zz", n))
    basis = np.array(
        [
            dense(pauli_label(int(x), int(z), n)).ravel()
            for x, z in zip(algebra.x, algebra.z, strict=True)
        ]
    )
    q, _ = np.linalg.qr(basis.T)
    rho = np.outer(gens.input_state, gens.input_state.conj())
    proj = q @ (q.conj().T @ rho.ravel())
    assert pred.state_purity == pytest.approx(float(np.vdot(proj, proj).real), rel=1e-12)


def test_prediction_does_not_apply_outside_the_algebra():
    # RX alone from |0>, cost Z on qubit 0: neither Z_0 nor the Z strings of |0><0| lie in
    # span{X_q}
    c = parse_circuit({"qubits": 2, "layer": [{"gate": "rx"}]})
    p = lie_diagnosis(c, cost=z0(2), scan=[2]).points[0]
    assert not p.prediction.applies and p.prediction.variance is None
    assert "neither the observable" in p.prediction.reason


@pytest.mark.slow
@pytest.mark.parametrize(
    "desc,n,cost,exact",
    [
        (HEA, 2, z0(2), 1 / 5),
        (HEA, 3, z0(3), 1 / 9),
        (ISING_PLUS, 3, x0(3), 1 / 5),
        (ISING_PLUS, 4, x0(4), 1 / 7),
        (ISING_ZERO, 3, x0(3), 2 / 15),
        (ISING_ZERO, 4, x0(4), 3 / 28),
    ],
)
def test_sampled_deep_variance_agrees_with_prediction(desc, n, cost, exact):
    # the prediction against 2000 samples of a deep circuit (8 x dim g parameters, fixed
    # seed); the 99.9% interval from the sample size must hold the exact value
    c = parse_circuit(desc)
    p = lie_diagnosis(c, cost=cost, scan=[n]).points[0]
    assert p.prediction.variance == pytest.approx(exact, rel=1e-12)
    layers = deep_layers(c, n, p.algebra.dimension)
    s = loss_variance(
        expand(c, qubits=n, layers=layers), cost, samples=2000, seed=4, confidence=0.999
    )
    assert s.interval[0] <= exact <= s.interval[1], (s.variance, s.interval, exact)


def test_deep_loss_variance_checks_half_depth():
    c = parse_circuit(ISING_PLUS)
    v = deep_loss_variance(c, 3, 15, x0(3), samples=1000, seed=2)
    assert v.layers == deep_layers(c, 3, 15) and v.half_depth["layers"] == v.layers // 2
    assert v.settled is True
    assert json.loads(json.dumps(v.to_dict(), allow_nan=False))["samples"] == 1000


def test_loss_variance_does_not_depend_on_chunking():
    program = expand(parse_circuit(ISING_PLUS), layers=4)
    a = loss_variance(program, x0(3), samples=300, seed=9)
    b = loss_variance(program, x0(3), samples=300, seed=9, context=Context(memory_budget=1 << 16))
    assert a == b


# ------------------------------------------------------------------ report and plot


def test_report_object_is_plain_json():
    lie = lie_diagnosis(parse_circuit(ISING_PLUS), cost="local", scan=[2, 3, 4, 5])
    out = lie.to_dict()
    text = json.dumps(out, allow_nan=False)
    assert json.loads(text) == out
    assert set(out) == {"cost", "cap", "layers_rule", "points", "growth", "summary"}
    point = out["points"][2]
    assert point["dimension"] == 28 and point["maximum"] == 255 and not point["full"]
    assert point["input_state"]["stabilizers"] == ["+XIII", "+IXII", "+IIXI", "+IIIX"]
    assert point["ideals"] == [{"dimension": 28, "rank": 4, "simple": True, "names": ["so(8)"]}]
    # the local cost (Z strings) and |+>^n both reach outside so(8): no prediction
    assert point["prediction"]["applies"] is False and point["prediction"]["variance"] is None
    assert out["growth"]["better"] == "polynomial"
    assert out["growth"]["polynomial"]["degree"] == pytest.approx(2.0, abs=0.3)


def test_default_scan_extends_while_small():
    # RX alone has dimension n: the default 2..7 scan goes on to the extension limit
    lie = lie_diagnosis(parse_circuit({"qubits": 2, "layer": [{"gate": "rx"}]}))
    assert [p.qubits for p in lie.points] == list(range(2, 11))
    assert [p.algebra.dimension for p in lie.points] == list(range(2, 11))


def test_growth_fit():
    f = growth_fit([2, 3, 4, 5, 6], [n * (2 * n - 1) for n in range(2, 7)])
    assert f["better"] == "polynomial"
    assert growth_fit([2, 3], [3, 8]) is None
    e = growth_fit([2, 3, 4], [15, 63, 255])
    assert e["better"] == "exponential" and math.isclose(e["exponential"]["base"], 4, rel_tol=0.05)


def test_plot_draws_the_report_numbers():
    lie = lie_diagnosis(parse_circuit(HEA), scan=[2, 3, 4, 5], cap=300)
    report = {"circuit": {"name": "rx-rz-rzz"}, "lie": lie.to_dict()}
    s = algebra_dimension_series(report)
    assert s["dimension"].tolist()[:3] == [15.0, 63.0, 255.0]
    assert s["complete"].tolist() == [True, True, True, False]
    assert s["dimension"][3] >= 300
    assert np.allclose(s["guides"]["su"], 4.0 ** s["guides"]["qubits"] - 1)
    assert s["fit"]["model"] == "exponential" and s["fit"]["qubits"].max() == 4.0
    png = algebra_dimension_png(report)
    assert png[:8] == b"\x89PNG\r\n\x1a\n"
    assert int.from_bytes(png[16:20], "big") == 900  # IHDR width
    assert algebra_dimension_png(report) == png  # deterministic bytes
    with pytest.raises(ValueError, match="lie"):
        algebra_dimension_series({"circuit": {"name": "x"}})


def test_public_names_are_exported():
    from haarline.lie import algebra, generators, ideals, pauli
    from haarline.lie import diagnosis as lie
    from haarline.lie import variance as lie_variance
    from haarline.metrics import sampled_loss
    from haarline.plots import algebra as lie_plot

    for module in (algebra, generators, ideals, lie, lie_plot, lie_variance, pauli, sampled_loss):
        for name in module.__all__:
            assert hasattr(module, name)
            if not name.isupper():
                assert name in haarline.__all__, name


def test_report_key_lie_with_sampled_deep_variance(capsys):
    # rx, rz on all + cx chain generates all of su(2^n) (Larocca et al., Quantum 6, 824,
    # 2022); for a Pauli observable on a pure state the deep-circuit loss variance is
    # 1/(2^n + 1) (Ragone et al. 2024). The report puts the sampled value beside it.
    from haarline.service.cli import main as cli

    assert (
        cli.main(
            [
                "analyze",
                "ref:rx-rz-cx-chain",
                "--metrics",
                "lie",
                "--cost",
                "zz",
                "--scan",
                "2,3",
                "--format",
                "json",
            ]
        )
        == 0
    )
    report = json.loads(capsys.readouterr().out)
    for point in report["lie"]["points"]:
        n = point["qubits"]
        assert point["full"] and point["dimension"] == 4**n - 1
        predicted = point["prediction"]["variance"]
        assert predicted == pytest.approx(1 / (2**n + 1), rel=1e-9)
        lo, hi = point["sampled"]["interval"]
        assert lo <= predicted <= hi
    assert "algebra.png" in haarline.plot_files(report)

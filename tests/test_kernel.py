"""Quantum kernels: concentration, the kernel matrix, alignment and geometric difference.

Each check names its source. Sampled values are compared with tolerances of four standard
errors of the estimate at the stated sample size (fixed seeds): a false failure has a
probability of about 6e-5 per comparison (normal tail, common practice).
"""

from __future__ import annotations

import haarline
import numpy as np
import pytest
import qutip
from haarline import AnalysisOptions, analyze, expand, parse_circuit
from haarline.engine.draws import Draws
from haarline.metrics.kernel import (
    alignment,
    geometric_difference,
    kernel_matrix,
    kernel_values,
    summarize_kernel,
)


def product_map(n: int) -> haarline.Circuit:
    # rx(x_q) on every qubit: the product encoding of Thanasilp et al. 2024, Sec. "Expressivity"
    return parse_circuit(
        {"name": "product", "qubits": n, "inputs": n, "layer": [{"gate": "rx", "input": "qubit"}]}
    )


@pytest.mark.parametrize("n", range(1, 9))
def test_product_encoding_kernel_mean_and_variance(n):
    # k(x, x') = prod_q cos^2((x_q - x'_q)/2) (derived: <0|rx(-a) rx(b)|0> = cos((b-a)/2));
    # with d uniform on the circle, E[cos^2(d/2)] = 1/2 and E[cos^4(d/2)] = 3/8, so
    # E[k] = 2^-n and Var k = (3/8)^n - (1/4)^n exactly.
    program = expand(product_map(n))
    values = kernel_values(program, pairs=20_000, seed=n, draws=Draws(vary="inputs"))
    point = summarize_kernel(values, program)
    se_mean = values.std(ddof=1) / np.sqrt(len(values))
    assert abs(point.mean - 2.0**-n) <= 4 * se_mean
    assert abs(point.variance - ((3 / 8) ** n - (1 / 4) ** n)) <= 4 * point.standard_error


@pytest.mark.slow
def test_product_encoding_concentrates_over_the_scan():
    # the variance falls as (3/8)^n: exponential concentration (Thanasilp et al. 2024)
    options = AnalysisOptions(
        metrics=["kernel"], kernel_pairs=20_000, scan=[2, 4, 6, 8, 10], seed=3
    )
    kernel = analyze(product_map(4), options)["kernel"]
    assert kernel["concentrated"] is True, kernel["reason"]
    # the fitted decay per qubit brackets ln(8/3) = 0.98 (the large-n rate of (3/8)^n)
    d, se = kernel["decay_per_qubit"], kernel["decay_per_qubit_stderr"]
    assert abs(d - np.log(8 / 3)) <= 4 * se + 0.1


def _qutip_states(x: np.ndarray, layers: int) -> list[qutip.Qobj]:
    """States of the test's feature map, built with QuTiP's operators (an independent
    simulator): H on every qubit, rz(x_q), rzz((pi - x_q)(pi - x_q+1)) on the chain, twice.

    Qubit 0 is the leftmost tensor factor, as in haarline.
    """
    n = x.shape[1]
    eye = qutip.qeye(2)

    def on(op: qutip.Qobj, q: int) -> qutip.Qobj:
        return qutip.tensor([op if k == q else eye for k in range(n)])

    def zz(a: int, b: int) -> qutip.Qobj:
        return qutip.tensor([qutip.sigmaz() if k in (a, b) else eye for k in range(n)])

    hadamard = (qutip.sigmax() + qutip.sigmaz()) / np.sqrt(2)
    states = []
    for row in x:
        psi = qutip.tensor([qutip.basis(2, 0) for _ in range(n)])
        for _ in range(layers):
            for q in range(n):
                psi = on(hadamard, q) * psi
            for q in range(n):
                psi = (-0.5j * row[q] * on(qutip.sigmaz(), q)).expm() * psi
            for q in range(n - 1):
                angle = (np.pi - row[q]) * (np.pi - row[q + 1])
                psi = (-0.5j * angle * zz(q, q + 1)).expm() * psi
        states.append(psi)
    return states


def test_iris_kernel_matrix_agrees_with_qutip():
    # 20 points of the iris data shipped with scikit-learn, first four features scaled to
    # [0, pi] (the test in the issue), against QuTiP element by element
    sklearn_datasets = pytest.importorskip("sklearn.datasets")
    data = sklearn_datasets.load_iris().data[::7][:20, :4]
    x = (data - data.min(axis=0)) / (data.max(axis=0) - data.min(axis=0)) * np.pi
    circuit = parse_circuit(
        {
            "name": "iris-map",
            "qubits": 4,
            "inputs": 4,
            "layers": 2,
            "layer": [
                {"gate": "h"},
                {"gate": "rz", "input": "qubit"},
                {"gate": "rzz", "input": "product", "on": "chain"},
            ],
        }
    )
    ours = kernel_matrix(expand(circuit), x, seed=1)
    states = _qutip_states(x, layers=2)
    theirs = np.array([[abs(a.overlap(b)) ** 2 for b in states] for a in states])
    np.testing.assert_allclose(ours, theirs, atol=1e-12)


def test_alignment_of_the_ideal_kernel_is_one():
    # A(yy^T, y) = 1 (Cristianini et al., NIPS 2001: the ideal kernel is perfectly aligned)
    y = np.array([1, -1, 1, 1, -1, -1, 1])
    assert alignment(np.outer(y, y).astype(float), y) == pytest.approx(1.0, abs=1e-12)
    # labels that are not +-1 give the same target matrix (equal / different)
    labels = np.where(y > 0, "a", "b")
    assert alignment(np.outer(y, y).astype(float), labels) == pytest.approx(1.0, abs=1e-12)


def test_geometric_difference_of_a_kernel_with_itself_is_one_up_to_the_regularization():
    # g(K || K) = sqrt(max_i l_i / (l_i + reg)) for K normalised to trace N (derived from
    # Huang et al. 2021, eq. 5, with (K + reg I)^-1 in place of K^-1): 1 as reg -> 0
    rng = np.random.default_rng(4)
    a = rng.normal(size=(12, 3))
    k = np.exp(-np.sum((a[:, None] - a[None]) ** 2, axis=2))
    reg = 1e-3
    normed = k * (len(k) / np.trace(k))
    w = np.linalg.eigvalsh(normed)
    expected = np.sqrt(np.max(w / (w + reg)))
    assert geometric_difference(k, k, reg) == pytest.approx(expected, rel=1e-9)
    assert geometric_difference(k, k, 1e-12) == pytest.approx(1.0, abs=1e-6)


def test_labelled_data_gives_alignment_geometric_difference_and_the_matrix():
    rng = np.random.default_rng(7)
    x = rng.uniform(0, np.pi, size=(30, 3))
    labels = (x[:, 0] > np.pi / 2).astype(int)
    data = haarline.dataset_from({"x": x.tolist(), "labels": labels.tolist()})
    circuit = parse_circuit(
        {"qubits": 3, "inputs": 3, "layer": [{"gate": "rx", "input": "qubit"}, {"gate": "ry"}]}
    )
    options = AnalysisOptions(metrics=["kernel"], kernel_pairs=500, kernel_rows=25, scan=[3])
    report = analyze(circuit, options, data=data)
    kernel = report["kernel"]
    assert kernel["matrix"]["rows"] == 25 and len(kernel["matrix"]["values"]) == 25
    assert -1 <= kernel["alignment"] <= 1 and kernel["geometric_difference"] >= 0
    assert report["data"]["rows"] == 30 and report["data"]["labelled"] is True
    png = haarline.plot_files(report)
    assert "kernel_matrix.png" in png


def test_a_circuit_without_inputs_has_no_kernel():
    circuit = parse_circuit({"qubits": 2, "layer": [{"gate": "ry"}]})
    with pytest.raises(haarline.OptionError, match="inputs"):
        analyze(circuit, AnalysisOptions(metrics=["kernel"]))

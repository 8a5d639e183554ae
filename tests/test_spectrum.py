"""The Fourier spectrum of models with inputs (Schuld, Sweke & Meyer, PRA 103, 032430, 2021)."""

from __future__ import annotations

import numpy as np
import pytest
from haarline import AnalysisOptions, analyze, expand, parse_circuit
from haarline.metrics.spectrum import feature_frequencies, spectrum


def reuploading(layers: int) -> dict:
    # one qubit, rx(x) re-uploaded L times with trainable rotations between
    return {
        "name": "reupload",
        "qubits": 1,
        "inputs": 1,
        "layers": layers,
        "prepare": [{"gate": "ry"}, {"gate": "rz"}],
        "layer": [{"gate": "rx", "input": 0}, {"gate": "ry"}, {"gate": "rz"}],
    }


@pytest.mark.parametrize("layers", [1, 2, 3, 5])
def test_one_qubit_reuploaded_L_times_reaches_0_to_L(layers):
    # Schuld, Sweke & Meyer 2021, Sec. III: L repetitions of a Pauli encoding give the
    # integer frequencies 0..L
    frequencies, gates, note = feature_frequencies(expand(parse_circuit(reuploading(layers))), 0)
    assert frequencies == [float(k) for k in range(layers + 1)]
    assert gates == layers and note is None


@pytest.mark.parametrize("n", [2, 3, 5])
def test_n_qubits_encoding_one_feature_once_each_reach_0_to_n(n):
    # the same paper: parallel encodings add like serial ones, n of them give 0..n
    c = parse_circuit(
        {
            "qubits": n,
            "inputs": 1,
            "layer": [{"gate": "ry"}, {"gate": "rx", "input": 0}, {"gate": "cz", "on": "chain"}],
        }
    )
    assert feature_frequencies(expand(c), 0)[0] == [float(k) for k in range(n + 1)]


@pytest.mark.parametrize("n", [1, 2, 3, 4])
def test_scales_3_to_the_q_reach_every_integer_up_to_half_of_3n_minus_1(n):
    # scales 3^q: sums of {-3^q, 0, 3^q} are the balanced-ternary numbers, every integer
    # from -(3^n - 1)/2 to (3^n - 1)/2 (the exponential encoding of the same paper, Sec. V)
    steps = [{"gate": "rx", "input": 0, "scale": float(3**q), "on": [q]} for q in range(n)]
    c = parse_circuit({"qubits": n, "inputs": 1, "layer": [{"gate": "ry"}, *steps]})
    top = (3**n - 1) // 2
    assert feature_frequencies(expand(c), 0)[0] == [float(k) for k in range(top + 1)]


def test_a_controlled_rotation_adds_half_frequencies():
    # crx(x) = exp(-i x |1><1| (x) X / 2): eigenvalues 0, 0, +-1/2, differences {0, 1/2, 1}
    c = parse_circuit(
        {
            "qubits": 2,
            "inputs": 1,
            "layer": [{"gate": "h"}, {"gate": "crx", "input": 0, "on": "chain"}],
        }
    )
    assert feature_frequencies(expand(c), 0)[0] == [0.0, 0.5, 1.0]


def test_the_sampled_coefficients_live_on_the_spectrum_only():
    # f is a trigonometric polynomial with the listed frequencies, so the discrete Fourier
    # transform on 2K + 1 points is exact: no weight elsewhere (up to rounding), and
    # Parseval holds: mean over x of f^2 = |c_0|^2 + 2 sum_k>0 |c_k|^2 (for each sample)
    program = expand(parse_circuit(reuploading(3)))
    (feature,) = spectrum(program, "global", samples=1, seed=5)
    assert feature.outside_weight is not None and feature.outside_weight < 1e-25
    assert feature.weights is not None
    # direct evaluation of f on a fine grid with the same parameters
    from haarline.engine.sampling import Stream, draw_angles
    from haarline.metrics.gradients import cost_values
    from haarline.metrics.observables import make_observable

    theta = draw_angles(5, (Stream.SPECTRUM, 1, 3, 0), 0, 1, program.parameters)
    xs = np.linspace(0, 2 * np.pi, 400, endpoint=False)[:, None]
    f = cost_values(
        program, program.angles(np.repeat(theta, 400, axis=0), xs), make_observable("global", 1)
    )
    w = feature.weights
    assert np.mean(f**2) == pytest.approx(w[0] + 2 * sum(w[1:]), rel=1e-10)


def test_product_encodings_have_no_linear_spectrum_and_say_so():
    c = parse_circuit(
        {
            "qubits": 2,
            "inputs": 2,
            "layer": [
                {"gate": "rx", "input": "qubit"},
                {"gate": "rzz", "input": "product", "on": "chain"},
            ],
        }
    )
    report = analyze(c, AnalysisOptions(metrics=["spectrum"], spectrum_samples=2))
    features = report["spectrum"]["features"]
    assert all(f["frequencies"] is None and "product" in f["note"] for f in features)
    assert any("product" in caution for caution in report["cautions"])


def test_spectrum_in_the_report_with_weights_and_plot():
    import haarline

    report = analyze(
        parse_circuit(reuploading(2)),
        AnalysisOptions(metrics=["spectrum"], spectrum_samples=8),
    )
    (feature,) = report["spectrum"]["features"]
    assert feature["frequencies"] == [0.0, 1.0, 2.0] and feature["max_frequency"] == 2.0
    assert len(feature["weights"]) == 3 and feature["samples"] == 8
    assert "spectrum.png" in haarline.plot_files(report)
    # the draws of the other features and of theta follow the seed
    again = analyze(
        parse_circuit(reuploading(2)), AnalysisOptions(metrics=["spectrum"], spectrum_samples=8)
    )
    assert again["spectrum"] == report["spectrum"]

"""Data inputs in the description, data sets, and what varies in the samples."""

from __future__ import annotations

import json

import haarline
import numpy as np
import pytest
import reference_sim as ref
from haarline import AnalysisOptions, analyze, expand, parse_circuit
from haarline.engine.draws import Draws, InputLaw
from haarline.service.cli import main as cli

FEATURE_MAP = {
    "name": "feature-map",
    "qubits": 3,
    "inputs": 3,
    "layers": 2,
    "layer": [
        {"gate": "h"},
        {"gate": "rz", "input": "qubit", "scale": 2.0},
        {"gate": "rzz", "input": "product", "on": "chain"},
        {"gate": "ry"},
    ],
}


def test_input_steps_make_encodings_not_parameters():
    p = expand(parse_circuit(FEATURE_MAP))
    assert p.parameters == 6 and p.inputs == 3
    assert len(p.encodings) == 2 * (3 + 2) and p.columns == 6 + 10
    facts = haarline.facts(p)
    assert facts["inputs"] == 3 and facts["input_gates"] == 10


def test_the_engine_applies_the_encoded_angles_like_the_dense_reference():
    # angles: 2 x_q on rz, (pi - x_a)(pi - x_b) on rzz (Havlicek et al., Nature 567, 2019)
    p = expand(parse_circuit(FEATURE_MAP))
    rng = np.random.default_rng(2)
    theta = rng.uniform(0, 2 * np.pi, (1, p.parameters))
    x = rng.uniform(0, 2 * np.pi, (1, p.inputs))
    state = haarline.run(p, p.angles(theta, x))[0]
    angles = p.angles(theta, x)[0]
    expected = ref.simulate(p, angles)
    np.testing.assert_allclose(state, expected, atol=1e-12)
    # the encoded columns follow the encodings
    rz = [e for e in p.encodings if not e.product]
    assert rz[0].angle(x)[0] == pytest.approx(2.0 * x[0, 0])


@pytest.mark.parametrize(
    ("change", "path", "words"),
    [
        ({"layer": [{"gate": "h", "input": 0}]}, "layer[0].input", "has no angle"),
        ({"layer": [{"gate": "rx", "input": 0, "angle": 1.0}]}, "layer[0].input", "'angle'"),
        ({"layer": [{"gate": "rx", "input": 0, "share": "step"}]}, "layer[0].input", "'share'"),
        ({"layer": [{"gate": "rx", "scale": 2.0}]}, "layer[0].scale", "give 'input'"),
        ({"layer": [{"gate": "rx", "input": 5}]}, "layer[0].input", "out of range for 3 inputs"),
        ({"layer": [{"gate": "rx", "input": "product"}]}, "layer[0].input", "two-qubit"),
        (
            {"layer": [{"gate": "rzz", "input": "qubit", "on": "chain"}]},
            "layer[0].input",
            "two qubits",
        ),
        ({"inputs": 2, "layer": [{"gate": "rx", "input": "qubit"}]}, "layer[0].input", "qubit 2"),
        (
            {"inputs": 0, "layer": [{"gate": "rx", "input": 0}]},
            "layer[0].input",
            "declares no inputs",
        ),
        ({"layer": [{"gate": "rx", "input": -1}]}, "layer[0].input", "feature index"),
        ({"inputs": -2}, "inputs", "0..1000"),
    ],
)
def test_bad_inputs_name_their_path(change, path, words):
    description = {"qubits": 3, "inputs": 3, "layer": [{"gate": "ry"}], **change}
    with pytest.raises(haarline.CircuitError) as info:
        expand(parse_circuit(description))
    message = str(info.value)
    assert message.startswith(f"{path}:") and words in message, message


def test_bad_inputs_exit_2_on_the_command_line(tmp_path, capsys):
    bad = tmp_path / "bad.json"
    bad.write_text(json.dumps({"qubits": 2, "inputs": 1, "layer": [{"gate": "rx", "input": 3}]}))
    assert cli.main(["analyze", str(bad)]) == 2
    err = capsys.readouterr().err
    assert "layer[0].input: feature 3 is out of range for 1 inputs (0..0)" in err
    assert "Traceback" not in err


def test_a_scan_re_instantiates_one_input_per_qubit():
    c = parse_circuit({"qubits": 2, "inputs": 2, "layer": [{"gate": "rx", "input": "qubit"}]})
    assert expand(c, qubits=5).inputs == 5
    fixed = parse_circuit({"qubits": 2, "inputs": 3, "layer": [{"gate": "rx", "input": 0}]})
    assert expand(fixed, qubits=5).inputs == 3


def test_a_pure_feature_map_varies_its_inputs_by_default():
    c = parse_circuit({"qubits": 2, "inputs": 2, "layer": [{"gate": "ry", "input": "qubit"}]})
    r = analyze(c, AnalysisOptions(pairs=200, samples=100))
    assert r["circuit"]["parameters"] == 0
    # ry(x) on |0>: real product states; entanglement exactly 0, fidelities vary
    assert r["entanglement"]["meyer_wallach"] == pytest.approx(0.0, abs=1e-12)
    assert r["expressibility"]["kl"] > 0


@pytest.mark.parametrize(
    ("options", "words"),
    [
        ({"vary": "parameters"}, "no trainable parameters"),
        ({"vary": "both"}, "no trainable parameters"),
    ],
)
def test_vary_that_the_circuit_cannot_do_is_an_option_error(options, words):
    c = parse_circuit({"qubits": 2, "inputs": 2, "layer": [{"gate": "ry", "input": "qubit"}]})
    with pytest.raises(haarline.OptionError, match=words):
        analyze(c, AnalysisOptions(**options))


def test_input_laws_for_a_circuit_without_inputs_are_refused():
    c = parse_circuit({"qubits": 2, "layer": [{"gate": "ry"}]})
    with pytest.raises(haarline.OptionError, match="inputs_uniform: the circuit has no inputs"):
        analyze(c, AnalysisOptions(inputs_uniform=[0.0, 1.0]))
    with pytest.raises(haarline.OptionError, match="vary"):
        analyze(c, AnalysisOptions(vary="inputs"))


def test_the_input_laws_draw_what_they_say():
    # uniform on [a, b): mean (a+b)/2, variance (b-a)^2/12; normal: mean, std (textbook)
    uniform = InputLaw(kind="uniform", low=1.0, high=3.0).draw(1, (7,), 0, 20_000, 1, 2)
    assert uniform.min() >= 1.0 and uniform.max() < 3.0
    assert abs(uniform.mean() - 2.0) <= 4 * np.sqrt(4 / 12 / uniform.size)
    normal = InputLaw(kind="normal", mean=-1.0, std=0.5).draw(1, (7,), 0, 20_000, 1, 2)
    assert abs(normal.mean() + 1.0) <= 4 * 0.5 / np.sqrt(normal.size)
    assert abs(normal.std() - 0.5) <= 4 * 0.5 / np.sqrt(2 * normal.size)
    rows = np.arange(12.0).reshape(6, 2)
    picked = InputLaw(kind="data", rows=rows).draw(1, (7,), 0, 50, 2, 2)
    assert {tuple(r) for r in picked} <= {tuple(r) for r in rows}


def test_draws_of_a_sample_do_not_depend_on_the_chunk():
    p = expand(parse_circuit(FEATURE_MAP))
    d = Draws(vary="both")
    whole = d.angles(p, 3, 0, 0, 100, copies=2)
    parts = np.concatenate([d.angles(p, 3, 0, s, 25, copies=2) for s in range(0, 100, 25)])
    np.testing.assert_array_equal(whole, parts)


def test_trainability_with_inputs_differentiates_the_parameters_only():
    r = analyze(
        parse_circuit(FEATURE_MAP),
        AnalysisOptions(metrics=["trainability", "capacity"], scan=[2, 3], grad_samples=30),
    )
    for point in r["trainability"]["points"]:
        assert point["parameters"] == 2 * point["qubits"]
    assert r["capacity"]["parameters"] == 6


def test_circuits_without_inputs_keep_their_numbers():
    # Draws() is the old uniform-parameter draw, bit for bit
    p = expand(haarline.load_reference("ry-cz-ring"))
    old = haarline.draw_angles(9, 0, 5, 40, 2 * p.parameters).reshape(80, p.parameters)
    np.testing.assert_array_equal(Draws().angles(p, 9, 0, 5, 40, copies=2), old)


@pytest.mark.parametrize(
    ("text", "words"),
    [
        ("a,b\n0.1,0.2\n0.3\n", "row 2: got 1 columns; the header has 2"),
        ("a,b\n0.1,x\n", "row 1, column 2 (b): got 'x'; expected a number"),
        ("a,b\n0.1,nan\n", "row 1, column 2 (b): got 'nan'; expected a finite number"),
        ("", "the file is empty"),
        ("a,b\n", "no data rows"),
    ],
)
def test_bad_data_files_name_the_row_and_column(tmp_path, text, words):
    path = tmp_path / "d.csv"
    path.write_text(text)
    with pytest.raises(haarline.DataError) as info:
        haarline.load_data(path)
    assert words in str(info.value)


def test_data_of_the_wrong_width_is_refused(tmp_path, capsys):
    path = tmp_path / "d.csv"
    path.write_text("a,b,label\n0.1,0.2,0\n0.3,0.4,1\n")
    circuit = tmp_path / "c.json"
    circuit.write_text(json.dumps(FEATURE_MAP))
    assert cli.main(["analyze", str(circuit), "--metrics", "kernel", "--data", str(path)]) == 2
    assert "data: 2 feature columns; the circuit encodes 3 inputs" in capsys.readouterr().err


def test_a_csv_with_labels_and_a_npy_file_load(tmp_path):
    path = tmp_path / "d.csv"
    path.write_text("f0,label,f1\n0.5,cat,1.5\n1.0,dog,2.0\n")
    d = haarline.load_data(path)
    assert d.x.tolist() == [[0.5, 1.5], [1.0, 2.0]] and d.labels.tolist() == ["cat", "dog"]
    npy = tmp_path / "d.npy"
    np.save(npy, np.eye(3))
    assert haarline.load_data(npy).features == 3


def test_the_demo_data_generator_reproduces_the_bundled_file(tmp_path):
    # the invented demo data are written by a seeded script beside them
    import runpy
    import shutil
    from pathlib import Path

    examples = Path(__file__).parents[1] / "examples"
    shutil.copy(examples / "make_greenhouse_data.py", tmp_path)
    runpy.run_path(str(tmp_path / "make_greenhouse_data.py"), run_name="__main__")
    assert (tmp_path / "greenhouse-beds.csv").read_text() == (
        examples / "greenhouse-beds.csv"
    ).read_text()


def test_the_demo_model_runs_with_its_data(capsys):
    from pathlib import Path

    examples = Path(__file__).parents[1] / "examples"
    code = cli.main(
        ["analyze", str(examples / "greenhouse-classifier.json"), "--metrics", "kernel,spectrum",
         "--data", str(examples / "greenhouse-beds.csv"), "--kernel-pairs", "300",
         "--spectrum-samples", "3", "--scan", "4", "--format", "json"]
    )  # fmt: skip
    assert code == 0
    report = json.loads(capsys.readouterr().out)
    assert report["data"]["rows"] == 120 and report["data"]["classes"] == 2
    assert report["kernel"]["alignment"] is not None
    assert [f["max_frequency"] for f in report["spectrum"]["features"]] == [2.0] * 4

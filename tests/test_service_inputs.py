"""Circuits with inputs through the service: inline data, kernel and spectrum jobs, errors.

The ``client`` fixture (tests/conftest.py) is a started app whose jobs run, with a key.
"""

import time

import haarline
import numpy as np
import pytest

MODEL = {
    "name": "service-model",
    "qubits": 3,
    "inputs": 3,
    "layers": 2,
    "layer": [{"gate": "rx", "input": "qubit"}, {"gate": "ry"}, {"gate": "cz", "on": "ring"}],
}
OPTIONS = {
    "metrics": ["kernel", "spectrum"],
    "kernel_pairs": 200,
    "scan": [2, 3],
    "spectrum_samples": 3,
    "seed": 4,
}
RNG = np.random.default_rng(11)
X = RNG.uniform(0, np.pi, size=(24, 3)).round(6)
DATA = {"x": X.tolist(), "labels": [int(v) for v in (X[:, 0] > 1.5)]}


def wait(client, url, timeout=60):
    deadline = time.time() + timeout
    while time.time() < deadline:
        job = client.get(url).json()
        if job["state"] in ("succeeded", "failed", "cancelled"):
            return job
        time.sleep(0.1)
    raise AssertionError(f"{url} did not finish")


def test_a_kernel_job_with_inline_data_equals_the_library(client):
    r = client.post("/v1/analyses", json={"circuit": MODEL, "options": OPTIONS, "data": DATA})
    assert r.status_code == 202, r.text
    job = wait(client, r.headers["Location"])
    assert job["state"] == "succeeded", job
    report = client.get(f"{r.headers['Location']}/report").json()
    want = haarline.analyze(
        haarline.parse_circuit(MODEL),
        haarline.parse_options(OPTIONS),
        data=haarline.dataset_from(DATA),
    )
    assert report["kernel"] == want["kernel"] and report["spectrum"] == want["spectrum"]
    assert report["data"]["rows"] == 24 and report["data"]["labelled"]
    names = client.get(f"{r.headers['Location']}/plots").json()
    assert {"kernel.png", "kernel_matrix.png", "spectrum.png"} <= set(names)
    summary = client.get(f"{r.headers['Location']}/summary").text
    assert "Kernel-target alignment" in summary


@pytest.mark.parametrize(
    ("data", "path"),
    [
        ({"x": [[0.1, 0.2, 0.3], [0.1, 0.2]]}, "data.x[1]"),
        ({"x": [[0.1, 0.2]]}, "data.x"),
        ({"x": [[0.1, 0.2, 0.3]], "labels": [1, 2]}, "data.labels"),
        ({"x": []}, "data.x"),
        ({"x": [[0.1, "a", 0.3]]}, "data.x[0][1]"),
    ],
)
def test_bad_inline_data_is_a_422_naming_the_path(client, data, path):
    r = client.post("/v1/analyses", json={"circuit": MODEL, "options": OPTIONS, "data": data})
    assert r.status_code == 422, r.text
    paths = [e["path"] for e in r.json()["errors"]]
    assert any(p.startswith(path) for p in paths), paths


def test_a_kernel_of_a_circuit_without_inputs_is_refused_at_admission(client):
    body = {"reference": "ry-cz-ring", "options": {"metrics": ["kernel"]}}
    r = client.post("/v1/analyses", json=body)
    assert r.status_code == 422
    assert r.json()["errors"][0]["path"] == "options.metrics"


def test_score_takes_data_too(client):
    body = {
        "circuit": MODEL,
        "options": {**OPTIONS, "metrics": ["kernel"], "scan": [3]},
        "data": DATA,
    }
    r = client.post("/v1/score", json=body)
    assert r.status_code == 200, r.text
    assert r.json()["kernel"]["alignment"] is not None

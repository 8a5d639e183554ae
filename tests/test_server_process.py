"""A real uvicorn server on loopback: submit, poll, fetch; SIGKILL mid-job and restart."""

import json
import time

import haarline


def wait_state(client, url, states, timeout=120):
    deadline = time.time() + timeout
    while time.time() < deadline:
        job = client.get(url).json()
        if job["state"] in states:
            return job
        time.sleep(0.1)
    raise AssertionError(f"{url}: {job}")


def test_round_trip_through_a_real_server(live_server, live_client):
    c = live_client
    opts = {"pairs": 500, "samples": 200, "seed": 3}
    r = c.post("/v1/analyses", json={"reference": "ry-cx-bricks", "options": opts})
    assert r.status_code == 202
    url = r.headers["location"]
    assert wait_state(c, url, ("succeeded", "failed"))["state"] == "succeeded"
    report = c.get(f"{url}/report").json()
    want = haarline.analyze(
        haarline.load_reference("ry-cx-bricks"), haarline.AnalysisOptions(**opts)
    )
    assert report["expressibility"] == json.loads(json.dumps(want["expressibility"]))
    assert report["entanglement"] == json.loads(json.dumps(want["entanglement"]))
    assert c.get(f"{url}/summary").status_code == 200
    for name in c.get(f"{url}/plots").json():
        assert c.get(f"{url}/plots/{name}").content[:4] == b"\x89PNG"


def test_sigkill_mid_job_then_restart_loses_nothing(live_server, live_client):
    c = live_client
    opts = {"pairs": 20_000, "samples": 100, "seed": 11, "metrics": ["expressibility"]}
    body = {
        "circuit": {
            "name": "slow",
            "qubits": 8,
            "layers": 4,
            "layer": [{"gate": "ry"}, {"gate": "rz"}, {"gate": "cz", "on": "ring"}],
        },
        "options": opts,
    }
    url = c.post("/v1/analyses", json=body).headers["location"]
    queued = c.post(
        "/v1/analyses", json={"reference": "rx-product", "options": {"pairs": 200, "samples": 50}}
    )
    queued_url = queued.headers["location"]
    wait_state(c, url, ("running",))
    time.sleep(1.0)
    live_server.restart()  # SIGKILL of the whole process group, then a new server
    job = wait_state(c, url, ("succeeded", "failed"), timeout=300)
    assert job["state"] == "succeeded", job
    assert any(e["detail"] == "requeued after a restart" for e in job["events"])
    assert wait_state(c, queued_url, ("succeeded", "failed"))["state"] == "succeeded"
    report = c.get(f"{url}/report").json()
    want = haarline.analyze(
        haarline.parse_circuit(body["circuit"]), haarline.AnalysisOptions(**opts)
    )
    assert report["expressibility"]["kl"] == want["expressibility"]["kl"]
    assert report["expressibility"]["histogram"] == want["expressibility"]["histogram"]

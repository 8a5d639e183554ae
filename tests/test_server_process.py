"""A real uvicorn server on loopback: submit, poll, fetch; SIGKILL mid-job and restart."""

import json
import os
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

import haarline
import httpx2 as httpx
import pytest
from haarline.service.api.keys import issue_key
from haarline.service.jobs.store import Store

REPO = Path(__file__).resolve().parent.parent


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def start(data: Path, port: int) -> subprocess.Popen:
    env = {**os.environ, "HAARLINE_DATA_DIR": str(data), "HAARLINE_WORKERS": "1"}
    log = data.parent / "server.log"
    with open(log, "ab") as err:
        proc = subprocess.Popen(
            [
                sys.executable,
                "-m",
                "haarline.service.cli.main",
                "serve",
                "--port",
                str(port),
                "--log-level",
                "warning",
            ],
            cwd=REPO,
            env=env,
            stdout=subprocess.DEVNULL,
            stderr=err,
            start_new_session=True,  # its own process group, workers included
        )
    deadline = time.time() + 30
    while time.time() < deadline:
        try:
            if httpx.get(f"http://127.0.0.1:{port}/readyz", timeout=1).status_code == 200:
                return proc
        except httpx.HTTPError:
            time.sleep(0.1)
    kill(proc)
    raise AssertionError(f"server did not start: {log.read_text()[-2000:]}")


def kill(proc: subprocess.Popen) -> None:
    os.killpg(proc.pid, signal.SIGKILL)
    proc.wait(timeout=10)


@pytest.fixture
def server(tmp_path):
    data = tmp_path / "data"
    data.mkdir()
    store = Store(data / "haarline.sqlite3")
    store.initialize()
    _, key = issue_key(store, "ci")
    port = free_port()
    state = {"proc": start(data, port), "data": data, "port": port}
    state["client"] = httpx.Client(
        base_url=f"http://127.0.0.1:{port}", headers={"Authorization": f"Bearer {key}"}, timeout=10
    )
    yield state
    state["client"].close()
    try:
        kill(state["proc"])
    except ProcessLookupError:
        pass


def wait_state(client, url, states, timeout=120):
    deadline = time.time() + timeout
    while time.time() < deadline:
        job = client.get(url).json()
        if job["state"] in states:
            return job
        time.sleep(0.1)
    raise AssertionError(f"{url}: {job}")


def test_round_trip_through_a_real_server(server):
    c = server["client"]
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


def test_sigkill_mid_job_then_restart_loses_nothing(server):
    c = server["client"]
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
    kill(server["proc"])
    server["proc"] = start(server["data"], server["port"])
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

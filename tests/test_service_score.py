"""POST /v1/score: its own processes, a wall-clock limit, a concurrency cap.

A score runs in the score pool (``service/scoring.py``), never in the job workers; one past
``HAARLINE_SCORE_TIMEOUT`` is a 504 and its process is killed; a score that finds every
score process busy is a 503 with ``Retry-After``. The report is the one a job computes.
"""

import json
import threading
import time

import haarline
import psutil
import pytest
from haarline.service.settings import Settings

SMALL = {"reference": "ry-cz-ring", "options": {"pairs": 300, "samples": 100, "seed": 5}}
# a minute or more of work: 2 * 2e6 pairs * 48 gates * 2^8 amplitudes
SLOW = {
    "circuit": {
        "name": "slow",
        "qubits": 8,
        "layers": 4,
        "layer": [{"gate": "ry"}, {"gate": "rz"}, {"gate": "cz", "on": "ring"}],
    },
    "options": {"pairs": 2_000_000, "metrics": ["expressibility"], "seed": 1},
}


def poll(condition, timeout=60.0, what="condition"):
    deadline = time.time() + timeout
    while time.time() < deadline:
        value = condition()
        if value:
            return value
        time.sleep(0.05)
    raise AssertionError(f"{what} not met within {timeout} s")


def gone(pid):
    """The process has exited (a zombie left for its parent to reap counts as gone)."""
    try:
        return psutil.Process(pid).status() == psutil.STATUS_ZOMBIE
    except psutil.NoSuchProcess:
        return True


def expected(body):
    options = haarline.AnalysisOptions(**body["options"])
    report = haarline.analyze(haarline.load_reference(body["reference"]), options)
    return json.loads(json.dumps(report))


def strip(report):
    return {k: v for k, v in report.items() if k != "timings"}


def test_score_runs_beside_a_busy_job_worker_and_equals_the_library(make_client):
    c = make_client(max_work=1e12)
    scores = c.app.state.runner.scores
    assert scores.pids() == []  # started by the first score, or here
    scores.start()
    poll(scores.pids, what="the score process started")
    job = c.post("/v1/analyses", json=SLOW).json()
    url = f"/v1/analyses/{job['id']}"
    poll(lambda: c.get(url).json()["state"] == "running", what="the job running")
    # the only job worker is busy for a minute; the score does not wait for it
    r = c.post("/v1/score", json=SMALL)
    assert r.status_code == 200, r.text
    assert c.get(url).json()["state"] == "running"
    assert strip(r.json()) == strip(expected(SMALL))
    c.delete(url)
    assert poll(lambda: c.get(url).json()["state"] == "cancelled", what="the job cancelled")


def test_over_the_limit_is_a_504_the_process_is_killed_and_busy_is_a_503(make_client):
    c = make_client(score_timeout=4, max_score_work=1e12)
    scores = c.app.state.runner.scores
    scores.start()
    (first,) = poll(scores.pids, what="the score process started")
    slow: dict = {}
    thread = threading.Thread(target=lambda: slow.update(r=c.post("/v1/score", json=SLOW)))
    thread.start()
    try:
        poll(lambda: scores.busy() == 1, what="the slow score running")
        # the one score process is busy: refused at once, not queued behind it
        busy = c.post("/v1/score", json=SMALL)
        assert busy.status_code == 503, busy.text
        assert busy.headers["content-type"] == "application/problem+json"
        problem = busy.json()
        assert problem["type"].endswith("/score-busy")
        assert "all 1 score workers are busy" in problem["detail"]
        assert 1 <= int(busy.headers["Retry-After"]) <= 4
        assert f"retry in {busy.headers['Retry-After']} s" in problem["detail"]
    finally:
        thread.join(timeout=120)
    r = slow["r"]
    assert r.status_code == 504, r.text
    assert r.headers["content-type"] == "application/problem+json"
    assert "retry-after" not in r.headers
    problem = r.json()
    assert problem["type"].endswith("/score-timeout") and problem["limit"] == 4
    assert "within the limit of 4 s (HAARLINE_SCORE_TIMEOUT)" in problem["detail"]
    assert "submit the circuit as a job with POST /v1/analyses" in problem["detail"]
    # the abandoned work does not go on: its process is killed, a fresh one replaces it
    poll(lambda: gone(first), what=f"score process {first} gone")
    (second,) = poll(scores.pids, what="a fresh score process")
    assert second != first and scores.busy() == 0
    r = c.post("/v1/score", json=SMALL)
    assert r.status_code == 200, r.text
    assert strip(r.json()) == strip(expected(SMALL))
    # the job workers were never involved
    job = c.post("/v1/analyses", json=SMALL).json()
    url = f"/v1/analyses/{job['id']}"
    assert poll(lambda: c.get(url).json()["state"] == "succeeded", what="a job succeeded")


def test_a_dead_score_process_is_a_503_and_is_replaced(make_client):
    import os
    import signal

    c = make_client()
    scores = c.app.state.runner.scores
    scores.start()
    (first,) = poll(scores.pids, what="the score process started")
    os.kill(first, signal.SIGKILL)  # an idle score process dies (out of memory, say)
    poll(lambda: gone(first), what=f"score process {first} gone")
    r = c.post("/v1/score", json=SMALL)
    assert r.status_code == 503, r.text
    assert r.json()["type"].endswith("/score-worker-lost") and r.headers["Retry-After"] == "5"
    assert "the score process died" in r.json()["detail"]
    assert scores.busy() == 0  # the slot is free again, with a fresh process
    (second,) = poll(scores.pids, what="a fresh score process")
    assert second != first
    r = c.post("/v1/score", json=SMALL)
    assert r.status_code == 200 and strip(r.json()) == strip(expected(SMALL))


def test_score_settings_are_validated(tmp_path):
    from haarline.service.errors import SettingsError

    for name, value in [("SCORE_TIMEOUT", "0"), ("SCORE_TIMEOUT", "601"), ("SCORE_WORKERS", "0")]:
        with pytest.raises(SettingsError, match=f"HAARLINE_{name}"):
            Settings.from_env({f"HAARLINE_{name}": value, "HAARLINE_DATA_DIR": str(tmp_path)})
    cfg = Settings.from_env({"HAARLINE_DATA_DIR": str(tmp_path)})
    assert (cfg.score_timeout, cfg.score_workers) == (20.0, 1)

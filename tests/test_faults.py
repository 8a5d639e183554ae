"""Faults: crashes of the server and of a worker, a locked database, a full disk.

A server killed alone (SIGKILL of its main process, not of its group) must not leave its
worker processes running: they notice that their parent is gone and exit.

The larger crash run is ``make faults`` (tests/faults.py, 10 cycles); here it runs twice.

The full disk is simulated with ``RLIMIT_FSIZE`` on the server process (inherited by its
workers): once the SQLite file or its write-ahead log would grow past the limit, the write
fails inside SQLite exactly where a full disk would fail it, without root, a loop device
or a tiny tmpfs. (SQLite reports ``disk I/O error`` for EFBIG where ENOSPC gives
``database or disk is full``; both are ``sqlite3.OperationalError`` and take the same path.)
The locked database is a second process holding ``BEGIN EXCLUSIVE`` on the file.
"""

import os
import signal
import sqlite3
import subprocess
import sys
import time
from contextlib import closing

import psutil
from fastapi.testclient import TestClient
from faults import run_cycles
from haarline.service.api.keys import issue_key
from live_server import LiveServer, wait_for

SMALL = {"reference": "rx-product", "options": {"pairs": 100, "samples": 50}}
SLOW = {
    "circuit": {
        "name": "long",
        "qubits": 10,
        "layers": 4,
        "layer": [{"gate": "ry"}, {"gate": "rz"}, {"gate": "cz", "on": "ring"}],
    },
    "options": {"pairs": 200_000, "metrics": ["expressibility"], "seed": 1},
}


def integrity(database) -> str:
    with closing(sqlite3.connect(database)) as conn:
        return conn.execute("PRAGMA integrity_check").fetchone()[0]


def test_sigkill_restart_cycles_lose_no_job_and_change_no_result(tmp_path):
    with LiveServer(tmp_path) as server:
        figures = run_cycles(server, cycles=2, jobs=2)
    assert figures["jobs_lost"] == 0, figures
    assert figures["results_identical"] == figures["jobs_accepted"] == 2, figures
    assert integrity(server.store.path) == "ok"


def test_a_killed_worker_is_retried_then_failed_and_the_service_keeps_serving(tmp_path):
    with LiveServer(tmp_path) as server, server.client(server.key()) as c:
        url = c.post("/v1/analyses", json=SLOW).headers["location"]
        for attempt in (1, 2):
            job = wait_for(c, url, ("running",))
            assert job["attempts"] == attempt
            time.sleep(0.5)
            (worker,) = server.compute_workers()
            worker.send_signal(signal.SIGKILL)
            if attempt == 1:  # queued again, once, with the reason
                deadline = time.time() + 30
                while c.get(url).json()["attempts"] < 2 and time.time() < deadline:
                    time.sleep(0.05)
        job = wait_for(c, url, ("failed", "succeeded"))
        assert job["state"] == "failed"
        assert job["error"] == "the worker process died (killed or out of memory)"
        details = [e["detail"] for e in job["events"]]
        assert "the worker process died (killed or out of memory); retrying" in details
        assert c.get("/readyz").json()["status"] == "ready"
        after = c.post("/v1/analyses", json=SMALL).headers["location"]
        assert wait_for(c, after, ("succeeded", "failed"))["state"] == "succeeded"


def test_workers_exit_when_the_server_alone_is_killed(tmp_path):
    """SIGKILL of the server's main process only (not its group): no worker outlives it."""
    with LiveServer(tmp_path, workers=2) as server, server.client(server.key()) as c:
        url = c.post("/v1/analyses", json=SLOW).headers["location"]
        wait_for(c, url, ("running",))  # one job worker computing, one idle
        assert c.post("/v1/score", json=SMALL).status_code == 200  # the score process too
        pids = [p.pid for p in server.compute_workers()]
        assert len(pids) == 3, pids
        os.kill(server.proc.pid, signal.SIGKILL)
        server.proc.wait(timeout=30)
        deadline = time.time() + 30
        while time.time() < deadline and not all(map(exited, pids)):
            time.sleep(0.1)
        left = [pid for pid in pids if not exited(pid)]
        assert not left, f"workers still running after the server died: {left}"
    # (leaving the block kills the process group: nothing survives a failed run either)


def exited(pid: int) -> bool:
    """The process is gone (a zombie waiting for its new parent to reap it counts)."""
    try:
        return psutil.Process(pid).status() == psutil.STATUS_ZOMBIE
    except psutil.NoSuchProcess:
        return True


def test_a_locked_database_is_a_503_and_nothing_is_corrupted(make_app, tmp_path):
    with TestClient(make_app(runner=False)) as c:
        store = c.app.state.store
        store.timeout = 0.5  # the busy wait before giving up (5 s by default)
        _, key = issue_key(store, "alice")
        c.headers["Authorization"] = f"Bearer {key}"
        before = c.post("/v1/analyses", json=SMALL).json()
        holder = subprocess.Popen(
            [
                sys.executable,
                "-c",
                "import sqlite3, sys\n"
                "c = sqlite3.connect(sys.argv[1], isolation_level=None)\n"
                "c.execute('BEGIN EXCLUSIVE')\n"
                "print('locked', flush=True)\n"
                "sys.stdin.read()\n",
                store.path,
            ],
            stdin=subprocess.PIPE,
            stdout=subprocess.PIPE,
            text=True,
        )
        try:
            assert holder.stdout.readline().strip() == "locked"
            body = {**SMALL, "options": {**SMALL["options"], "seed": 2}}
            for r in (
                c.post("/v1/analyses", json=body),
                c.delete(f"/v1/analyses/{before['id']}"),
                c.get("/readyz"),
            ):
                assert r.status_code == 503, r.text
                assert r.headers["content-type"] == "application/problem+json"
                assert r.headers["Retry-After"] == "5" and "locked" in r.json()["detail"]
            # WAL mode: readers are not blocked by a writer's lock
            assert c.get(f"/v1/analyses/{before['id']}").json() == before
        finally:
            holder.stdin.close()
            holder.wait(timeout=10)
            holder.stdout.close()
        after = c.post("/v1/analyses", json=body)
        assert after.status_code == 202
        assert c.get(f"/v1/analyses/{before['id']}").json() == before  # untouched
        assert [j["id"] for j in c.get("/v1/analyses").json()["jobs"]] == [
            after.json()["id"],
            before["id"],
        ]
        assert c.get("/readyz").status_code == 503  # the dispatcher is off in this app
    assert integrity(store.path) == "ok"


def test_a_full_disk_is_a_503_and_nothing_is_corrupted(tmp_path):
    env = {"HAARLINE_QUEUE_PER_KEY": "1000"}  # stuck-queued jobs must not make it a 429
    server = LiveServer(tmp_path, env=env)
    key = server.key()
    # the disk is full from the start: the file may not grow (its write-ahead log may
    # reach the same size, so a few small jobs still fit)
    server.file_size_limit = os.path.getsize(server.store.path)
    server.start()
    accepted: list[str] = []
    try:
        with server.client(key) as c:
            refused = _fill(c, accepted)
        assert refused is not None, "the file never filled up"
        assert refused.status_code == 503, refused.text
        assert refused.headers["content-type"] == "application/problem+json"
        assert refused.headers["Retry-After"] == "5"
        assert "job store is unavailable" in refused.json()["detail"]
        with server.client(key) as c:
            assert c.get("/healthz").status_code == 200  # the process itself is fine
    finally:
        server.kill()
    assert integrity(server.store.path) == "ok"
    server.file_size_limit = None  # space freed: every accepted job is still there and runs
    server.workers = 2
    with server, server.client(key) as c:
        for url in accepted:
            assert wait_for(c, url, ("succeeded", "failed"))["state"] == "succeeded"
        assert len(c.get("/v1/analyses").json()["jobs"]) == len(accepted)
    assert integrity(server.store.path) == "ok"


def _fill(c, accepted):
    """Submit jobs until one is refused; return that response."""
    for seed in range(60):
        body = {**SMALL, "options": {**SMALL["options"], "seed": seed}}
        r = c.post("/v1/analyses", json=body)
        if r.status_code != 202:
            return r
        accepted.append(r.headers["location"])
    return None

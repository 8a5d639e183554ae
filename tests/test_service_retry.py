"""Retry-After: the configured value on every 503, an estimate from the queue on a full queue.

The rule of record is in ``service/backoff.py``: a 429 for a full per-key queue suggests
ceil(queued jobs x mean run time of recent jobs / workers), clamped to 1..300 s, and the
configured ``HAARLINE_RETRY_AFTER`` until a job has run; every 503 suggests the setting.
"""

import sqlite3
from contextlib import closing

import pytest
from fastapi.testclient import TestClient
from haarline.service.api.deps import get_store
from haarline.service.api.keys import issue_key
from haarline.service.jobs.backoff import (
    RETRY_AFTER_MAX,
    RETRY_AFTER_MIN,
    clamp_seconds,
    queue_wait,
)
from haarline.service.jobs.store import Store


def keyed(client, name="alice"):
    _, key = issue_key(client.app.state.store, name)
    client.headers["Authorization"] = f"Bearer {key}"
    return client


def set_run(store, job_id, length, done):
    """Make a finished job's run last ``length`` s (this test's own fresh file)."""
    with closing(sqlite3.connect(store.path)) as conn, conn:  # closed, and committed
        for state, at in (("running", done - length), ("succeeded", done)):
            conn.execute(
                "UPDATE events SET at = ? WHERE job_id = ? AND state = ?", (at, job_id, state)
            )


def ran_jobs(store, seconds):
    """Jobs of another key that ran for the given seconds."""
    for i, length in enumerate(seconds):
        job, _ = store.create_job(
            owner="history", kind="analysis", request={"i": i}, request_hash=f"h{i}"
        )
        store.claim(job["id"])
        store.finish(job["id"], report={}, markdown="", artifacts={})
        set_run(store, job["id"], length, 1_000_000.0 + 1000 * i)  # exact in binary


def queue_jobs(store, owner, count):
    for i in range(count):
        store.create_job(owner=owner, kind="analysis", request={"q": i}, request_hash=f"{owner}{i}")


def refused(client):
    body = {"reference": "rx-product", "options": {"seed": 99}}
    r = client.post("/v1/analyses", json=body)
    assert r.status_code == 429, r.text
    assert r.headers["content-type"] == "application/problem+json"
    return r


@pytest.mark.parametrize(
    "queued,mean,workers,want",
    [
        (6, 20.0, 2, 60),  # 6 x 20 / 2
        (5, 3.0, 2, 8),  # 7.5 rounds up
        (0, 20.0, 2, RETRY_AFTER_MIN),  # nothing queued: the floor
        (1, 0.01, 1, RETRY_AFTER_MIN),
        (1000, 60.0, 2, RETRY_AFTER_MAX),  # the ceiling
        (3, None, 2, 7),  # nothing has run yet: the setting
    ],
)
def test_queue_wait_rule(queued, mean, workers, want):
    assert queue_wait(queued, mean, workers, fallback=7) == want


def test_clamp_bounds():
    assert (RETRY_AFTER_MIN, RETRY_AFTER_MAX) == (1, 300)
    assert [clamp_seconds(x) for x in (-3, 0, 0.2, 1, 1.01, 299.5, 301, 1e9)] == [
        1,
        1,
        1,
        1,
        2,
        300,
        300,
        300,
    ]


def test_full_queue_estimates_from_the_queue_and_recent_run_times(make_app, tmp_path):
    with TestClient(make_app(runner=False, workers=2, queue_per_key=2, retry_after=7)) as c:
        store = keyed(c).app.state.store
        for seed in (1, 2):
            body = {"reference": "rx-product", "options": {"seed": seed}}
            assert c.post("/v1/analyses", json=body).status_code == 202
        # before any job has run there is nothing to estimate from: the setting
        assert refused(c).headers["Retry-After"] == "7"
        ran_jobs(store, [10.0, 20.0, 30.0])
        assert store.mean_run_seconds() == 20.0
        queue_jobs(store, "bob", 4)
        # 2 of alice's + 4 of bob's queued, 20 s each on 2 workers: 6 x 20 / 2
        assert store.queued_count() == 6
        assert refused(c).headers["Retry-After"] == "60"


def test_full_queue_estimate_is_clamped(make_app, tmp_path):
    with TestClient(make_app(runner=False, workers=1, queue_per_key=1)) as c:
        store = keyed(c).app.state.store
        assert c.post("/v1/analyses", json={"reference": "rx-product"}).status_code == 202
        ran_jobs(store, [4000.0])
        assert refused(c).headers["Retry-After"] == str(RETRY_AFTER_MAX)


def test_only_recent_jobs_that_ran_count(tmp_path):
    store = Store(tmp_path / "jobs.sqlite3")
    store.initialize()
    assert store.mean_run_seconds() is None
    ran_jobs(store, [100.0] + [2.0] * 20)  # the 100 s job is older than the newest 20
    assert store.mean_run_seconds() == 2.0
    source, _ = store.create_job(owner="a", kind="analysis", request={}, request_hash="x")
    copy, _ = store.create_job(owner="a", kind="analysis", request={}, request_hash="x")
    store.claim(source["id"])
    store.finish(source["id"], report={}, markdown="", artifacts={})
    set_run(store, source["id"], 40.0, 2_000_000.0)
    assert store.copy_result(source["id"], copy["id"])  # cached: it never ran
    assert store.get_job(copy["id"])["cached"]
    # the newest 20 that ran: the 40 s job and 19 of 2 s (the copy takes no place)
    assert store.mean_run_seconds() == (40.0 + 19 * 2.0) / 20


def test_store_unavailable_503_uses_the_setting(make_app, tmp_path):
    app = make_app(runner=False, retry_after=11)
    with TestClient(app) as c:
        keyed(c)
        broken = Store(tmp_path)  # a directory: SQLite cannot open it
        app.dependency_overrides[get_store] = lambda: broken
        for r in (
            c.get("/v1/analyses"),
            c.post("/v1/analyses", json={"reference": "rx-product"}),
            c.get("/readyz"),
        ):
            assert r.status_code == 503, r.text
            assert r.headers["content-type"] == "application/problem+json"
            assert r.headers["Retry-After"] == "11"
            assert r.json()["type"].endswith("/store-unavailable")


def test_not_ready_503_uses_the_setting(make_app, tmp_path):
    with TestClient(make_app(runner=False, retry_after=13)) as c:  # the dispatcher is off
        r = c.get("/readyz")
        assert r.status_code == 503 and r.headers["Retry-After"] == "13"
        assert r.json()["detail"] == "the job dispatcher is not running"
        assert r.json()["type"].endswith("/not-ready")

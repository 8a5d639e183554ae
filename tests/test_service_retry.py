"""Retry-After: the configured value on every 503; on a full queue, when a place frees.

The rule of record is in ``service/jobs/backoff.py``: a 429 for a full per-key queue
suggests the time until the soonest of that key's jobs ends (running jobs' time left from
their estimated work at the pace of recent jobs, past it from their progress; queued ones
played forward on the workers), rounded up and clamped to 1..300 s, and the configured
``HAARLINE_RETRY_AFTER`` while nothing can be estimated; every 503 suggests the setting.
"""

import sqlite3
import time
from contextlib import closing

import pytest
from fastapi.testclient import TestClient
from haarline.service.api.deps import get_store
from haarline.service.api.keys import issue_key
from haarline.service.jobs.backoff import (
    RETRY_AFTER_MAX,
    RETRY_AFTER_MIN,
    Pace,
    RunningJob,
    clamp_seconds,
    soonest_end,
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


PACE = Pace(work_per_second=100.0, mean_run=None)  # a job of work 1000 runs 10 s


@pytest.mark.parametrize(
    "running,queued,workers,want",
    [
        # the key's running job: 10 s of work, 6 s done
        ([RunningJob("me", 1000.0, 0.0, 6.0)], [("me", 1000.0)], 1, 4.0),
        # the estimate comes first: progress counts stages, not work
        ([RunningJob("me", 1000.0, 0.5, 8.0)], [], 1, 2.0),
        # a job past its estimate is judged by its own pace: 80 % after 12 s leaves 3 s
        ([RunningJob("me", 1000.0, 0.8, 12.0)], [], 1, 3.0),
        # past its estimate with no progress: about to end, not negative
        ([RunningJob("me", 1000.0, 0.0, 30.0)], [], 1, 0.0),
        # nothing of the key runs: its first queued job starts when a worker frees (3 s)
        # and runs its 10 s; the queue of others behind it does not matter
        ([RunningJob("other", 500.0, 0.0, 2.0)], [("me", 1000.0)] + [("x", 1e6)] * 50, 1, 13.0),
        # others queued first are played forward on two workers
        (
            [RunningJob("a", 500.0, 0.0, 4.0), RunningJob("b", 2000.0, 0.0, 0.0)],
            [("c", 300.0), ("me", 100.0)],
            2,
            5.0,  # a frees at 1, c runs 1..4, me runs 4..5 (b still runs until 20)
        ),
        # a queued key job ending before its running one counts
        ([RunningJob("me", 9000.0, 0.0, 0.0)], [("me", 100.0)], 2, 1.0),
    ],
)
def test_soonest_end_rule(running, queued, workers, want):
    assert soonest_end("me", running, queued, PACE, workers) == pytest.approx(want)


def test_soonest_end_without_anything_to_go_by():
    nothing = Pace(work_per_second=None, mean_run=None)
    assert soonest_end("me", [], [("me", 1000.0)], nothing, 1) is None
    assert soonest_end("me", [RunningJob("me", None, 0.0, 1.0)], [], nothing, 1) is None
    # a job's own progress is enough, even at first
    assert soonest_end("me", [RunningJob("me", None, 0.05, 1.0)], [], nothing, 1) == pytest.approx(
        19
    )
    # with no estimate of work, the mean run time of recent jobs
    mean = Pace(work_per_second=None, mean_run=12.0)
    assert soonest_end("me", [RunningJob("me", None, 0.0, 2.0)], [], mean, 1) == 10.0


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


def ran_with_work(store, runs):
    """Jobs of another key that ran ``seconds`` with estimated ``work``: (work, seconds)."""
    for i, (work, length) in enumerate(runs):
        job, _ = store.create_job(
            owner="history", kind="analysis", request={"w": i}, request_hash=f"w{i}", work=work
        )
        store.claim(job["id"])
        store.finish(job["id"], report={}, markdown="", artifacts={})
        set_run(store, job["id"], length, 1_000_000.0 + 1000 * i)


def running_since(store, owner, work, seconds_ago, fraction=0.0):
    """A job of ``owner`` that has run for ``seconds_ago`` s at ``fraction`` progress."""
    job, _ = store.create_job(
        owner=owner, kind="analysis", request={"r": owner}, request_hash=f"r{owner}", work=work
    )
    store.claim(job["id"])
    store.set_progress(job["id"], fraction, "expressibility")
    with closing(sqlite3.connect(store.path)) as conn, conn:
        conn.execute(
            "UPDATE events SET at = ? WHERE job_id = ? AND state = 'running'",
            (time.time() - seconds_ago, job["id"]),
        )
    return job["id"]


def test_full_queue_waits_for_the_keys_soonest_job_not_for_the_queue(make_app):
    # the issue's case: a queue that takes long to drain, a place that frees soon
    with TestClient(make_app(runner=False, workers=1, queue_per_key=2, retry_after=7)) as c:
        store = keyed(c).app.state.store
        owner = c.get("/v1/analyses").request.headers["Authorization"].split("_")[1]
        # before any job has run there is nothing to estimate from: the setting
        for seed in (1, 2):
            body = {"reference": "rx-product", "options": {"seed": seed}}
            assert c.post("/v1/analyses", json=body).status_code == 202
        assert refused(c).headers["Retry-After"] == "7"
        ran_with_work(store, [(1e6, 10.0), (3e6, 30.0)])  # 1e5 work per second
        queue_jobs(store, "bob", 20)
        # alice's first queued job runs after nothing (one idle worker): its own length
        (first, _) = store.queued(2)
        work = store.get_job(first)["work"]
        assert work > 0  # admission's estimate is stored with the job
        assert refused(c).headers["Retry-After"] == str(clamp_seconds(work / 1e5))
        # now alice has a job running for 6 s of its 10: a place frees in 4 s, although
        # the queue (22 jobs of 10 s or more on one worker) drains in minutes
        store.request_cancel(first)
        running_since(store, owner, 1e6, 6.0)
        assert refused(c).headers["Retry-After"] == "4"


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

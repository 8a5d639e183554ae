"""Deleting finished jobs: DELETE of a finished job (204), and retention by age."""

import time

from haarline.service.jobs.retention import sweep_once
from haarline.service.jobs.store import Store

SMALL = {"reference": "rx-product", "options": {"pairs": 200, "samples": 50, "seed": 4}}


def finished(client):
    url = client.post("/v1/analyses", json=SMALL).headers["Location"]
    deadline = time.time() + 60
    while client.get(url).json()["state"] != "succeeded":
        assert time.time() < deadline
        time.sleep(0.1)
    return url


def counts(store: Store, job_id: str) -> tuple[int, int, bool]:
    job = store.get_job(job_id)
    return (
        len(store.artifact_names(job_id)),
        0 if job is None else 1,
        store.result(job_id) is not None,
    )


def test_delete_of_a_finished_job_deletes_it_with_its_outputs(client):
    url = finished(client)
    job_id = url.rsplit("/", 1)[1]
    store = client.app.state.store
    assert counts(store, job_id)[0] > 0
    r = client.delete(url)
    assert r.status_code == 204 and r.content == b""
    assert counts(store, job_id) == (0, 0, False)
    assert client.get(url).status_code == 404
    assert client.get(f"{url}/report").status_code == 404
    assert client.delete(url).status_code == 404


def test_delete_of_an_active_job_still_cancels_it(quiet):
    job = quiet.post("/v1/analyses", json=SMALL).json()
    r = quiet.delete(f"/v1/analyses/{job['id']}")
    assert r.status_code == 202 and r.json()["state"] == "cancelled"
    assert quiet.delete(f"/v1/analyses/{job['id']}").status_code == 204  # now finished


def test_retention_deletes_old_finished_jobs_only(quiet):
    store = quiet.app.state.store
    owner = "k"
    old, _ = store.create_job(owner=owner, kind="analysis", request={}, request_hash="a")
    store.claim(old["id"])
    store.finish(old["id"], report={"x": 1}, markdown="m", artifacts={"a.png": b"png"})
    new, _ = store.create_job(owner=owner, kind="analysis", request={}, request_hash="b")
    store.claim(new["id"])
    store.finish(new["id"], report={"x": 2}, markdown="m", artifacts={})
    waiting, _ = store.create_job(owner=owner, kind="analysis", request={}, request_hash="c")
    now = time.time()
    # the old job finished 10 days ago, the waiting one was queued 10 days ago
    import sqlite3
    from contextlib import closing

    with closing(sqlite3.connect(store.path)) as conn, conn:
        conn.execute(
            "UPDATE jobs SET updated = ? WHERE id IN (?, ?)",
            (now - 10 * 86400, old["id"], waiting["id"]),
        )
    assert sweep_once(store, days=7, now=now) == 1
    assert store.get_job(old["id"]) is None and store.artifact(old["id"], "a.png") is None
    assert store.get_job(new["id"]) is not None and store.get_job(waiting["id"]) is not None
    assert sweep_once(store, days=7, now=now) == 0


def test_retention_runs_in_the_service(make_client):
    c = make_client(retention_days=1e-5)  # finished jobs older than about a second
    url = c.post("/v1/analyses", json=SMALL).headers["Location"]
    deadline = time.time() + 60
    seen = set()
    while (r := c.get(url)).status_code != 404:
        seen.add(r.json()["state"])
        assert time.time() < deadline, f"retention never deleted the finished job: {seen}"
        time.sleep(0.05)
    assert seen  # it was there, and went once finished (active jobs are never swept:
    # test_retention_deletes_old_finished_jobs_only)

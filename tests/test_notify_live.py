"""Notifications from a real ``haarline serve`` to a receiver on 127.0.0.1.

What issue 16 asks of them: the callback arrives once per job end, signed so that a
Standard Webhooks verifier accepts it (``webhook_receiver.standard_webhooks_verify``,
written from the specification, standardwebhooks.com, not from our code) and a tampered
body fails; a receiver that answers 500 twice gets a third attempt; a restart between
attempts loses no delivery. Also the event stream and the long poll over real HTTP.
"""

import json
import time

import pytest
from live_server import LiveServer, wait_for
from webhook_receiver import Receiver, standard_webhooks_verify

SMALL = {"reference": "rx-product", "options": {"pairs": 200, "samples": 50}}


def serve(tmp_path, **env):
    settings = {"HAARLINE_WEBHOOK_LOOPBACK": "1", **env}
    return LiveServer(tmp_path / "live", env=settings)


def delivered(client, job, attempts=None, timeout=60):
    """Poll the job's deliveries until its one delivery is delivered; return it."""
    deadline = time.time() + timeout
    listed = None
    while time.time() < deadline:
        listed = client.get(job["links"]["deliveries"]).json()
        if listed and listed[0]["status"] == "delivered":
            (d,) = listed
            return d
        time.sleep(0.1)
    raise AssertionError(f"not delivered after {timeout} s: {listed}")


def test_one_signed_callback_per_job_end(tmp_path):
    with Receiver() as receiver, serve(tmp_path) as server, server.client(server.key()) as c:
        secret = c.post("/v1/webhook-secret").json()["secret"]
        hook = {"callback_url": receiver.url}
        done = c.post("/v1/analyses", json={**SMALL, **hook}).json()
        pair = {"circuits": [{"reference": "rx-product"}, {"reference": "ry-cz-ring"}]}
        compared = c.post("/v1/comparisons", json={**pair, **SMALL["options"], **hook})
        assert compared.status_code == 422  # options belong under "options"
        compared = c.post(
            "/v1/comparisons", json={**pair, "options": SMALL["options"], **hook}
        ).json()
        cancelled = c.post("/v1/analyses", json={**SMALL, "options": {"seed": 5}, **hook}).json()
        c.delete(cancelled["links"]["self"])  # queued behind the others (one worker)
        plain = c.post("/v1/analyses", json={**SMALL, "options": {"seed": 6}}).json()
        jobs = [done, compared, cancelled]
        final = {}
        for job in [*jobs, plain]:
            final[job["id"]] = wait_for(
                c, job["links"]["self"], ("succeeded", "failed", "cancelled")
            )
        for job in jobs:
            delivered(c, job)
        time.sleep(1.5)  # room for any duplicate to show up
        requests = receiver.requests
        by_job = {}
        for q in requests:
            assert q["path"] == "/hook"
            assert q["headers"]["Content-Type"] == "application/json"
            # the independent verifier accepts every notification…
            assert standard_webhooks_verify(secret, q["headers"], q["body"])
            # …and refuses it with one byte of the body changed
            tampered = q["body"].replace(b'"state":"', b'"state":"x', 1)
            assert tampered != q["body"]
            assert not standard_webhooks_verify(secret, q["headers"], tampered)
            event = json.loads(q["body"])
            by_job.setdefault(event["data"]["id"], []).append(event)
        assert sorted(by_job) == sorted(j["id"] for j in jobs)  # none for the job without one
        for job in jobs:
            (event,) = by_job[job["id"]]  # exactly once
            state = final[job["id"]]["state"]
            noun = "analysis" if job["kind"] == "analysis" else "comparison"
            assert event["type"] == f"{noun}.{state}" and event["data"]["state"] == state
        assert final[done["id"]]["state"] == "succeeded"
        assert final[cancelled["id"]]["state"] == "cancelled"
        assert c.get(plain["links"]["self"] + "/deliveries").json() == []


def test_a_receiver_that_fails_twice_gets_the_third_attempt(tmp_path):
    with (
        Receiver([500, 500]) as receiver,
        serve(tmp_path, HAARLINE_WEBHOOK_RETRY_DELAYS="0.3,0.6") as server,
        server.client(server.key()) as c,
    ):
        secret = c.post("/v1/webhook-secret").json()["secret"]
        job = c.post("/v1/analyses", json={**SMALL, "callback_url": receiver.url}).json()
        d = delivered(c, job)
        requests = receiver.wait_for(3)
        assert [q["status"] for q in requests] == [500, 500, 200]
        assert [a["status_code"] for a in d["attempts"]] == [500, 500, 200]
        assert [a["attempt"] for a in d["attempts"]] == [1, 2, 3]
        # the retry delays were kept (0.3 s, then 0.6 s, each after the previous attempt)
        gaps = [b["at"] - a["at"] for a, b in zip(requests, requests[1:], strict=False)]
        assert gaps[0] >= 0.3 and gaps[1] >= 0.6, gaps
        assert len({q["headers"]["webhook-id"] for q in requests}) == 1
        assert all(standard_webhooks_verify(secret, q["headers"], q["body"]) for q in requests)


def test_attempts_run_out_and_the_delivery_fails(tmp_path):
    with (
        Receiver([503, 503, 503]) as receiver,
        serve(tmp_path, HAARLINE_WEBHOOK_RETRY_DELAYS="0.2") as server,
        server.client(server.key()) as c,
    ):
        c.post("/v1/webhook-secret")
        job = c.post("/v1/analyses", json={**SMALL, "callback_url": receiver.url}).json()
        receiver.wait_for(2)
        deadline = time.time() + 30
        while time.time() < deadline:
            (d,) = c.get(job["links"]["deliveries"]).json() or [None]
            if d and d["status"] == "failed":
                break
            time.sleep(0.1)
        assert d["status"] == "failed" and len(d["attempts"]) == 2
        time.sleep(1)
        assert len(receiver.requests) == 2  # no attempt after the last delay


def test_a_restart_between_attempts_loses_no_delivery(tmp_path):
    # the second attempt is due 3 s after the first; the server is killed (SIGKILL of its
    # whole process group) in between and started again on the same data directory
    with (
        Receiver([500]) as receiver,
        serve(tmp_path, HAARLINE_WEBHOOK_RETRY_DELAYS="3") as server,
    ):
        key = server.key()
        with server.client(key) as c:
            secret = c.post("/v1/webhook-secret").json()["secret"]
            job = c.post("/v1/analyses", json={**SMALL, "callback_url": receiver.url}).json()
            deadline = time.time() + 60
            while time.time() < deadline:
                listed = c.get(job["links"]["deliveries"]).json()
                if listed and listed[0]["attempts"]:
                    break
                time.sleep(0.05)
            (pending,) = listed
            assert pending["status"] == "pending" and pending["next_attempt"] is not None
        server.kill()
        assert len(receiver.requests) == 1
        server.start()
        with server.client(key) as c:
            d = delivered(c, job)
        requests = receiver.wait_for(2)
        assert [q["status"] for q in requests] == [500, 200]
        assert requests[1]["at"] >= pending["next_attempt"] - 0.05  # the delay was kept
        assert requests[0]["headers"]["webhook-id"] == requests[1]["headers"]["webhook-id"]
        assert requests[0]["body"] == requests[1]["body"]
        assert standard_webhooks_verify(secret, requests[1]["headers"], requests[1]["body"])
        assert [a["status_code"] for a in d["attempts"]] == [500, 200]


@pytest.fixture
def live(tmp_path):
    with serve(tmp_path) as server, server.client(server.key()) as c:
        yield c


def test_event_stream_over_http(live):
    job = live.post("/v1/analyses", json=SMALL).json()
    messages, current = [], {}
    started = time.monotonic()
    with live.stream("GET", job["links"]["events"], timeout=120) as r:
        assert r.status_code == 200
        assert r.headers["content-type"].startswith("text/event-stream")
        assert "content-encoding" not in r.headers  # never buffered for gzip
        for line in r.iter_lines():
            if line == "":
                if current:
                    messages.append(current)
                current = {}
            elif not line.startswith(":"):
                field, _, value = line.partition(": ")
                current[field] = value
    assert time.monotonic() - started < 120  # it closed by itself
    events = [m for m in messages if "event" in m]
    assert [m["event"] for m in events[:-1]] == ["progress"] * (len(events) - 1)
    assert events[-1]["event"] == "end"
    jobs = [json.loads(m["data"]) for m in events]
    assert jobs[-1]["state"] == "succeeded" and jobs[-1]["progress"]["fraction"] == 1
    assert [int(m["id"]) for m in events] == list(range(1, len(events) + 1))
    fractions = [j["progress"]["fraction"] for j in jobs]
    assert fractions == sorted(fractions)  # progress never goes back
    marks = [(j["state"], j["progress"]["fraction"], j["progress"]["stage"]) for j in jobs]
    assert len(set(marks)) == len(marks)  # one message per change


def test_long_poll_over_http(live):
    job = live.post("/v1/analyses", json=SMALL).json()
    seen = [job["state"]]
    deadline = time.time() + 120
    while seen[-1] not in ("succeeded", "failed", "cancelled") and time.time() < deadline:
        r = live.get(job["links"]["self"], params={"wait": 20})
        assert r.status_code == 200
        seen.append(r.json()["state"])
    assert seen[-1] == "succeeded"
    started = time.monotonic()
    assert live.get(job["links"]["self"], params={"wait": 20}).json()["state"] == "succeeded"
    assert time.monotonic() - started < 2  # an ended job answers at once
    r = live.get(job["links"]["self"], params={"wait": 61})
    assert r.status_code == 422 and r.json()["errors"][0]["path"] == "query.wait"

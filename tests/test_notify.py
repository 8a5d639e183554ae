"""Notifications in process: callback destinations, the secret route, the outbox, long poll, SSE.

The deliveries themselves, against a live server and a receiver on 127.0.0.1, are in
``tests/test_notify_live.py``.
"""

import json
import time

import pytest
from haarline.service.errors import CallbackRefused, StoreUnavailable
from haarline.service.jobs import outbox
from haarline.service.jobs.destinations import check_destination
from haarline.service.jobs.states import JobState
from haarline.service.jobs.store import Store
from webhook_receiver import Receiver

SMALL = {"reference": "rx-product", "options": {"pairs": 200, "samples": 50}}


def secret(client):
    r = client.post("/v1/webhook-secret")
    assert r.status_code == 201, r.text
    return r.json()["secret"]


# --- destinations --------------------------------------------------------------------------


@pytest.mark.parametrize(
    "url,why",
    [
        ("https://10.1.2.3/hook", "10.1.2.3, a private address"),
        ("https://192.168.0.10/hook", "a private address"),
        ("https://169.254.169.254/latest", "a link-local address"),  # cloud metadata
        ("https://100.64.0.1/", "not a public address"),  # shared address space
        ("https://127.0.0.1:9/hook", "a loopback address"),
        ("https://[::1]/hook", "a loopback address"),
        ("https://[::ffff:127.0.0.1]/hook", "a loopback address"),  # IPv4-mapped
        ("https://[fd00::1]/hook", "a private address"),
        ("https://0.0.0.0/", "a private address"),
        ("https://224.0.0.1/", "not a public address"),  # multicast
        ("https://localhost/hook", "'localhost' resolves to"),
        ("http://93.184.215.14/hook", "plain http to a non-loopback address"),
        ("ftp://93.184.215.14/hook", "not an http(s) URL"),
        ("https:///nohost", "not an http(s) URL with a host"),
        ("https://user:pw@93.184.215.14/", "may not carry a user name or password"),
        ("https://no-such-host.invalid/", "does not resolve"),
        ("https://93.184.215.14:99999/", "not a URL"),
    ],
)
def test_refused_destinations_name_the_reason_and_what_is_allowed(make_settings, url, why):
    with pytest.raises(CallbackRefused) as err:
        check_destination(url, make_settings())
    assert why in str(err.value)
    (problem,) = err.value.problems
    assert problem.path == "callback_url" and url[:30] in problem.message


def test_public_https_is_allowed_and_pinned_to_its_checked_address(make_settings):
    to = check_destination("https://93.184.215.14:8443/hook?x=1", make_settings())
    assert (to.scheme, to.host, to.port, to.path) == ("https", "93.184.215.14", 8443, "/hook?x=1")
    assert to.addresses == ("93.184.215.14",)


def test_loopback_in_development_mode_or_by_setting(make_settings):
    for settings in (make_settings(dev_mode=True), make_settings(webhook_loopback=True)):
        assert check_destination("http://127.0.0.1:8080/h", settings).port == 8080
        assert check_destination("http://localhost/h", settings).host == "localhost"
        # loopback allowed does not open private ranges
        with pytest.raises(CallbackRefused, match="private"):
            check_destination("https://10.0.0.1/", settings)


def test_allowed_networks_and_plain_http(make_settings):
    settings = make_settings(webhook_networks="10.20.0.0/16")
    assert check_destination("https://10.20.3.4/h", settings).addresses == ("10.20.3.4",)
    with pytest.raises(CallbackRefused, match="https to 10.20.0.0/16"):
        check_destination("https://10.21.0.1/h", settings)
    with pytest.raises(CallbackRefused, match="plain http"):
        check_destination("http://10.20.3.4/h", settings)
    assert check_destination(
        "http://10.20.3.4/h", make_settings(webhook_networks="10.20.0.0/16", webhook_http=True)
    )


def test_refusal_is_a_422_naming_callback_url(make_client):
    c = make_client(runner=False)
    secret(c)
    for url in ("https://10.0.0.8/hook", "http://127.0.0.1:5/hook"):
        r = c.post("/v1/analyses", json={**SMALL, "callback_url": url})
        assert r.status_code == 422, r.text
        body = r.json()
        assert r.headers["content-type"] == "application/problem+json"
        assert body["errors"][0]["path"] == "callback_url"
        assert url in body["detail"] and "allowed: https to public addresses" in body["detail"]
    r = c.post(
        "/v1/comparisons",
        json={"circuits": [{"reference": "rx-product"}] * 2, "callback_url": "https://10.0.0.8/"},
    )
    assert r.status_code == 422 and r.json()["errors"][0]["path"] == "callback_url"
    assert c.get("/v1/analyses").json()["jobs"] == []  # nothing was queued


def test_a_callback_needs_a_signing_secret_first(make_client):
    c = make_client(runner=False, webhook_loopback=True)
    r = c.post("/v1/analyses", json={**SMALL, "callback_url": "http://127.0.0.1:9/h"})
    assert r.status_code == 422
    assert "POST /v1/webhook-secret" in r.json()["errors"][0]["message"]
    secret(c)
    r = c.post("/v1/analyses", json={**SMALL, "callback_url": "http://127.0.0.1:9/h"})
    assert r.status_code == 202 and r.json()["callback_url"] == "http://127.0.0.1:9/h"


def test_the_score_route_refuses_a_callback(client):
    r = client.post("/v1/score", json={**SMALL, "callback_url": "https://93.184.215.14/"})
    assert r.status_code == 422 and r.json()["errors"][0]["path"] == "callback_url"
    assert "callbacks are for jobs" in r.json()["detail"]


# --- the secret route ------------------------------------------------------------------------


def test_secret_is_shown_once_and_rotates(make_client):
    c = make_client(runner=False)
    assert c.get("/v1/webhook-secret").status_code == 404
    first = secret(c)
    info = c.get("/v1/webhook-secret").json()
    assert set(info) == {"created"}  # never the secret again
    second = secret(c)
    assert second != first
    with Store(c.app.state.settings.database).connect() as conn:
        assert outbox.secret_of(conn, c.app.state.store and _owner(c)) == second


def _owner(c):
    key = c.headers["Authorization"].split()[1]
    return key.split("_")[1]


def test_secrets_are_per_key(make_client):
    from conftest import bearer

    c = make_client(runner=False)
    mine = secret(c)
    other = c.post("/v1/webhook-secret", headers=bearer(c.app, "bob")).json()["secret"]
    assert mine != other
    assert c.post("/v1/webhook-secret", headers={"Authorization": "Bearer nope"}).status_code == 401


# --- the outbox: one delivery per job end, whichever way it ends --------------------------------


def _job(store, callback="https://93.184.215.14/h", owner="alice"):
    job, _ = store.create_job(
        owner=owner,
        kind="analysis",
        request={"t": time.time_ns()},
        request_hash=str(time.time_ns()),
        callback_url=callback,
        work=1e6,
    )
    return job["id"]


def _deliveries(store, job_id):
    with store.connect() as conn:
        return outbox.deliveries_of(conn, job_id)


def test_every_way_a_job_ends_queues_exactly_one_delivery(tmp_path):
    store = Store(tmp_path / "s.sqlite3")
    store.initialize()
    done, failed, stopped, queued_cancel, cached, silent = (_job(store) for _ in range(6))
    for j in (done, failed, stopped):
        store.claim(j)
    store.finish(done, report={}, markdown="", artifacts={})
    store.finish(done, report={}, markdown="", artifacts={})  # a second write ends nothing
    store.mark(failed, JobState.FAILED, error="boom")
    store.mark(failed, JobState.FAILED, error="again")  # no longer active: nothing
    store.request_cancel(stopped)  # running: only asked to stop
    assert _deliveries(store, stopped) == []
    store.mark(stopped, JobState.CANCELLED, error="cancelled on request")
    store.request_cancel(queued_cancel)
    store.copy_result(done, cached)
    store.mark(silent, JobState.QUEUED, error="requeued")  # not an end
    want = {
        done: ("succeeded", None),
        failed: ("failed", "boom"),
        stopped: ("cancelled", "cancelled on request"),
        queued_cancel: ("cancelled", None),
        cached: ("succeeded", None),
    }
    for job_id, (state, error) in want.items():
        (d,) = _deliveries(store, job_id)
        event = json.loads(d["event"])
        assert (d["state"], d["status"], d["attempts"]) == (state, "pending", [])
        assert event["type"] == f"analysis.{state}" and event["data"]["error"] == error
        assert event["data"]["links"]["self"] == f"/v1/analyses/{job_id}"
    assert _deliveries(store, silent) == []
    nobody = _job(store, callback=None)
    store.request_cancel(nobody)
    assert _deliveries(store, nobody) == []


def test_deleting_a_job_deletes_its_deliveries(tmp_path):
    store = Store(tmp_path / "s.sqlite3")
    store.initialize()
    j = _job(store)
    store.request_cancel(j)
    (d,) = _deliveries(store, j)
    with store.connect() as conn:
        outbox.claim_due(conn, time.time() + 1, 10)
        outbox.record_attempt(
            conn, d["id"], at=time.time(), seconds=0.1, status_code=500, error="500", next_at=None
        )
    assert store.delete_finished(j)
    with store.connect() as conn:
        assert conn.execute("SELECT count(*) FROM delivery_attempts").fetchone()[0] == 0
        assert conn.execute("SELECT count(*) FROM deliveries").fetchone()[0] == 0


def test_attempts_schedule_and_resume(tmp_path):
    store = Store(tmp_path / "s.sqlite3")
    store.initialize()
    j = _job(store)
    store.request_cancel(j)
    now = time.time()
    with store.connect() as conn:
        (d,) = outbox.claim_due(conn, now + 1, 10)
        assert outbox.claim_due(conn, now + 1, 10) == []  # sending: not claimed twice
        assert outbox.resume(conn, now) == 1  # a restart: due again
        (d,) = outbox.claim_due(conn, now + 1, 10)
        status = outbox.record_attempt(
            conn, d["id"], at=now, seconds=0.2, status_code=503, error="503", next_at=now + 50
        )
        assert status == "pending" and outbox.claim_due(conn, now + 10, 10) == []
        assert outbox.resume(conn, now) == 0  # a scheduled retry keeps its time
        (d,) = outbox.claim_due(conn, now + 60, 10)
        assert (
            outbox.record_attempt(
                conn, d["id"], at=now, seconds=0.1, status_code=204, error=None, next_at=now + 99
            )
            == "delivered"
        )
        (listed,) = outbox.deliveries_of(conn, j)
    assert listed["status"] == "delivered" and listed["next_at"] is None
    assert [(a["attempt"], a["status_code"]) for a in listed["attempts"]] == [(1, 503), (2, 204)]


# --- deliveries route, in process --------------------------------------------------------------


def test_deliveries_route_lists_attempts_and_hides_other_keys_jobs(make_client):
    from conftest import bearer

    with Receiver([500]) as receiver:
        c = make_client(webhook_loopback=True, webhook_retry_delays="0.2")
        signing = secret(c)
        r = c.post("/v1/analyses", json={**SMALL, "callback_url": receiver.url})
        job = r.json()
        assert job["links"]["deliveries"] == f"/v1/analyses/{job['id']}/deliveries"
        receiver.wait_for(2)
        deadline = time.time() + 30
        while time.time() < deadline:
            listed = c.get(job["links"]["deliveries"]).json()
            if listed and listed[0]["status"] == "delivered":
                break
            time.sleep(0.1)
        (d,) = listed
        assert d["event"] == "analysis.succeeded" and d["url"] == receiver.url
        assert [a["status_code"] for a in d["attempts"]] == [500, 200]
        assert d["attempts"][0]["error"] == "the receiver answered 500"
        assert d["attempts"][1]["error"] is None and d["next_attempt"] is None
        ids = {q["headers"]["webhook-id"] for q in receiver.requests}
        assert ids == {d["id"]}  # one message id on every attempt
        bodies = {q["body"] for q in receiver.requests}
        assert len(bodies) == 1  # the same bytes every time
        from haarline.service.webhooks import verify_webhook

        event = verify_webhook(
            signing, receiver.requests[1]["headers"], receiver.requests[1]["body"]
        )
        assert event["data"]["id"] == job["id"] and event["data"]["state"] == "succeeded"
        other = bearer(c.app, "mallory")
        assert c.get(job["links"]["deliveries"], headers=other).status_code == 404
        assert c.get(f"/v1/comparisons/{job['id']}/deliveries").status_code == 404


def test_idempotent_retry_with_another_callback_is_a_conflict(make_client):
    c = make_client(runner=False, webhook_loopback=True)
    secret(c)
    once = {"Idempotency-Key": "k1"}
    first = c.post(
        "/v1/analyses", json={**SMALL, "callback_url": "http://127.0.0.1:7/a"}, headers=once
    )
    again = c.post(
        "/v1/analyses", json={**SMALL, "callback_url": "http://127.0.0.1:7/a"}, headers=once
    )
    assert first.status_code == again.status_code == 202
    assert again.headers["Idempotent-Replayed"] == "true"
    other = c.post(
        "/v1/analyses", json={**SMALL, "callback_url": "http://127.0.0.1:7/b"}, headers=once
    )
    assert other.status_code == 409


# --- long poll ---------------------------------------------------------------------------------


@pytest.mark.parametrize("wait", ["-1", "60.5", "nan", "inf", "soon"])
def test_wait_out_of_range_is_a_422_naming_it(quiet, wait):
    job = quiet.post("/v1/analyses", json=SMALL).json()
    r = quiet.get(f"/v1/analyses/{job['id']}", params={"wait": wait})
    assert r.status_code == 422, r.text
    assert r.json()["errors"][0]["path"] == "query.wait"


def test_wait_answers_after_the_time_when_nothing_changes(quiet):
    job = quiet.post("/v1/analyses", json=SMALL).json()  # the dispatcher is off: stays queued
    started = time.monotonic()
    r = quiet.get(f"/v1/analyses/{job['id']}", params={"wait": 0.6})
    took = time.monotonic() - started
    assert r.status_code == 200 and r.json()["state"] == "queued"
    assert r.headers["Cache-Control"] == "no-store"
    assert 0.55 <= took < 5, took


def test_wait_answers_at_the_change(quiet):
    import threading

    job = quiet.post("/v1/analyses", json=SMALL).json()
    store = quiet.app.state.store
    timer = threading.Timer(0.5, store.request_cancel, args=(job["id"],))
    timer.start()
    started = time.monotonic()
    r = quiet.get(f"/v1/analyses/{job['id']}", params={"wait": 30})
    took = time.monotonic() - started
    timer.join()
    assert r.json()["state"] == "cancelled"
    assert 0.4 <= took < 5, took
    # an ended job answers at once
    started = time.monotonic()
    assert (
        quiet.get(f"/v1/analyses/{job['id']}", params={"wait": 30}).json()["state"] == "cancelled"
    )
    assert time.monotonic() - started < 2
    assert quiet.get(f"/v1/analyses/{'0' * 32}", params={"wait": 30}).status_code == 404


# --- events stream, in process -------------------------------------------------------------------


def sse(lines):
    """Messages of an event stream: a list of {field: value} per message."""
    out, current = [], {}
    for line in lines:
        if line == "":
            if current:
                out.append(current)
            current = {}
        elif not line.startswith(":"):
            field, _, value = line.partition(": ")
            current[field] = value
    return out


def test_events_of_an_ended_job_send_end_and_close(quiet):
    job = quiet.post("/v1/analyses", json=SMALL).json()
    quiet.delete(f"/v1/analyses/{job['id']}")
    with quiet.stream("GET", f"/v1/analyses/{job['id']}/events") as r:
        assert r.status_code == 200
        assert r.headers["content-type"].startswith("text/event-stream")
        assert r.headers["cache-control"] == "no-store"
        messages = sse(r.iter_lines())
    assert messages[0] == {"retry": "2000"}
    (end,) = messages[1:]
    assert end["event"] == "end" and json.loads(end["data"])["state"] == "cancelled"
    assert quiet.get(f"/v1/analyses/{'0' * 32}/events").status_code == 404


# --- one attempt's connection ------------------------------------------------------------------


def test_the_connection_goes_to_the_checked_address_with_the_urls_host():
    from haarline.service.jobs.destinations import Destination
    from haarline.service.jobs.notify import post

    with Receiver([202]) as receiver:
        port = receiver.server.server_port
        # a name that resolves nowhere: only the checked address is ever connected to
        to = Destination("http", "hooks.example.invalid", port, "/hook?a=1", ("127.0.0.1",))
        assert post(to, b"{}", {"Content-Type": "application/json"}, timeout=5) == 202
        (q,) = receiver.requests
        assert q["headers"]["Host"] == f"hooks.example.invalid:{port}"
        assert q["path"] == "/hook?a=1" and q["body"] == b"{}"


def test_an_unreachable_address_is_an_oserror():
    from haarline.service.jobs.destinations import Destination
    from haarline.service.jobs.notify import post
    from live_server import free_port

    to = Destination("http", "127.0.0.1", free_port(), "/", ("127.0.0.1",))
    with pytest.raises(OSError):
        post(to, b"{}", {}, timeout=2)


@pytest.fixture
def certificate(tmp_path):
    """A self-signed certificate for localhost and 127.0.0.1, made with the openssl tool."""
    import shutil
    import subprocess

    if shutil.which("openssl") is None:
        pytest.skip("the openssl command is not installed")
    cert, key = tmp_path / "cert.pem", tmp_path / "key.pem"
    done = subprocess.run(
        ["openssl", "req", "-x509", "-newkey", "rsa:2048", "-nodes", "-days", "1"]
        + ["-keyout", str(key), "-out", str(cert), "-subj", "/CN=localhost"]
        + ["-addext", "subjectAltName=DNS:localhost,IP:127.0.0.1"],
        capture_output=True,
        text=True,
    )
    if done.returncode != 0:
        pytest.skip(f"openssl could not make a certificate: {done.stderr[-300:]}")
    return cert, key


def test_https_is_verified_against_the_urls_host_not_the_address(certificate):
    import ssl

    from haarline.service.jobs.destinations import Destination
    from haarline.service.jobs.notify import post

    cert, key = certificate
    server_side = ssl.SSLContext(ssl.PROTOCOL_TLS_SERVER)
    server_side.load_cert_chain(cert, key)
    trusting = ssl.create_default_context(cafile=str(cert))
    with Receiver() as receiver:
        receiver.server.socket = server_side.wrap_socket(receiver.server.socket, server_side=True)
        port = receiver.server.server_port
        good = Destination("https", "localhost", port, "/hook", ("127.0.0.1",))
        assert post(good, b"{}", {}, timeout=5, context=trusting) == 200
        # the same address under another name: the certificate does not name it
        other = Destination("https", "hooks.example.org", port, "/hook", ("127.0.0.1",))
        with pytest.raises(ssl.SSLCertVerificationError, match="hooks.example.org"):
            post(other, b"{}", {}, timeout=5, context=trusting)
        # and the system's trust store does not know a self-signed certificate
        with pytest.raises(ssl.SSLCertVerificationError):
            post(good, b"{}", {}, timeout=5)
    assert len(receiver.requests) == 1


def test_records_the_store_refuses_are_written_on_a_later_round(make_settings, tmp_path):
    from haarline.service.jobs.notify import Notifier

    settings = make_settings(webhook_loopback=True)
    store = Store(settings.database)
    store.initialize()
    broken = Store(tmp_path)  # a directory: SQLite cannot open it (StoreUnavailable)
    notifier = Notifier(settings, store)  # not started: rounds are run by hand here

    def claim():
        with store.connect() as conn:
            (d,) = outbox.claim_due(conn, time.time() + 1, 1)
        return d

    with Receiver(on_request=lambda: setattr(notifier, "store", broken)) as receiver:
        with store.connect() as conn:
            outbox.set_secret(conn, "alice", "whsec_" + "QUFBQUFBQUFBQUFBQUFBQUFBQUFBQUFB")
        j = _job(store, callback=receiver.url)
        store.request_cancel(j)
        # the store fails before anything is sent: the delivery goes back to pending
        notifier.store = broken
        notifier._send(claim())
        assert receiver.requests == [] and len(notifier._unwritten) == 1
        notifier.store = store
        notifier._flush()
        assert _deliveries(store, j)[0]["status"] == "pending"
        # the store fails while the receiver answers: the attempt's record waits
        notifier._send(claim())
        assert len(receiver.requests) == 1 and len(notifier._unwritten) == 1
        assert _deliveries(store, j)[0]["status"] == "sending"  # not sent twice meanwhile
        with pytest.raises(StoreUnavailable):
            notifier._flush()  # still broken: kept for the next round
        assert len(notifier._unwritten) == 1
        notifier.store = store
        notifier._flush()
        (d,) = _deliveries(store, j)
        assert d["status"] == "delivered" and [a["status_code"] for a in d["attempts"]] == [200]


# --- settings -----------------------------------------------------------------------------------


def test_webhook_settings_from_the_environment(tmp_path):
    from haarline.service.settings import Settings, SettingsError

    env = {
        "HAARLINE_DATA_DIR": str(tmp_path / "d"),
        "HAARLINE_WEBHOOK_LOOPBACK": "1",
        "HAARLINE_WEBHOOK_NETWORKS": "10.20.0.0/16, fd00::/8",
        "HAARLINE_WEBHOOK_HTTP": "yes",
        "HAARLINE_WEBHOOK_RETRY_DELAYS": "0.5, 2,30",
        "HAARLINE_WEBHOOK_TIMEOUT": "3",
    }
    s = Settings.from_env(env)
    assert (s.webhook_loopback, s.webhook_http, s.webhook_timeout) == (True, True, 3.0)
    assert s.webhook_networks == ("10.20.0.0/16", "fd00::/8")
    assert s.webhook_retry_delays == (0.5, 2.0, 30.0)
    defaults = Settings.from_env({"HAARLINE_DATA_DIR": str(tmp_path / "d")})
    assert defaults.webhook_retry_delays == (5, 300, 1800, 7200, 18000, 36000, 36000)
    assert not defaults.callback_loopback and defaults.webhook_networks == ()
    for name, value, message in [
        ("HAARLINE_WEBHOOK_NETWORKS", "10.20.0.1/16", "HAARLINE_WEBHOOK_NETWORKS: '10.20.0.1/16'"),
        ("HAARLINE_WEBHOOK_NETWORKS", "intranet", "is not a network"),
        ("HAARLINE_WEBHOOK_RETRY_DELAYS", "5,0", "HAARLINE_WEBHOOK_RETRY_DELAYS: 0 s is out"),
        ("HAARLINE_WEBHOOK_RETRY_DELAYS", "90000", "at most 86400"),
        ("HAARLINE_WEBHOOK_TIMEOUT", "0", "HAARLINE_WEBHOOK_TIMEOUT"),
        ("HAARLINE_WEBHOOK_LOOPBACK", "sometimes", "expected 0 or 1"),
    ]:
        with pytest.raises(SettingsError, match=message):
            Settings.from_env({"HAARLINE_DATA_DIR": str(tmp_path / "d"), name: value})


def test_the_event_body_and_signature_headers_are_in_the_document(make_app):
    # OpenAPI 3.1 describes requests the service sends under `webhooks`: the event's
    # schema and the three Standard Webhooks headers (standardwebhooks.com)
    from haarline.service.api.schemas import JobEndEvent
    from haarline.service.jobs import outbox
    from haarline.service.jobs.states import JobState

    doc = make_app(runner=False).openapi()
    hook = doc["webhooks"]["jobEnded"]["post"]
    headers = {p["name"] for p in hook["parameters"] if p["in"] == "header"}
    assert headers == {"webhook-id", "webhook-timestamp", "webhook-signature"}
    ref = hook["requestBody"]["content"]["application/json"]["schema"]["$ref"]
    assert ref.endswith("/JobEndEvent")
    job = {
        "id": "b" * 32,
        "kind": "analysis",
        "error": None,
        "cached": 0,
        "labels": '{"pr": "17"}',
        "policy": "warn",
    }
    event = JobEndEvent.model_validate(outbox.end_event(job, JobState.SUCCEEDED, 0.0))
    assert event.data.labels == {"pr": "17"} and event.data.policy == "warned"

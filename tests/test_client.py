"""haarline.client against a real server, the review bot example, and webhook signatures."""

from __future__ import annotations

import base64
import hashlib
import hmac
import json
import subprocess
import sys
import urllib.request
from pathlib import Path

import pytest
from haarline.client import Client, ServiceError, WebhookError, verify_webhook
from live_server import LiveServer

REPO = Path(__file__).resolve().parent.parent
SMALL = {"pairs": 300, "samples": 100, "seed": 3}


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    root = tmp_path_factory.mktemp("client")
    with LiveServer(root, env={"HAARLINE_PAGE_SECRET": "client test secret, long enough"}) as s:
        yield s


@pytest.fixture(scope="module")
def service(server):
    return Client(server.url, server.key("bot"))


@pytest.fixture(scope="module")
def finished(service):
    return service.analyze("ref:ry-cz-ring", labels={"pr": "5"}, **SMALL)


def test_analyze_waits_and_reads_every_output(service, finished):
    assert finished.state == "succeeded" and finished.labels == {"pr": "5"}
    report = service.report(finished)
    assert report["circuit"]["name"] == "ry-cz-ring" and report["options"]["pairs"] == 300
    names = service.plots(finished)
    assert "fidelity.png" in names
    assert service.plot(finished, "fidelity.png").startswith(b"\x89PNG\r\n\x1a\n")
    summary = service.summary(finished)
    assert f"]({finished.url}/plots/fidelity.png)" in summary  # absolute links


def test_descriptions_files_and_qasm_are_sent_as_given(service, tmp_path):
    described = tmp_path / "pair.json"
    layer = [{"gate": "ry"}, {"gate": "cz", "on": "chain"}]
    described.write_text(json.dumps({"qubits": 2, "layer": layer}))
    from_file = service.analyze(described, metrics=["expressibility"], **SMALL)
    qasm = tmp_path / "pair.qasm"
    qasm.write_text(
        'OPENQASM 3.0;\ninclude "stdgates.inc";\ninput angle[64] a;\ninput angle[64] b;\n'
        "qubit[2] q;\nry(a) q[0];\nry(b) q[1];\ncz q[0], q[1];\n"
    )
    from_qasm = service.analyze(qasm, metrics=["expressibility"], **SMALL)
    # the same circuit either way: the same numbers (same seed, same parameter order)
    kl = [service.report(j)["expressibility"]["kl"] for j in (from_file, from_qasm)]
    assert kl[0] == kl[1]


def test_a_share_token_reads_without_a_key(server, service, finished):
    link = service.share(finished, ttl_seconds=600)
    reader = Client(server.url)  # no key
    assert reader.plot(finished.id, "fidelity.png", token=link["token"]).startswith(b"\x89PNG")
    text = reader.summary(finished.id, token=link["token"])
    assert f"plots/fidelity.png?token={link['token']})" in text
    with pytest.raises(ServiceError) as caught:
        reader.report(finished.id)
    assert caught.value.status == 401


def test_bad_input_is_a_service_error_with_the_field_path(service):
    with pytest.raises(ServiceError) as caught:
        service.analyze({"qubits": 2, "layer": [{"gate": "nope"}]})
    assert caught.value.status == 422
    assert caught.value.errors[0]["path"] == "circuit.layer[0].gate"


def test_policy_labels_listing_and_latest(service):
    gate = {"rules": [{"metric": "entanglement.meyer_wallach", "fail_below": 2.0}]}
    job = service.analyze("ref:rx-product", labels={"pr": "6"}, policy=gate, **SMALL)
    assert job.policy == "failed"
    listed = [j.id for j in service.jobs(label={"pr": "6"}, page_size=1)]
    assert listed == [job.id]
    assert service.latest(label={"pr": "6"}).id == job.id
    assert service.latest(label={"pr": "never"}) is None


def test_retry_after_is_honoured_on_a_full_queue(tmp_path):
    with LiveServer(tmp_path, env={"HAARLINE_QUEUE_PER_KEY": "1"}) as server:
        service = Client(server.url, server.key("eager"))
        waits: list[float] = []

        def sleep(seconds: float) -> None:
            import time

            waits.append(seconds)
            time.sleep(seconds)

        service.sleep = sleep
        first = service.analyze("ref:rx-product", wait=False, **SMALL)
        second = service.analyze("ref:ry-cz-ring", wait=False, **{**SMALL, "seed": 4})
        assert second.id != first.id
        assert waits and all(w >= 1 for w in waits)  # at least one 429, each waited out
        assert service.wait(second).state == "succeeded"


def test_the_review_bot_example_prints_a_comment_with_working_links(server, tmp_path):
    env = {"HAARLINE_URL": server.url, "HAARLINE_KEY": server.key("review-bot"), "PATH": ""}
    out = subprocess.run(
        [sys.executable, str(REPO / "examples" / "review_bot.py"), "ref:ry-cz-ring"]
        + ["--pr", "17", "--pairs", "300"],
        capture_output=True,
        text=True,
        env=env,
        timeout=120,
        check=True,
    ).stdout
    assert out.startswith("### haarline on `ref:ry-cz-ring` (PR 17)")
    links = [line.split("](", 1)[1].rstrip(")") for line in out.splitlines() if "](" in line]
    plots = [link for link in links if "/plots/" in link]
    assert plots and all("token=" in link for link in links)
    with urllib.request.urlopen(plots[0], timeout=30) as r:  # no key: the token opens it
        assert r.read().startswith(b"\x89PNG")


# --- webhook signatures: the Standard Webhooks specification (standardwebhooks.com) --------

SECRET_BYTES = b"haarline webhook test key 32 by"
SECRET = "whsec_" + base64.b64encode(SECRET_BYTES).decode()


def signed(body: bytes, msg_id: str = "msg_1", stamp: int = 1_000_000) -> dict[str, str]:
    # the signed content and the header format as the specification writes them
    content = f"{msg_id}.{stamp}.".encode() + body
    mac = base64.b64encode(hmac.new(SECRET_BYTES, content, hashlib.sha256).digest()).decode()
    return {"webhook-id": msg_id, "webhook-timestamp": str(stamp), "webhook-signature": f"v1,{mac}"}


def test_a_signed_notification_verifies_and_returns_its_payload():
    body = json.dumps({"type": "job.succeeded", "data": {"id": "a" * 32}}).encode()
    headers = signed(body)
    assert verify_webhook(SECRET, headers, body, now=1_000_010)["data"]["id"] == "a" * 32
    # header names in any case; several signatures (a key being rotated): any may match
    headers = {k.upper(): v for k, v in headers.items()}
    headers["WEBHOOK-SIGNATURE"] = "v1,AAAA " + headers["WEBHOOK-SIGNATURE"]
    assert verify_webhook(SECRET, headers, body.decode(), now=1_000_010)["type"] == "job.succeeded"


@pytest.mark.parametrize(
    ("change", "message"),
    [
        (lambda h, b: (h, b + b" "), "no webhook-signature matches"),
        (lambda h, b: ({**h, "webhook-id": "msg_2"}, b), "no webhook-signature matches"),
        (lambda h, b: ({**h, "webhook-timestamp": "999000"}, b), "s old, more than"),
        (lambda h, b: ({k: v for k, v in h.items() if k != "webhook-id"}, b), "webhook-id"),
        (lambda h, b: ({**h, "webhook-signature": "v2,xyz"}, b), "no webhook-signature matches"),
        (lambda h, b: ({**h, "webhook-timestamp": "soon"}, b), "is not integer Unix seconds"),
    ],
)
def test_a_tampered_or_stale_notification_is_refused(change, message):
    body = b'{"type": "job.failed"}'
    headers, body = change(signed(body), body)
    with pytest.raises(WebhookError, match=message):
        verify_webhook(SECRET, headers, body, now=1_000_010)


def test_a_wrong_secret_is_refused():
    body = b"{}"
    other = "whsec_" + base64.b64encode(b"another key entirely, 32 bytes!").decode()
    with pytest.raises(WebhookError):
        verify_webhook(other, signed(body), body, now=1_000_000)
    with pytest.raises(WebhookError, match="not .whsec_. followed by base64 text"):
        verify_webhook("whsec_***", signed(body), body, now=1_000_000)


def test_events_stream_the_progress_and_end_with_the_final_job(service):
    job = service.analyze("ref:ry-cz-ring", wait=False, **{**SMALL, "seed": 8})
    events = list(service.events(job, timeout=120))
    assert events[-1]["event"] == "end" and events[-1]["data"]["state"] == "succeeded"
    assert all(e["event"] in ("progress", "end") for e in events)
    assert all(e["data"]["id"] == job.id for e in events)


def test_a_comparison_with_a_failing_policy_fails_as_a_whole(service):
    gate = {"rules": [{"metric": "entanglement.meyer_wallach", "fail_below": 0.01}]}
    job = service.compare(["ref:rx-product", "ref:ry-cz-ring"], policy=gate, **SMALL)
    # rx-product entangles nothing (Meyer-Wallach 0): it fails, so the comparison does
    assert job.state == "succeeded" and job.policy == "failed"
    ranking = service.report(job)["ranking"]
    assert sorted(r["policy"] for r in ranking) == ["fail", "pass"]

"""Signing and verify_webhook: the Standard Webhooks scheme, checked against its own example.

Specification: Standard Webhooks, standardwebhooks.com (signature scheme ``v1``,
HMAC-SHA256 over ``{id}.{timestamp}.{body}``, ``whsec_`` secrets, a 5-minute tolerance).
"""

import base64
import sys

import pytest
from haarline.service.webhooks import (
    TOLERANCE,
    WebhookError,
    new_secret,
    secret_key,
    sign,
    signed_headers,
    verify_webhook,
)
from webhook_receiver import standard_webhooks_verify

# The worked example of the Standard Webhooks reference libraries' test suites
# (standard-webhooks repository): this secret, id, timestamp and payload give this signature.
SPEC_SECRET = "whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw"
SPEC_ID = "msg_p5jXN8AQM9LWM0D4loKWxJek"
SPEC_TIMESTAMP = 1614265330
SPEC_BODY = b'{"test": 2432232314}'
SPEC_SIGNATURE = "v1,g0hM9SsE+OTPJTGt/tmIKtSyZlE3uFJELVlNIOLJ1OE="

BODY = b'{"type":"analysis.succeeded","data":{"id":"x"}}'
NOW = 1_800_000_000


def test_signature_matches_the_reference_example():
    assert sign(SPEC_SECRET, SPEC_ID, SPEC_TIMESTAMP, SPEC_BODY) == SPEC_SIGNATURE
    headers = {
        "webhook-id": SPEC_ID,
        "webhook-timestamp": str(SPEC_TIMESTAMP),
        "webhook-signature": SPEC_SIGNATURE,
    }
    assert verify_webhook(SPEC_SECRET, headers, SPEC_BODY, now=SPEC_TIMESTAMP) == {
        "test": 2432232314
    }


def test_new_secrets_are_whsec_with_32_random_bytes():
    a, b = new_secret(), new_secret()
    assert a != b and a.startswith("whsec_") and len(secret_key(a)) == 32
    assert secret_key(a) == base64.b64decode(a.removeprefix("whsec_"))


def test_signed_headers_pass_the_independent_verifier():
    secret = new_secret()
    headers = signed_headers(secret, "msg_1", BODY, timestamp=NOW)
    assert set(headers) == {"webhook-id", "webhook-timestamp", "webhook-signature"}
    assert standard_webhooks_verify(secret, headers, BODY, now=NOW)
    assert not standard_webhooks_verify(secret, headers, BODY + b" ", now=NOW)
    assert not standard_webhooks_verify(new_secret(), headers, BODY, now=NOW)


def test_verify_accepts_any_case_str_bodies_and_one_of_several_signatures():
    secret = new_secret()
    headers = signed_headers(secret, "msg_2", BODY, timestamp=NOW)
    shouting = {k.upper(): v for k, v in headers.items()}
    assert verify_webhook(secret, shouting, BODY.decode(), now=NOW)["type"] == "analysis.succeeded"
    # during a rotation a sender may sign with two secrets (space-separated signatures)
    other = sign(new_secret(), "msg_2", NOW, BODY)
    both = {**headers, "webhook-signature": f"{other} {headers['webhook-signature']}"}
    assert verify_webhook(secret, both, BODY, now=NOW)


@pytest.mark.parametrize(
    "change,message",
    [
        (lambda h, b: (h, b.replace(b"succeeded", b"failed")), "no webhook-signature matches"),
        (lambda h, b: ({**h, "webhook-id": "msg_other"}, b), "no webhook-signature matches"),
        (lambda h, b: ({**h, "webhook-signature": "v1,AAAA"}, b), "no webhook-signature matches"),
        (lambda h, b: ({**h, "webhook-timestamp": str(NOW + 1)}, b), "no webhook-signature"),
        (lambda h, b: ({**h, "webhook-timestamp": "soon"}, b), "not integer Unix seconds"),
        (lambda h, b: ({k: v for k, v in h.items() if k != "webhook-id"}, b), "webhook-id header"),
        (
            lambda h, b: ({k: v for k, v in h.items() if k != "webhook-signature"}, b),
            "webhook-signature header is missing",
        ),
    ],
)
def test_tampering_is_refused_with_a_clear_message(change, message):
    secret = new_secret()
    headers, body = change(signed_headers(secret, "msg_3", BODY, timestamp=NOW), BODY)
    with pytest.raises(WebhookError, match=message):
        verify_webhook(secret, headers, body, now=NOW)


def test_old_and_future_timestamps_are_refused():
    secret = new_secret()
    headers = signed_headers(secret, "msg_4", BODY, timestamp=NOW)
    assert verify_webhook(secret, headers, BODY, now=NOW + TOLERANCE)  # at the limit
    with pytest.raises(WebhookError, match=r"301 s old, more than the 300 s allowed"):
        verify_webhook(secret, headers, BODY, now=NOW + TOLERANCE + 1)
    with pytest.raises(WebhookError, match="in the future"):
        verify_webhook(secret, headers, BODY, now=NOW - TOLERANCE - 1)
    assert verify_webhook(secret, headers, BODY, now=NOW + 3000, tolerance=3600)


def test_a_malformed_secret_is_named_not_shown():
    headers = signed_headers(new_secret(), "msg_5", BODY, timestamp=NOW)
    with pytest.raises(WebhookError, match="not 'whsec_' followed by base64") as err:
        verify_webhook("whsec_not base64!", headers, BODY, now=NOW)
    assert "not base64!" not in str(err.value)


def test_the_verifier_imports_without_the_web_framework():
    # a client or a receiver checks notifications without FastAPI, Starlette or uvicorn
    import subprocess

    code = (
        "import sys; import haarline.service.webhooks as w; "
        "bad = [m for m in ('fastapi', 'starlette', 'uvicorn') if m in sys.modules]; "
        "print(bad); assert not bad"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr

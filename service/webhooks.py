"""Signed notifications as the Standard Webhooks specification describes them.

Specification: Standard Webhooks, https://www.standardwebhooks.com (the ``spec/standard-
webhooks.md`` of its repository). A notification is an HTTP POST whose body is the event
(JSON) and whose headers are

==========================  =============================================================
``webhook-id``              the message id, the same on every attempt of one message (a
                            receiver drops a message it has already handled)
``webhook-timestamp``       the attempt's time, integer Unix seconds
``webhook-signature``       space-separated signatures ``v1,<base64>``; each one is the
                            HMAC-SHA256 of ``{webhook-id}.{webhook-timestamp}.{body}``
==========================  =============================================================

The secret is written ``whsec_<base64 of the key bytes>``; the HMAC key is the decoded bytes
(the ``whsec_`` prefix is not part of it). A receiver refuses a timestamp more than
:data:`TOLERANCE` seconds away from its clock (either way), which bounds replays.

This module needs only the standard library, so a client (or a receiver written with
haarline installed) can check a notification with :func:`verify_webhook` without importing
the web service.

Examples
--------
>>> secret = "whsec_aGFhcmxpbmUgZG9jdGVzdCBrZXksIDMyIGJ5dGVzISE="
>>> body = b'{"type":"analysis.succeeded"}'
>>> headers = signed_headers(secret, "msg_1", body, timestamp=1_700_000_000)
>>> headers["webhook-signature"]
'v1,s6pvNmzAeiag11lLPgGTjMZgXP0yokShsEB5gNnkxNI='
>>> verify_webhook(secret, headers, body, now=1_700_000_060)
{'type': 'analysis.succeeded'}
"""

from __future__ import annotations

import base64
import binascii
import hashlib
import hmac
import json
import secrets
import time
from collections.abc import Mapping
from typing import Any

from haarline.service.errors import WebhookError

__all__ = [
    "SECRET_PREFIX",
    "TOLERANCE",
    "WebhookError",
    "new_secret",
    "secret_key",
    "sign",
    "signed_headers",
    "verify_webhook",
]

SECRET_PREFIX = "whsec_"
"""How the specification writes a secret: this prefix, then the key bytes in base64."""

SECRET_BYTES = 32
"""Random bytes of a new secret (the specification asks for 24 to 64)."""

TOLERANCE = 300
"""Seconds a timestamp may differ from the receiver's clock (the specification's 5 minutes)."""


def new_secret() -> str:
    """A fresh random signing secret, ``whsec_`` and 32 random bytes in base64."""
    return SECRET_PREFIX + base64.b64encode(secrets.token_bytes(SECRET_BYTES)).decode("ascii")


def secret_key(secret: str) -> bytes:
    """The HMAC key of a ``whsec_…`` secret (the prefix may be left out).

    Raises
    ------
    WebhookError
        The secret is not base64 (after its prefix) or is empty.
    """
    text = secret.removeprefix(SECRET_PREFIX)
    try:
        key = base64.b64decode(text, validate=True)
    except (binascii.Error, ValueError):
        raise WebhookError(
            "the signing secret is not 'whsec_' followed by base64 text; copy it exactly as "
            "it was shown"
        ) from None
    if not key:
        raise WebhookError("the signing secret is empty")
    return key


def sign(secret: str, message_id: str, timestamp: int, body: bytes) -> str:
    """The ``v1,<base64>`` signature of one attempt (HMAC-SHA256 of ``id.timestamp.body``)."""
    signed = f"{message_id}.{timestamp}.".encode() + body
    digest = hmac.new(secret_key(secret), signed, hashlib.sha256).digest()
    return "v1," + base64.b64encode(digest).decode("ascii")


def signed_headers(
    secret: str, message_id: str, body: bytes, *, timestamp: int | None = None
) -> dict[str, str]:
    """The three headers of one delivery attempt (``timestamp`` defaults to now)."""
    when = int(time.time()) if timestamp is None else timestamp
    return {
        "webhook-id": message_id,
        "webhook-timestamp": str(when),
        "webhook-signature": sign(secret, message_id, when, body),
    }


def _header(headers: Mapping[str, str], name: str) -> str:
    for key, value in headers.items():
        if key.lower() == name:
            return value
    raise WebhookError(f"the {name} header is missing")


def verify_webhook(
    secret: str,
    headers: Mapping[str, str],
    body: bytes | str,
    *,
    tolerance: int = TOLERANCE,
    now: float | None = None,
) -> Any:
    """Check a notification's signature and age; return its event (the decoded JSON body).

    Parameters
    ----------
    secret : str
        The ``whsec_…`` secret shown when it was created.
    headers : mapping
        The request's headers (names in any case).
    body : bytes or str
        The request body exactly as received (before any JSON parsing).
    tolerance : int
        Seconds the ``webhook-timestamp`` may be from ``now``, either way.
    now : float, optional
        The receiver's clock (Unix seconds); by default :func:`time.time`.

    Raises
    ------
    WebhookError
        A header is missing, the timestamp is not an integer or is too old or too far in
        the future, no ``v1`` signature matches, or the body is not JSON.
    """
    raw = body.encode() if isinstance(body, str) else bytes(body)
    message_id = _header(headers, "webhook-id")
    stamp = _header(headers, "webhook-timestamp").strip()
    if not stamp.isdigit():
        raise WebhookError(f"webhook-timestamp {stamp!r} is not integer Unix seconds")
    clock = time.time() if now is None else now
    age = clock - int(stamp)
    if age > tolerance:
        raise WebhookError(
            f"webhook-timestamp is {age:.0f} s old, more than the {tolerance} s allowed "
            "(a replay, or a clock far off)"
        )
    if -age > tolerance:
        raise WebhookError(
            f"webhook-timestamp is {-age:.0f} s in the future, more than the {tolerance} s "
            "allowed (check the clocks)"
        )
    expected = sign(secret, message_id, int(stamp), raw).encode()
    offered = _header(headers, "webhook-signature").split()
    if not any(hmac.compare_digest(expected, s.encode()) for s in offered):
        raise WebhookError(
            "no webhook-signature matches the body: it was changed on the way, or it was "
            "signed with another secret"
        )
    try:
        return json.loads(raw)
    except ValueError:
        raise WebhookError("the signed body is not JSON") from None

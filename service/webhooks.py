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

The receiving half (:func:`verify_webhook`, :func:`sign`) lives in :mod:`haarline.client`,
standard library only, so a receiver checks a notification without importing the web
service; this module adds what only the service does: new secrets and the signed headers.

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
import secrets
import time

from haarline.client import (
    SECRET_PREFIX,
    TOLERANCE,
    WebhookError,
    secret_key,
    sign,
    verify_webhook,
)

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

SECRET_BYTES = 32
"""Random bytes of a new secret (the specification asks for 24 to 64)."""


def new_secret() -> str:
    """A fresh random signing secret, ``whsec_`` and 32 random bytes in base64."""
    return SECRET_PREFIX + base64.b64encode(secrets.token_bytes(SECRET_BYTES)).decode("ascii")


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

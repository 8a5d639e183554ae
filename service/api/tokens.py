"""Signed share links to one job's outputs.

A token is ``<job id>.<link id>.<expiry, unix seconds>.<signature>`` with the signature an
HMAC-SHA256 of ``share:<job id>:<link id>:<expiry>`` under the server secret, base64url
without padding. It opens that one job's page, report, summary and plots, and nothing else;
it stops working at its expiry, when the secret changes, when the job is deleted, when its
link is revoked and when the key that made it is revoked (the routes check the last three
in the store, where every link is recorded). Checks are constant-time.

Anything that is not a well-formed token, whatever its characters or bytes, raises
:class:`TokenError` and nothing else: the token is decoded as ASCII and matched against
its exact shape before any number is read or any signature compared.
"""

from __future__ import annotations

import base64
import hashlib
import hmac
import os
import re
import secrets
import time
from pathlib import Path

from haarline.service.errors import TokenError
from haarline.service.jobs.store import is_job_id

__all__ = ["TokenError", "check_token", "load_secret", "make_token"]

_SHAPE = re.compile(r"([0-9a-f]{32})\.([0-9a-f]{16})\.([0-9]{1,12})\.([A-Za-z0-9_-]{43})")
"""A job id, a link id, an expiry of at most 12 ASCII digits, a 32-byte signature."""


def load_secret(data_dir: Path, configured: str | None) -> bytes:
    """The configured secret, or one created once under the data directory (mode 0600)."""
    if configured:
        return configured.encode("utf-8")
    path = data_dir / "page-secret"
    try:
        return path.read_bytes()
    except FileNotFoundError:
        value = secrets.token_bytes(32)
        fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
        with os.fdopen(fd, "wb") as fh:
            fh.write(value)
        return value


def _sign(secret: bytes, job_id: str, link_id: str, expires: int) -> str:
    message = f"share:{job_id}:{link_id}:{expires}".encode()
    mac = hmac.new(secret, message, hashlib.sha256).digest()
    return base64.urlsafe_b64encode(mac).rstrip(b"=").decode("ascii")


def make_token(secret: bytes, job_id: str, link_id: str, expires: int) -> str:
    """The token of link ``link_id`` of ``job_id``, valid until ``expires`` (unix time)."""
    return f"{job_id}.{link_id}.{expires}.{_sign(secret, job_id, link_id, expires)}"


def check_token(secret: bytes, token: str | bytes, job_id: str, *, now: float | None = None) -> str:
    """The link id of ``token``; raise :class:`TokenError` unless it opens ``job_id`` now.

    The caller still checks that the link is recorded and not revoked.

    Examples
    --------
    >>> token = make_token(b"k" * 32, "a" * 32, "0123456789abcdef", 60)
    >>> check_token(b"k" * 32, token, "a" * 32, now=30)
    '0123456789abcdef'
    >>> check_token(b"k" * 32, "a.².b", "a" * 32)
    Traceback (most recent call last):
    ...
    haarline.service.errors.TokenError: malformed token
    """
    if isinstance(token, bytes):
        try:
            token = token.decode("ascii")
        except UnicodeDecodeError:
            raise TokenError("malformed token") from None
    match = _SHAPE.fullmatch(token) if token.isascii() else None
    if match is None:
        raise TokenError("malformed token")
    token_job, link_id, expires_text, signature = match.groups()
    expires = int(expires_text)
    if not hmac.compare_digest(_sign(secret, token_job, link_id, expires), signature):
        raise TokenError("invalid token")
    if not (is_job_id(job_id) and hmac.compare_digest(token_job, job_id)):
        raise TokenError("the token is for another job")
    if expires < (time.time() if now is None else now):
        raise TokenError("the link has expired")
    return link_id

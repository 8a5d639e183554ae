"""Short-lived signed links to one job's report page.

A token is ``<job id>.<expiry, unix seconds>.<signature>`` with the signature an
HMAC-SHA256 of ``page:<job id>:<expiry>`` under the server secret, base64url without
padding. It opens that one job's page (whose images are inlined) and nothing else; it
stops working at its expiry or when the secret changes. Checks are constant-time.
"""

from __future__ import annotations

import base64
import hashlib
import hmac
import os
import secrets
import time
from pathlib import Path

from haarline.service.errors import TokenError

__all__ = ["MAX_TTL", "TokenError", "load_secret", "make_token", "check_token"]

MAX_TTL = 7 * 24 * 3600
"""Longest lifetime of a link (seconds)."""


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


def _sign(secret: bytes, job_id: str, expires: int) -> str:
    mac = hmac.new(secret, f"page:{job_id}:{expires}".encode(), hashlib.sha256).digest()
    return base64.urlsafe_b64encode(mac).rstrip(b"=").decode("ascii")


def make_token(
    secret: bytes, job_id: str, ttl: int, *, now: float | None = None
) -> tuple[str, int]:
    """A token for ``job_id`` valid for ``ttl`` seconds; returns ``(token, expires)``."""
    expires = int((time.time() if now is None else now) + ttl)
    return f"{job_id}.{expires}.{_sign(secret, job_id, expires)}", expires


def check_token(secret: bytes, token: str, job_id: str, *, now: float | None = None) -> None:
    """Raise :class:`TokenError` unless ``token`` opens ``job_id`` right now."""
    parts = token.split(".")
    if len(parts) != 3 or not parts[1].isdigit():
        raise TokenError("malformed token")
    token_job, expires_text, signature = parts
    expected = _sign(secret, token_job, int(expires_text))
    if not hmac.compare_digest(expected, signature):
        raise TokenError("invalid token")
    if not hmac.compare_digest(token_job, job_id):
        raise TokenError("the token is for another job")
    if int(expires_text) < (time.time() if now is None else now):
        raise TokenError("the token has expired")

"""API keys: ``hl_<id>_<secret>``; only a SHA-256 hash of the whole key is stored.

The id part finds the stored hash; the comparison of hashes is constant-time
(:func:`hmac.compare_digest`). Keys carry 256 random bits, so a plain SHA-256 digest is
enough at rest (common practice for high-entropy tokens; slow password hashes are for
low-entropy secrets).
"""

from __future__ import annotations

import hashlib
import hmac
import re
import secrets

from haarline.service.jobs.store import Store

__all__ = ["KEY_PATTERN", "digest", "issue_key", "verify_key"]

KEY_PATTERN = re.compile(r"^hl_([0-9a-f]{12})_([A-Za-z0-9_-]{43})$")


def digest(key: str) -> str:
    """SHA-256 hex digest of a key."""
    return hashlib.sha256(key.encode("ascii")).hexdigest()


def issue_key(store: Store, name: str) -> tuple[str, str]:
    """Create a key; return ``(key_id, key)``. The key is shown once and never stored."""
    key_id = secrets.token_hex(6)
    key = f"hl_{key_id}_{secrets.token_urlsafe(32)}"
    store.add_key(key_id, name, digest(key))
    return key_id, key


_DUMMY = digest("hl_000000000000_" + "A" * 43)


def verify_key(store: Store, key: str) -> str | None:
    """The key id if ``key`` is valid and not revoked, else ``None`` (constant-time compare)."""
    m = KEY_PATTERN.match(key)
    stored = store.key_hash(m.group(1)) if m else None
    ok = hmac.compare_digest(digest(key) if m else _DUMMY, stored or _DUMMY)
    return m.group(1) if (m and stored is not None and ok) else None

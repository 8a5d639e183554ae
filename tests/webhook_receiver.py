"""A notification receiver on 127.0.0.1, and a signature check written from the specification.

:func:`standard_webhooks_verify` is written from the text of the Standard Webhooks
specification (standardwebhooks.com, "Signature scheme" and "Verifying signatures"), on
purpose without the service's own :mod:`haarline.service.webhooks`: the signed content is
``{webhook-id}.{webhook-timestamp}.{raw body}``; the key is the base64 text after the
``whsec_`` prefix, decoded; the signature is ``v1,`` and the base64 of the HMAC-SHA256;
``webhook-signature`` may carry several, separated by spaces; compare in constant time;
refuse a timestamp more than five minutes from now.
"""

from __future__ import annotations

import base64
import hashlib
import hmac
import threading
import time
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from typing import Any


def standard_webhooks_verify(
    secret: str, headers: dict[str, str], body: bytes, now: float | None = None
) -> bool:
    """Whether the request is signed with ``secret`` (True) or not (False)."""
    lower = {k.lower(): v for k, v in headers.items()}
    msg_id = lower.get("webhook-id")
    stamp = lower.get("webhook-timestamp")
    signatures = lower.get("webhook-signature")
    if not (msg_id and stamp and signatures):
        return False
    if abs((time.time() if now is None else now) - int(stamp)) > 5 * 60:
        return False
    key = base64.b64decode(secret.split("_", 1)[1])
    content = msg_id.encode() + b"." + stamp.encode() + b"." + body
    expected = base64.b64encode(hmac.new(key, content, hashlib.sha256).digest()).decode()
    for entry in signatures.split(" "):
        version, _, value = entry.partition(",")
        if version == "v1" and hmac.compare_digest(value, expected):
            return True
    return False


class Receiver:
    """An HTTP server that records every POST and answers with the next planned status.

    ``answers`` are used in order, one per request; when they run out, 200. ``on_request``
    runs before each answer.
    """

    def __init__(self, answers: list[int] | None = None, on_request: Any = None):
        self.answers = list(answers or [])
        self.on_request = on_request  # called (no arguments) before each answer
        self.requests: list[dict[str, Any]] = []
        self._lock = threading.Lock()
        receiver = self

        class Handler(BaseHTTPRequestHandler):
            def do_POST(self) -> None:
                length = int(self.headers.get("Content-Length", "0"))
                body = self.rfile.read(length)
                with receiver._lock:
                    status = receiver.answers.pop(0) if receiver.answers else 200
                    receiver.requests.append(
                        {
                            "path": self.path,
                            "headers": dict(self.headers.items()),
                            "body": body,
                            "at": time.time(),
                            "status": status,
                        }
                    )
                if receiver.on_request is not None:
                    receiver.on_request()
                self.send_response(status)
                self.send_header("Content-Length", "2")
                self.end_headers()
                self.wfile.write(b"ok")

            def log_message(self, *args: Any) -> None:
                pass

        self.server = ThreadingHTTPServer(("127.0.0.1", 0), Handler)
        self.url = f"http://127.0.0.1:{self.server.server_port}/hook"
        self._thread = threading.Thread(target=self.server.serve_forever, daemon=True)

    def __enter__(self) -> Receiver:
        self._thread.start()
        return self

    def __exit__(self, *exc: Any) -> None:
        self.server.shutdown()
        self.server.server_close()

    def wait_for(self, count: int, timeout: float = 60) -> list[dict[str, Any]]:
        """Wait until ``count`` requests arrived; return them all."""
        deadline = time.time() + timeout
        while time.time() < deadline:
            with self._lock:
                if len(self.requests) >= count:
                    return list(self.requests)
            time.sleep(0.05)
        raise AssertionError(f"{len(self.requests)} of {count} notifications after {timeout} s")

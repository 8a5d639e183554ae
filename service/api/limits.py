"""An ASGI middleware that bounds request bodies: 413 when too large, 408 when too slow.

The body is read in full before the route sees it (FastAPI buffers it anyway), so a
client that trickles its body, or announces a ``Content-Length`` and stops, is cut off
``timeout`` seconds after the request's headers arrived, and a body over ``limit`` bytes
is refused without being stored. The route then reads the buffered body as usual.
"""

from __future__ import annotations

import asyncio
import json

from starlette.requests import ClientDisconnect
from starlette.types import ASGIApp, Message, Receive, Scope, Send

__all__ = ["BodyLimit"]


class BodyLimit:
    """Refuse bodies over ``limit`` bytes (413) or slower than ``timeout`` seconds (408)."""

    def __init__(self, app: ASGIApp, limit: int, timeout: float = 30.0):
        self.app = app
        self.limit = limit
        self.timeout = timeout

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        """Read the body within the limits and pass the request on, or answer 413 or 408."""
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        headers = dict(scope.get("headers") or [])
        length = headers.get(b"content-length")
        if length is not None:
            try:
                too_big = int(length) > self.limit
            except ValueError:
                too_big = False
            if too_big:
                await self._reject(send, 413)
                return
        try:
            body = await asyncio.wait_for(self._read(receive), self.timeout)
        except TimeoutError:
            await self._reject(send, 408)
            return
        except ClientDisconnect:
            return  # the client went away; nobody to answer
        if body is None:
            await self._reject(send, 413)
            return
        delivered = False

        async def replay() -> Message:
            nonlocal delivered
            if not delivered:
                delivered = True
                return {"type": "http.request", "body": body, "more_body": False}
            return await receive()  # e.g. waiting for a disconnect: not bounded

        await self.app(scope, replay, send)

    async def _read(self, receive: Receive) -> bytes | None:
        """The whole body, or ``None`` past the limit; a disconnect raises."""
        chunks: list[bytes] = []
        seen = 0
        while True:
            message = await receive()
            if message["type"] == "http.disconnect":
                raise ClientDisconnect
            chunk = message.get("body", b"")
            seen += len(chunk)
            if seen > self.limit:
                return None
            chunks.append(chunk)
            if not message.get("more_body", False):
                return b"".join(chunks)

    async def _reject(self, send: Send, status: int) -> None:
        if status == 408:
            kind, title = "body-too-slow", "Request timeout"
            detail = f"the request body did not arrive within {self.timeout:g} seconds"
        else:
            kind, title = "body-too-large", "Request body too large"
            detail = f"the request body exceeds the limit of {self.limit} bytes"
        body = json.dumps(
            {
                "type": f"https://haarline.invalid/problems/{kind}",
                "title": title,
                "status": status,
                "detail": detail,
                "errors": [],
            }
        ).encode()
        await send(
            {
                "type": "http.response.start",
                "status": status,
                "headers": [
                    (b"content-type", b"application/problem+json"),
                    (b"content-length", str(len(body)).encode()),
                    (b"connection", b"close"),  # the rest of the body is not read
                ],
            }
        )
        await send({"type": "http.response.body", "body": body})

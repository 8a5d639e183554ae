"""An ASGI middleware that rejects request bodies above a size limit with 413."""

from __future__ import annotations

import json
from typing import Any

__all__ = ["BodyLimit"]


class BodyLimit:
    """Reject bodies over ``limit`` bytes, by ``Content-Length`` or while streaming."""

    def __init__(self, app: Any, limit: int):
        self.app = app
        self.limit = limit

    async def __call__(self, scope: dict[str, Any], receive: Any, send: Any) -> None:
        """Pass the request on, or answer 413."""
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
                await self._reject(send)
                return
        seen = 0
        started = False

        async def limited_receive() -> dict[str, Any]:
            nonlocal seen
            message = await receive()
            if message["type"] == "http.request":
                seen += len(message.get("body", b""))
                if seen > self.limit:
                    raise _TooLarge
            return message

        async def tracking_send(message: dict[str, Any]) -> None:
            nonlocal started
            if message["type"] == "http.response.start":
                started = True
            await send(message)

        try:
            await self.app(scope, limited_receive, tracking_send)
        except _TooLarge:
            if not started:
                await self._reject(send)

    async def _reject(self, send: Any) -> None:
        body = json.dumps(
            {
                "type": "https://haarline.invalid/problems/body-too-large",
                "title": "Request body too large",
                "status": 413,
                "detail": f"the request body exceeds the limit of {self.limit} bytes",
                "errors": [],
            }
        ).encode()
        await send(
            {
                "type": "http.response.start",
                "status": 413,
                "headers": [
                    (b"content-type", b"application/problem+json"),
                    (b"content-length", str(len(body)).encode()),
                ],
            }
        )
        await send({"type": "http.response.body", "body": body})


class _TooLarge(Exception):
    pass

"""uvicorn's h11 protocol with a deadline for each request's line and headers.

uvicorn bounds only the idle time *between* requests on a kept-alive connection; a client
that opens a connection and sends nothing, or sends its headers a byte at a time, keeps
the connection (and a file descriptor) for ever. Here every request must have its request
line and headers complete within ``read_timeout`` seconds of the connection opening or of
the previous response; otherwise the connection is closed. The body has its own deadline
in :class:`haarline.service.api.limits.BodyLimit`.
"""

from __future__ import annotations

import asyncio
from typing import Any

import h11
from uvicorn.protocols.http.h11_impl import H11Protocol

__all__ = ["guarded_protocol"]


class _GuardedH11(H11Protocol):
    header_timeout: float = 30.0
    _header_timer: asyncio.TimerHandle | None = None

    def connection_made(self, transport: asyncio.Transport) -> None:  # type: ignore[override]
        super().connection_made(transport)
        self._arm()

    def data_received(self, data: bytes) -> None:
        super().data_received(data)
        if self.conn.their_state is not h11.IDLE:  # the request line and headers are in
            self._disarm()

    def on_response_complete(self) -> None:
        super().on_response_complete()
        if not self.transport.is_closing():
            self._arm()  # the next request on this connection gets its own deadline

    def connection_lost(self, exc: Exception | None) -> None:
        self._disarm()
        super().connection_lost(exc)

    def _arm(self) -> None:
        self._disarm()
        self._header_timer = self.loop.call_later(self.header_timeout, self._too_slow)

    def _disarm(self) -> None:
        if self._header_timer is not None:
            self._header_timer.cancel()
            self._header_timer = None

    def _too_slow(self) -> None:
        self._header_timer = None
        if self.conn.their_state is h11.IDLE and not self.transport.is_closing():
            self.transport.close()


def guarded_protocol(read_timeout: float) -> Any:
    """The protocol class to pass as ``uvicorn.run(..., http=...)``."""
    return type("GuardedH11", (_GuardedH11,), {"header_timeout": read_timeout})

"""Sends the notifications of the outbox: signed POSTs, retried with backoff.

A :class:`Notifier` thread looks for due deliveries every :data:`POLL` seconds (worker
processes queue them straight into SQLite, so polling is how the server hears of them) and
hands each to a small pool of sender threads, never to the event loop or the job workers.
One attempt:

1. checks the destination again (:func:`~haarline.service.jobs.destinations.check_destination`)
   and connects to the very address that was checked, with TLS verified against the host's
   name;
2. POSTs the delivery's body (written once, when the job ended) with ``Content-Type:
   application/json`` and the Standard Webhooks headers, signed now with the key's current
   secret (:mod:`haarline.service.webhooks`);
3. records the attempt: a 2xx answer delivers it; anything else (another status, a refused
   destination, no connection, a timeout) schedules the next attempt after the next of
   ``HAARLINE_WEBHOOK_RETRY_DELAYS``, or, with none left, fails it.

Redirects are not followed (a 3xx is a failed attempt). Each attempt may take
``HAARLINE_WEBHOOK_TIMEOUT`` seconds to connect and again for each read of the answer, of
which at most :data:`ANSWER_BYTES` are read.

When the store cannot be written (locked for longer than its busy timeout, a full disk),
an attempt's record waits in memory and is written on a later round; a delivery whose
attempt could not even start goes back to ``pending``. A server that stops meanwhile
leaves it ``sending``, which the next start resumes.
"""

from __future__ import annotations

import http.client
import logging
import socket
import sqlite3
import ssl
import threading
import time
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from typing import Any

import haarline
from haarline.service.errors import CallbackRefused, StoreUnavailable, WebhookError
from haarline.service.jobs import outbox
from haarline.service.jobs.destinations import Destination, check_destination
from haarline.service.jobs.store import Store
from haarline.service.settings import Settings
from haarline.service.webhooks import signed_headers

__all__ = ["ANSWER_BYTES", "POLL", "SENDERS", "Notifier", "post"]

log = logging.getLogger("haarline.notify")

POLL = 0.5
"""Seconds between looks at the outbox."""

SENDERS = 4
"""Attempts under way at once (a slow receiver holds up only its own thread)."""

ANSWER_BYTES = 65_536
"""Most bytes of a receiver's answer that are read (the rest is dropped)."""


class _Pinned(http.client.HTTPConnection):
    """Plain HTTP to one checked address, with the URL's host in ``Host``."""

    def __init__(self, host: str, port: int, address: str, timeout: float):
        super().__init__(host, port, timeout=timeout)
        self._address = address

    def connect(self) -> None:
        """Connect to the checked address, not to whatever the name resolves to now."""
        self.sock = socket.create_connection((self._address, self.port), self.timeout)


class _PinnedTLS(http.client.HTTPSConnection):
    """HTTPS to one checked address; the certificate is verified against the host's name."""

    def __init__(self, host: str, port: int, address: str, timeout: float, context: ssl.SSLContext):
        super().__init__(host, port, timeout=timeout, context=context)
        self._address = address
        self._tls = context

    def connect(self) -> None:
        """Connect to the checked address and start TLS for the URL's host name."""
        sock = socket.create_connection((self._address, self.port), self.timeout)
        self.sock = self._tls.wrap_socket(sock, server_hostname=self.host)


def post(
    destination: Destination,
    body: bytes,
    headers: dict[str, str],
    *,
    timeout: float,
    context: ssl.SSLContext | None = None,
) -> int:
    """POST ``body`` to a checked destination; return the answer's status code.

    The checked addresses are tried in order until one accepts the connection.

    Raises
    ------
    OSError
        No address accepted the connection, or the exchange failed or timed out.
    http.client.HTTPException
        The answer was not HTTP.
    """
    error: OSError | None = None
    for address in destination.addresses:
        connection: http.client.HTTPConnection
        if destination.scheme == "https":
            tls = context or ssl.create_default_context()
            connection = _PinnedTLS(destination.host, destination.port, address, timeout, tls)
        else:
            connection = _Pinned(destination.host, destination.port, address, timeout)
        try:
            try:
                connection.connect()
            except OSError as exc:
                error = exc
                continue
            connection.request("POST", destination.path, body=body, headers=headers)
            answer = connection.getresponse()
            answer.read(ANSWER_BYTES)
            return int(answer.status)
        finally:
            connection.close()
    raise error or OSError("the host has no address")


class Notifier:
    """Owns the outbox thread and the sender threads."""

    def __init__(self, settings: Settings, store: Store, *, poll: float = POLL):
        self.settings = settings
        self.store = store
        self.poll = poll
        self._stop = threading.Event()
        self._wake = threading.Event()
        self._lock = threading.Lock()
        self._sending: set[str] = set()
        self._unwritten: list[Callable[[sqlite3.Connection], Any]] = []
        self._thread: threading.Thread | None = None
        self._senders: ThreadPoolExecutor | None = None
        self._agent = f"haarline/{haarline.__version__} (notifications)"

    def start(self) -> None:
        """Resume what a stopped server left in flight, then start sending."""
        self._stop.clear()
        with self.store.connect() as conn:
            resumed = outbox.resume(conn, time.time())
        if resumed:
            log.info("resumed %d notification(s) left in flight", resumed)
        self._senders = ThreadPoolExecutor(SENDERS, thread_name_prefix="haarline-notify-send")
        self._thread = threading.Thread(target=self._loop, name="haarline-notify", daemon=True)
        self._thread.start()

    def stop(self) -> None:
        """Stop looking; attempts under way finish or time out on their own threads."""
        self._stop.set()
        self._wake.set()
        if self._thread is not None:
            self._thread.join(timeout=5)
            self._thread = None
        if self._senders is not None:
            self._senders.shutdown(wait=False, cancel_futures=True)
            self._senders = None

    def alive(self) -> bool:
        """Whether the outbox thread runs."""
        return self._thread is not None and self._thread.is_alive()

    def wake(self) -> None:
        """Look at the outbox now (a job ended in this process)."""
        self._wake.set()

    def _loop(self) -> None:
        while not self._stop.is_set():
            self._wake.wait(timeout=self.poll)
            self._wake.clear()
            try:
                self._round()
            except StoreUnavailable as exc:
                log.warning("job store unavailable, notifications wait: %s", exc)
            except Exception:  # keep sending whatever happens to one round
                log.exception("notifier error")

    def _write(self, change: Callable[[sqlite3.Connection], Any]) -> None:
        """Apply ``change`` to the store now, or on a later round if it is unavailable."""
        try:
            with self.store.connect() as conn:
                change(conn)
        except StoreUnavailable as exc:
            log.warning("job store unavailable, a notification record waits: %s", exc)
            with self._lock:
                self._unwritten.append(change)

    def _flush(self) -> None:
        """Write the records the store refused earlier, oldest first."""
        with self._lock:
            waiting, self._unwritten = self._unwritten, []
        for i, change in enumerate(waiting):
            try:
                with self.store.connect() as conn:
                    change(conn)
            except StoreUnavailable:
                with self._lock:
                    self._unwritten[:0] = waiting[i:]
                raise

    def _round(self) -> None:
        self._flush()
        senders = self._senders
        with self._lock:
            free = SENDERS - len(self._sending)
        if senders is None or free <= 0:
            return
        with self.store.connect() as conn:
            due = outbox.claim_due(conn, time.time(), free)
        for delivery in due:
            with self._lock:
                self._sending.add(delivery["id"])
            try:
                senders.submit(self._attempt, delivery)
            except RuntimeError:  # shut down meanwhile: the next start resumes it
                return

    def _attempt(self, delivery: dict[str, Any]) -> None:
        try:
            self._send(delivery)
        except Exception:
            log.exception("notification %s", delivery["id"])
        finally:
            with self._lock:
                self._sending.discard(delivery["id"])
            self._wake.set()

    def _send(self, delivery: dict[str, Any]) -> None:
        number = int(delivery["attempts"]) + 1
        started = time.time()
        status: int | None = None
        error: str | None = None
        body = str(delivery["event"]).encode()
        try:
            with self.store.connect() as conn:
                secret = outbox.secret_of(conn, delivery["owner"])
        except StoreUnavailable as exc:  # nothing was sent: due again on a later round
            log.warning("job store unavailable, notification %s waits: %s", delivery["id"], exc)
            self._write(lambda conn: outbox.release(conn, delivery["id"]))
            return
        try:
            if secret is None:
                raise WebhookError("the key has no signing secret (POST /v1/webhook-secret)")
            destination = check_destination(delivery["url"], self.settings)
            headers = {
                "Content-Type": "application/json",
                "User-Agent": self._agent,
                **signed_headers(secret, delivery["id"], body),
            }
            status = post(destination, body, headers, timeout=self.settings.webhook_timeout)
            if not 200 <= status < 300:
                error = f"the receiver answered {status}"
        except CallbackRefused as exc:
            error = f"destination refused: {exc.reason}"
        except WebhookError as exc:
            error = str(exc)
        except (OSError, http.client.HTTPException) as exc:
            error = f"{type(exc).__name__}: {exc}" if str(exc) else type(exc).__name__
        delays = self.settings.webhook_retry_delays
        next_at = time.time() + delays[number - 1] if number <= len(delays) else None
        seconds = time.time() - started
        self._write(
            lambda conn: outbox.record_attempt(
                conn,
                delivery["id"],
                at=started,
                seconds=seconds,
                status_code=status,
                error=error,
                next_at=next_at,
            )
        )
        if error is not None:
            log.info(
                "notification %s attempt %d to %s: %s",
                delivery["id"],
                number,
                delivery["url"],
                error,
            )

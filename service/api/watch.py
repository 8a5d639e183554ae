"""Waiting for a job to change, without holding a thread: the long poll and the event stream.

Worker processes write a job's progress and end straight into SQLite, so the server learns
of a change by looking: every :data:`WATCH_POLL` seconds, one short read in the thread pool,
while the waiting itself is an ``await`` on the event loop. A change is a new state, or new
progress (fraction or stage).

- :func:`next_change`: the job as soon as it differs from the one given, or as it is when
  the time is up (``GET …/{job_id}?wait=S``);
- :func:`event_stream`: ``text/event-stream`` messages, one per change, ``progress`` while
  the job is active and ``end`` for its final state, after which the stream closes
  (``GET …/{job_id}/events``). Every message's data is the job, as its status route shows
  it. A comment line is sent every :data:`KEEP_ALIVE` seconds without a change, so that
  proxies keep the connection open.
"""

from __future__ import annotations

import json
import time
from collections.abc import AsyncIterator, Callable
from typing import Any

import anyio
from fastapi import HTTPException
from fastapi.concurrency import run_in_threadpool
from haarline.service.jobs.store import Store

__all__ = ["KEEP_ALIVE", "MAX_WAIT", "WATCH_POLL", "event_stream", "next_change"]

WATCH_POLL = 0.2
"""Seconds between two looks at a watched job."""

MAX_WAIT = 60.0
"""Longest long poll, in seconds (``wait`` above it is a 422)."""

KEEP_ALIVE = 15.0
"""Seconds without a change after which the event stream sends a comment line."""

RETRY_MS = 2000
"""The reconnection delay the event stream suggests to clients (``retry:``)."""


def _mark(job: dict[str, Any]) -> tuple[Any, ...]:
    return (job["state"], job["fraction"], job["stage"])


async def _look(store: Store, job_id: str) -> dict[str, Any]:
    job = await run_in_threadpool(store.get_job, job_id)
    if job is None:
        raise HTTPException(404, f"job {job_id!r} was deleted")
    return job


async def next_change(store: Store, job: dict[str, Any], timeout: float) -> dict[str, Any]:
    """The job once its state or progress differs from ``job``, or after ``timeout`` seconds.

    A job that has ended answers at once (it never changes again).
    """
    deadline = time.monotonic() + timeout
    seen = _mark(job)
    while job["state"].active and time.monotonic() < deadline:
        await anyio.sleep(min(WATCH_POLL, max(0.0, deadline - time.monotonic())))
        job = await _look(store, job["id"])
        if _mark(job) != seen:
            break
    return job


def _message(event: str, number: int, data: str) -> bytes:
    return f"id: {number}\nevent: {event}\ndata: {data}\n\n".encode()


async def event_stream(
    store: Store, job: dict[str, Any], render: Callable[[dict[str, Any]], dict[str, Any]]
) -> AsyncIterator[bytes]:
    """Server-sent events of ``job`` until it ends (``render``: a job as a JSON object)."""
    yield f"retry: {RETRY_MS}\n\n".encode()
    number, seen, quiet_since = 0, None, time.monotonic()
    while True:
        if _mark(job) != seen:
            seen, number = _mark(job), number + 1
            final = not job["state"].active
            data = json.dumps(render(job), separators=(",", ":"))
            yield _message("end" if final else "progress", number, data)
            if final:
                return
            quiet_since = time.monotonic()
        elif time.monotonic() - quiet_since >= KEEP_ALIVE:
            yield b": keep-alive\n\n"
            quiet_since = time.monotonic()
        await anyio.sleep(WATCH_POLL)
        try:
            job = await _look(store, job["id"])
        except HTTPException:  # deleted while watched: nothing more will happen
            return

"""The notification outbox: deliveries, their attempts, and each key's signing secret.

A job that has a ``callback_url`` gets one delivery when it ends (succeeded, failed or
cancelled). :func:`enqueue_end` writes it inside the same transaction as the state change
(the store calls it from every place a job ends, in the server or in a worker process), so
a job never ends without its delivery, and a delivery outlives a crash: the notifier
(:mod:`haarline.service.jobs.notify`) sends what is due, and at start-up resumes what a
stopped server left in flight.

A delivery is ``pending`` until an attempt gets a 2xx answer (``delivered``) or the retry
delays run out (``failed``); while an attempt is under way it is ``sending``, and a server
that stopped mid-attempt leaves it so: :func:`resume` makes it due again at the next start
(the receiver may then see that message twice, under one ``webhook-id``). Its body is
written once, when it is queued, and every attempt sends the same bytes under the same
message id (``webhook-id``); only the timestamp and signature change. Every attempt is
recorded with its time, duration, HTTP status or error.

Signing secrets are stored as they are (``whsec_…``): an HMAC can only be computed with the
secret itself, so unlike an API key it cannot be kept as a hash. Whoever reads the data
directory can sign notifications as this server; protect it like the page secret.

Every function takes an open connection of :meth:`Store.connect`.
"""

from __future__ import annotations

import datetime as dt
import json
import sqlite3
import time
import uuid
from typing import Any

from haarline.service.jobs.states import VERDICTS, JobState

__all__ = [
    "DELIVERED",
    "FAILED",
    "PENDING",
    "SENDING",
    "attempts_of",
    "claim_due",
    "deliveries_of",
    "end_event",
    "enqueue_end",
    "record_attempt",
    "release",
    "resume",
    "secret_created",
    "secret_of",
    "set_secret",
]

PENDING, SENDING, DELIVERED, FAILED = "pending", "sending", "delivered", "failed"
"""A delivery's status: to be sent (again), an attempt under way, answered 2xx, given up."""

_NOUN = {"analysis": "analysis", "compare": "comparison"}
_ROOT = {"analysis": "/v1/analyses", "compare": "/v1/comparisons"}


def end_event(job: dict[str, Any], state: JobState, at: float) -> dict[str, Any]:
    """The event a job's end sends: ``type``, ``timestamp`` and ``data`` (the job's facts).

    Examples
    --------
    >>> job = {"id": "a" * 32, "kind": "compare", "error": None, "cached": 0}
    >>> event = end_event(job, JobState.SUCCEEDED, 0.0)
    >>> event["type"], event["timestamp"], event["data"]["links"]["report"][:20]
    ('comparison.succeeded', '1970-01-01T00:00:00.000Z', '/v1/comparisons/aaaa')
    """
    root = f"{_ROOT[job['kind']]}/{job['id']}"
    when = dt.datetime.fromtimestamp(at, dt.UTC).isoformat(timespec="milliseconds")
    return {
        "type": f"{_NOUN[job['kind']]}.{state.value}",
        "timestamp": when.replace("+00:00", "Z"),
        "data": {
            "id": job["id"],
            "kind": job["kind"],
            "state": state.value,
            "error": None if state is JobState.SUCCEEDED else job["error"],
            "cached": bool(job["cached"]),
            "labels": json.loads(job.get("labels") or "{}"),
            "policy": VERDICTS.get(job.get("policy") or ""),
            "links": {
                "self": root,
                "report": f"{root}/report",
                "summary": f"{root}/summary",
                "plots": f"{root}/plots",
                "deliveries": f"{root}/deliveries",
            },
        },
    }


def enqueue_end(conn: sqlite3.Connection, job_id: str, state: JobState, at: float) -> None:
    """Queue the notification of a job's end, inside the caller's transaction.

    Call it right after the job's row took its final ``state`` (and its ``error``); a job
    without a ``callback_url`` gets nothing.
    """
    row = conn.execute(
        "SELECT id, owner, kind, error, cached, callback_url, labels, policy FROM jobs "
        "WHERE id = ?",
        (job_id,),
    ).fetchone()
    if row is None or row["callback_url"] is None:
        return
    job = dict(row)
    body = json.dumps(end_event(job, state, at), separators=(",", ":"))
    conn.execute(
        "INSERT INTO deliveries (id, job_id, owner, kind, state, url, event, status, next_at,"
        " created, updated) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
        (
            f"msg_{uuid.uuid4().hex}",
            job_id,
            job["owner"],
            job["kind"],
            state,
            job["callback_url"],
            body,
            PENDING,
            at,
            at,
            at,
        ),
    )


def claim_due(conn: sqlite3.Connection, now: float, limit: int) -> list[dict[str, Any]]:
    """Up to ``limit`` pending deliveries due by ``now``, oldest first, marked ``sending``."""
    conn.execute("BEGIN IMMEDIATE")
    rows = conn.execute(
        "SELECT * FROM deliveries WHERE status = ? AND next_at <= ? ORDER BY next_at LIMIT ?",
        (PENDING, now, limit),
    ).fetchall()
    conn.executemany(
        "UPDATE deliveries SET status = ? WHERE id = ?", [(SENDING, r["id"]) for r in rows]
    )
    conn.execute("COMMIT")
    return [dict(r) for r in rows]


def record_attempt(
    conn: sqlite3.Connection,
    delivery_id: str,
    *,
    at: float,
    seconds: float,
    status_code: int | None,
    error: str | None,
    next_at: float | None,
) -> str:
    """Store one attempt and the delivery's new status; return the status.

    A 2xx ``status_code`` delivers it; otherwise it is sent again at ``next_at``, or, when
    ``next_at`` is ``None`` (no delay left), it has failed.
    """
    ok = status_code is not None and 200 <= status_code < 300
    status = DELIVERED if ok else (PENDING if next_at is not None else FAILED)
    conn.execute("BEGIN IMMEDIATE")
    row = conn.execute("SELECT attempts FROM deliveries WHERE id = ?", (delivery_id,)).fetchone()
    if row is None:  # the job was deleted meanwhile, and its deliveries with it
        conn.execute("ROLLBACK")
        return FAILED
    number = int(row["attempts"]) + 1
    conn.execute(
        "INSERT INTO delivery_attempts (delivery_id, attempt, at, seconds, status_code, error)"
        " VALUES (?, ?, ?, ?, ?, ?)",
        (delivery_id, number, at, seconds, status_code, error),
    )
    conn.execute(
        "UPDATE deliveries SET attempts = ?, status = ?, next_at = ?, updated = ? WHERE id = ?",
        (number, status, next_at if status == PENDING else None, time.time(), delivery_id),
    )
    conn.execute("COMMIT")
    return status


def release(conn: sqlite3.Connection, delivery_id: str) -> None:
    """A delivery whose attempt never started is ``pending`` again, due as it was."""
    conn.execute(
        "UPDATE deliveries SET status = ? WHERE id = ? AND status = ?",
        (PENDING, delivery_id, SENDING),
    )


def resume(conn: sqlite3.Connection, now: float) -> int:
    """At start-up: a delivery left ``sending`` by a stopped server is due again now.

    Returns how many were resumed. Pending deliveries keep their time.
    """
    cur = conn.execute(
        "UPDATE deliveries SET status = ?, next_at = ? WHERE status = ?", (PENDING, now, SENDING)
    )
    return cur.rowcount


def deliveries_of(conn: sqlite3.Connection, job_id: str) -> list[dict[str, Any]]:
    """A job's deliveries (oldest first), each with its ``attempts``, oldest first."""
    rows = conn.execute(
        "SELECT * FROM deliveries WHERE job_id = ? ORDER BY created, rowid", (job_id,)
    ).fetchall()
    out = []
    for r in rows:
        delivery = dict(r)
        delivery["attempts"] = attempts_of(conn, delivery["id"])
        out.append(delivery)
    return out


def attempts_of(conn: sqlite3.Connection, delivery_id: str) -> list[dict[str, Any]]:
    """One delivery's attempts, in order."""
    rows = conn.execute(
        "SELECT attempt, at, seconds, status_code, error FROM delivery_attempts"
        " WHERE delivery_id = ? ORDER BY attempt",
        (delivery_id,),
    ).fetchall()
    return [dict(r) for r in rows]


def set_secret(conn: sqlite3.Connection, owner: str, secret: str) -> float:
    """Store (or replace) an owner's signing secret; return its creation time."""
    now = time.time()
    conn.execute(
        "INSERT INTO webhook_secrets (owner, secret, created) VALUES (?, ?, ?) "
        "ON CONFLICT(owner) DO UPDATE SET secret = excluded.secret, created = excluded.created",
        (owner, secret, now),
    )
    return now


def secret_of(conn: sqlite3.Connection, owner: str) -> str | None:
    """An owner's signing secret, if one was created."""
    row = conn.execute("SELECT secret FROM webhook_secrets WHERE owner = ?", (owner,)).fetchone()
    return None if row is None else str(row["secret"])


def secret_created(conn: sqlite3.Connection, owner: str) -> float | None:
    """When an owner's signing secret was created, if it was."""
    row = conn.execute("SELECT created FROM webhook_secrets WHERE owner = ?", (owner,)).fetchone()
    return None if row is None else float(row["created"])

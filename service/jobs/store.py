"""The job store: one SQLite file (WAL mode) with keys, jobs, state changes, results, PNGs.

Every call opens its own short-lived connection, so the store is safe to use from the
event loop's threads and from worker processes alike; SQLite's locking serialises the
writes. A database that is locked for longer than the busy timeout, or a full disk, raises
:class:`StoreUnavailable`, which the service answers with 503.

Job states are :class:`~haarline.service.jobs.states.JobState` members, bound as SQL
parameters. Every state change is recorded in ``events`` with its time; a job that ends
with a ``callback_url`` queues its notification in the same transaction
(:func:`haarline.service.jobs.outbox.enqueue_end`). A finished job is
deleted only on request (``DELETE`` of its URL) or by retention
(``HAARLINE_RETENTION_DAYS``), with its events, result and PNGs. The tables and their
migrations are in :mod:`haarline.service.jobs.migrations`.
"""

from __future__ import annotations

import json
import re
import secrets
import shutil
import sqlite3
import time
import uuid
from collections.abc import Iterator, Sequence
from contextlib import AbstractContextManager, contextmanager
from pathlib import Path
from typing import Any

from haarline.report.policy import worst_status
from haarline.service.errors import StoreUnavailable
from haarline.service.jobs.migrations import migrate
from haarline.service.jobs.outbox import enqueue_end
from haarline.service.jobs.states import ACTIVE, FINAL, JobState

__all__ = ["JOB_ID", "JobState", "Store", "StoreUnavailable", "is_job_id"]

JOB_ID = re.compile(r"[0-9a-f]{32}")
"""The one rule for a job id: 32 lowercase hex digits (``uuid4().hex``)."""


def is_job_id(text: str) -> bool:
    """Whether ``text`` can be a job id (anything else is answered 404 without a look-up).

    Examples
    --------
    >>> is_job_id("0" * 32), is_job_id("0" * 31 + "G"), is_job_id("٠" * 32)
    (True, False, False)
    """
    return JOB_ID.fullmatch(text) is not None


def _marks(states: tuple[JobState, ...]) -> str:
    return ", ".join("?" * len(states))


class Store:
    """Access to the SQLite job store at ``path``."""

    def __init__(self, path: str | Path, *, timeout: float = 5.0):
        self.path = str(path)
        self.timeout = timeout

    @contextmanager
    def _connect(self) -> Iterator[sqlite3.Connection]:
        try:
            conn = sqlite3.connect(self.path, timeout=self.timeout, isolation_level=None)
        except sqlite3.Error as exc:
            raise StoreUnavailable(f"cannot open the job store: {exc}") from None
        try:
            conn.row_factory = sqlite3.Row
            conn.execute(f"PRAGMA busy_timeout = {int(self.timeout * 1000)}")
            yield conn
        except sqlite3.OperationalError as exc:
            if getattr(exc, "sqlite_errorname", "") == "SQLITE_FULL":
                raise StoreUnavailable(
                    "the job store is unavailable: the disk of the data directory is full "
                    f"({exc}); retry once space is freed"
                ) from None
            raise StoreUnavailable(f"the job store is unavailable: {exc}") from None
        except sqlite3.DatabaseError as exc:
            raise StoreUnavailable(f"the job store is damaged or unreadable: {exc}") from None
        finally:
            conn.close()

    def connect(self) -> AbstractContextManager[sqlite3.Connection]:
        """A connection (autocommit, rows by name) for modules with tables of their own.

        Errors are translated as in every store call (:class:`StoreUnavailable`).
        """
        return self._connect()

    def initialize(self) -> list[int]:
        """Switch the file to WAL mode and bring its schema up to date; return the migrations run.

        Raises
        ------
        StoreTooNew
            The file was written by a newer release.
        StoreUnavailable
            The file cannot be opened, written or migrated (nothing of a failed migration
            is kept).
        """
        with self._connect() as conn:
            conn.execute("PRAGMA journal_mode = WAL")
            return migrate(conn)

    def ping(self) -> None:
        """Raise :class:`StoreUnavailable` unless the database answers a write."""
        with self._connect() as conn:
            conn.execute("BEGIN IMMEDIATE")
            conn.execute("SELECT count(*) FROM jobs").fetchone()
            conn.execute("ROLLBACK")

    def free_bytes(self) -> int:
        """Free bytes on the file system of the database's directory (for ``/readyz``)."""
        try:
            return shutil.disk_usage(Path(self.path).parent).free
        except OSError as exc:
            raise StoreUnavailable(
                f"cannot see the free space of the job store's directory: {exc.strerror}"
            ) from None

    # --- keys -------------------------------------------------------------------------------

    def add_key(self, key_id: str, name: str, digest: str) -> None:
        """Store a key's hash (never the key)."""
        with self._connect() as conn:
            conn.execute(
                "INSERT INTO keys (id, name, hash, created) VALUES (?, ?, ?, ?)",
                (key_id, name, digest, time.time()),
            )

    def key_active(self, key_id: str) -> bool:
        """Whether ``key_id`` names a key that is not revoked."""
        return self.key_hash(key_id) is not None

    def key_hash(self, key_id: str) -> str | None:
        """The stored hash of an active key, or ``None``."""
        with self._connect() as conn:
            row = conn.execute(
                "SELECT hash FROM keys WHERE id = ? AND revoked IS NULL", (key_id,)
            ).fetchone()
        return None if row is None else str(row["hash"])

    def list_keys(self) -> list[dict[str, Any]]:
        """Every key: id, name, created, revoked (no hashes)."""
        with self._connect() as conn:
            rows = conn.execute("SELECT id, name, created, revoked FROM keys ORDER BY created")
            return [dict(r) for r in rows]

    def revoke_key(self, key_id: str) -> bool:
        """Revoke a key; ``False`` if there is no such active key."""
        with self._connect() as conn:
            cur = conn.execute(
                "UPDATE keys SET revoked = ? WHERE id = ? AND revoked IS NULL",
                (time.time(), key_id),
            )
            return cur.rowcount == 1

    # --- jobs -------------------------------------------------------------------------------

    def create_job(
        self,
        *,
        owner: str,
        kind: str,
        request: dict[str, Any],
        request_hash: str,
        idempotency_key: str | None = None,
        labels: dict[str, str] | None = None,
        callback_url: str | None = None,
        work: float | None = None,
    ) -> tuple[dict[str, Any], bool]:
        """Insert a queued job; with an idempotency key already used, return the old one.

        ``callback_url`` is notified when the job ends; ``work`` is its estimated work
        (admission's), which the ``Retry-After`` of a full queue reads.

        Returns
        -------
        (job, created)
        """
        now = time.time()
        job_id = uuid.uuid4().hex
        with self._connect() as conn:
            conn.execute("BEGIN IMMEDIATE")
            if idempotency_key is not None:
                row = conn.execute(
                    "SELECT * FROM jobs WHERE owner = ? AND idempotency_key = ?",
                    (owner, idempotency_key),
                ).fetchone()
                if row is not None:
                    conn.execute("COMMIT")
                    return _job(row), False
            labels = dict(sorted((labels or {}).items()))
            conn.execute(
                "INSERT INTO jobs (id, owner, kind, request, request_hash, idempotency_key, "
                "state, created, updated, labels, callback_url, work) "
                "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
                (
                    job_id,
                    owner,
                    kind,
                    json.dumps(request),
                    request_hash,
                    idempotency_key,
                    JobState.QUEUED,
                    now,
                    now,
                    json.dumps(labels),
                    callback_url,
                    work,
                ),
            )
            conn.executemany(
                "INSERT INTO job_labels (job_id, key, value) VALUES (?, ?, ?)",
                [(job_id, k, v) for k, v in labels.items()],
            )
            conn.execute(
                "INSERT INTO events (job_id, state, at) VALUES (?, ?, ?)",
                (job_id, JobState.QUEUED, now),
            )
            conn.execute("COMMIT")
        job = self.get_job(job_id)
        if job is None:  # deleted between the insert and the read: not a job to answer with
            raise StoreUnavailable(f"job {job_id} vanished while it was being created")
        return job, True

    def find_idempotent(self, owner: str, idempotency_key: str) -> dict[str, Any] | None:
        """The job an owner created with this idempotency key, if any."""
        with self._connect() as conn:
            row = conn.execute(
                "SELECT * FROM jobs WHERE owner = ? AND idempotency_key = ?",
                (owner, idempotency_key),
            ).fetchone()
        return None if row is None else _job(row)

    def copy_result(self, source_id: str, job_id: str) -> bool:
        """Answer ``job_id`` with the stored result of an identical finished request."""
        now = time.time()
        with self._connect() as conn:
            conn.execute("BEGIN IMMEDIATE")
            row = conn.execute(
                "SELECT report, markdown FROM results WHERE job_id = ?", (source_id,)
            ).fetchone()
            if row is None:
                conn.execute("ROLLBACK")
                return False
            conn.execute(
                "INSERT OR REPLACE INTO results (job_id, report, markdown) VALUES (?, ?, ?)",
                (job_id, row["report"], row["markdown"]),
            )
            conn.execute(
                "INSERT OR REPLACE INTO artifacts (job_id, name, content) "
                "SELECT ?, name, content FROM artifacts WHERE job_id = ?",
                (job_id, source_id),
            )
            conn.execute(
                "UPDATE jobs SET state = ?, fraction = 1, stage = 'done', cached = 1, "
                "updated = ?, policy = (SELECT policy FROM jobs WHERE id = ?) WHERE id = ?",
                (JobState.SUCCEEDED, now, source_id, job_id),
            )
            conn.execute(
                "INSERT INTO events (job_id, state, at, detail) VALUES (?, ?, ?, ?)",
                (
                    job_id,
                    JobState.SUCCEEDED,
                    now,
                    "answered from the stored result of an identical request",
                ),
            )
            enqueue_end(conn, job_id, JobState.SUCCEEDED, now)
            conn.execute("COMMIT")
        return True

    def find_finished(self, request_hash: str, *, owner: str | None) -> str | None:
        """Id of a succeeded job with this request hash, if any.

        Only ``owner``'s jobs count, unless ``owner`` is ``None`` (every key's jobs: the
        shared cache, which tells a key that another key ran the same request).
        """
        with self._connect() as conn:
            row = conn.execute(
                "SELECT id FROM jobs WHERE request_hash = ? AND state = ? "
                "AND (? IS NULL OR owner = ?) ORDER BY created LIMIT 1",
                (request_hash, JobState.SUCCEEDED, owner, owner),
            ).fetchone()
        return None if row is None else str(row["id"])

    def get_job(self, job_id: str, owner: str | None = None) -> dict[str, Any] | None:
        """A job by id (and, when given, only if ``owner`` owns it)."""
        with self._connect() as conn:
            row = conn.execute("SELECT * FROM jobs WHERE id = ?", (job_id,)).fetchone()
            if row is None or (owner is not None and row["owner"] != owner):
                return None
            job = _job(row)
            job["events"] = [
                dict(e)
                for e in conn.execute(
                    "SELECT state, at, detail FROM events WHERE job_id = ? ORDER BY rowid",
                    (job_id,),
                )
            ]
        return job

    def list_jobs(
        self,
        owner: str,
        *,
        kind: str | None = None,
        limit: int = 50,
        labels: Sequence[tuple[str, str | None]] = (),
        states: Sequence[JobState] = (),
        before: tuple[float, str] | None = None,
    ) -> tuple[list[dict[str, Any]], int]:
        """An owner's jobs newest first, and how many match in all.

        ``labels`` are ``(key, value)`` pairs every job must carry (``value`` ``None``: any
        value); ``states`` the states allowed (empty: all); ``before`` a cursor
        ``(created, id)``: only jobs strictly after it in the order (newest first, ties by
        id), so pages never repeat or skip a job while new ones arrive.
        """
        where = ["owner = ?", "(? IS NULL OR kind = ?)"]
        args: list[Any] = [owner, kind, kind]
        for key, value in labels:
            where.append(
                "EXISTS (SELECT 1 FROM job_labels l WHERE l.job_id = jobs.id AND l.key = ?"
                + (" AND l.value = ?)" if value is not None else ")")
            )
            args += [key] if value is None else [key, value]
        if states:
            where.append(f"state IN ({_marks(tuple(states))})")
            args += list(states)
        condition = " AND ".join(where)
        page_condition, page_args = condition, list(args)
        if before is not None:
            page_condition += " AND (created < ? OR (created = ? AND id < ?))"
            page_args += [before[0], before[0], before[1]]
        with self._connect() as conn:
            rows = conn.execute(
                f"SELECT * FROM jobs WHERE {page_condition} ORDER BY created DESC, id DESC LIMIT ?",
                (*page_args, limit),
            ).fetchall()
            total = conn.execute(f"SELECT count(*) FROM jobs WHERE {condition}", args).fetchone()
        return [_job(r) for r in rows], int(total[0])

    def active_count(self, owner: str) -> int:
        """Queued or running jobs of an owner."""
        with self._connect() as conn:
            row = conn.execute(
                f"SELECT count(*) FROM jobs WHERE owner = ? AND state IN ({_marks(ACTIVE)})",
                (owner, *ACTIVE),
            ).fetchone()
        return int(row[0])

    def queued_count(self) -> int:
        """Queued jobs of every owner."""
        with self._connect() as conn:
            row = conn.execute(
                "SELECT count(*) FROM jobs WHERE state = ?", (JobState.QUEUED,)
            ).fetchone()
        return int(row[0])

    def mean_run_seconds(self, recent: int = 20) -> float | None:
        """Mean run time of the ``recent`` newest succeeded jobs that ran; ``None`` if none.

        A job's run time is from its last ``running`` event to its ``succeeded`` event, so
        time spent queued does not count; jobs answered from the store never ran and do
        not count either.
        """
        with self._connect() as conn:
            row = conn.execute(
                "SELECT avg(done - started) FROM ("
                " SELECT (SELECT max(at) FROM events WHERE job_id = j.id AND state = ?)"
                "   AS started,"
                " (SELECT max(at) FROM events WHERE job_id = j.id AND state = ?)"
                "   AS done"
                " FROM jobs AS j WHERE j.state = ? AND j.cached = 0"
                " ORDER BY j.created DESC LIMIT ?"
                ") WHERE started IS NOT NULL AND done IS NOT NULL",
                (JobState.RUNNING, JobState.SUCCEEDED, JobState.SUCCEEDED, recent),
            ).fetchone()
        return None if row[0] is None else float(row[0])

    def queued(self, limit: int) -> list[str]:
        """Ids of queued jobs, oldest first."""
        with self._connect() as conn:
            rows = conn.execute(
                "SELECT id FROM jobs WHERE state = ? ORDER BY created LIMIT ?",
                (JobState.QUEUED, limit),
            ).fetchall()
        return [str(r["id"]) for r in rows]

    def requeue_interrupted(self) -> list[str]:
        """After a restart: put every running job back in the queue; return all active ids."""
        now = time.time()
        with self._connect() as conn:
            conn.execute("BEGIN IMMEDIATE")
            rows = conn.execute(
                "SELECT id FROM jobs WHERE state = ?", (JobState.RUNNING,)
            ).fetchall()
            for r in rows:
                conn.execute(
                    "UPDATE jobs SET state = ?, fraction = 0, stage = '', updated = ? WHERE id = ?",
                    (JobState.QUEUED, now, r["id"]),
                )
                conn.execute(
                    "INSERT INTO events (job_id, state, at, detail) VALUES (?, ?, ?, ?)",
                    (r["id"], JobState.QUEUED, now, "requeued after a restart"),
                )
            active = conn.execute(
                f"SELECT id FROM jobs WHERE state IN ({_marks(ACTIVE)}) ORDER BY created", ACTIVE
            ).fetchall()
            conn.execute("COMMIT")
        return [str(r["id"]) for r in active]

    def claim(self, job_id: str) -> dict[str, Any] | None:
        """Move a queued job to running (one attempt more); ``None`` if it is not queued."""
        now = time.time()
        with self._connect() as conn:
            conn.execute("BEGIN IMMEDIATE")
            row = conn.execute("SELECT * FROM jobs WHERE id = ?", (job_id,)).fetchone()
            if row is None or row["state"] != JobState.QUEUED or row["cancel"]:
                conn.execute("ROLLBACK")
                return None
            conn.execute(
                "UPDATE jobs SET state = ?, attempts = attempts + 1, stage = 'starting',"
                " updated = ? WHERE id = ?",
                (JobState.RUNNING, now, job_id),
            )
            conn.execute(
                "INSERT INTO events (job_id, state, at) VALUES (?, ?, ?)",
                (job_id, JobState.RUNNING, now),
            )
            conn.execute("COMMIT")
        return _job(row)

    def set_progress(self, job_id: str, fraction: float, stage: str) -> bool:
        """Record progress; return whether a cancel was requested."""
        with self._connect() as conn:
            conn.execute(
                "UPDATE jobs SET fraction = ?, stage = ?, updated = ? WHERE id = ? AND state = ?",
                (fraction, stage, time.time(), job_id, JobState.RUNNING),
            )
            row = conn.execute("SELECT cancel FROM jobs WHERE id = ?", (job_id,)).fetchone()
        return bool(row and row["cancel"])

    def finish(
        self,
        job_id: str,
        *,
        report: dict[str, Any],
        markdown: str,
        artifacts: dict[str, bytes],
    ) -> None:
        """Store the result and mark the job succeeded, in one transaction."""
        now = time.time()
        with self._connect() as conn:
            conn.execute("BEGIN IMMEDIATE")
            conn.execute(
                "INSERT OR REPLACE INTO results (job_id, report, markdown) VALUES (?, ?, ?)",
                (job_id, json.dumps(report, allow_nan=False), markdown),
            )
            for name, content in artifacts.items():
                conn.execute(
                    "INSERT OR REPLACE INTO artifacts (job_id, name, content) VALUES (?, ?, ?)",
                    (job_id, name, content),
                )
            status = _policy_status(report)
            cur = conn.execute(
                "UPDATE jobs SET state = ?, fraction = 1, stage = 'done', "
                "updated = ?, policy = ? WHERE id = ? AND state = ?",
                (JobState.SUCCEEDED, now, status, job_id, JobState.RUNNING),
            )
            conn.execute(
                "INSERT INTO events (job_id, state, at) VALUES (?, ?, ?)",
                (job_id, JobState.SUCCEEDED, now),
            )
            if cur.rowcount:
                enqueue_end(conn, job_id, JobState.SUCCEEDED, now)
            conn.execute("COMMIT")

    def mark(self, job_id: str, state: JobState, *, error: str | None = None) -> None:
        """Move an active job to ``failed``, ``cancelled`` or back to ``queued``."""
        if state not in (JobState.FAILED, JobState.CANCELLED, JobState.QUEUED):
            raise ValueError(f"a job is not marked {state}; use claim() or finish()")
        now = time.time()
        with self._connect() as conn:
            conn.execute("BEGIN IMMEDIATE")
            cur = conn.execute(
                "UPDATE jobs SET state = ?, error = ?, updated = ? WHERE id = ? "
                f"AND state IN ({_marks(ACTIVE)})",
                (state, error, now, job_id, *ACTIVE),
            )
            if cur.rowcount:
                conn.execute(
                    "INSERT INTO events (job_id, state, at, detail) VALUES (?, ?, ?, ?)",
                    (job_id, state, now, error),
                )
                if state in FINAL:
                    enqueue_end(conn, job_id, state, now)
            conn.execute("COMMIT")

    def request_cancel(self, job_id: str) -> JobState | None:
        """Ask a job to stop; a queued job is cancelled at once.

        Returns its state after, or ``None`` when there is no such job.
        """
        now = time.time()
        with self._connect() as conn:
            conn.execute("BEGIN IMMEDIATE")
            row = conn.execute("SELECT state FROM jobs WHERE id = ?", (job_id,)).fetchone()
            if row is None:
                conn.execute("ROLLBACK")
                return None
            state = JobState(row["state"])
            if state is JobState.QUEUED:
                conn.execute(
                    "UPDATE jobs SET state = ?, cancel = 1, updated = ? WHERE id = ?",
                    (JobState.CANCELLED, now, job_id),
                )
                conn.execute(
                    "INSERT INTO events (job_id, state, at, detail) VALUES (?, ?, ?, ?)",
                    (job_id, JobState.CANCELLED, now, "cancelled before it started"),
                )
                enqueue_end(conn, job_id, JobState.CANCELLED, now)
                state = JobState.CANCELLED
            elif state is JobState.RUNNING:
                conn.execute("UPDATE jobs SET cancel = 1, updated = ? WHERE id = ?", (now, job_id))
            conn.execute("COMMIT")
        return state

    def delete_finished(self, job_id: str) -> bool:
        """Delete a finished job with its events, result and PNGs; ``False`` if not finished.

        An active job is never deleted (cancel it first); its share links stop working
        because there is no job left to open.
        """
        with self._connect() as conn:
            conn.execute("BEGIN IMMEDIATE")
            cur = conn.execute(
                f"DELETE FROM jobs WHERE id = ? AND state IN ({_marks(FINAL)})", (job_id, *FINAL)
            )
            if cur.rowcount:
                _delete_outputs(conn, [job_id])
            conn.execute("COMMIT")
        return cur.rowcount == 1

    def delete_older(self, cutoff: float, *, batch: int = 500) -> int:
        """Delete up to ``batch`` finished jobs last changed before ``cutoff`` (unix time).

        Returns how many were deleted; retention calls it until it returns less than
        ``batch``, so no single transaction holds the write lock for long.
        """
        with self._connect() as conn:
            conn.execute("BEGIN IMMEDIATE")
            rows = conn.execute(
                f"SELECT id FROM jobs WHERE state IN ({_marks(FINAL)}) AND updated < ? LIMIT ?",
                (*FINAL, cutoff, batch),
            ).fetchall()
            ids = [str(r["id"]) for r in rows]
            conn.executemany("DELETE FROM jobs WHERE id = ?", [(i,) for i in ids])
            _delete_outputs(conn, ids)
            conn.execute("COMMIT")
        return len(ids)

    # --- share links ------------------------------------------------------------------------

    def add_link(self, job_id: str, owner: str, expires: int) -> str:
        """Record a new share link of a job; return its id."""
        link_id = secrets.token_hex(8)
        with self._connect() as conn:
            conn.execute(
                "INSERT INTO links (id, job_id, owner, created, expires) VALUES (?, ?, ?, ?, ?)",
                (link_id, job_id, owner, time.time(), expires),
            )
        return link_id

    def links(self, job_id: str) -> list[dict[str, Any]]:
        """A job's share links, oldest first (revoked and expired ones too)."""
        with self._connect() as conn:
            rows = conn.execute(
                "SELECT id, created, expires, revoked FROM links WHERE job_id = ? "
                "ORDER BY created, id",
                (job_id,),
            ).fetchall()
        return [dict(r) for r in rows]

    def link_open(self, link_id: str, job_id: str) -> bool:
        """Whether a link of this job exists and has not been revoked (expiry is signed)."""
        with self._connect() as conn:
            row = conn.execute(
                "SELECT 1 FROM links WHERE id = ? AND job_id = ? AND revoked IS NULL",
                (link_id, job_id),
            ).fetchone()
        return row is not None

    def revoke_link(self, link_id: str, job_id: str) -> bool:
        """Revoke a link; ``False`` if the job has no such link not yet revoked."""
        with self._connect() as conn:
            cur = conn.execute(
                "UPDATE links SET revoked = ? WHERE id = ? AND job_id = ? AND revoked IS NULL",
                (time.time(), link_id, job_id),
            )
        return cur.rowcount == 1

    def result(self, job_id: str) -> tuple[dict[str, Any], str] | None:
        """The stored report and Markdown of a finished job."""
        with self._connect() as conn:
            row = conn.execute(
                "SELECT report, markdown FROM results WHERE job_id = ?", (job_id,)
            ).fetchone()
        return None if row is None else (json.loads(row["report"]), str(row["markdown"]))

    def artifact_names(self, job_id: str) -> list[str]:
        """Names of a job's stored PNGs."""
        with self._connect() as conn:
            rows = conn.execute(
                "SELECT name FROM artifacts WHERE job_id = ? ORDER BY name", (job_id,)
            ).fetchall()
        return [str(r["name"]) for r in rows]

    def artifact(self, job_id: str, name: str) -> bytes | None:
        """One stored PNG."""
        with self._connect() as conn:
            row = conn.execute(
                "SELECT content FROM artifacts WHERE job_id = ? AND name = ?", (job_id, name)
            ).fetchone()
        return None if row is None else bytes(row["content"])


def _job(row: sqlite3.Row) -> dict[str, Any]:
    job = dict(row)
    job["state"] = JobState(job["state"])
    job["request"] = json.loads(job["request"])
    job["cancel"] = bool(job["cancel"])
    job["cached"] = bool(job["cached"])
    job["labels"] = json.loads(job.get("labels") or "{}")
    return job


def _policy_status(result: dict[str, Any]) -> str | None:
    """A report's policy status, or a comparison's worst over its circuits (or ``None``)."""
    policy = result.get("policy")
    if isinstance(policy, dict):
        return str(policy["status"])
    return worst_status(row["policy"] for row in result.get("ranking") or [])


def _delete_outputs(conn: sqlite3.Connection, ids: list[str]) -> None:
    """Delete what belongs to deleted jobs (inside the caller's transaction).

    A job's notifications go with it, a pending one too (its attempts are not made).
    """
    conn.executemany(
        "DELETE FROM delivery_attempts WHERE delivery_id IN "
        "(SELECT id FROM deliveries WHERE job_id = ?)",
        [(i,) for i in ids],
    )
    for table in ("events", "results", "artifacts", "deliveries", "job_labels", "links"):
        conn.executemany(f"DELETE FROM {table} WHERE job_id = ?", [(i,) for i in ids])

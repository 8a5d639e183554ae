"""The job store's schema, as an ordered list of migrations.

The database's ``PRAGMA user_version`` is the number of migrations applied to it. At
start-up :func:`migrate` runs every later migration, in order, inside one transaction
(``BEGIN IMMEDIATE``, so two processes starting on one data directory take turns and the
second finds the work done), and sets ``user_version`` in that same transaction: a
migration that fails leaves the file as it was. A file written by a newer release (a
``user_version`` above the last migration here) is refused rather than guessed at.

Migration 1 is the schema that releases before migrations created (with
``CREATE … IF NOT EXISTS``), so their files, at ``user_version`` 0, take it without a
change and then the later ones. To change the schema, append a migration; never edit one
that has shipped. ``tests/test_store_migrations.py`` opens a file written by the release
before migrations and finds every job, result and plot after the upgrade.
"""

from __future__ import annotations

import sqlite3
from dataclasses import dataclass

from haarline.service.errors import StoreTooNew

__all__ = ["MIGRATIONS", "Migration", "migrate", "schema_version"]


@dataclass(frozen=True)
class Migration:
    """One step of the schema: its number (its ``user_version`` after), purpose, SQL."""

    version: int
    purpose: str
    statements: tuple[str, ...]


MIGRATIONS: tuple[Migration, ...] = (
    Migration(
        1,
        "keys, jobs, state changes, results and PNGs (the schema before migrations)",
        (
            "CREATE TABLE IF NOT EXISTS keys ("
            " id TEXT PRIMARY KEY, name TEXT NOT NULL, hash TEXT NOT NULL,"
            " created REAL NOT NULL, revoked REAL)",
            "CREATE TABLE IF NOT EXISTS jobs ("
            " id TEXT PRIMARY KEY, owner TEXT NOT NULL, kind TEXT NOT NULL,"
            " request TEXT NOT NULL, request_hash TEXT NOT NULL,"
            " idempotency_key TEXT, state TEXT NOT NULL, fraction REAL NOT NULL DEFAULT 0,"
            " stage TEXT NOT NULL DEFAULT '', error TEXT, cancel INTEGER NOT NULL DEFAULT 0,"
            " attempts INTEGER NOT NULL DEFAULT 0, cached INTEGER NOT NULL DEFAULT 0,"
            " created REAL NOT NULL, updated REAL NOT NULL)",
            "CREATE UNIQUE INDEX IF NOT EXISTS jobs_idempotency"
            " ON jobs(owner, idempotency_key) WHERE idempotency_key IS NOT NULL",
            "CREATE INDEX IF NOT EXISTS jobs_state ON jobs(state, created)",
            "CREATE INDEX IF NOT EXISTS jobs_hash ON jobs(request_hash, state)",
            "CREATE TABLE IF NOT EXISTS events ("
            " job_id TEXT NOT NULL, state TEXT NOT NULL, at REAL NOT NULL, detail TEXT)",
            "CREATE INDEX IF NOT EXISTS events_job ON events(job_id)",
            "CREATE TABLE IF NOT EXISTS results ("
            " job_id TEXT PRIMARY KEY, report TEXT NOT NULL, markdown TEXT NOT NULL)",
            "CREATE TABLE IF NOT EXISTS artifacts ("
            " job_id TEXT NOT NULL, name TEXT NOT NULL, content BLOB NOT NULL,"
            " PRIMARY KEY (job_id, name))",
        ),
    ),
    Migration(
        2,
        "a job's owner and request hash together, for the per-key result cache; finished "
        "jobs by age, for retention",
        (
            "CREATE INDEX jobs_owner_hash ON jobs(owner, request_hash, state)",
            "CREATE INDEX jobs_updated ON jobs(state, updated)",
        ),
    ),
    Migration(
        3,
        "notifications: a job's callback URL, each key's signing secret, the outbox of "
        "notifications and every delivery attempt; a job's estimated work (for Retry-After)",
        (
            "ALTER TABLE jobs ADD COLUMN callback_url TEXT",
            "ALTER TABLE jobs ADD COLUMN work REAL",
            "CREATE TABLE webhook_secrets ("
            " owner TEXT PRIMARY KEY, secret TEXT NOT NULL, created REAL NOT NULL)",
            "CREATE TABLE deliveries ("
            " id TEXT PRIMARY KEY, job_id TEXT NOT NULL, owner TEXT NOT NULL,"
            " kind TEXT NOT NULL, state TEXT NOT NULL, url TEXT NOT NULL,"
            " event TEXT NOT NULL, status TEXT NOT NULL, attempts INTEGER NOT NULL DEFAULT 0,"
            " next_at REAL, created REAL NOT NULL, updated REAL NOT NULL)",
            "CREATE INDEX deliveries_due ON deliveries(status, next_at)",
            "CREATE INDEX deliveries_job ON deliveries(job_id)",
            "CREATE TABLE delivery_attempts ("
            " delivery_id TEXT NOT NULL, attempt INTEGER NOT NULL, at REAL NOT NULL,"
            " seconds REAL NOT NULL, status_code INTEGER, error TEXT,"
            " PRIMARY KEY (delivery_id, attempt))",
        ),
    ),
    Migration(
        4,
        "labels of a job (a column to show them, a table to find jobs by them), the policy "
        "status of a finished job, and share links that can be listed and revoked",
        (
            "ALTER TABLE jobs ADD COLUMN labels TEXT NOT NULL DEFAULT '{}'",
            "ALTER TABLE jobs ADD COLUMN policy TEXT",
            "CREATE TABLE job_labels ("
            " job_id TEXT NOT NULL, key TEXT NOT NULL, value TEXT NOT NULL,"
            " PRIMARY KEY (job_id, key))",
            "CREATE INDEX job_labels_pair ON job_labels(key, value, job_id)",
            "CREATE INDEX jobs_listing ON jobs(owner, kind, created, id)",
            "CREATE TABLE links ("
            " id TEXT PRIMARY KEY, job_id TEXT NOT NULL, owner TEXT NOT NULL,"
            " created REAL NOT NULL, expires INTEGER NOT NULL, revoked REAL)",
            "CREATE INDEX links_job ON links(job_id)",
        ),
    ),
)
"""Every migration, in the order they run; ``MIGRATIONS[i].version == i + 1``."""


def schema_version(conn: sqlite3.Connection) -> int:
    """The number of migrations applied to the database (``PRAGMA user_version``)."""
    return int(conn.execute("PRAGMA user_version").fetchone()[0])


def migrate(conn: sqlite3.Connection) -> list[int]:
    """Apply the pending migrations in one transaction; return the versions applied.

    ``conn`` must be in autocommit mode (``isolation_level=None``), outside a transaction.

    Raises
    ------
    StoreTooNew
        The database's version is above the last migration known here.
    sqlite3.Error
        A migration failed; nothing of this call is kept.
    """
    latest = MIGRATIONS[-1].version
    conn.execute("BEGIN IMMEDIATE")
    try:
        current = schema_version(conn)
        if current > latest:
            raise StoreTooNew(
                f"the job store has schema version {current}, newer than this release knows "
                f"({latest}); run the release that wrote it, or a newer one"
            )
        applied = []
        for migration in MIGRATIONS[current:]:
            for statement in migration.statements:
                conn.execute(statement)
            applied.append(migration.version)
        conn.execute(f"PRAGMA user_version = {latest}")
        conn.execute("COMMIT")
    except BaseException:
        conn.execute("ROLLBACK")
        raise
    return applied

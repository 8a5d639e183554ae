"""Retention: finished jobs are deleted, with their results and PNGs, after a set time.

``HAARLINE_RETENTION_DAYS`` (unset by default: keep everything) is the age, counted from
the job's last state change, after which a succeeded, failed or cancelled job is deleted.
Queued and running jobs are never touched. The runner's dispatcher thread sweeps now and
then (:class:`Retention`), in batches, so no transaction holds the write lock for long;
SQLite reuses the freed pages, so a data directory under retention stops growing.
"""

from __future__ import annotations

import logging
import time

from haarline.service.jobs.store import Store

__all__ = ["Retention", "sweep_once"]

log = logging.getLogger("haarline.retention")

DAY = 86_400.0


def sweep_once(store: Store, *, days: float, now: float | None = None) -> int:
    """Delete every finished job older than ``days``; return how many were deleted."""
    cutoff = (time.time() if now is None else now) - days * DAY
    deleted = 0
    while True:
        batch = store.delete_older(cutoff)
        deleted += batch
        if batch < 500:
            return deleted


class Retention:
    """When to sweep: every ``days / 4`` but at least each second, at most each hour."""

    def __init__(self, store: Store, days: float | None):
        self.store = store
        self.days = days
        self.interval = 0.0 if days is None else min(3600.0, max(1.0, days * DAY / 4))
        self._next = 0.0

    def maybe_sweep(self, now: float | None = None) -> int:
        """Sweep if retention is on and the interval has passed; return how many went."""
        if self.days is None:
            return 0
        moment = time.monotonic() if now is None else now
        if moment < self._next:
            return 0
        self._next = moment + self.interval
        deleted = sweep_once(self.store, days=self.days)
        if deleted:
            log.info("retention: deleted %d finished jobs older than %g days", deleted, self.days)
        return deleted

"""How long a refused client is told to wait: the ``Retry-After`` of every 429 and 503.

==========================================  ================================================
refusal                                     ``Retry-After`` (whole seconds)
==========================================  ================================================
the key's job queue is full (429)           the time until the soonest of this key's jobs
                                            ends, which frees one of its places (below),
                                            rounded up and clamped to ``RETRY_AFTER_MIN``
                                            .. ``RETRY_AFTER_MAX``; ``HAARLINE_RETRY_AFTER``
                                            while nothing can be estimated
the job store is unavailable, the service   ``HAARLINE_RETRY_AFTER`` (default 5)
is not ready (503)
==========================================  ================================================

**The soonest free place.** A place in a key's queue frees when one of its jobs ends, not
when the whole queue has drained. Each running job's time left is its expected run time
less the time it has run. The expected run time is admission's estimate of its work (the
``work`` stored with the job) at the speed recent jobs ran: their estimated work per
second of run time, over the :data:`RECENT_JOBS` newest that ran; without such a speed
(no job with an estimate has run yet), the mean run time of those jobs. A job that has
already run longer than expected, or one with nothing to go by, is judged by its own pace:
``elapsed × (1 − fraction) / fraction`` of its progress ``fraction``. Progress comes
second because it counts stages, not work, and a job's stages are not equally long.

Queued jobs take the workers in order of arrival (every key's), each lasting its work at
that speed (or the mean run time). :func:`soonest_end` plays the queue forward until the
first of this key's jobs ends, and stops as soon as no job still waiting could end earlier,
so a long queue of other keys' jobs costs only as many steps as it must.
"""

from __future__ import annotations

import heapq
import math
import time
from dataclasses import dataclass

from haarline.service.jobs.states import JobState
from haarline.service.jobs.store import Store
from haarline.service.settings import Settings

__all__ = [
    "QUEUE_LOOKAHEAD",
    "RECENT_JOBS",
    "RETRY_AFTER_MAX",
    "RETRY_AFTER_MIN",
    "Pace",
    "RunningJob",
    "clamp_seconds",
    "full_queue_wait",
    "soonest_end",
]

RETRY_AFTER_MIN = 1
"""Shortest estimated wait (seconds): never ask a client to retry at once."""

RETRY_AFTER_MAX = 300
"""Longest estimated wait (seconds): beyond a few minutes a client may as well poll."""

RECENT_JOBS = 20
"""How many of the newest jobs that ran the speed and the mean run time are taken over."""

QUEUE_LOOKAHEAD = 1000
"""Most queued jobs read to play the queue forward."""


def clamp_seconds(seconds: float) -> int:
    """``seconds`` rounded up to whole seconds, within ``RETRY_AFTER_MIN..RETRY_AFTER_MAX``."""
    return max(RETRY_AFTER_MIN, min(RETRY_AFTER_MAX, math.ceil(seconds)))


@dataclass(frozen=True)
class Pace:
    """How fast recent jobs ran: estimated work per second, and mean run time."""

    work_per_second: float | None
    mean_run: float | None

    def duration(self, work: float | None) -> float | None:
        """Expected run time of a job of estimated ``work`` (``None``: nothing to go by)."""
        if work is not None and self.work_per_second:
            return work / self.work_per_second
        return self.mean_run


@dataclass(frozen=True)
class RunningJob:
    """What the estimate needs of a running job."""

    owner: str
    work: float | None
    fraction: float
    elapsed: float

    def remaining(self, pace: Pace) -> float | None:
        """Seconds until it ends (see the module docstring), ``None`` if unknown."""
        total = pace.duration(self.work)
        if total is not None and total > self.elapsed:
            return total - self.elapsed
        if self.fraction > 0:  # overran its estimate, or nothing else to go by
            return self.elapsed * (1 - self.fraction) / self.fraction
        return None if total is None else 0.0


def soonest_end(
    owner: str,
    running: list[RunningJob],
    queued: list[tuple[str, float | None]],
    pace: Pace,
    workers: int,
) -> float | None:
    """Seconds until the first of ``owner``'s jobs ends; ``None`` when it cannot be told.

    Parameters
    ----------
    owner : str
        The key whose queue is full.
    running : list of RunningJob
        Every running job.
    queued : list of (owner, work)
        Queued jobs in the order they will start (oldest first).
    pace : Pace
        The speed of recent jobs.
    workers : int
        Jobs that run at once.

    Examples
    --------
    >>> pace = Pace(work_per_second=100.0, mean_run=None)
    >>> running = [RunningJob("a", 1000.0, 0.0, 4.0), RunningJob("b", 300.0, 0.0, 1.0)]
    >>> soonest_end("a", running, [], pace, 2)  # a's job: 10 s of work, 4 s done
    6.0
    >>> soonest_end("c", running, [("c", 500.0)], pace, 2)  # starts when b's ends, at 2 s
    7.0
    """
    best = math.inf
    free: list[float] = []
    for job in running:
        left = job.remaining(pace)
        if left is None:
            return None
        free.append(left)
        if job.owner == owner:
            best = min(best, left)
    free += [0.0] * max(0, workers - len(free))
    heapq.heapify(free)
    for who, work in queued:
        start = heapq.heappop(free)
        if start >= best:  # nothing that waits can end before the key's soonest job
            break
        length = pace.duration(work)
        if length is None:
            return None
        heapq.heappush(free, start + length)
        if who == owner:
            best = min(best, start + length)
    return None if math.isinf(best) else best


def _facts(
    store: Store, now: float
) -> tuple[list[RunningJob], list[tuple[str, float | None]], Pace]:
    """Running jobs, the queue's order and the pace of recent jobs, from the store."""
    with store.connect() as conn:
        running = [
            RunningJob(r["owner"], r["work"], float(r["fraction"]), max(0.0, now - r["started"]))
            for r in conn.execute(
                "SELECT j.owner, j.work, j.fraction, (SELECT max(at) FROM events"
                " WHERE job_id = j.id AND state = ?) AS started FROM jobs AS j WHERE j.state = ?",
                (JobState.RUNNING, JobState.RUNNING),
            )
            if r["started"] is not None
        ]
        queued = [
            (str(r["owner"]), r["work"])
            for r in conn.execute(
                "SELECT owner, work FROM jobs WHERE state = ? ORDER BY created LIMIT ?",
                (JobState.QUEUED, QUEUE_LOOKAHEAD),
            )
        ]
        row = conn.execute(
            "SELECT sum(work) / sum(done - started) FROM ("
            " SELECT j.work,"
            " (SELECT max(at) FROM events WHERE job_id = j.id AND state = ?) AS started,"
            " (SELECT max(at) FROM events WHERE job_id = j.id AND state = ?) AS done"
            " FROM jobs AS j WHERE j.state = ? AND j.cached = 0 AND j.work IS NOT NULL"
            " ORDER BY j.created DESC LIMIT ?"
            ") WHERE started IS NOT NULL AND done > started",
            (JobState.RUNNING, JobState.SUCCEEDED, JobState.SUCCEEDED, RECENT_JOBS),
        ).fetchone()
    rate = None if row[0] is None else float(row[0])
    return running, queued, Pace(rate, store.mean_run_seconds(RECENT_JOBS))


def full_queue_wait(store: Store, settings: Settings, workers: int, owner: str) -> int:
    """The ``Retry-After`` of a 429 for ``owner``'s full queue (see the module docstring)."""
    running, queued, pace = _facts(store, time.time())
    seconds = soonest_end(owner, running, queued, pace, workers)
    return settings.retry_after if seconds is None else clamp_seconds(seconds)

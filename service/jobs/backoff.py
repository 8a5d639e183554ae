"""How long a refused client is told to wait: the ``Retry-After`` of every 429 and 503.

==========================================  ================================================
refusal                                     ``Retry-After`` (whole seconds)
==========================================  ================================================
the key's job queue is full (429)           queued jobs × mean run time of the recent jobs
                                            / workers, rounded up and clamped to
                                            ``RETRY_AFTER_MIN`` .. ``RETRY_AFTER_MAX``;
                                            ``HAARLINE_RETRY_AFTER`` while no job has run yet
the job store is unavailable, the service   ``HAARLINE_RETRY_AFTER`` (default 5)
is not ready (503)
==========================================  ================================================

The queue estimate is the time the workers need to work off every job queued now, which is
when a slot in a full per-key queue is sure to have opened. It counts the queued jobs of
all keys (they run first come, first served) and the mean run time of the
:data:`RECENT_JOBS` newest jobs that succeeded (time spent queued excluded).
"""

from __future__ import annotations

import math

from haarline.service.jobs.store import Store
from haarline.service.settings import Settings

__all__ = [
    "RECENT_JOBS",
    "RETRY_AFTER_MAX",
    "RETRY_AFTER_MIN",
    "clamp_seconds",
    "full_queue_wait",
    "queue_wait",
]

RETRY_AFTER_MIN = 1
"""Shortest estimated wait (seconds): never ask a client to retry at once."""

RETRY_AFTER_MAX = 300
"""Longest estimated wait (seconds): beyond a few minutes a client may as well poll."""

RECENT_JOBS = 20
"""How many of the newest succeeded jobs the mean run time is taken over."""


def clamp_seconds(seconds: float) -> int:
    """``seconds`` rounded up to whole seconds, within ``RETRY_AFTER_MIN..RETRY_AFTER_MAX``."""
    return max(RETRY_AFTER_MIN, min(RETRY_AFTER_MAX, math.ceil(seconds)))


def queue_wait(queued: int, mean_run: float | None, workers: int, *, fallback: int) -> int:
    """Seconds until the workers have worked off ``queued`` jobs of ``mean_run`` seconds.

    Parameters
    ----------
    queued : int
        Jobs waiting for a worker, of every key.
    mean_run : float or None
        Mean run time of recent jobs in seconds; ``None`` when no job has run yet.
    workers : int
        Jobs that run at once.
    fallback : int
        The answer when ``mean_run`` is ``None`` (the configured ``Retry-After``).

    Returns
    -------
    int
        ``ceil(queued * mean_run / workers)`` clamped to
        ``RETRY_AFTER_MIN..RETRY_AFTER_MAX``, or ``fallback``.

    Examples
    --------
    >>> queue_wait(6, 20.0, 2, fallback=5)
    60
    >>> queue_wait(0, 20.0, 2, fallback=5), queue_wait(6, None, 2, fallback=5)
    (1, 5)
    """
    if mean_run is None:
        return fallback
    return clamp_seconds(queued * mean_run / max(1, workers))


def full_queue_wait(store: Store, settings: Settings, workers: int) -> int:
    """The ``Retry-After`` of a 429 for a full per-key queue (see the module docstring)."""
    return queue_wait(
        store.queued_count(),
        store.mean_run_seconds(RECENT_JOBS),
        workers,
        fallback=settings.retry_after,
    )

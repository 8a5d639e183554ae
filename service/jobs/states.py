"""The states of a job, as one closed set.

``queued`` → ``running`` → ``succeeded`` | ``failed`` | ``cancelled``; a running job whose
worker was lost, or whose server stopped, goes back to ``queued``. The store writes and
compares only these members (bound as SQL parameters, never spelled in SQL), and the API
shows their values.
"""

from __future__ import annotations

from enum import StrEnum
from typing import Literal

__all__ = ["ACTIVE", "FINAL", "VERDICTS", "JobState", "Verdict"]


class JobState(StrEnum):
    """Where a job is in its life."""

    QUEUED = "queued"
    RUNNING = "running"
    SUCCEEDED = "succeeded"
    FAILED = "failed"
    CANCELLED = "cancelled"

    @property
    def active(self) -> bool:
        """Whether the job still waits or runs (it counts against its key's queue)."""
        return self in ACTIVE


ACTIVE: tuple[JobState, ...] = (JobState.QUEUED, JobState.RUNNING)
"""States that still hold a place in a key's queue."""

FINAL: tuple[JobState, ...] = (JobState.SUCCEEDED, JobState.FAILED, JobState.CANCELLED)
"""States a job never leaves."""

Verdict = Literal["passed", "warned", "failed"]
"""A finished job's policy verdict, as statuses and notifications show it."""

VERDICTS: dict[str, Verdict] = {"pass": "passed", "warn": "warned", "fail": "failed"}
"""The verdict of each policy status (``pass``, ``warn``, ``fail``) a report carries."""

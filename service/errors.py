"""Every exception the service raises, in one place.

The core's own tree (input problems, limits, policies) is in :mod:`haarline.errors`; the
service adds the conditions of a running server. ``api/problems.py`` turns each into its
HTTP answer, the CLI turns input problems into exit code 2::

    Exception
    ├── SettingsError        a HAARLINE_* setting is invalid or unsafe (start-up refused)
    ├── StoreUnavailable     the job store is locked, full or unreadable (503)
    │   └── StoreTooNew      its schema is newer than this release (start-up refused)
    ├── Unavailable          the service cannot serve now: low disk, busy score pool (503)
    ├── TimedOut             synchronous work ran past its limit and was stopped (504)
    ├── OverLimit            estimated work or memory above a configured limit (422)
    ├── TokenError           a page link is malformed, tampered with or expired (403)
    ├── WebhookError         a notification's signature or timestamp does not verify
    ├── JobCancelled         raised inside a running job when its cancel flag is seen
    ├── WorkerLost           a job worker process exited before it answered (the job is retried)
    ├── PoolStopped          the job worker pool stopped before a task finished
    └── haarline.errors.HaarlineError
        └── InputError
            ├── UsageError   a command-line value argparse let through but we cannot use
            └── CallbackRefused  a callback_url the destination rules refuse (422)
"""

from __future__ import annotations

from typing import Any

import haarline.client as _client
from haarline.errors import InputError, Problem

__all__ = [
    "CallbackRefused",
    "JobCancelled",
    "OverLimit",
    "PoolStopped",
    "SettingsError",
    "StoreTooNew",
    "StoreUnavailable",
    "TimedOut",
    "TokenError",
    "Unavailable",
    "UsageError",
    "WebhookError",
    "WorkerLost",
]


class SettingsError(Exception):
    """The configuration is invalid or unsafe; the message says which variable."""


class StoreUnavailable(Exception):
    """The database cannot be used right now (locked, full disk, unreadable)."""


class StoreTooNew(StoreUnavailable):
    """The database was written by a newer release: its schema version is unknown here."""


class Unavailable(Exception):
    """The service cannot serve the request right now (503, with ``Retry-After``).

    Parameters
    ----------
    detail : str
        What is wrong, for the client.
    kind : str
        The problem type's last path segment.
    retry_after : int, optional
        Seconds to suggest; by default ``HAARLINE_RETRY_AFTER``.
    **extra
        Further members of the problem body (numbers the detail quotes).
    """

    def __init__(self, detail: str, *, kind: str, retry_after: int | None = None, **extra: Any):
        self.detail, self.kind, self.retry_after, self.extra = detail, kind, retry_after, extra
        super().__init__(detail)


class TimedOut(Exception):
    """Work that ran past its wall-clock limit and was stopped (504, no ``Retry-After``).

    Parameters
    ----------
    detail : str
        The limit and what to do instead.
    kind : str
        The problem type's last path segment.
    **extra
        Further members of the problem body (``limit`` in seconds).
    """

    def __init__(self, detail: str, *, kind: str, **extra: Any):
        self.detail, self.kind, self.extra = detail, kind, extra
        super().__init__(detail)


class OverLimit(Exception):
    """Work whose estimated cost or memory exceeds a configured limit."""

    def __init__(self, what: str, limit: float, estimate: float, hint: str):
        self.what, self.limit, self.estimate, self.hint = what, limit, estimate, hint
        super().__init__(f"estimated {what} {estimate:.3g} exceeds the limit {limit:.3g}; {hint}")


class TokenError(Exception):
    """The token is malformed, tampered with, expired or for another job."""


class JobCancelled(Exception):
    """Raised inside the analysis when the job's cancel flag is seen."""


class WorkerLost(Exception):
    """The process running a task exited before it answered (killed, out of memory)."""

    def __init__(self, pid: int | None, exitcode: int | None):
        self.pid = pid
        self.exitcode = exitcode
        how = f"signal {-exitcode}" if exitcode is not None and exitcode < 0 else exitcode
        super().__init__(f"worker process {pid} exited ({how}) before it answered")


class PoolStopped(Exception):
    """The pool was stopped before the task finished (or started)."""


class UsageError(InputError):
    """A command-line value that argparse let through but we cannot use."""


WebhookError = _client.WebhookError
"""A notification failed verification (defined beside the client, which verifies them)."""


class CallbackRefused(InputError):
    """A ``callback_url`` the destination rules refuse; its one problem is at ``callback_url``.

    Parameters
    ----------
    url : str
        The refused value, quoted in the message.
    reason : str
        Why, and what is allowed.
    """

    def __init__(self, url: str, reason: str):
        self.url, self.reason = url, reason
        super().__init__([Problem("callback_url", f"{url!r} is refused: {reason}")])

"""Who may read a job's outputs: its owner's key, or a share link of the job.

The page, report, summary and plots of a job answer either the key that owns the job or a
``token`` query parameter from ``POST …/share`` (:mod:`haarline.service.api.tokens`). A
token must be well formed and signed, be for this job, not be expired, belong to a link the
store still has unrevoked, and come from a key that is still active: otherwise 403. No key
and no token: 401. Another key's job, or no such job: 404.

A summary fetched with a token links to the plots and page with that token, and with
``HAARLINE_PUBLIC_URL`` set its links are absolute (:func:`summary_links`), so a wiki or a
review comment can embed it as it is.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Annotated, Any

from fastapi import HTTPException, Query
from haarline.service.api.deps import (
    DEV_OWNER,
    KeyOwnerDep,
    PageSecretDep,
    SettingsDep,
    StoreDep,
)
from haarline.service.api.tokens import check_token
from haarline.service.errors import TokenError
from haarline.service.jobs.store import Store, is_job_id
from haarline.service.settings import Settings

__all__ = [
    "SHARED_READ",
    "Reading",
    "Token",
    "owned_job",
    "readable_job",
    "reader",
    "summary_links",
]

Token = Annotated[
    str | None,
    Query(
        max_length=300,
        description="A share token (from `POST …/share`): opens this job's outputs without a key.",
    ),
]

SHARED_READ: dict[str, Any] = {"security": [{"HTTPBearer": []}, {}]}
"""OpenAPI for a route that a key or a share token opens (the token is a query parameter)."""


def readable_job(
    store: Store,
    settings: Settings,
    secret: bytes,
    *,
    job_id: str,
    kind: str,
    owner: str | None,
    token: str | None,
) -> dict[str, Any]:
    """The job if the key ``owner`` or the share ``token`` may read it; else an HTTP error."""
    if token is not None:
        try:
            link_id = check_token(secret, token, job_id)
        except TokenError as exc:
            raise HTTPException(403, f"this link does not open the job: {exc}") from None
        job = store.get_job(job_id)
        if job is None or job["kind"] != kind:
            raise HTTPException(404, f"no such job {job_id!r}")
        if not store.link_open(link_id, job_id):
            raise HTTPException(403, "this link does not open the job: it was revoked")
        shared_in_dev = settings.dev_mode and job["owner"] == DEV_OWNER
        if not (shared_in_dev or store.key_active(job["owner"])):
            raise HTTPException(
                403, "this link does not open the job: the key that shared it was revoked"
            )
        return job
    if owner is None:
        raise HTTPException(
            401, "an API key or a share token is required", headers={"WWW-Authenticate": "Bearer"}
        )
    return owned_job(store, job_id, owner, kind)


def owned_job(store: Store, job_id: str, owner: str, kind: str) -> dict[str, Any]:
    """The job if the key ``owner`` owns it and it is of ``kind``; else 404 (no hint which)."""
    job = store.get_job(job_id, owner=owner) if is_job_id(job_id) else None
    if job is None or job["kind"] != kind:
        raise HTTPException(404, f"no {kind} job {job_id!r} for this key")
    return job


@dataclass(frozen=True)
class Reading:
    """A job its reader may see, and the share token it was opened with (if any)."""

    job: dict[str, Any]
    token: str | None


def reader(kind: str) -> Any:
    """A dependency for the routes a key or a share token opens: the job ``job_id``."""

    def read(
        job_id: str,
        owner: KeyOwnerDep,
        settings: SettingsDep,
        store: StoreDep,
        secret: PageSecretDep,
        token: Token = None,
    ) -> Reading:
        job = readable_job(
            store, settings, secret, job_id=job_id, kind=kind, owner=owner, token=token
        )
        return Reading(job, token)

    return read


_LINK = re.compile(r"\]\((page|plots/[a-z0-9][a-z0-9_-]{0,60}\.png)\)")
"""A Markdown link target of a stored summary: the page or one plot, relative to the job."""


def summary_links(markdown: str, *, root: str | None, token: str | None) -> str:
    """A stored summary with its links absolute under ``root`` and carrying ``token``.

    The stored summary's links are relative to ``…/{id}/summary`` (``page``,
    ``plots/NAME.png``); ``root`` is the job's absolute URL with a trailing slash.

    Examples
    --------
    >>> text = "[page](page) ![circuit](plots/circuit.png)"
    >>> summary_links(text, root="https://q.example.org/v1/analyses/ab/", token="T")
    '[page](https://q.example.org/v1/analyses/ab/page?token=T) ![circuit](https://q.example.org/v1/analyses/ab/plots/circuit.png?token=T)'
    >>> summary_links(text, root=None, token=None) == text
    True
    """
    if root is None and token is None:
        return markdown
    query = f"?token={token}" if token is not None else ""

    def link(match: re.Match[str]) -> str:
        return f"]({root or ''}{match.group(1)}{query})"

    return _LINK.sub(link, markdown)

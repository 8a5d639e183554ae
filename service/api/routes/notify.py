"""Notification routes: a job's event stream and deliveries, and the key's signing secret.

- ``GET …/{job_id}/events``: server-sent events (``text/event-stream``) of the job's
  progress, then its final state, then the stream closes (:mod:`haarline.service.api.watch`);
- ``GET …/{job_id}/deliveries``: the notification of the job's end (when it has a
  ``callback_url``) with every attempt, its time, duration, HTTP status or error;
- ``POST /v1/webhook-secret``: a new signing secret for the calling key, shown this once
  (it replaces the previous one for every later attempt); ``GET`` tells when the current
  one was created.

The job routes are :mod:`haarline.service.api.routes.jobs`; the sending is
:mod:`haarline.service.jobs.notify`.
"""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, FastAPI, Header, HTTPException, Response
from fastapi.concurrency import run_in_threadpool
from fastapi.responses import StreamingResponse
from haarline.service.api.access import owned_job
from haarline.service.api.deps import CallerDep, StoreDep
from haarline.service.api.http import NO_STORE
from haarline.service.api.problems import problem_responses
from haarline.service.api.responses import CHANGING, header
from haarline.service.api.schemas import (
    DeliveryAttemptPublic,
    DeliveryPublic,
    JobEndEvent,
    WebhookSecretCreated,
    WebhookSecretPublic,
    job_public,
)
from haarline.service.api.watch import event_stream
from haarline.service.jobs import outbox
from haarline.service.jobs.store import Store
from haarline.service.webhooks import new_secret

__all__ = ["analysis_notes", "comparison_notes", "document_webhook", "secrets"]

_NOUN = {"analysis": "analysis", "compare": "comparison"}

STREAM = {
    "description": "Server-sent events: `progress` (the job, on each change of state or "
    "progress) and, last, `end` (the job in its final state); every `data` is the job as "
    "its status route shows it. A job that has ended sends `end` at once.",
    "content": {"text/event-stream": {"schema": {"type": "string"}}},
    "headers": {
        **CHANGING["headers"],
        "X-Accel-Buffering": header("`no`: a proxy must pass events on at once.", enum=["no"]),
    },
}


def _deliveries(store: Store, job_id: str, kind: str) -> list[DeliveryPublic]:
    with store.connect() as conn:
        rows = outbox.deliveries_of(conn, job_id)
    return [
        DeliveryPublic(
            id=d["id"],
            event=f"{_NOUN[kind]}.{d['state']}",  # type: ignore[arg-type]
            url=d["url"],
            status=d["status"],
            next_attempt=d["next_at"] if d["status"] == outbox.PENDING else None,
            created=d["created"],
            attempts=[DeliveryAttemptPublic(**a) for a in d["attempts"]],
        )
        for d in rows
    ]


def _router(kind: str, prefix: str, plural: str) -> APIRouter:
    router = APIRouter(prefix=prefix, tags=[plural])
    title = _NOUN[kind].capitalize()

    @router.get(
        "/{job_id}/events",
        operation_id=f"stream{title}Events",
        summary="Server-sent events of progress and the final state (then it closes)",
        description="A `text/event-stream` of `progress` events and a last `end` event, each "
        "carrying the job as its status route shows it.",
        response_class=StreamingResponse,
        responses={200: STREAM, **problem_responses(401, 404, 503)},
    )
    async def events(job_id: str, caller: CallerDep, store: StoreDep) -> StreamingResponse:
        job = await run_in_threadpool(owned_job, store, job_id, caller, kind)

        def render(j: dict[str, Any]) -> dict[str, Any]:
            return job_public(j, prefix).model_dump(mode="json")

        return StreamingResponse(
            event_stream(store, job, render),
            media_type="text/event-stream",
            headers={"Cache-Control": NO_STORE, "X-Accel-Buffering": "no"},
        )

    @router.get(
        "/{job_id}/deliveries",
        response_model=list[DeliveryPublic],
        operation_id=f"list{title}Deliveries",
        summary="The notification of the job's end and every attempt to deliver it",
        description="The signed notification sent to the job's `callback_url`, with each "
        "attempt's time, duration and HTTP status or error.",
        responses={200: CHANGING, **problem_responses(401, 404, 503)},
    )
    def deliveries(job_id: str, caller: CallerDep, store: StoreDep, response: Response) -> Any:
        owned_job(store, job_id, caller, kind)
        response.headers["Cache-Control"] = NO_STORE
        return _deliveries(store, job_id, kind)

    return router


analysis_notes = _router("analysis", "/v1/analyses", "analyses")
comparison_notes = _router("compare", "/v1/comparisons", "comparisons")

secrets = APIRouter(prefix="/v1/webhook-secret", tags=["notifications"])


@secrets.post(
    "",
    status_code=201,
    response_model=WebhookSecretCreated,
    operation_id="createWebhookSecret",
    summary="A new signing secret for this key's notifications, shown once",
    description="Makes the secret that signs this key's notifications (Standard Webhooks); "
    "only this answer ever shows it.",
    responses={
        201: {
            "description": "The secret (whsec_…); it replaces the previous one for every "
            "later attempt, pending notifications included.",
            **CHANGING,
        },
        **problem_responses(401, 503),
    },
)
def create_secret(caller: CallerDep, store: StoreDep, response: Response) -> Any:
    secret = new_secret()
    with store.connect() as conn:
        created = outbox.set_secret(conn, caller, secret)
    response.headers["Cache-Control"] = NO_STORE
    return WebhookSecretCreated(secret=secret, created=created)


@secrets.get(
    "",
    response_model=WebhookSecretPublic,
    operation_id="getWebhookSecret",
    summary="When this key's signing secret was created (never the secret)",
    description="The creation time of the current signing secret; 404 when the key has none.",
    responses=problem_responses(401, 404, 503),
)
def get_secret(caller: CallerDep, store: StoreDep) -> Any:
    with store.connect() as conn:
        created = outbox.secret_created(conn, caller)
    if created is None:
        raise HTTPException(404, "this key has no signing secret; POST /v1/webhook-secret")
    return WebhookSecretPublic(created=created)


def document_webhook(app: FastAPI) -> None:
    """Describe the job-end notification in the document's ``webhooks`` (OpenAPI 3.1).

    The service sends it (:mod:`haarline.service.jobs.notify`); nothing here serves it. The
    entry gives receivers, and client generators, the body and the three signature headers.
    """

    @app.webhooks.post(
        "jobEnded",
        operation_id="jobEnded",
        summary="A job ended: the POST a callback_url receives",
        description="Sent once per job end (retried on failure with the same webhook-id) to "
        "the job's `callback_url`, signed as the Standard Webhooks specification says, with "
        "the key's secret (`POST /v1/webhook-secret`). Verify it with "
        "`haarline.client.verify_webhook(secret, headers, body)` before trusting it; answer "
        "2xx to acknowledge.",
        responses={
            200: {"description": "Any 2xx acknowledges the delivery."},
            500: {"description": "Any other answer (or none in time) is retried later."},
        },
    )
    def job_ended(
        body: JobEndEvent,
        webhook_id: Annotated[
            str,
            Header(
                alias="webhook-id",
                description="The message id, the same on every attempt: drop repeats by it.",
            ),
        ],
        webhook_timestamp: Annotated[
            str,
            Header(
                alias="webhook-timestamp",
                description="The attempt's time in integer Unix seconds; refuse one far "
                "from your clock (5 minutes), against replays.",
            ),
        ],
        webhook_signature: Annotated[
            str,
            Header(
                alias="webhook-signature",
                description="Space-separated `v1,<base64>`: the HMAC-SHA256 of "
                "`{webhook-id}.{webhook-timestamp}.{body}` under the secret's key.",
            ),
        ],
    ) -> None:
        """Documentation only."""

"""Report pages and the signed links that open them without an API key.

``GET /v1/analyses/{id}/page`` (and ``/v1/comparisons/{id}/page``) answers the owner's key
or a ``token`` from ``POST …/share``. No key and no token: 401. A token that is malformed
(whatever its characters), expired, tampered with, made for another job, or made by a key
that has since been revoked: 403. A deleted job: 404. The page is self-contained (PNGs
inlined), so a token never needs to open anything but the page itself. A finished job's
page never changes: it carries a strong ``ETag`` and answers 304 to ``If-None-Match``;
the page of a job still queued or running refreshes itself and is ``no-store``.
"""

from typing import Annotated, Any

from fastapi import APIRouter, Depends, HTTPException, Query, Request, Response
from fastapi.responses import HTMLResponse
from haarline.service.api.deps import (
    DEV_OWNER,
    CallerDep,
    KeyOwnerDep,
    PageSecretDep,
    SettingsDep,
    StoreDep,
)
from haarline.service.api.http import NO_STORE, immutable, require_json
from haarline.service.api.page import comparison_page, job_page, report_page
from haarline.service.api.problems import problem_responses
from haarline.service.api.tokens import MAX_TTL, check_token, make_token
from haarline.service.errors import TokenError
from haarline.service.jobs.states import JobState
from haarline.service.jobs.store import Store, is_job_id
from pydantic import BaseModel, Field

__all__ = ["router"]

router = APIRouter(tags=["pages"])

KINDS = {"analyses": "analysis", "comparisons": "compare"}


class ShareCreate(BaseModel):
    """Body of ``POST …/share``."""

    ttl_seconds: int = Field(
        default=86_400, ge=60, le=MAX_TTL, description="How long the link works (60 s to 7 days)."
    )


class SharePublic(BaseModel):
    """A signed link to one job's page."""

    url: str
    expires: int = Field(description="Unix time after which the link stops working.")


def _job(store: Store, job_id: str, kind: str) -> dict[str, Any]:
    job = store.get_job(job_id) if is_job_id(job_id) else None
    if job is None or job["kind"] != kind:
        raise HTTPException(404, f"no such job {job_id!r}")
    return job


def _render(store: Store, job: dict[str, Any]) -> str:
    if job["state"] is not JobState.SUCCEEDED:
        return job_page(job)
    result = store.result(job["id"])
    if result is None:
        return job_page({**job, "state": "failed", "error": "the stored result is missing"})
    report, _ = result
    images: dict[str, bytes] = {}
    for name in store.artifact_names(job["id"]):
        content = store.artifact(job["id"], name)
        if content is not None:  # deleted since it was listed
            images[name] = content
    if job["kind"] == "compare":
        return comparison_page(report, images)
    request = job["request"]
    source = f"{request['reference']}.json" if request.get("reference") else "circuit.json"
    return report_page(report, images, description=request.get("circuit"), source=source)


def _page_route(collection: str) -> None:
    kind = KINDS[collection]
    noun = "Analysis" if kind == "analysis" else "Comparison"

    @router.get(
        f"/v1/{collection}/{{job_id}}/page",
        response_class=HTMLResponse,
        operation_id=f"get{noun}Page",
        summary="The self-contained HTML report page (key or share token)",
        # the key is optional here: a share token in the query opens the page too (the
        # key's requirement comes from the dependency; this adds "or nothing")
        openapi_extra={"security": [{}]},
        responses={
            200: {"content": {"text/html": {}}},
            **problem_responses(401, 403, 404, 422, 503),
        },
    )
    def page(
        job_id: str,
        request: Request,
        settings: SettingsDep,
        store: StoreDep,
        secret: PageSecretDep,
        owner: KeyOwnerDep,
        token: Annotated[str | None, Query(max_length=300)] = None,
    ) -> Response:
        if token is not None:
            try:
                check_token(secret, token, job_id)
            except TokenError as exc:
                raise HTTPException(403, f"this link does not open the page: {exc}") from None
            job = _job(store, job_id, kind)
            shared_in_dev = settings.dev_mode and job["owner"] == DEV_OWNER
            if not (shared_in_dev or store.key_active(job["owner"])):
                raise HTTPException(
                    403, "this link does not open the page: the key that shared it was revoked"
                )
        elif owner is None:
            raise HTTPException(
                401,
                "an API key or a share token is required",
                headers={"WWW-Authenticate": "Bearer"},
            )
        else:
            job = _job(store, job_id, kind)
            if job["owner"] != owner:
                raise HTTPException(404, f"no such job {job_id!r}")
        headers = {
            "Content-Security-Policy": "default-src 'none'; img-src data:; style-src "
            "'unsafe-inline'; base-uri 'none'; form-action 'none'",
            "X-Content-Type-Options": "nosniff",
            "Referrer-Policy": "no-referrer",
        }
        text = _render(store, job)
        if job["state"] is JobState.SUCCEEDED:
            return immutable(request, text.encode(), "text/html; charset=utf-8", headers=headers)
        return HTMLResponse(text, headers={**headers, "Cache-Control": NO_STORE})

    @router.post(
        f"/v1/{collection}/{{job_id}}/share",
        response_model=SharePublic,
        operation_id=f"share{noun}Page",
        summary="A short-lived signed link to this job's page, for reviewers without a key",
        responses=problem_responses(401, 404, 408, 413, 415, 422, 503),
        dependencies=[Depends(require_json)],
    )
    def share(
        job_id: str,
        caller: CallerDep,
        settings: SettingsDep,
        store: StoreDep,
        secret: PageSecretDep,
        body: ShareCreate | None = None,
    ) -> SharePublic:
        job = _job(store, job_id, kind)
        if job["owner"] != caller:
            raise HTTPException(404, f"no such job {job_id!r}")
        ttl = (body or ShareCreate()).ttl_seconds
        token, expires = make_token(secret, job_id, ttl)
        url = f"{settings.base_url}/v1/{collection}/{job_id}/page?token={token}"
        return SharePublic(url=url, expires=expires)


_page_route("analyses")
_page_route("comparisons")

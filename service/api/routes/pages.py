"""Report pages, and the share links that open a job's outputs without an API key.

``GET /v1/analyses/{id}/page`` (and ``/v1/comparisons/{id}/page``) answers the owner's key
or a ``token`` from ``POST …/share`` (who may read what: :mod:`haarline.service.api.access`).
The page is self-contained (PNGs inlined). A finished job's page never changes: it carries
a strong ``ETag`` and answers 304 to ``If-None-Match``; the page of a job still queued or
running refreshes itself and is ``no-store``.

Share links: ``POST …/share`` makes one (its lifetime up to ``HAARLINE_SHARE_MAX_DAYS``,
90 days by default), ``GET …/share`` lists a job's links with their state, and ``DELETE
…/share/{link_id}`` revokes one. A link opens the job's page, report, summary and plots;
it dies with its job and with the key that made it.
"""

import time
from typing import Annotated, Any, Literal

import haarline
from fastapi import APIRouter, Depends, HTTPException, Request, Response
from fastapi.responses import HTMLResponse
from haarline.service.api.access import SHARED_READ, Reading, owned_job, reader
from haarline.service.api.deps import (
    CallerDep,
    PageSecretDep,
    SettingsDep,
    StoreDep,
)
from haarline.service.api.http import NO_STORE, immutable, require_json
from haarline.service.api.page import comparison_page, job_page, report_page
from haarline.service.api.problems import problem_responses
from haarline.service.api.responses import (
    CHANGING,
    IF_NONE_MATCH,
    PAGE_HEADERS,
    immutable_responses,
)
from haarline.service.api.tokens import make_token
from haarline.service.jobs.states import JobState
from haarline.service.jobs.store import Store
from pydantic import BaseModel, Field

__all__ = ["router"]

router = APIRouter(tags=["pages"])

KINDS = {"analyses": "analysis", "comparisons": "compare"}


class ShareCreate(BaseModel):
    """Body of ``POST …/share``."""

    ttl_seconds: int = Field(
        default=86_400,
        ge=60,
        le=10 * 365 * 86_400,
        description="How long the link works: 60 s up to the service's maximum "
        "(HAARLINE_SHARE_MAX_DAYS, 90 days unless configured).",
    )


class SharePublic(BaseModel):
    """A signed link to one job's page, report, summary and plots."""

    id: str = Field(description="The link's id, to revoke it with `DELETE …/share/{id}`.")
    url: str = Field(description="The job's page; add the same `token` to its other outputs.")
    token: str = Field(description="The share token (`?token=…` on page, report, summary, plots).")
    created: float
    expires: int = Field(description="Unix time after which the link stops working.")
    revoked: float | None = Field(default=None, description="When it was revoked, if it was.")
    state: Literal["open", "expired", "revoked"]


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


def _page_responses() -> dict[int | str, dict[str, Any]]:
    out = immutable_responses(
        "The page (UTF-8)", {"text/html": {"schema": {"type": "string"}}}, finished_only=False
    )
    for status in (200, 304):
        out[status]["headers"].update(PAGE_HEADERS)
    return out


def _page_route(collection: str) -> None:
    kind = KINDS[collection]
    noun = "Analysis" if kind == "analysis" else "Comparison"

    @router.get(
        f"/v1/{collection}/{{job_id}}/page",
        response_class=HTMLResponse,
        operation_id=f"get{noun}Page",
        summary="The self-contained HTML report page (key or share token)",
        description="One HTML file with the plots inlined; while the job runs, a page that "
        "refreshes itself.",
        # the key is optional here: a share token in the query opens the page too
        openapi_extra={**SHARED_READ, "parameters": [IF_NONE_MATCH]},
        responses={
            **_page_responses(),
            **problem_responses(401, 403, 404, 422, 503),
        },
    )
    def page(
        request: Request, store: StoreDep, reading: Annotated[Reading, Depends(reader(kind))]
    ) -> Response:
        job = reading.job
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

    def link_public(job_id: str, link: dict[str, Any], secret: bytes, base: str) -> SharePublic:
        token = make_token(secret, job_id, link["id"], link["expires"])
        state: Literal["open", "expired", "revoked"] = (
            "revoked"
            if link["revoked"] is not None
            else "expired"
            if link["expires"] < time.time()
            else "open"
        )
        return SharePublic(
            id=link["id"],
            url=f"{base}/v1/{collection}/{job_id}/page?token={token}",
            token=token,
            created=link["created"],
            expires=link["expires"],
            revoked=link["revoked"],
            state=state,
        )

    @router.post(
        f"/v1/{collection}/{{job_id}}/share",
        response_model=SharePublic,
        operation_id=f"share{noun}",
        summary="A signed link to this job's page, report, summary and plots, for readers "
        "without a key",
        description="Makes a share link that works for `ttl_seconds` (up to "
        "HAARLINE_SHARE_MAX_DAYS) until it is revoked.",
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
        owned_job(store, job_id, caller, kind)
        ttl = (body or ShareCreate()).ttl_seconds
        longest = int(settings.share_max_days * 86_400)
        if ttl > longest:
            raise haarline.OptionError(
                [
                    haarline.Problem(
                        "ttl_seconds",
                        f"{ttl} is longer than this service allows for a link: at most "
                        f"{longest} s ({settings.share_max_days:g} days, "
                        "HAARLINE_SHARE_MAX_DAYS)",
                    )
                ]
            )
        expires = int(time.time() + ttl)
        link_id = store.add_link(job_id, caller, expires)
        link = {"id": link_id, "created": time.time(), "expires": expires, "revoked": None}
        return link_public(job_id, link, secret, settings.base_url)

    @router.get(
        f"/v1/{collection}/{{job_id}}/share",
        response_model=list[SharePublic],
        operation_id=f"list{noun}Shares",
        summary="This job's share links, oldest first, with their state",
        description="Every link made for the job, open, expired or revoked, with its token.",
        responses={200: CHANGING, **problem_responses(401, 404, 503)},
    )
    def shares(
        job_id: str,
        caller: CallerDep,
        settings: SettingsDep,
        store: StoreDep,
        secret: PageSecretDep,
        response: Response,
    ) -> list[SharePublic]:
        owned_job(store, job_id, caller, kind)
        response.headers["Cache-Control"] = NO_STORE
        return [link_public(job_id, li, secret, settings.base_url) for li in store.links(job_id)]

    @router.delete(
        f"/v1/{collection}/{{job_id}}/share/{{link_id}}",
        status_code=204,
        response_class=Response,
        operation_id=f"revoke{noun}Share",
        summary="Revoke one share link (it stops opening anything at once)",
        description="The link stops opening the page, report, summary and plots at once.",
        responses={204: {"description": "Revoked."}, **problem_responses(401, 404, 503)},
    )
    def revoke(job_id: str, link_id: str, caller: CallerDep, store: StoreDep) -> Response:
        owned_job(store, job_id, caller, kind)
        if not store.revoke_link(link_id, job_id):
            raise HTTPException(404, f"no open share link {link_id!r} of this job")
        return Response(status_code=204)


_page_route("analyses")
_page_route("comparisons")

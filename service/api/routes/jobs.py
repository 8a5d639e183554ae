"""Job routes: create, read, list, cancel or delete, and fetch report, summary and plots.

The same routes serve analyses (``/v1/analyses``) and comparisons (``/v1/comparisons``).
A key sees only its own jobs: another key's job id answers 404, exactly like an unknown id.
The report, summary and plots also open with a share token (``?token=``,
:mod:`haarline.service.api.access`). Listings filter by labels and state and page with a
cursor (``next`` in the body and a ``Link: <…>; rel="next"`` header), newest first.
A finished job's report, summary and plots never change: they carry a strong ``ETag`` and
``Cache-Control: …, immutable``, and ``If-None-Match`` gives 304
(:mod:`haarline.service.api.http`). A job's status may change at any time
(``Cache-Control: no-store``); ``?wait=S`` holds the answer until it does, or for S
seconds (:mod:`haarline.service.api.watch`). ``DELETE`` cancels an active job (202) and
deletes a finished one with its outputs (204). A job's ``callback_url`` is checked here
(:mod:`haarline.service.jobs.destinations`); its notifications, event stream and secret
routes are in :mod:`haarline.service.api.routes.notify`.
"""

import base64
import binascii
import re
from typing import Annotated, Any
from urllib.parse import urlencode

import haarline
from fastapi import APIRouter, Depends, Header, HTTPException, Query, Request, Response
from fastapi.concurrency import run_in_threadpool
from fastapi.responses import JSONResponse
from haarline.report.schema import Comparison, Report
from haarline.service.api.access import SHARED_READ, Reading, owned_job, reader, summary_links
from haarline.service.api.admission import admit_analysis, admit_compare, request_hash
from haarline.service.api.deps import (
    CallerDep,
    RunnerDep,
    SettingsDep,
    StoreDep,
)
from haarline.service.api.http import NO_STORE, binary, immutable, require_json
from haarline.service.api.problems import problem_response, problem_responses
from haarline.service.api.responses import (
    CHANGING,
    CREATED,
    IF_NONE_MATCH,
    LISTED,
    PNG,
    immutable_responses,
)
from haarline.service.api.schemas import (
    LABEL_KEY,
    AnalysisCreate,
    CompareCreate,
    JobPage,
    JobPublic,
    job_public,
)
from haarline.service.api.watch import MAX_WAIT, next_change
from haarline.service.errors import CallbackRefused
from haarline.service.jobs import outbox
from haarline.service.jobs.backoff import full_queue_wait
from haarline.service.jobs.destinations import check_destination
from haarline.service.jobs.space import require_free_space
from haarline.service.jobs.states import JobState
from haarline.service.jobs.store import Store
from haarline.service.settings import Settings

__all__ = ["analyses", "comparisons"]

PLOT_NAME = re.compile(r"^[a-z0-9][a-z0-9_-]{0,60}\.png$")
_LABEL_KEY = re.compile(LABEL_KEY)
_CURSOR = re.compile(r"^([0-9]{1,12}(?:\.[0-9]{1,17})?):([0-9a-f]{32})$")
"""A decoded listing cursor: the ``created`` time and the id of the last job shown."""

LabelFilter = Annotated[
    list[str] | None,
    Query(
        alias="label",
        max_length=20,
        description="`key:value` (or `key`, any value) that a job's labels must have; repeat "
        "to require several.",
    ),
]
StateFilter = Annotated[
    list[JobState] | None,
    Query(alias="state", max_length=5, description="Only jobs in these states (repeatable)."),
]


def _label_filters(given: list[str] | None) -> list[tuple[str, str | None]]:
    out: list[tuple[str, str | None]] = []
    for i, text in enumerate(given or []):
        key, sep, value = text.partition(":")
        if not _LABEL_KEY.fullmatch(key) or (sep and not value) or len(value) > 200:
            raise haarline.OptionError(
                [
                    haarline.Problem(
                        f"label[{i}]",
                        f"{text[:80]!r} is not a label filter; expected key:value or key, the "
                        "key of lower-case letters, digits and _ . - (e.g. pr:17)",
                    )
                ]
            )
        out.append((key, value if sep else None))
    return out


def _cursor(text: str | None) -> tuple[float, str] | None:
    if text is None:
        return None
    try:
        decoded = base64.urlsafe_b64decode(text + "=" * (-len(text) % 4)).decode("ascii")
    except (binascii.Error, ValueError):
        decoded = ""
    match = _CURSOR.fullmatch(decoded)
    if match is None:
        raise haarline.OptionError(
            [haarline.Problem("cursor", "not a cursor of this listing; use the `next` link")]
        )
    return float(match.group(1)), match.group(2)


def _encode_cursor(job: dict[str, Any]) -> str:
    raw = f"{float(job['created'])!r}:{job['id']}".encode("ascii")  # exact: repr round-trips
    return base64.urlsafe_b64encode(raw).rstrip(b"=").decode("ascii")


JSON_BODY = Depends(require_json)
"""A body route's check of the request's media type (415 unless JSON)."""

IdempotencyKey = Annotated[
    str | None,
    Header(
        alias="Idempotency-Key",
        max_length=200,
        description="Retrying a POST with the same key returns the first job.",
    ),
]


def _callback(url: str | None, caller: str, store: Store, settings: Settings) -> str | None:
    """Check a ``callback_url`` (destination rules, a signing secret to sign with)."""
    if url is None:
        return None
    check_destination(url, settings)
    with store.connect() as conn:
        secret = outbox.secret_of(conn, caller)
    if secret is None:
        raise CallbackRefused(
            url,
            "this key has no signing secret yet; create one with POST /v1/webhook-secret "
            "(it is shown once), then submit again",
        )
    return url


def _get(store: Store, job_id: str) -> dict[str, Any]:
    job = store.get_job(job_id)
    if job is None:
        raise HTTPException(404, f"no job {job_id!r}")
    return job


def _finished(store: Store, job: dict[str, Any]) -> tuple[dict[str, Any], str]:
    state: JobState = job["state"]
    if state is not JobState.SUCCEEDED:
        what = {
            JobState.QUEUED: "is queued",
            JobState.RUNNING: f"is running ({job['fraction']:.0%}, {job['stage']})",
            JobState.FAILED: f"failed: {job['error']}",
            JobState.CANCELLED: "was cancelled",
        }[state]
        raise HTTPException(409, f"job {job['id']} {what}; it has no result")
    result = store.result(job["id"])
    if result is None:
        raise HTTPException(409, f"job {job['id']} has no stored result")
    return result


def _router(kind: str, prefix: str, noun: str, plural: str) -> APIRouter:
    router = APIRouter(prefix=prefix, tags=[plural])
    base = prefix
    Body = AnalysisCreate if kind == "analysis" else CompareCreate
    Readable = Annotated[Reading, Depends(reader(kind))]
    title = noun.capitalize()
    what = "an analysis of one circuit" if kind == "analysis" else "a ranking of 2 to 20 circuits"

    @router.post(
        "",
        status_code=202,
        response_model=JobPublic,
        operation_id=f"create{title}",
        summary=f"Start {'an' if noun[0] in 'aeiou' else 'a'} {noun} job",
        description=f"Queue {what}; poll the `Location` it answers with, then read the outputs.",
        responses={202: CREATED, **problem_responses(401, 408, 409, 413, 415, 422, 429, 503)},
        dependencies=[JSON_BODY],
    )
    def create(
        body: Body,  # type: ignore[valid-type]
        request: Request,
        caller: CallerDep,
        settings: SettingsDep,
        store: StoreDep,
        runner: RunnerDep,
        response: Response,
        idempotency_key: IdempotencyKey = None,
    ) -> Any:
        labels: dict[str, str] = body.labels  # type: ignore[attr-defined]
        if kind == "analysis":
            stored, estimate = admit_analysis(body, settings)
        else:
            stored, estimate = admit_compare(body, settings)
        url: str | None = body.callback_url  # type: ignore[attr-defined]
        callback = _callback(url, caller, store, settings)
        digest = request_hash(kind, stored)
        here = request.url.path
        if idempotency_key is not None:
            previous = store.find_idempotent(caller, idempotency_key)
            if previous is not None:
                same = previous["request_hash"] == digest
                same = same and previous["labels"] == dict(sorted(labels.items()))
                if not same or previous["callback_url"] != callback:
                    return problem_response(
                        409,
                        "this Idempotency-Key was used with a different request body",
                        kind="idempotency-conflict",
                        instance=here,
                    )
                # the answer of the first request again (202), marked as a replay
                response.headers["Location"] = f"{base}/{previous['id']}"
                response.headers["Idempotent-Replayed"] = "true"
                return job_public(_get(store, previous["id"]), base)
        require_free_space(store, settings)  # before the new job is written
        if store.active_count(caller) >= settings.queue_per_key:
            return problem_response(
                429,
                f"this key already has {settings.queue_per_key} queued or running jobs, the "
                "limit; retry later",
                kind="queue-full",
                headers={
                    "Retry-After": str(full_queue_wait(store, settings, runner.capacity, caller))
                },
                instance=here,
            )
        job, created = store.create_job(
            owner=caller,
            kind=kind,
            request=stored,
            request_hash=digest,
            idempotency_key=idempotency_key,
            labels=labels,
            callback_url=callback,
            work=estimate.work,
        )
        if created:
            # the cache is per key unless HAARLINE_SHARED_RESULT_CACHE shares it
            shared = settings.shared_result_cache
            source = store.find_finished(digest, owner=None if shared else caller)
            if source is not None and source != job["id"]:
                store.copy_result(source, job["id"])
            else:
                runner.notify()
        response.headers["Location"] = f"{base}/{job['id']}"
        return job_public(_get(store, job["id"]), base)

    @router.get(
        "",
        response_model=JobPage,
        operation_id=f"list{plural.capitalize()}",
        summary=f"List this key's {noun} jobs, newest first, by label and state",
        description="One page of jobs, filtered by labels and states; follow `next` (or the "
        "`Link` header) for the next page.",
        responses={200: LISTED, **problem_responses(401, 422, 503)},
    )
    def listing(
        request: Request,
        response: Response,
        caller: CallerDep,
        store: StoreDep,
        settings: SettingsDep,
        label: LabelFilter = None,
        state: StateFilter = None,
        limit: Annotated[int, Query(ge=1, le=200)] = 50,
        cursor: Annotated[
            str | None, Query(max_length=100, description="From `next`; omit for page one.")
        ] = None,
        offset: Annotated[str | None, Query(include_in_schema=False)] = None,
    ) -> Any:
        if offset is not None:  # never ignored: a client paging by offset would loop
            raise haarline.OptionError(
                [
                    haarline.Problem(
                        "offset",
                        "listings page with a cursor now, not an offset: follow `next` in the "
                        'body (or the Link: <...>; rel="next" header)',
                    )
                ]
            )
        filters = _label_filters(label)
        jobs, total = store.list_jobs(
            caller,
            kind=kind,
            limit=limit + 1,
            labels=filters,
            states=state or (),
            before=_cursor(cursor),
        )
        more = len(jobs) > limit
        jobs = jobs[:limit]
        following = None
        if more:
            query = [("label", text) for text in label or []]
            query += [("state", s.value) for s in state or []]
            query += [("limit", str(limit)), ("cursor", _encode_cursor(jobs[-1]))]
            following = f"{settings.base_url}{base}?{urlencode(query)}"
            response.headers["Link"] = f'<{following}>; rel="next"'
        response.headers["Cache-Control"] = NO_STORE
        return JobPage(jobs=[job_public(j, base) for j in jobs], total=total, next=following)

    @router.get(
        "/latest",
        response_model=JobPublic,
        operation_id=f"latest{title}",
        summary=f"This key's newest {noun} job with these labels (and states)",
        description=f"The newest {noun} job of this key whose labels and state match; 404 "
        "when none does.",
        responses={200: CHANGING, **problem_responses(401, 404, 422, 503)},
    )
    def latest(
        response: Response,
        caller: CallerDep,
        store: StoreDep,
        label: LabelFilter = None,
        state: StateFilter = None,
    ) -> Any:
        jobs, _ = store.list_jobs(
            caller, kind=kind, limit=1, labels=_label_filters(label), states=state or ()
        )
        if not jobs:
            raise HTTPException(404, f"no {noun} job of this key matches")
        response.headers["Cache-Control"] = NO_STORE
        return job_public(store.get_job(jobs[0]["id"]) or jobs[0], base)

    @router.get(
        "/{job_id}",
        response_model=JobPublic,
        operation_id=f"get{title}",
        summary="Status and progress; with wait=S, as soon as either changes (a long poll)",
        description="The job's state, progress, events, labels, policy verdict and the links "
        "to its outputs; `wait` holds the answer until something changes.",
        responses={200: CHANGING, **problem_responses(401, 404, 422, 503)},
    )
    async def status(
        job_id: str,
        caller: CallerDep,
        store: StoreDep,
        response: Response,
        wait: Annotated[
            float | None,
            Query(
                ge=0,
                le=MAX_WAIT,
                allow_inf_nan=False,
                description="Seconds to hold the answer until the state or progress changes "
                f"(at most {MAX_WAIT:g}); a finished job answers at once.",
            ),
        ] = None,
    ) -> Any:
        response.headers["Cache-Control"] = NO_STORE
        job = await run_in_threadpool(owned_job, store, job_id, caller, kind)
        if wait:
            job = await next_change(store, job, wait)
        return job_public(job, base)

    @router.delete(
        "/{job_id}",
        status_code=202,
        response_model=JobPublic,
        operation_id=f"cancel{title}",
        summary="Cancel a queued or running job; delete a finished one",
        description="A queued or running job is cancelled (202, the job); a finished one is "
        "deleted with its outputs and share links (204).",
        responses={
            202: {"description": "The active job, cancelled or asked to stop."},
            204: {
                "description": "The finished job was deleted, with its report, summary, plots "
                "and share links."
            },
            **problem_responses(401, 404, 503),
        },
    )
    def cancel(job_id: str, caller: CallerDep, store: StoreDep) -> Any:
        job = owned_job(store, job_id, caller, kind)
        if not job["state"].active:
            if store.delete_finished(job_id):
                return Response(status_code=204)
            raise HTTPException(404, f"no {kind} job {job_id!r} for this key")
        store.request_cancel(job_id)
        return job_public(_get(store, job_id), base)

    @router.get(
        "/{job_id}/report",
        operation_id=f"get{title}Report",
        openapi_extra={**SHARED_READ, "parameters": [IF_NONE_MATCH]},
        summary="The report JSON (report_format 1)"
        if kind == "analysis"
        else "The comparison JSON (compare_format 1): ranking and reports",
        description="The finished job's result, typed key by key; it never changes (`ETag`, "
        "`304`).",
        response_class=JSONResponse,
        response_model=Report if kind == "analysis" else Comparison,
        responses={
            **immutable_responses(
                "The report (report_format 1)"
                if kind == "analysis"
                else "The ranking and each circuit's report (compare_format 1)",
                {"application/json": {}},
            ),
            **problem_responses(401, 403, 404, 409, 422, 503),
        },
    )
    def report(request: Request, store: StoreDep, reading: Readable) -> Response:
        result, _ = _finished(store, reading.job)
        return immutable(request, bytes(JSONResponse(result).body), "application/json")

    @router.get(
        "/{job_id}/summary",
        operation_id=f"get{title}Summary",
        openapi_extra={**SHARED_READ, "parameters": [IF_NONE_MATCH]},
        summary="The Markdown summary",
        description="The finished job's summary as Markdown, with links to its plots and "
        "page (absolute with HAARLINE_PUBLIC_URL, tokened when read with a token).",
        response_class=Response,
        responses={
            **immutable_responses(
                "Markdown text (UTF-8)", {"text/markdown": {"schema": {"type": "string"}}}
            ),
            **problem_responses(401, 403, 404, 409, 422, 503),
        },
    )
    def summary(
        request: Request, settings: SettingsDep, store: StoreDep, reading: Readable
    ) -> Response:
        _, markdown = _finished(store, reading.job)
        public = settings.public_url
        root = f"{public.rstrip('/')}{base}/{reading.job['id']}/" if public else None
        text = summary_links(markdown, root=root, token=reading.token)
        return immutable(request, text.encode(), "text/markdown; charset=utf-8")

    @router.get(
        "/{job_id}/plots",
        response_model=list[str],
        operation_id=f"list{title}Plots",
        openapi_extra=SHARED_READ,
        summary="Names of the PNG plots",
        description="The file names of the finished job's plots, for `…/plots/{name}`.",
        responses=problem_responses(401, 403, 404, 409, 422, 503),
    )
    def plots(store: StoreDep, reading: Readable) -> Any:
        _finished(store, reading.job)
        return store.artifact_names(reading.job["id"])

    @router.get(
        "/{job_id}/plots/{name}",
        operation_id=f"get{title}Plot",
        openapi_extra={**SHARED_READ, "parameters": [IF_NONE_MATCH]},
        summary="One PNG plot",
        description="The bytes of one plot: `image/png`, or the same bytes as "
        "`application/octet-stream` when `Accept` asks for that.",
        response_class=Response,
        responses={
            **immutable_responses("A PNG image", PNG),
            **problem_responses(401, 403, 404, 409, 422, 503),
        },
    )
    def plot(
        job_id: str, name: str, request: Request, store: StoreDep, reading: Readable
    ) -> Response:
        _finished(store, reading.job)
        content = store.artifact(job_id, name) if PLOT_NAME.fullmatch(name) else None
        if content is None:
            raise HTTPException(404, f"no plot {name!r}; see {base}/{job_id}/plots")
        return binary(request, content, "image/png")

    return router


analyses = _router("analysis", "/v1/analyses", "analysis", "analyses")
comparisons = _router("compare", "/v1/comparisons", "comparison", "comparisons")

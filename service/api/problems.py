"""Errors as RFC 9457 problem details (``application/problem+json``), in one place.

=====================================  ======
exception                              status
=====================================  ======
``CircuitError``, ``OptionError``,     422, with ``errors[].path`` (JSON path in the body)
request validation, undecodable body
``OverLimit`` (admission control)      422, with ``limit`` and ``estimate``
``LimitError`` (memory budget)         422
``StoreUnavailable``                   503, with ``Retry-After``
``Unavailable`` (not ready, busy)      503, with ``Retry-After``
``TimedOut`` (score time limit)        504
``OSError``: no space left (ENOSPC,    503, with ``Retry-After``; any other ``OSError`` is a
EDQUOT, EFBIG), e.g. the page secret   500
``HTTPException``                      its own status
anything else                          500 (logged; a bug)
=====================================  ======

Every 503 carries ``Retry-After``: ``HAARLINE_RETRY_AFTER`` seconds unless the exception
brings a better estimate (the rules are in :mod:`haarline.service.jobs.backoff`).

The OpenAPI document lists, per route, only the problem statuses that route can return:
each route declares them with :func:`problem_responses` (one shared table of
descriptions), and :func:`install_openapi` drops FastAPI's automatic 422 from routes that
did not declare one (a path parameter that takes any text cannot fail validation). 408 and
413 are declared on routes that take a body; any other route answers them only to a body
it does not take.
"""

from __future__ import annotations

import errno
import logging
import typing
from typing import Any

import haarline
from fastapi import FastAPI, HTTPException, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse
from haarline.circuit.model import validation_problems
from haarline.errors import format_path
from haarline.report.options import option_problems
from haarline.service.api.document import exact_bounds
from haarline.service.api.examples import add_examples
from haarline.service.api.http import allowed_methods
from haarline.service.api.schemas import ProblemDetail
from haarline.service.errors import OverLimit, StoreUnavailable, TimedOut, Unavailable
from starlette.exceptions import HTTPException as StarletteHTTPException

__all__ = [
    "PROBLEM_HEADERS",
    "PROBLEM_STATUSES",
    "PROBLEM_TYPE",
    "OverLimit",
    "TimedOut",
    "Unavailable",
    "install_handlers",
    "install_openapi",
    "problem_response",
    "problem_responses",
]

log = logging.getLogger("haarline.service")

PROBLEM_TYPE = "https://haarline.invalid/problems/"
NO_SPACE = frozenset({errno.ENOSPC, errno.EDQUOT, errno.EFBIG})
"""``OSError`` numbers that mean the data directory's disk (or a size limit) is full."""
_TITLES = {
    400: "Bad request",
    401: "Not authenticated",
    403: "Forbidden",
    404: "Not found",
    405: "Method not allowed",
    408: "Request timeout",
    409: "Conflict",
    413: "Request body too large",
    415: "Unsupported media type",
    422: "Invalid input",
    429: "Too many jobs",
    500: "Internal error",
    503: "Service unavailable",
    504: "Timed out",
}


PROBLEM_STATUSES: dict[int, str] = {
    401: "No API key, not a Bearer key, or an unknown or revoked key.",
    403: "The share token is malformed, tampered with, expired or for another job.",
    404: "No such job for this key, or no such plot or reference circuit.",
    408: "The request body did not arrive within HAARLINE_READ_TIMEOUT seconds.",
    409: "The job has no result (yet), or the Idempotency-Key was used with another body.",
    413: "The request body is larger than HAARLINE_MAX_BODY_BYTES.",
    415: "The body is not application/json (a form, text/plain, YAML…).",
    422: "Invalid input (errors[].path names each field), or estimated work over a limit "
    "(limit, estimate).",
    429: "The key's queue is full; Retry-After says when to try again.",
    503: "Temporarily unable to serve (store unavailable, disk full, not ready, busy); "
    "Retry-After says when to try again.",
    504: "The work ran past its time limit (limit, in seconds) and was stopped.",
}
"""Every problem status a route may declare, with the description the document shows."""


_RETRY_AFTER = {
    "description": "Whole seconds (1 or more) to wait before trying again.",
    "required": True,
    # no "minimum": FastAPI's document model would write it as a float (document.py)
    "schema": {"type": "integer"},
}
PROBLEM_HEADERS: dict[int, dict[str, Any]] = {
    401: {
        "WWW-Authenticate": {
            "description": "`Bearer`: the scheme the key goes in.",
            "required": True,
            "schema": {"type": "string", "enum": ["Bearer"]},
        }
    },
    415: {
        "Accept-Post": {
            "description": "The media type a body must have: `application/json`.",
            "required": True,
            "schema": {"type": "string", "enum": ["application/json"]},
        }
    },
    429: {"Retry-After": _RETRY_AFTER},
    503: {"Retry-After": _RETRY_AFTER},
}
"""The headers that every answer of a problem status carries."""


def problem_responses(*statuses: int) -> dict[int | str, dict[str, Any]]:
    """The ``responses=`` entries of a route for the problem statuses it can return.

    Each comes with the headers that status always carries (:data:`PROBLEM_HEADERS`).

    Examples
    --------
    >>> sorted(problem_responses(401, 503))
    [401, 503]
    >>> list(problem_responses(429)[429]["headers"])
    ['Retry-After']
    """
    return {
        status: {
            "model": ProblemDetail,
            "description": PROBLEM_STATUSES[status],
            "content": {"application/problem+json": {}},
            **({"headers": PROBLEM_HEADERS[status]} if status in PROBLEM_HEADERS else {}),
        }
        for status in statuses
    }


def install_openapi(app: FastAPI) -> None:
    """Make the app's OpenAPI document list exactly the declared problem responses.

    FastAPI adds a 422 with its own error schema to every route with parameters; a route
    that did not declare 422 cannot return one here, so it is dropped. A declared problem
    response is served as ``application/problem+json`` only, with the problem schema
    (FastAPI files that schema under the route's own media type, JSON or HTML). The
    options' ``metrics`` field lists what each metric of the registry measures, integer
    bounds are exact (:mod:`haarline.service.api.document`), and every operation gets
    its examples (:mod:`haarline.service.api.examples`).
    """
    build = app.openapi

    def openapi() -> dict[str, Any]:
        if app.openapi_schema is None:
            document = add_examples(_metrics_described(_declared_problems_only(build())))
            app.openapi_schema = exact_bounds(document, getattr(app.state, "routes", app.routes))
        return app.openapi_schema

    app.openapi = openapi  # type: ignore[method-assign]


_DEFAULT_422 = "#/components/schemas/HTTPValidationError"
_PROBLEM = {"$ref": "#/components/schemas/ProblemDetail"}


def _declared_problems_only(document: dict[str, Any]) -> dict[str, Any]:
    for methods in document.get("paths", {}).values():
        for operation in methods.values():
            responses = operation.get("responses", {})
            for status, response in list(responses.items()):
                content = response.get("content", {})
                schema = content.get("application/json", {}).get("schema", {})
                if status == "422" and schema.get("$ref") == _DEFAULT_422:
                    del responses[status]
                elif "application/problem+json" in content:
                    response["content"] = {"application/problem+json": {"schema": {**_PROBLEM}}}
    schemas = document.get("components", {}).get("schemas", {})
    for name in ("HTTPValidationError", "ValidationError"):
        schemas.pop(name, None)
    return document


def _metrics_described(document: dict[str, Any]) -> dict[str, Any]:
    options = document.get("components", {}).get("schemas", {}).get("JobOptions")
    if options is not None:
        options["properties"]["metrics"]["description"] = "Metrics to compute, in any order: " + (
            "; ".join(f"{name}: {row.about}" for name, row in haarline.REGISTRY.items())
        )
    return document


def _retry_after(request: Request, seconds: int | None = None) -> dict[str, str]:
    if seconds is None:
        seconds = request.app.state.settings.retry_after
    return {"Retry-After": str(seconds)}


def problem_response(
    status: int,
    detail: str,
    *,
    kind: str = "",
    errors: list[dict[str, str]] | None = None,
    headers: dict[str, str] | None = None,
    instance: str | None = None,
    **extra: Any,
) -> JSONResponse:
    """A problem+json response."""
    body: dict[str, Any] = {
        "type": PROBLEM_TYPE + kind if kind else "about:blank",
        "title": _TITLES.get(status, "Error"),
        "status": status,
        "detail": detail,
        "errors": errors or [],
    }
    if instance:
        body["instance"] = instance
    body.update({k: v for k, v in extra.items() if v is not None})
    return JSONResponse(
        body, status_code=status, headers=headers, media_type="application/problem+json"
    )


def _entries(problems: list[haarline.Problem], prefix: str = "") -> list[dict[str, str]]:
    out = []
    for p in problems:
        path = p.path if not prefix else (prefix if p.path == "(root)" else f"{prefix}.{p.path}")
        out.append({"path": path, "message": p.message})
    return out


def _inner(annotation: Any) -> Any:
    """``X`` for ``X | None`` and ``list[X]``; anything else unchanged."""
    args = [a for a in typing.get_args(annotation) if a is not type(None)]
    return args[0] if len(args) == 1 else annotation


def _fields_at(model: Any, loc: list[Any]) -> list[str] | None:
    """Field names of the pydantic model found by walking ``loc`` from ``model``, if any."""
    for part in loc:
        if isinstance(part, int):
            model = _inner(_inner(model))  # list[X] | None -> list[X] -> X
        else:
            field = getattr(_inner(model), "model_fields", {}).get(part)
            if field is None:
                return None
            model = field.annotation
    fields = getattr(_inner(model), "model_fields", None)
    return list(fields) if fields else None


def _request_problems(errors: list[dict[str, Any]], body: Any = None) -> list[dict[str, str]]:
    """Field problems of a request body, translated with the models' own messages.

    ``body`` is the route's body model, used to list the allowed fields of an unknown one.
    """
    out: list[dict[str, str]] = []
    for err in errors:
        loc = [x for x in err["loc"] if x != "body"]
        # find the circuit or options sub-document (possibly inside circuits[i])
        for i, part in enumerate(loc):
            if part in ("circuit", "options") and i + 1 < len(loc):
                head, rest = loc[: i + 1], loc[i + 1 :]
                sub = dict(err, loc=tuple(rest))
                translated = (
                    validation_problems([sub]) if part == "circuit" else option_problems([sub])
                )
                out += _entries(translated, format_path(tuple(head)))
                break
        else:
            msg = str(err.get("msg", "invalid")).removeprefix("Value error, ")
            allowed = _fields_at(body, loc[:-1]) if err.get("type") == "extra_forbidden" else None
            if allowed:
                msg = f"unknown field; allowed: {', '.join(allowed)}"
            out.append({"path": format_path(tuple(loc)), "message": msg})
    return out


def _allowed_methods(request: Request) -> str:
    """Every method some route serves at this path (a 405 from one route names only its own)."""
    routes = getattr(request.app.state, "routes", request.app.router.routes)
    return ", ".join(allowed_methods(routes, request.url.path))


def _unparsable(cause: BaseException) -> str:
    if isinstance(cause, UnicodeDecodeError):
        return f"the body is not UTF-8 text ({cause.reason} at byte {cause.start})"
    if isinstance(cause, RecursionError):
        return "the body nests arrays and objects too deeply to be read"
    return "the body could not be read as JSON"


def install_handlers(app: FastAPI) -> None:
    """Map every exception to a problem response."""

    @app.exception_handler(RequestValidationError)
    async def _validation(request: Request, exc: RequestValidationError) -> JSONResponse:
        route = request.scope.get("route")
        body_field = getattr(route, "body_field", None)
        info = getattr(body_field, "field_info", None)
        model = getattr(info, "annotation", None)
        errors = _request_problems(list(exc.errors()), model)
        detail = "; ".join(f"{e['path']}: {e['message']}" for e in errors[:5])
        return problem_response(
            422,
            detail or "invalid request",
            kind="invalid-input",
            errors=errors,
            instance=request.url.path,
        )

    @app.exception_handler(haarline.InputError)
    async def _input(request: Request, exc: haarline.InputError) -> JSONResponse:
        prefix = getattr(exc, "body_path", "")
        errors = _entries(exc.problems, prefix)
        detail = "; ".join(f"{e['path']}: {e['message']}" for e in errors[:5])
        return problem_response(
            422, detail, kind="invalid-input", errors=errors, instance=request.url.path
        )

    @app.exception_handler(haarline.LimitError)
    async def _limit(request: Request, exc: haarline.LimitError) -> JSONResponse:
        return problem_response(422, str(exc), kind="over-limit", instance=request.url.path)

    @app.exception_handler(OverLimit)
    async def _over(request: Request, exc: OverLimit) -> JSONResponse:
        return problem_response(
            422,
            str(exc),
            kind="over-limit",
            limit=exc.limit,
            estimate=exc.estimate,
            instance=request.url.path,
        )

    @app.exception_handler(StoreUnavailable)
    async def _store(request: Request, exc: StoreUnavailable) -> JSONResponse:
        log.warning("store unavailable: %s", exc)
        return problem_response(
            503,
            str(exc),
            kind="store-unavailable",
            headers=_retry_after(request),
            instance=request.url.path,
        )

    @app.exception_handler(Unavailable)
    async def _unavailable(request: Request, exc: Unavailable) -> JSONResponse:
        return problem_response(
            503,
            exc.detail,
            kind=exc.kind,
            headers=_retry_after(request, exc.retry_after),
            instance=request.url.path,
            **exc.extra,
        )

    @app.exception_handler(TimedOut)
    async def _timed_out(request: Request, exc: TimedOut) -> JSONResponse:
        return problem_response(
            504, exc.detail, kind=exc.kind, instance=request.url.path, **exc.extra
        )

    @app.exception_handler(StarletteHTTPException)
    async def _http(request: Request, exc: StarletteHTTPException) -> JSONResponse:
        if exc.status_code == 400 and exc.__cause__ is not None:
            # FastAPI could not even decode the body (chained: the decoding error): the
            # same 422 as malformed JSON, with the reason, rather than a bare 400
            message = _unparsable(exc.__cause__)
            return problem_response(
                422,
                f"(root): {message}",
                kind="invalid-input",
                errors=[{"path": "(root)", "message": message}],
                instance=request.url.path,
            )
        headers = dict(exc.headers) if exc.headers else None
        if exc.status_code == 405:
            headers = {**(headers or {}), "Allow": _allowed_methods(request)}
        return problem_response(
            exc.status_code, str(exc.detail), headers=headers, instance=request.url.path
        )

    @app.exception_handler(Exception)
    async def _bug(request: Request, exc: Exception) -> JSONResponse:
        log.exception("unhandled error on %s", request.url.path)
        return problem_response(
            500, "internal error; it has been logged", instance=request.url.path
        )

    @app.exception_handler(OSError)
    async def _os(request: Request, exc: OSError) -> JSONResponse:
        if exc.errno not in NO_SPACE:
            return await _bug(request, exc)
        log.warning("no space left on %s: %s", request.url.path, exc)
        return problem_response(
            503,
            f"the data directory has no space left ({exc.strerror}); retry once space is freed",
            kind="no-space",
            headers=_retry_after(request),
            instance=request.url.path,
        )

    _ = HTTPException  # FastAPI's subclass is handled by the Starlette handler above

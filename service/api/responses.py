"""What the OpenAPI document says of the answers: their headers and media types, in one place.

Every response header a route sends is declared on that route's status, from the
declarations here, so a client (and schemathesis, in ``tests/test_fuzz.py``) can rely on
them: ``Location`` and ``Idempotent-Replayed`` on a created job, ``Link`` on a listing,
``Cache-Control`` on everything that may change, ``ETag`` and ``Cache-Control`` on a
finished job's outputs (with ``If-None-Match`` and its ``304``), the security headers of
the HTML page. The problem statuses bring their own (``Retry-After`` on 429 and 503,
``WWW-Authenticate`` on 401, ``Accept-Post`` on 415: :func:`haarline.service.api.problems.
problem_responses`). Headers that only describe the body's encoding (``Content-Type``,
``Content-Length``, ``Content-Encoding``, ``Vary``) and the CORS headers of a configured
origin are not listed. ``tests/test_openapi_headers.py`` sends requests to every
operation and fails on a header the document does not declare for that status.

The signature headers of notifications (``webhook-id``, ``webhook-timestamp``,
``webhook-signature``) go on requests the service sends, not on its answers: they belong
in the document's ``webhooks`` (FastAPI's ``app.webhooks``) or an operation's
``callbacks``, as header parameters, declared beside the code that sends them.

Plots are declared as ``image/png`` and ``application/octet-stream``, both
``{type: string, format: binary}``: the server answers the second when ``Accept`` asks
for it (:func:`haarline.service.api.http.binary`), and it is the binary type that client
generators turn into bytes (openapi-python-client 0.29 reads only ``application/json``,
``*+json``, ``text/*`` and ``application/octet-stream`` bodies and skips the rest).
"""

from __future__ import annotations

from typing import Any

from haarline.service.api.http import IMMUTABLE, NO_STORE, OCTETS

__all__ = [
    "CHANGING",
    "CREATED",
    "IF_NONE_MATCH",
    "LISTED",
    "PAGE_HEADERS",
    "PNG",
    "header",
    "immutable_responses",
]


def header(description: str, *, required: bool = False, **schema: Any) -> dict[str, Any]:
    """One response header object (its schema a string unless told).

    Examples
    --------
    >>> header("Seconds to wait.", required=True, type="integer")["schema"]
    {'type': 'integer'}
    """
    return {
        "description": description,
        "required": required,
        "schema": {"type": "string", **schema},
    }


NOT_CACHED = header(
    "The answer may change: not to be stored (`no-store`).", required=True, enum=[NO_STORE]
)

CHANGING: dict[str, Any] = {"headers": {"Cache-Control": NOT_CACHED}}
"""The 200 of an answer that may change at any time (a job's status, a listing)."""

CREATED: dict[str, Any] = {
    "description": "The job, queued (or answered from this key's stored result of an "
    "identical request). A retry with the same Idempotency-Key and body answers the same "
    "way, with the first job.",
    "headers": {
        "Location": header("The job's URL (its status).", required=True),
        "Idempotent-Replayed": header(
            "`true` when this answers a retry with the same Idempotency-Key.", enum=["true"]
        ),
    },
}

LISTED: dict[str, Any] = {
    "description": "One page of jobs.",
    "headers": {
        "Link": header('The next page: `<URL>; rel="next"` (absent on the last).'),
        "Cache-Control": NOT_CACHED,
    },
}

IF_NONE_MATCH: dict[str, Any] = {
    "name": "If-None-Match",
    "in": "header",
    "required": False,
    "description": "An `ETag` this client holds: `304` without a body when it still matches.",
    "schema": {"type": "string"},
}
"""The conditional-request header of a finished job's outputs (an ``openapi_extra`` parameter)."""

_ETAG = "A strong tag of the bytes; send it as `If-None-Match` to get `304` next time."
_IMMUTABLE = "The output never changes: `private, max-age=31536000, immutable`."

PAGE_HEADERS: dict[str, Any] = {
    "Content-Security-Policy": header(
        "Nothing is loaded from elsewhere: images are inline, no scripts.", required=True
    ),
    "X-Content-Type-Options": header("`nosniff`.", required=True, enum=["nosniff"]),
    "Referrer-Policy": header("`no-referrer`.", required=True, enum=["no-referrer"]),
}
"""The security headers of the HTML page."""


def immutable_responses(
    description: str, content: dict[str, Any], *, finished_only: bool = True
) -> dict[int | str, dict[str, Any]]:
    """The 200 and 304 of a finished job's output: ``ETag``, ``Cache-Control``.

    ``finished_only=False`` is for the page, which also answers (``no-store``, no tag)
    while the job is queued or running.
    """
    cache = (
        header(_IMMUTABLE, required=True, enum=[IMMUTABLE])
        if finished_only
        else header(
            f"{_IMMUTABLE} While the job is queued or running: `no-store`.",
            required=True,
            enum=[IMMUTABLE, NO_STORE],
        )
    )
    return {
        200: {
            "description": description,
            "content": content,
            "headers": {"ETag": header(_ETAG, required=finished_only), "Cache-Control": cache},
        },
        304: {
            "description": "Not modified: the `If-None-Match` tag matches. No body.",
            "headers": {
                "ETag": header(_ETAG, required=True),
                "Cache-Control": header(_IMMUTABLE, required=True, enum=[IMMUTABLE]),
            },
        },
    }


_BINARY = {"schema": {"type": "string", "format": "binary"}}
PNG: dict[str, Any] = {"image/png": _BINARY, OCTETS: _BINARY}
"""A plot's media types: PNG, or the same bytes as ``application/octet-stream``."""

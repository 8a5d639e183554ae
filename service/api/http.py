"""HTTP around the routes: HEAD, gzip, conditional requests, media types and allowed methods.

- :class:`HeadAsGet`: every GET route answers HEAD with the GET's status and headers and
  no body (FastAPI registers GET only; the document lists no HEAD operations).
- :class:`Compress`: JSON, HTML and Markdown bodies of 500 bytes or more are gzipped when
  the request accepts gzip (``Vary: Accept-Encoding``); PNGs are left as they are. A strong
  ``ETag`` of a compressed body gets a ``-gzip`` suffix, because it is another
  representation (RFC 9110, 8.8.3).
- :func:`immutable`: the answer for a finished job's report, summary, plot or page: a
  strong ``ETag`` (a hash of the bytes), ``Cache-Control: private, max-age=…, immutable``
  and 304 for a matching ``If-None-Match``, whichever representation's tag it names.
- :func:`binary`: the same for a plot, in the media type the request's ``Accept`` prefers:
  its own (``image/png``) or ``application/octet-stream`` (the type client generators read
  as bytes), with ``Vary: Accept`` and a tag of its own for the second representation.
- :func:`require_json`: a body route's dependency; a body sent with another media type,
  or with none, is a 415 that names ``application/json``.
- :func:`allowed_methods`: every method some route serves at a path (for a 405's
  ``Allow``), with HEAD wherever GET is served.
"""

from __future__ import annotations

import gzip
import hashlib
import re
from collections.abc import Iterable

from fastapi import HTTPException, Request, Response
from starlette.routing import BaseRoute, Route
from starlette.types import ASGIApp, Message, Receive, Scope, Send

__all__ = [
    "IMMUTABLE",
    "NO_STORE",
    "OCTETS",
    "Compress",
    "HeadAsGet",
    "allowed_methods",
    "binary",
    "etag_of",
    "immutable",
    "require_json",
]

IMMUTABLE = "private, max-age=31536000, immutable"
"""Cache-Control of a finished job's outputs: they never change (only the owner sees them)."""

NO_STORE = "no-store"
"""Cache-Control of anything that may still change (a job's status, a running job's page)."""

GZIP_MIN_BYTES = 500
"""Bodies shorter than this are sent as they are (gzip would not pay for its header)."""

OCTETS = "application/octet-stream"
_OCTETS_SUFFIX = "-octets"

_COMPRESSIBLE = ("application/json", "application/problem+json", "text/html", "text/markdown")
_GZIP_SUFFIX = "-gzip"


def etag_of(content: bytes) -> str:
    """A strong entity tag for ``content``: the first 32 hex digits of its SHA-256.

    Examples
    --------
    >>> etag_of(b"report")
    '"845e91831319e89c4d656bdb80c278ac"'
    """
    return '"' + hashlib.sha256(content).hexdigest()[:32] + '"'


def _tags(header: str) -> list[str]:
    return [t.strip() for t in header.split(",") if t.strip()]


def immutable(
    request: Request,
    content: bytes,
    media_type: str,
    *,
    headers: dict[str, str] | None = None,
    variant: str = "",
) -> Response:
    """A finished job's output with its ``ETag``, or 304 when ``If-None-Match`` names it.

    ``If-None-Match`` compares weakly (RFC 9110, 13.1.2): a ``W/`` prefix is ignored, and
    the tag of any representation of the same content matches (gzipped, or another media
    type). ``variant`` marks the tag of a representation other than the first (a strong
    tag is unique per representation, RFC 9110, 8.8.3).
    """
    plain = etag_of(content)
    tag = plain[:-1] + variant + '"'
    extra = {**(headers or {}), "Cache-Control": IMMUTABLE}
    wanted = request.headers.get("if-none-match")
    if wanted is not None:
        variants = {plain[:-1] + suffix + '"' for suffix in ("", _GZIP_SUFFIX, _OCTETS_SUFFIX)}
        for sent in _tags(wanted):
            named = sent.removeprefix("W/")
            if sent == "*" or named in variants:
                echo = tag if sent == "*" else named
                return Response(status_code=304, headers={**extra, "ETag": echo})
    return Response(content, media_type=media_type, headers={**extra, "ETag": tag})


def _quality(accept: str, media: str) -> float:
    """The ``q`` that an ``Accept`` header gives ``media`` (its most specific range wins)."""
    kind = media.split("/", 1)[0]
    best, rank = 0.0, -1
    for part in accept.split(","):
        name, *params = (p.strip() for p in part.split(";"))
        name = name.lower()
        specific = 2 if name == media else 1 if name == f"{kind}/*" else 0 if name == "*/*" else -1
        if specific <= rank or specific < 0:
            continue
        q = 1.0
        for param in params:
            key, _, value = param.partition("=")
            if key.strip().lower() == "q":
                try:
                    q = float(value)
                except ValueError:
                    q = 0.0
        best, rank = q, specific
    return best


def binary(request: Request, content: bytes, media_type: str) -> Response:
    """A finished job's binary output, as ``media_type`` or as ``application/octet-stream``.

    The second when the request's ``Accept`` prefers it (RFC 9110, 12.5.1): the same bytes
    under the generic type. No ``Accept``, or a tie, gives ``media_type``.

    Examples
    --------
    >>> _quality("application/octet-stream", "image/png"), _quality("*/*;q=0.5", "image/png")
    (0.0, 0.5)
    """
    accept = request.headers.get("accept")
    octets = accept is not None and _quality(accept, OCTETS) > _quality(accept, media_type)
    return immutable(
        request,
        content,
        OCTETS if octets else media_type,
        headers={"Vary": "Accept"},
        variant=_OCTETS_SUFFIX if octets else "",
    )


_JSON = re.compile(r"application/([a-z0-9.+-]*\+)?json", re.IGNORECASE)


def require_json(request: Request) -> None:
    """Refuse (415) a request body that is not declared as JSON.

    ``application/json`` and any ``application/…+json`` pass, with any parameters; a body
    with no ``Content-Type`` at all is refused too (FastAPI would not read it as JSON). A
    request without a body passes (a body that is optional may be left out).
    """
    headers = request.headers
    if headers.get("content-length", "0") == "0" and "transfer-encoding" not in headers:
        return
    declared = headers.get("content-type")
    media = (declared or "").split(";", 1)[0].strip()
    if not _JSON.fullmatch(media):
        what = f"not {media!r}" if declared is not None else "and it has no Content-Type"
        raise HTTPException(
            415,
            f"the body must be application/json (with any charset parameter), {what}",
            headers={"Accept-Post": "application/json"},
        )


def allowed_methods(routes: Iterable[BaseRoute], path: str) -> list[str]:
    """Every method the ``routes`` serve at ``path``, sorted; HEAD wherever GET is.

    Examples
    --------
    >>> from starlette.routing import Route
    >>> allowed_methods([Route("/a/{x}", lambda r: None, methods=["POST"])], "/a/1")
    ['POST']
    """
    methods: set[str] = set()
    for route in routes:
        if isinstance(route, Route) and route.path_regex.fullmatch(path):
            methods |= set(route.methods or ())
    if "GET" in methods:
        methods.add("HEAD")
    return sorted(methods)


class HeadAsGet:
    """Answer HEAD like GET, without the body (the headers, Content-Length included, stay)."""

    def __init__(self, app: ASGIApp) -> None:
        self.app = app

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        """Route a HEAD request as GET and drop every body chunk of the answer."""
        if scope["type"] != "http" or scope["method"] != "HEAD":
            await self.app(scope, receive, send)
            return

        async def headless(message: Message) -> None:
            if message["type"] != "http.response.body":
                await send(message)
            elif not message.get("more_body", False):
                await send({"type": "http.response.body", "body": b"", "more_body": False})

        await self.app({**scope, "method": "GET"}, receive, headless)


def _accepts_gzip(scope: Scope) -> bool:
    for name, value in scope.get("headers") or []:
        if name == b"accept-encoding":
            for part in value.decode("latin-1").lower().split(","):
                coding, _, params = part.strip().partition(";")
                if coding.strip() in ("gzip", "*") and params.replace(" ", "") != "q=0":
                    return True
    return False


class Compress:
    """gzip JSON, HTML and Markdown answers when the request accepts gzip."""

    def __init__(self, app: ASGIApp, minimum: int = GZIP_MIN_BYTES) -> None:
        self.app = app
        self.minimum = minimum

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        """Buffer a compressible answer, then send it gzipped (or as it was, if small)."""
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        wants = _accepts_gzip(scope)
        start: Message | None = None
        chunks: list[bytes] = []

        async def compressing(message: Message) -> None:
            nonlocal start
            if message["type"] == "http.response.start":
                headers = dict(message.get("headers") or [])
                media = headers.get(b"content-type", b"").split(b";")[0].strip().decode()
                if media not in _COMPRESSIBLE or b"content-encoding" in headers:
                    await send(message)
                    return
                start = message
                return
            if start is None or message["type"] != "http.response.body":
                await send(message)
                return
            chunks.append(message.get("body", b""))
            if message.get("more_body", False):
                return
            await self._finish(send, start, b"".join(chunks), wants)

        await self.app(scope, receive, compressing)

    async def _finish(self, send: Send, start: Message, body: bytes, wants: bool) -> None:
        headers = [(k, v) for k, v in start.get("headers") or [] if k != b"vary"]
        vary = [v for k, v in start.get("headers") or [] if k == b"vary"]
        vary_value = b", ".join([*vary, b"Accept-Encoding"]) if vary else b"Accept-Encoding"
        headers.append((b"vary", vary_value))
        if wants and len(body) >= self.minimum:
            body = gzip.compress(body, compresslevel=6, mtime=0)
            out = []
            for k, v in headers:
                if k == b"etag" and v.startswith(b'"') and v.endswith(b'"'):
                    v = v[:-1] + _GZIP_SUFFIX.encode() + b'"'
                out.append((k, v))
            headers = [*out, (b"content-encoding", b"gzip")]
        headers = [(k, v) for k, v in headers if k != b"content-length"]
        headers.append((b"content-length", str(len(body)).encode()))
        await send({**start, "headers": headers})
        await send({"type": "http.response.body", "body": body, "more_body": False})

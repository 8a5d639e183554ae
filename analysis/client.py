"""A small Python client of the haarline REST service, for bots, notebooks and CI gates.

It speaks HTTP with the standard library (``urllib``; PyYAML, a dependency of haarline,
only to send a YAML description), so a review bot needs nothing beyond ``pip install
haarline``.

>>> from haarline.client import Client                      # doctest: +SKIP
>>> service = Client("https://q.example.org", key="hl_...")  # doctest: +SKIP
>>> job = service.analyze("ring.json", pairs=2000, labels={"pr": "17"})  # doctest: +SKIP
>>> job.state, job.policy                                   # doctest: +SKIP
('succeeded', None)
>>> png = service.plot(job, "fidelity.png")                  # doctest: +SKIP

Every call that the service answers with ``429`` or ``503`` is retried after the
``Retry-After`` it names (up to ``retries`` times); any other error status raises
:class:`ServiceError` with the problem's ``detail`` and its field ``errors``.
:func:`verify_webhook` checks the signature of a job-end notification as the Standard
Webhooks specification (standardwebhooks.com) defines it.
"""

from __future__ import annotations

import base64
import binascii
import hashlib
import hmac
import json
import re
import time
import urllib.error
import urllib.parse
import urllib.request
from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

__all__ = [
    "SECRET_PREFIX",
    "TOLERANCE",
    "Client",
    "Job",
    "ServiceError",
    "WebhookError",
    "secret_key",
    "sign",
    "verify_webhook",
]

ACTIVE = ("queued", "running")


class ServiceError(Exception):
    """The service answered with an error status (a problem+json body, usually)."""

    def __init__(self, status: int, detail: str, errors: list[dict[str, str]] | None = None):
        super().__init__(f"{status}: {detail}")
        self.status = status
        self.detail = detail
        self.errors = errors or []


class WebhookError(Exception):
    """A notification failed verification: bad signature, missing header, stale timestamp.

    The message says which check failed; it never contains the secret.
    """


@dataclass(frozen=True)
class Job:
    """A job as the service last described it (``GET /v1/analyses/{id}``)."""

    id: str
    kind: str
    state: str
    url: str
    policy: str | None = None
    labels: dict[str, str] = field(default_factory=dict)
    error: str | None = None
    raw: dict[str, Any] = field(default_factory=dict, repr=False)

    @property
    def finished(self) -> bool:
        """Whether the job has ended (succeeded, failed or cancelled)."""
        return self.state not in ACTIVE


JobRef = Job | str


def _circuit_body(circuit: Any) -> dict[str, Any]:
    """``circuit``, ``qasm`` or ``reference`` from a path, ``ref:NAME``, dict or model."""
    if isinstance(circuit, Mapping):
        return {"circuit": dict(circuit)}
    if hasattr(circuit, "model_dump"):  # a haarline.Circuit
        return {"circuit": circuit.model_dump(mode="json", exclude_none=True)}
    if isinstance(circuit, str) and circuit.startswith("ref:"):
        return {"reference": circuit[4:]}
    if isinstance(circuit, str | Path):
        path = Path(circuit)
        text = path.read_text(encoding="utf-8")
        suffix = path.suffix.lower()
        if suffix == ".qasm":
            return {"qasm": text}
        if suffix in (".yaml", ".yml"):
            import yaml

            return {"circuit": yaml.safe_load(text)}
        return {"circuit": json.loads(text)}
    raise TypeError(
        f"expected a file path, 'ref:NAME', a description dict or a Circuit, got {circuit!r}"
    )


class Client:
    """A client of one haarline service.

    Parameters
    ----------
    url : str
        The service's base URL, e.g. ``https://q.example.org`` (no ``/v1``).
    key : str, optional
        An API key (``hl_…``); ``None`` for a development server, or to read shared
        outputs with ``token=``.
    timeout : float
        Seconds to wait for one HTTP answer.
    retries : int
        How many times a ``429`` or ``503`` is retried after its ``Retry-After``.
    max_wait : float
        The longest single ``Retry-After`` honoured, in seconds.
    """

    def __init__(
        self,
        url: str,
        key: str | None = None,
        *,
        timeout: float = 60.0,
        retries: int = 8,
        max_wait: float = 120.0,
    ):
        self.url = url.rstrip("/")
        self.key = key
        self.timeout = timeout
        self.retries = retries
        self.max_wait = max_wait
        self.sleep = time.sleep  # tests replace it

    # --- HTTP -------------------------------------------------------------------------------

    def _absolute(self, path: str) -> str:
        return path if path.startswith(("http://", "https://")) else self.url + path

    def _open(
        self,
        method: str,
        path: str,
        *,
        body: Any = None,
        params: list[tuple[str, str]] | None = None,
        timeout: float | None = None,
        accept: str = "application/json",
    ) -> Any:
        url = self._absolute(path)
        if params:
            url += ("&" if "?" in url else "?") + urllib.parse.urlencode(params)
        data = None if body is None else json.dumps(body).encode("utf-8")
        headers = {"Accept": accept}
        if data is not None:
            headers["Content-Type"] = "application/json"
        if self.key is not None:
            headers["Authorization"] = f"Bearer {self.key}"
        for attempt in range(self.retries + 1):
            request = urllib.request.Request(url, data=data, method=method, headers=headers)
            try:
                return urllib.request.urlopen(request, timeout=timeout or self.timeout)
            except urllib.error.HTTPError as exc:
                answer = exc.read()
                exc.close()
                wait = exc.headers.get("Retry-After")
                if exc.code in (429, 503) and wait is not None and attempt < self.retries:
                    self.sleep(min(self.max_wait, max(0.0, float(wait))))
                    continue
                raise _service_error(exc.code, answer) from None
        raise AssertionError("unreachable")  # pragma: no cover

    def _json(self, method: str, path: str, **kw: Any) -> Any:
        with self._open(method, path, **kw) as response:
            return json.loads(response.read() or b"null")

    def _bytes(self, path: str, **kw: Any) -> bytes:
        with self._open("GET", path, **kw) as response:
            return bytes(response.read())

    # --- jobs -------------------------------------------------------------------------------

    def _job(self, raw: dict[str, Any]) -> Job:
        return Job(
            id=raw["id"],
            kind=raw["kind"],
            state=raw["state"],
            url=self._absolute(raw["links"]["self"]),
            policy=raw.get("policy"),
            labels=raw.get("labels") or {},
            error=raw.get("error"),
            raw=raw,
        )

    def _path(self, job: JobRef, kind: str = "analysis") -> str:
        if isinstance(job, Job):
            return job.url
        collection = "analyses" if kind == "analysis" else "comparisons"
        return f"{self.url}/v1/{collection}/{job}"

    def job(self, job: JobRef, *, kind: str = "analysis", wait: float | None = None) -> Job:
        """The job's current state; with ``wait``, a long poll of up to that many seconds."""
        params = [("wait", f"{wait:g}")] if wait else None
        timeout = self.timeout + (wait or 0)
        return self._job(self._json("GET", self._path(job, kind), params=params, timeout=timeout))

    def wait(self, job: JobRef, *, kind: str = "analysis", timeout: float = 3600.0) -> Job:
        """Block until the job has finished (succeeded, failed or cancelled)."""
        deadline = time.monotonic() + timeout
        current = self.job(job, kind=kind)
        while not current.finished:
            left = deadline - time.monotonic()
            if left <= 0:
                raise TimeoutError(f"job {current.id} is still {current.state} after {timeout} s")
            started = time.monotonic()
            current = self.job(current, wait=min(20.0, max(1.0, left)))
            if not current.finished and time.monotonic() - started < 0.5:
                self.sleep(0.5)  # a service without long polls answers at once
        return current

    def analyze(
        self,
        circuit: Any,
        *,
        wait: bool = True,
        labels: Mapping[str, str] | None = None,
        data: Mapping[str, Any] | None = None,
        policy: Mapping[str, Any] | None = None,
        callback_url: str | None = None,
        idempotency_key: str | None = None,
        **options: Any,
    ) -> Job:
        """Start an analysis of a circuit (path, ``ref:NAME``, dict or Circuit).

        ``options`` are the request options (``pairs=2000``, ``metrics=["kernel"]``, …);
        ``policy`` a policy as a ``--policy`` file holds it. With ``wait`` (the default)
        the call returns once the job has finished.
        """
        body = _circuit_body(circuit)
        return self._create("analyses", body, wait, labels, data, policy, callback_url, options)

    def compare(
        self,
        circuits: list[Any],
        *,
        wait: bool = True,
        labels: Mapping[str, str] | None = None,
        data: Mapping[str, Any] | None = None,
        policy: Mapping[str, Any] | None = None,
        callback_url: str | None = None,
        **options: Any,
    ) -> Job:
        """Start a comparison of 2 to 20 circuits; like :meth:`analyze`."""
        body = {"circuits": [_circuit_body(c) for c in circuits]}
        return self._create("comparisons", body, wait, labels, data, policy, callback_url, options)

    def _create(
        self,
        collection: str,
        body: dict[str, Any],
        wait: bool,
        labels: Mapping[str, str] | None,
        data: Mapping[str, Any] | None,
        policy: Mapping[str, Any] | None,
        callback_url: str | None,
        options: dict[str, Any],
    ) -> Job:
        if policy is not None:
            options = {**options, "policy": dict(policy)}
        if options:
            body["options"] = options
        if labels:
            body["labels"] = dict(labels)
        if data is not None:
            body["data"] = dict(data)
        if callback_url is not None:
            body["callback_url"] = callback_url
        job = self._job(self._json("POST", f"/v1/{collection}", body=body))
        return self.wait(job) if wait else job

    def cancel(self, job: JobRef, *, kind: str = "analysis") -> None:
        """Cancel an active job, or delete a finished one with its outputs."""
        self._open("DELETE", self._path(job, kind)).close()

    def jobs(
        self,
        *,
        kind: str = "analysis",
        label: Mapping[str, str] | None = None,
        state: str | list[str] | None = None,
        page_size: int = 50,
    ) -> Iterator[Job]:
        """The key's jobs, newest first, following the listing's cursor pages."""
        collection = "analyses" if kind == "analysis" else "comparisons"
        params = _filters(label, state) + [("limit", str(page_size))]
        path: str | None = f"/v1/{collection}?" + urllib.parse.urlencode(params)
        while path:
            page = self._json("GET", path)
            yield from (self._job(raw) for raw in page["jobs"])
            path = page["next"]

    def latest(
        self,
        *,
        kind: str = "analysis",
        label: Mapping[str, str] | None = None,
        state: str | list[str] | None = None,
    ) -> Job | None:
        """The newest job with these labels (and states), or ``None``."""
        collection = "analyses" if kind == "analysis" else "comparisons"
        try:
            raw = self._json("GET", f"/v1/{collection}/latest", params=_filters(label, state))
        except ServiceError as exc:
            if exc.status == 404:
                return None
            raise
        return self._job(raw)

    # --- outputs ----------------------------------------------------------------------------

    def report(self, job: JobRef, *, token: str | None = None) -> dict[str, Any]:
        """The report JSON of a succeeded job (a comparison's ranking and reports)."""
        result: dict[str, Any] = self._json("GET", self._path(job) + "/report", params=_t(token))
        return result

    def summary(self, job: JobRef, *, token: str | None = None) -> str:
        """The Markdown summary, its links made absolute (so it can be pasted anywhere)."""
        base = self._path(job) + "/"
        text = self._bytes(base + "summary", params=_t(token)).decode("utf-8")
        return _absolute_links(text, base)

    def plots(self, job: JobRef, *, token: str | None = None) -> list[str]:
        """Names of the job's PNG plots."""
        names: list[str] = self._json("GET", self._path(job) + "/plots", params=_t(token))
        return names

    def plot(self, job: JobRef, name: str, *, token: str | None = None) -> bytes:
        """One PNG plot, as bytes."""
        return self._bytes(self._path(job) + f"/plots/{name}", params=_t(token))

    def share(self, job: JobRef, *, ttl_seconds: int = 86_400) -> dict[str, Any]:
        """A share link (``id``, ``url``, ``token``, ``expires``…) to the job's outputs."""
        link: dict[str, Any] = self._json(
            "POST", self._path(job) + "/share", body={"ttl_seconds": ttl_seconds}
        )
        return link

    def events(self, job: JobRef, *, timeout: float = 3600.0) -> Iterator[dict[str, Any]]:
        """The job's server-sent events, each ``{"event": name, "data": …}``, to the end."""
        with self._open(
            "GET", self._path(job) + "/events", timeout=timeout, accept="text/event-stream"
        ) as stream:
            event: dict[str, Any] = {}
            data: list[str] = []
            for raw in stream:
                line = raw.decode("utf-8").rstrip("\r\n")
                if not line:  # a blank line ends one event (server-sent events, WHATWG HTML)
                    if data:
                        text = "\n".join(data)
                        try:
                            event["data"] = json.loads(text)
                        except ValueError:
                            event["data"] = text
                        event.setdefault("event", "message")
                        yield event
                    event, data = {}, []
                elif line.startswith(":"):
                    continue  # a comment: keeps the connection open
                else:
                    name, _, value = line.partition(":")
                    value = value.removeprefix(" ")
                    if name == "data":
                        data.append(value)
                    elif name in ("event", "id"):
                        event[name] = value


def _t(token: str | None) -> list[tuple[str, str]] | None:
    return [("token", token)] if token is not None else None


def _filters(
    label: Mapping[str, str] | None, state: str | list[str] | None
) -> list[tuple[str, str]]:
    params = [("label", f"{k}:{v}") for k, v in (label or {}).items()]
    states = [state] if isinstance(state, str) else list(state or [])
    return params + [("state", s) for s in states]


def _absolute_links(markdown: str, base: str) -> str:
    """Markdown link targets that are relative made absolute against ``base``."""

    def link(match: re.Match[str]) -> str:
        return "](" + str(urllib.parse.urljoin(base, match.group(1))) + ")"

    return re.sub(r"\]\(([^)\s]+)\)", link, markdown)


def _service_error(status: int, body: bytes) -> ServiceError:
    try:
        problem = json.loads(body)
    except ValueError:
        return ServiceError(status, body.decode("utf-8", "replace")[:500] or "no detail")
    if not isinstance(problem, dict):
        return ServiceError(status, str(problem)[:500])
    return ServiceError(status, str(problem.get("detail", "")), problem.get("errors") or [])


# --- webhooks -------------------------------------------------------------------------------
# The Standard Webhooks specification (standardwebhooks.com): the secret is written
# ``whsec_<base64 key bytes>``; each attempt carries ``webhook-id``, ``webhook-timestamp``
# and ``webhook-signature`` (space-separated ``v1,<base64 HMAC-SHA256 of id.timestamp.body>``).
# The service signs with :func:`sign` (haarline.service.webhooks); receivers verify here.

SECRET_PREFIX = "whsec_"
"""How the specification writes a secret: this prefix, then the key bytes in base64."""

TOLERANCE = 300
"""Seconds a timestamp may differ from the receiver's clock (the specification's 5 minutes)."""


def secret_key(secret: str) -> bytes:
    """The HMAC key of a ``whsec_…`` secret (the prefix may be left out).

    Raises
    ------
    WebhookError
        The secret is not base64 (after its prefix) or is empty.
    """
    text = secret.removeprefix(SECRET_PREFIX)
    try:
        key = base64.b64decode(text, validate=True)
    except (binascii.Error, ValueError):
        raise WebhookError(
            "the signing secret is not 'whsec_' followed by base64 text; copy it exactly as "
            "it was shown"
        ) from None
    if not key:
        raise WebhookError("the signing secret is empty")
    return key


def sign(secret: str, message_id: str, timestamp: int, body: bytes) -> str:
    """The ``v1,<base64>`` signature of one attempt (HMAC-SHA256 of ``id.timestamp.body``)."""
    signed = f"{message_id}.{timestamp}.".encode() + body
    digest = hmac.new(secret_key(secret), signed, hashlib.sha256).digest()
    return "v1," + base64.b64encode(digest).decode("ascii")


def _header(headers: Mapping[str, str], name: str) -> str:
    for key, value in headers.items():
        if key.lower() == name:
            return value
    raise WebhookError(f"the {name} header is missing")


def verify_webhook(
    secret: str,
    headers: Mapping[str, str],
    body: bytes | str,
    *,
    tolerance: int = TOLERANCE,
    now: float | None = None,
) -> Any:
    """Check a notification's signature and age; return its event (the decoded JSON body).

    Parameters
    ----------
    secret : str
        The ``whsec_…`` secret shown when it was created.
    headers : mapping
        The request's headers (names in any case).
    body : bytes or str
        The request body exactly as received (before any JSON parsing).
    tolerance : int
        Seconds the ``webhook-timestamp`` may be from ``now``, either way.
    now : float, optional
        The receiver's clock (Unix seconds); by default :func:`time.time`.

    Raises
    ------
    WebhookError
        A header is missing, the timestamp is not an integer or is too old or too far in
        the future, no ``v1`` signature matches, or the body is not JSON.

    Examples
    --------
    >>> secret = "whsec_" + base64.b64encode(b"0123456789abcdef0123456789abcdef").decode()
    >>> body = b'{"type": "analysis.succeeded"}'
    >>> headers = {"webhook-id": "msg_1", "webhook-timestamp": "1000",
    ...            "webhook-signature": sign(secret, "msg_1", 1000, body)}
    >>> verify_webhook(secret, headers, body, now=1010)
    {'type': 'analysis.succeeded'}
    """
    raw = body.encode() if isinstance(body, str) else bytes(body)
    message_id = _header(headers, "webhook-id")
    stamp = _header(headers, "webhook-timestamp").strip()
    if not (stamp.isascii() and stamp.isdigit()):
        raise WebhookError(f"webhook-timestamp {stamp[:30]!r} is not integer Unix seconds")
    clock = time.time() if now is None else now
    age = clock - int(stamp)
    if age > tolerance:
        raise WebhookError(
            f"webhook-timestamp is {age:.0f} s old, more than the {tolerance} s allowed "
            "(a replay, or a clock far off)"
        )
    if -age > tolerance:
        raise WebhookError(
            f"webhook-timestamp is {-age:.0f} s in the future, more than the {tolerance} s "
            "allowed (check the clocks)"
        )
    expected = sign(secret, message_id, int(stamp), raw).encode()
    offered = _header(headers, "webhook-signature").split()
    if not any(hmac.compare_digest(expected, s.encode()) for s in offered):
        raise WebhookError(
            "no webhook-signature matches the body: it was changed on the way, or it was "
            "signed with another secret"
        )
    try:
        return json.loads(raw)
    except ValueError:
        raise WebhookError("the signed body is not JSON") from None

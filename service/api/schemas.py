"""Request and response bodies of the REST service, suffixed by role."""

from __future__ import annotations

from typing import Annotated, Any, Literal

from haarline import AnalysisOptions, Circuit
from haarline.service.jobs.states import VERDICTS, Verdict
from pydantic import BaseModel, ConfigDict, Field, StrictInt, StrictStr, model_validator

__all__ = [
    "LABEL_KEY",
    "AnalysisCreate",
    "CheckCreate",
    "CircuitSource",
    "CompareCreate",
    "DataInline",
    "DeliveryAttemptPublic",
    "DeliveryPublic",
    "EventPublic",
    "JobEndEvent",
    "JobLinks",
    "JobOptions",
    "JobPage",
    "JobPublic",
    "ProblemDetail",
    "ProblemEntry",
    "ProgressPublic",
    "ReadyPublic",
    "ReferencePublic",
    "WebhookSecretCreated",
    "WebhookSecretPublic",
    "job_public",
]

MAX_QASM_CHARS = 1_000_000
MAX_INLINE_ROWS = 10_000
"""Most rows of an inline data set (the body size limit applies too)."""
MAX_INLINE_FEATURES = 1_000
MAX_CALLBACK_CHARS = 2000
"""Longest ``callback_url``."""
MAX_NESTING = 32
"""Deepest nesting of arrays and objects a request body may have (a description needs ~8)."""


def _nesting(value: Any) -> int:
    """Depth of nested lists and dicts, counted without recursion."""
    deepest, todo = 0, [(value, 1)]
    while todo:
        item, depth = todo.pop()
        if isinstance(item, dict | list):
            deepest = max(deepest, depth)
            if depth > MAX_NESTING:
                break
            children = item.values() if isinstance(item, dict) else item
            todo.extend((child, depth + 1) for child in children)
    return deepest


class _Body(BaseModel):
    """A request body: refuses absurd nesting before any field is looked at.

    Fields typed ``Any`` (a step's ``on``, the cost) accept any JSON, and serializing a value
    nested hundreds of levels deep fails inside pydantic; such a body is a 422 here instead.
    """

    @model_validator(mode="before")
    @classmethod
    def _shallow(cls, data: Any) -> Any:
        if _nesting(data) > MAX_NESTING:
            raise ValueError(
                f"the body nests arrays and objects more than {MAX_NESTING} levels deep"
            )
        return data


class CircuitSource(_Body):
    """Exactly one of: a format-1 description, an OpenQASM 3 program, or a reference name."""

    model_config = ConfigDict(extra="forbid")

    circuit: Circuit | None = Field(default=None, description="A format-1 description.")
    qasm: str | None = Field(
        default=None, max_length=MAX_QASM_CHARS, description="An OpenQASM 3 program."
    )
    reference: str | None = Field(
        default=None,
        max_length=100,
        description="Name of a bundled reference circuit (see GET /v1/references).",
    )

    @model_validator(mode="after")
    def _exactly_one(self) -> CircuitSource:
        given = [k for k in ("circuit", "qasm", "reference") if getattr(self, k) is not None]
        if len(given) != 1:
            raise ValueError(
                "give exactly one of 'circuit', 'qasm' or 'reference'"
                + (f" (got {', '.join(given)})" if given else "")
            )
        return self


Feature = Annotated[float, Field(allow_inf_nan=False)]


class DataInline(BaseModel):
    """A data set for a circuit with inputs: feature rows and, optionally, their labels."""

    model_config = ConfigDict(extra="forbid")

    x: list[Annotated[list[Feature], Field(min_length=1, max_length=MAX_INLINE_FEATURES)]] = Field(
        min_length=1,
        max_length=MAX_INLINE_ROWS,
        description="Rows of features, one per data point, all of the same width D.",
    )
    labels: list[StrictInt | StrictStr] | None = Field(
        default=None,
        max_length=MAX_INLINE_ROWS,
        description="One label per row (integers or short strings), for the kernel's "
        "alignment and geometric difference.",
    )


class JobOptions(AnalysisOptions):
    """The analysis options, and a policy to judge the report by."""

    policy: dict[str, Any] | None = Field(
        default=None,
        description="A policy, exactly as a `--policy` file holds it: "
        '`{"name": ..., "rules": [{"metric": "expressibility.kl_corrected", '
        '"fail_above": 0.05}, ...]}`. The report carries the rule results under `policy`, '
        "the job status `policy: passed | warned | failed`.",
    )


MAX_LABELS = 20
LABEL_KEY = r"^[a-z0-9][a-z0-9_.-]{0,62}$"
"""A label key: lower-case letters, digits, ``_ . -``, at most 63 characters."""

LabelValue = Annotated[str, Field(min_length=1, max_length=200, pattern=r"^[^\x00-\x1f\x7f]+$")]
Labels = Annotated[
    dict[Annotated[str, Field(pattern=LABEL_KEY)], LabelValue],
    Field(
        max_length=MAX_LABELS,
        description='Up to 20 labels such as `{"pr": "17", "commit": "ab12cd"}` to find '
        "the job by (`GET …?label=pr:17`). Keys: lower-case letters, digits, `_ . -`; values: "
        "1 to 200 printable characters.",
    ),
]


CALLBACK_URL = (
    "An https URL that receives a signed POST when the job ends (succeeded, failed or "
    "cancelled), per the Standard Webhooks specification, signed with this key's secret "
    "(POST /v1/webhook-secret). Its host must resolve only to public addresses unless the "
    "server's HAARLINE_WEBHOOK_* settings allow more."
)


class AnalysisCreate(CircuitSource):
    """Body of ``POST /v1/analyses`` and ``POST /v1/score``."""

    options: JobOptions = Field(default_factory=JobOptions)
    data: DataInline | None = Field(
        default=None,
        description="For a circuit with inputs: rows to draw the inputs from instead of the "
        "options' input law.",
    )
    labels: Labels = Field(default_factory=dict)
    callback_url: str | None = Field(
        default=None,
        max_length=MAX_CALLBACK_CHARS,
        description=CALLBACK_URL + " Jobs only: the score route refuses it.",
    )


class CompareCreate(_Body):
    """Body of ``POST /v1/comparisons``."""

    model_config = ConfigDict(extra="forbid")

    circuits: list[CircuitSource] = Field(min_length=2, max_length=20)
    options: JobOptions = Field(default_factory=JobOptions)
    labels: Labels = Field(default_factory=dict)
    data: DataInline | None = Field(
        default=None,
        description="For circuits with inputs: rows to draw the inputs from (every circuit "
        "must encode as many inputs as the rows have features).",
    )
    callback_url: str | None = Field(
        default=None, max_length=MAX_CALLBACK_CHARS, description=CALLBACK_URL
    )


class CheckCreate(CircuitSource):
    """Body of ``POST /v1/check``: a description, optionally at another size."""

    qubits: int | None = Field(default=None, ge=1, le=24)
    layers: int | None = Field(default=None, ge=1, le=10_000)
    diagram: bool = Field(
        default=False,
        description="Also return the circuit diagram, a PNG in base64, as `diagram_png` "
        "(drawn from the description alone: nothing is simulated).",
    )


class ProgressPublic(BaseModel):
    """How far a job is."""

    fraction: float = Field(ge=0, le=1)
    stage: str


class EventPublic(BaseModel):
    """One state change of a job."""

    state: str
    at: float
    detail: str | None = None


class JobLinks(BaseModel):
    """Where a job's outputs are."""

    self: str
    report: str
    summary: str
    plots: str
    events: str = Field(description="Server-sent events of its progress and its end.")
    deliveries: str = Field(description="The notifications of its end and their attempts.")


class JobPublic(BaseModel):
    """A job as its owner sees it."""

    id: str
    kind: Literal["analysis", "compare"]
    state: Literal["queued", "running", "succeeded", "failed", "cancelled"]
    progress: ProgressPublic
    cached: bool = Field(description="Answered from the stored result of an identical request.")
    error: str | None = None
    attempts: int
    created: float
    updated: float
    events: list[EventPublic] = Field(default_factory=list)
    labels: dict[str, str] = Field(default_factory=dict)
    policy: Verdict | None = Field(
        default=None,
        description="The verdict of `options.policy` on the finished report (null without one).",
    )
    callback_url: str | None = Field(
        default=None, description="Notified when the job ends (see deliveries)."
    )
    links: JobLinks


class JobPage(BaseModel):
    """One page of a job listing, newest first."""

    jobs: list[JobPublic]
    total: int = Field(description="Jobs matching the filters, on every page together.")
    next: str | None = Field(
        description="The next page's URL (also in the `Link` header), null on the last page."
    )


class ReferencePublic(BaseModel):
    """A bundled reference circuit."""

    name: str
    qubits: int
    layers: int
    parameters: int
    description: str


class ProblemEntry(BaseModel):
    """One field problem."""

    path: str
    message: str


class ProblemDetail(BaseModel):
    """RFC 9457 problem details, with the field paths of validation problems."""

    type: str = "about:blank"
    title: str
    status: int
    detail: str
    instance: str | None = None
    errors: list[ProblemEntry] = Field(default_factory=list)
    limit: float | None = Field(
        default=None,
        description="over-limit: the cost or memory limit; score-timeout: the limit in seconds.",
    )
    estimate: float | None = Field(default=None, description="over-limit: the estimate.")
    free_bytes: int | None = Field(
        default=None, description="low-disk-space: free bytes in the data directory."
    )
    min_free_bytes: int | None = Field(
        default=None, description="low-disk-space: the configured minimum."
    )


class ReadyPublic(BaseModel):
    """The answer of a ready service."""

    status: Literal["ready"] = "ready"
    free_bytes: int = Field(description="Free bytes on the data directory's file system.")
    min_free_bytes: int = Field(description="Below this, readiness fails (503).")


def job_public(job: dict[str, Any], base: str) -> JobPublic:
    """Render a stored job for its owner, with links under ``base``."""
    root = f"{base}/{job['id']}"
    return JobPublic(
        id=job["id"],
        kind=job["kind"],
        state=job["state"],
        progress=ProgressPublic(fraction=job["fraction"], stage=job["stage"]),
        cached=job["cached"],
        error=job["error"] if job["state"] != "succeeded" else None,
        attempts=job["attempts"],
        created=job["created"],
        updated=job["updated"],
        events=[EventPublic(**e) for e in job.get("events", [])],
        labels=job.get("labels", {}),
        policy=VERDICTS.get(job.get("policy") or ""),
        callback_url=job.get("callback_url"),
        links=JobLinks(
            self=root,
            report=f"{root}/report",
            summary=f"{root}/summary",
            plots=f"{root}/plots",
            events=f"{root}/events",
            deliveries=f"{root}/deliveries",
        ),
    )


class DeliveryAttemptPublic(BaseModel):
    """One attempt to deliver a notification."""

    attempt: int = Field(description="1 for the first attempt.")
    at: float = Field(description="When it started (Unix seconds).")
    seconds: float = Field(description="How long it took.")
    status_code: int | None = Field(description="The receiver's HTTP status, if it answered.")
    error: str | None = Field(
        description="Why it did not count as delivered (a non-2xx status, a refused "
        "destination, no connection, a timeout); null when delivered."
    )


EventType = Literal[
    "analysis.succeeded",
    "analysis.failed",
    "analysis.cancelled",
    "comparison.succeeded",
    "comparison.failed",
    "comparison.cancelled",
]


class JobEndLinks(BaseModel):
    """Where the ended job's outputs are (paths on the service)."""

    self: str
    report: str
    summary: str
    plots: str
    deliveries: str


class JobEndData(BaseModel):
    """The ended job, as the notification carries it."""

    id: str
    kind: Literal["analysis", "compare"]
    state: Literal["succeeded", "failed", "cancelled"]
    error: str | None = Field(description="Why it failed or was cancelled; null on success.")
    cached: bool
    labels: dict[str, str] = Field(description="The job's labels, as given at creation.")
    policy: Verdict | None = Field(
        description="The verdict of `options.policy`, when the job had one and succeeded."
    )
    links: JobEndLinks


class JobEndEvent(BaseModel):
    """The body of a job-end notification (Standard Webhooks' event shape)."""

    type: EventType
    timestamp: str = Field(description="When the job ended, ISO 8601 in UTC.")
    data: JobEndData


class DeliveryPublic(BaseModel):
    """The notification of a job's end, and every attempt to deliver it."""

    id: str = Field(description="The message id, sent as webhook-id on every attempt.")
    event: EventType
    url: str
    status: Literal["pending", "sending", "delivered", "failed"] = Field(
        description="pending: an attempt is due at next_attempt; sending: one is under way; "
        "delivered: answered 2xx; failed: every retry was used."
    )
    next_attempt: float | None = Field(description="When a pending delivery is tried next.")
    created: float
    attempts: list[DeliveryAttemptPublic]


class WebhookSecretCreated(BaseModel):
    """A new signing secret, shown this once."""

    secret: str = Field(
        description="whsec_ and the key in base64 (Standard Webhooks); keep it, it is not "
        "shown again."
    )
    created: float


class WebhookSecretPublic(BaseModel):
    """Whether this key has a signing secret (never the secret itself)."""

    created: float = Field(description="When the current secret was created (Unix seconds).")

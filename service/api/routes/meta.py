"""Synchronous routes: score, check, schema, references, and health."""

from __future__ import annotations

import base64
from typing import Any

import haarline
from fastapi import APIRouter, Depends, HTTPException
from fastapi.concurrency import run_in_threadpool
from fastapi.responses import JSONResponse
from haarline.report.schema import Report
from haarline.service.api.admission import admit_analysis
from haarline.service.api.deps import CallerDep, RunnerDep, SettingsDep, StoreDep
from haarline.service.api.http import require_json
from haarline.service.api.problems import problem_responses
from haarline.service.api.schemas import AnalysisCreate, CheckCreate, ReadyPublic, ReferencePublic
from haarline.service.errors import CallbackRefused, Unavailable
from haarline.service.jobs.space import require_free_space
from haarline.service.jobs.worker import circuit_of

__all__ = ["health", "v1"]

v1 = APIRouter(prefix="/v1")
health = APIRouter(tags=["health"])


@v1.post(
    "/score",
    operation_id="scoreCircuit",
    tags=["score"],
    summary="Analyze a small circuit synchronously (under the score work cap and time limit)",
    description="The report of a small analysis while the client waits; nothing is stored.",
    response_model=Report,
    responses={
        200: {"description": "The report (report_format 1)"},
        **problem_responses(401, 408, 413, 415, 422, 503, 504),
    },
    dependencies=[Depends(require_json)],
)
async def score(
    body: AnalysisCreate, caller: CallerDep, settings: SettingsDep, runner: RunnerDep
) -> Any:
    if body.callback_url is not None:
        raise CallbackRefused(
            body.callback_url,
            "the score route answers with the report itself; callbacks are for jobs "
            "(POST /v1/analyses)",
        )
    # parsing QASM and expanding at every scan size is CPU work: keep it off the event loop
    request, _ = await run_in_threadpool(admit_analysis, body, settings, route="score")
    report, _, _ = await runner.scores.run("analysis", request)
    return JSONResponse(report)


@v1.post(
    "/check",
    operation_id="checkCircuit",
    tags=["circuits"],
    summary="Validate a description and return its static facts (and, if asked, its diagram)",
    description="Checks a circuit without simulating it: sizes, gate counts, depth and, "
    "with `diagram`, the circuit diagram.",
    responses=problem_responses(401, 408, 413, 415, 422, 503),
    dependencies=[Depends(require_json)],
)
def check(body: CheckCreate, caller: CallerDep) -> Any:
    spec = body.model_dump(mode="json", include={"circuit", "qasm", "reference"})
    try:
        circuit = circuit_of(spec)
        program = haarline.expand(circuit, qubits=body.qubits, layers=body.layers)
    except haarline.InputError as exc:
        exc.body_path = "circuit" if body.circuit is not None else ""  # type: ignore[attr-defined]
        raise
    facts = haarline.facts(program)
    if body.diagram:
        png = haarline.circuit_diagram_png(program)
        facts["diagram_png"] = base64.b64encode(png).decode("ascii")
    return facts


@v1.get(
    "/schema",
    operation_id="getCircuitSchema",
    tags=["circuits"],
    summary="JSON Schema of the circuit description, format 1",
    description="The JSON Schema that `circuit` bodies follow (format 1).",
    responses=problem_responses(401, 503),
)
def schema(caller: CallerDep) -> Any:
    return haarline.circuit_schema()


@v1.get(
    "/references",
    response_model=list[ReferencePublic],
    operation_id="listReferences",
    tags=["circuits"],
    summary="The bundled reference circuits",
    description="Name, size and parameter count of every circuit `reference` accepts.",
    responses=problem_responses(401, 503),
)
def references(caller: CallerDep) -> Any:
    out = []
    for name in haarline.reference_names():
        c = haarline.load_reference(name)
        out.append(
            ReferencePublic(
                name=name,
                qubits=c.qubits,
                layers=c.layers,
                parameters=haarline.expand(c).parameters,
                description=c.description or "",
            )
        )
    return out


@v1.get(
    "/references/{name}",
    operation_id="getReference",
    tags=["circuits"],
    summary="One bundled reference circuit (its description)",
    description="The format-1 description of one bundled circuit, ready to edit and send.",
    responses=problem_responses(401, 404, 503),
)
def reference(name: str, caller: CallerDep) -> Any:
    if name not in haarline.reference_names():
        raise HTTPException(404, f"no reference circuit {name!r}; see /v1/references")
    return haarline.load_reference(name).model_dump(mode="json", exclude_none=True)


@health.get(
    "/healthz",
    operation_id="health",
    summary="The process is up (no key needed)",
    description="Answers while the process runs; says nothing of the store or the workers.",
)
def healthz() -> dict[str, str]:
    return {"status": "ok"}


@health.get(
    "/readyz",
    response_model=ReadyPublic,
    operation_id="ready",
    summary="The job store, the dispatcher and the disk space work (no key needed)",
    description="200 when jobs can be taken and run; 503 with the reason otherwise.",
    responses=problem_responses(503),
)
def readyz(settings: SettingsDep, store: StoreDep, runner: RunnerDep) -> Any:
    store.ping()  # StoreUnavailable: the store-unavailable 503, with Retry-After
    if not runner.alive():
        raise Unavailable("the job dispatcher is not running", kind="not-ready")
    free, least = require_free_space(store, settings)
    return ReadyPublic(free_bytes=free, min_free_bytes=least)

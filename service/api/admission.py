"""Turning a request body into a stored request, after admission control.

Resolves the circuit source (description, OpenQASM program or reference name), checks it
at every size the options ask for, estimates cost and memory, and builds the canonical
request whose hash identifies identical work.
"""

from __future__ import annotations

import hashlib
import json
from typing import Any

import haarline
from haarline.report.policy import check_metrics
from haarline.service.api.schemas import (
    AnalysisCreate,
    CircuitSource,
    CompareCreate,
    DataInline,
    JobOptions,
)
from haarline.service.errors import OverLimit
from haarline.service.jobs.worker import circuit_of
from haarline.service.settings import Settings

__all__ = ["admit_analysis", "admit_compare", "request_hash"]


def _resolve(source: CircuitSource, path: str) -> tuple[haarline.Circuit, dict[str, Any]]:
    spec: dict[str, Any] = {
        "circuit": source.circuit.model_dump(mode="json", exclude_none=True)
        if source.circuit is not None
        else None,
        "qasm": source.qasm,
        "reference": source.reference,
    }
    field = (
        "circuit"
        if source.circuit is not None
        else ("reference" if source.reference is not None else "qasm")
    )
    try:
        circuit = circuit_of(spec)
        haarline.expand(circuit)
    except haarline.InputError as exc:
        # name the field that held the circuit: circuit.layer[0]…, reference, qasm
        exc.body_path = field if path == "(root)" else f"{path}.{field}"  # type: ignore[attr-defined]
        raise
    stored: dict[str, Any] = {"circuit": circuit.model_dump(mode="json", exclude_none=True)}
    if source.reference:
        stored["reference"] = source.reference
    return circuit, stored


def _data(data: DataInline | None, circuit: haarline.Circuit, path: str) -> dict[str, Any] | None:
    """Check an inline data set against the circuit; return its stored form."""
    if data is None:
        return None
    stored = data.model_dump(mode="json", exclude_none=True)
    try:
        dataset = haarline.dataset_from(stored, source="data")
    except haarline.InputError as exc:
        exc.body_path = "data"  # type: ignore[attr-defined]
        exc.source = None
        raise
    inputs = haarline.expand(circuit).inputs
    if dataset.features != inputs:
        error = haarline.DataError(
            [
                haarline.Problem(
                    "x",
                    f"rows of {dataset.features} features; {path} encodes {inputs} inputs",
                )
            ]
        )
        error.body_path = "data"  # type: ignore[attr-defined]
        raise error
    return stored


def _estimate(
    circuit: haarline.Circuit, options: haarline.AnalysisOptions, settings: Settings
) -> haarline.Estimate:
    try:
        return haarline.estimate(circuit, options, memory_budget=settings.memory_budget)
    except haarline.OptionError as exc:
        exc.body_path = "options"  # type: ignore[attr-defined]
        raise


_PART = {"layers_sweep": "the layer sweep"} | {m: f"the {m} metric" for m in haarline.METRICS}


def _check_limits(estimate: haarline.Estimate, settings: Settings, cap: float, route: str) -> None:
    if estimate.work > cap:
        hint = (
            "lower pairs, samples, grad_samples or the scan, or submit it as a job with "
            "POST /v1/analyses"
            if route == "score"
            else "lower pairs, samples, grad_samples, the scan or the qubit count"
        )
        top = estimate.largest()
        if top is not None:
            share = estimate.parts[top] / estimate.work
            hint = f"{_PART.get(top, top)} accounts for {share:.0%} of it; {hint}"
        raise OverLimit("work (amplitude-gate updates)", cap, estimate.work, hint)
    if estimate.memory > settings.max_memory_bytes:
        raise OverLimit(
            "memory (bytes)",
            settings.max_memory_bytes,
            estimate.memory,
            "lower the qubit count or the capacity points",
        )


def _policy(options: JobOptions) -> dict[str, Any] | None:
    """The stored form of ``options.policy``, checked against the metrics asked for."""
    if options.policy is None:
        return None
    try:
        policy = haarline.parse_policy(options.policy)
        check_metrics(policy, list(options.metrics))
    except haarline.PolicyError as exc:
        exc.problems = [  # the CLI's flag is the request's field here
            haarline.Problem(p.path, p.message.replace("--metrics", "options.metrics"))
            for p in exc.problems
        ]
        exc.body_path = "options.policy"  # type: ignore[attr-defined]
        exc.source = None
        raise
    return policy.model_dump(mode="json", exclude_none=True)


def _stored_options(options: JobOptions) -> dict[str, Any]:
    return options.model_dump(mode="json", exclude={"policy"})


def request_hash(kind: str, request: dict[str, Any]) -> str:
    """Canonical hash of (kind, circuit(s), options, seed, version)."""
    body = {"kind": kind, "version": haarline.__version__, **request}
    text = json.dumps(body, sort_keys=True, separators=(",", ":"), allow_nan=False)
    return hashlib.sha256(text.encode()).hexdigest()


def admit_analysis(
    body: AnalysisCreate, settings: Settings, *, route: str = "job"
) -> tuple[dict[str, Any], haarline.Estimate]:
    """Validate, estimate and canonicalize an analysis request."""
    circuit, stored = _resolve(body, "(root)")
    options = body.options
    data = _data(body.data, circuit, "the circuit")
    estimate = _estimate(circuit, options, settings)
    cap = settings.max_score_work if route == "score" else settings.max_work
    _check_limits(estimate, settings, cap, route)
    policy = _policy(options)
    request = {**stored, "options": _stored_options(options)}
    if data is not None:
        request["data"] = data
    if policy is not None:
        request["policy"] = policy
    return request, estimate


def admit_compare(
    body: CompareCreate, settings: Settings
) -> tuple[dict[str, Any], haarline.Estimate]:
    """Validate, estimate and canonicalize a comparison request."""
    circuits = []
    total_work, memory = 0.0, 0
    for i, source in enumerate(body.circuits):
        circuit, stored = _resolve(source, f"circuits[{i}]")
        data = _data(body.data, circuit, f"circuits[{i}]")
        est = _estimate(circuit, body.options, settings)
        total_work += est.work
        memory = max(memory, est.memory)
        circuits.append(stored)
    estimate = haarline.Estimate(work=total_work, memory=memory)
    _check_limits(estimate, settings, settings.max_work, "job")
    policy = _policy(body.options)
    request = {"circuits": circuits, "options": _stored_options(body.options)}
    if data is not None:
        request["data"] = data
    if policy is not None:
        request["policy"] = policy
    return request, estimate

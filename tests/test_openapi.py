"""openapi-notes/ stays true to the code: the exported document and one note per endpoint."""

import json
import re
from pathlib import Path

from haarline.service.api.openapi_export import render

NOTES = Path(__file__).parents[1] / "openapi-notes"
TARGET = NOTES / "openapi.json"


def test_exported_openapi_document_is_current():
    committed = TARGET.read_text(encoding="utf-8")
    assert committed == render(), "openapi-notes/openapi.json is stale: run `make openapi`"


def test_operation_ids_are_unique_and_stable():
    doc = json.loads(TARGET.read_text())
    ids = [op["operationId"] for ms in doc["paths"].values() for op in ms.values()]
    assert len(ids) == len(set(ids))
    assert all(re.fullmatch(r"[a-z][A-Za-z]+", i) for i in ids)


# --- the problem statuses each operation lists are the ones it can return --------------------

KEYED = {401, 503}  # the key check reads the store
BODY = {408, 413}  # the body guard, on routes that take a body
JOB = KEYED | {404}
RESULT = JOB | {409}
CREATE = KEYED | BODY | {409, 415, 422, 429}
PAGE = KEYED | {403, 404, 422}
SHARE = KEYED | BODY | {404, 415, 422}
SHARED = RESULT | {403, 422}  # a key or a share token (403), whose length is bounded (422)
CAN_RETURN = {
    "health": set(),  # no key, no store: 200 or nothing
    "ready": {503},  # no key: store, dispatcher or disk
    "listAnalyses": KEYED | {422},
    "listComparisons": KEYED | {422},
    "createAnalysis": CREATE,
    "createComparison": CREATE,
    "getAnalysis": JOB | {422},  # ?wait out of range
    "getComparison": JOB | {422},
    "streamAnalysisEvents": JOB,
    "streamComparisonEvents": JOB,
    "listAnalysisDeliveries": JOB,
    "listComparisonDeliveries": JOB,
    "createWebhookSecret": KEYED,
    "getWebhookSecret": KEYED | {404},  # none created yet
    "cancelAnalysis": JOB,
    "cancelComparison": JOB,
    "getAnalysisReport": SHARED,
    "getComparisonReport": SHARED,
    "getAnalysisSummary": SHARED,
    "getComparisonSummary": SHARED,
    "listAnalysisPlots": SHARED,
    "listComparisonPlots": SHARED,
    "getAnalysisPlot": SHARED,
    "getComparisonPlot": SHARED,
    "getAnalysisPage": PAGE,
    "getComparisonPage": PAGE,
    "shareAnalysis": SHARE,
    "shareComparison": SHARE,
    "listAnalysisShares": JOB,
    "listComparisonShares": JOB,
    "revokeAnalysisShare": JOB,
    "revokeComparisonShare": JOB,
    "latestAnalysis": KEYED | {404, 422},
    "latestComparison": KEYED | {404, 422},
    "scoreCircuit": KEYED | BODY | {415, 422, 504},
    "checkCircuit": KEYED | BODY | {415, 422},
    "getCircuitSchema": KEYED,
    "listReferences": KEYED,
    "getReference": KEYED | {404},
}
"""What each operation can answer besides success, by reading its route."""

NOT_PROBED = {408, 504}  # slow bodies: tests/test_abuse.py; the score limit: test_service_score.py


def declared() -> dict[str, tuple[str, str, set[int]]]:
    """operationId -> (METHOD, path, problem statuses in the document)."""
    doc = json.loads(TARGET.read_text())
    out = {}
    for path, methods in doc["paths"].items():
        for method, op in methods.items():
            errors = {int(s) for s in op["responses"] if int(s) >= 400}
            out[op["operationId"]] = (method.upper(), path, errors)
    return out


def test_each_operation_lists_exactly_the_statuses_it_can_return():
    ops = declared()
    assert set(ops) == set(CAN_RETURN), "every operation needs a row here"
    wrong = {i: sorted(e) for i, (_, _, e) in ops.items() if e != CAN_RETURN[i]}
    assert not wrong, f"document lists differ from what the routes can return: {wrong}"


def test_problem_responses_are_problem_json_with_the_problem_schema():
    doc = json.loads(TARGET.read_text())
    assert "HTTPValidationError" not in doc["components"]["schemas"]
    for path, methods in doc["paths"].items():
        for method, op in methods.items():
            for status, response in op["responses"].items():
                if int(status) < 400:
                    continue
                where = f"{method.upper()} {path} {status}"
                assert response["content"] == {
                    "application/problem+json": {
                        "schema": {"$ref": "#/components/schemas/ProblemDetail"}
                    }
                }, where
                assert response["description"] and response["description"][0].isupper(), where


def test_probes_get_only_listed_statuses_and_every_listed_one_occurs(make_app, tmp_path):
    """Provoke each status the table lists; no probe may get one the operation does not list."""
    from fastapi.testclient import TestClient
    from haarline.service.api.deps import get_store
    from haarline.service.api.keys import issue_key
    from haarline.service.jobs.store import Store

    ops = declared()
    # jobs stay queued; /readyz says not ready
    app = make_app(runner=False, queue_per_key=2, max_body_bytes=2048)
    seen: dict[str, set[int]] = {i: set() for i in ops}
    unlisted: list[str] = []

    with TestClient(app) as c:
        _, key = issue_key(app.state.store, "probe")
        auth = {"Authorization": f"Bearer {key}"}

        def probe(operation_id, *, job="0" * 32, name="nope.png", keyed=True, **kw):
            method, path, errors = ops[operation_id]
            url = path.replace("{job_id}", job).replace("{name}", name)
            url = url.replace("{link_id}", "0" * 16)
            headers = {**(auth if keyed else {}), **kw.pop("headers", {})}
            r = c.request(method, url, headers=headers, **kw)
            if r.status_code >= 400:
                seen[operation_id].add(r.status_code)
                if r.status_code not in errors:
                    unlisted.append(f"{operation_id} {method} {url}: {r.status_code} {r.text}")
            return r

        small = {"reference": "rx-product"}
        pair = {"circuits": [{"reference": "rx-product"}, {"reference": "ry-cz-ring"}]}
        bodies = {"createAnalysis": small, "createComparison": pair}
        # no key: 401 wherever a key is needed, and never on the health routes
        for i in ops:
            probe(i, keyed=False, json=bodies.get(i))
        probe("getWebhookSecret")  # 404 before this key created one
        # unknown ids and names: 404
        for i in ops:
            probe(i, name="nope" if i == "getReference" else "nope.png")
        # jobs that have no result yet (the dispatcher is off): 409
        once = {i: {"Idempotency-Key": i} for i in bodies}
        jobs = {
            "Analysis": probe("createAnalysis", json=small, headers=once["createAnalysis"]),
            "Comparison": probe("createComparison", json=pair, headers=once["createComparison"]),
        }
        jobs = {noun: r.json()["id"] for noun, r in jobs.items()}
        for noun, job in jobs.items():
            for i in (f"get{noun}Report", f"get{noun}Summary", f"list{noun}Plots"):
                probe(i, job=job)
            probe(f"get{noun}Plot", job=job, name="fidelity.png")
            probe(f"get{noun}Page", job=job)
            probe(f"get{noun}Page", job=job, keyed=False, params={"token": "a.1.b"})  # 403
            probe(f"get{noun}Page", job=job, params={"token": "x" * 301})  # 422
            probe(f"share{noun}", job=job, json={"ttl_seconds": 1})  # 422
            probe(f"share{noun}", job=job, content=b"x" * 4096)  # 413
            for i in (f"get{noun}Report", f"get{noun}Summary", f"list{noun}Plots"):
                probe(i, job=job, keyed=False, params={"token": "a.1.b"})  # 403
                probe(i, job=job, params={"token": "x" * 301})  # 422
            probe(f"get{noun}Plot", job=job, keyed=False, params={"token": "a.1.b"})  # 403
            probe(f"get{noun}Plot", job=job, params={"token": "x" * 301})  # 422
            probe(f"latest{noun}", params={"label": "PR:1"})  # 422
            probe(f"get{noun}", job=job)
            probe(f"get{noun}", job=job, params={"wait": 61})  # 422
        # the Idempotency-Key again with another body: 409; the queue holds 2 per key: 429
        for i, body in bodies.items():
            probe(i, json={**body, "options": {"seed": 2}}, headers=once[i])
            probe(i, json=body)
        # bad bodies and queries: 422; bodies over the limit: 413
        for i in ("createAnalysis", "createComparison", "scoreCircuit", "checkCircuit"):
            probe(i, json={})
            probe(i, content=b"x" * 4096, headers={"Content-Type": "application/json"})
        # a body that is not JSON: 415
        for i in (
            *bodies,
            "scoreCircuit",
            "checkCircuit",
            "shareAnalysis",
            "shareComparison",
        ):
            probe(i, content=b"ttl_seconds=60", headers={"Content-Type": "text/plain"})
        for i in ("listAnalyses", "listComparisons"):
            probe(i, params={"limit": 0})
        for noun, job in jobs.items():
            probe(f"cancel{noun}", job=job)
        # the store cannot be opened: 503 wherever the store is used
        app.dependency_overrides[get_store] = lambda: Store(tmp_path)
        for i in ops:
            probe(i, json=bodies.get(i))

    assert not unlisted, "responses with statuses the document does not list:\n" + "\n".join(
        unlisted
    )
    missing = {i: sorted(CAN_RETURN[i] - NOT_PROBED - seen[i]) for i in ops}
    missing = {i: m for i, m in missing.items() if m}
    assert not missing, f"listed statuses no probe produced: {missing}"

"""Every response header the service sends is declared in the document for that status.

Requests reach every operation with the answers they can give (success, 304, and the
problem statuses that carry headers: 401, 415, 429, 503); each answer's headers must be
among those openapi-notes/openapi.json declares for its operation and status, and every
header declared ``required`` must be there. Headers that only describe the body's
encoding are not declared (service/api/responses.py says why).
"""

import json
from pathlib import Path

import pytest
from live_server import wait_for

DOCUMENT = json.loads((Path(__file__).parents[1] / "openapi-notes" / "openapi.json").read_text())
ENCODING = {"content-type", "content-length", "content-encoding", "vary", "date", "server"}
SMALL = {"pairs": 40, "bins": 4, "samples": 10}


def operations() -> dict[str, tuple[str, str]]:
    return {
        op["operationId"]: (method.upper(), path)
        for path, methods in DOCUMENT["paths"].items()
        for method, op in methods.items()
    }


OPS = operations()
SEEN: dict[str, set[int]] = {}


def send(client, operation_id, *, job="0" * 32, name="fidelity.png", link="0" * 16, **kw):
    """Send one request to an operation; check its headers against the document."""
    method, path = OPS[operation_id]
    url = path.replace("{job_id}", job).replace("{name}", name).replace("{link_id}", link)
    r = client.request(method, url, **kw)
    responses = DOCUMENT["paths"][path][method.lower()]["responses"]
    assert str(r.status_code) in responses, f"{operation_id}: {r.status_code} {r.text[:200]}"
    declared = responses[str(r.status_code)].get("headers", {})
    sent = {k.lower() for k in r.headers} - ENCODING
    undeclared = sent - {k.lower() for k in declared}
    assert not undeclared, f"{operation_id} {r.status_code} sends undeclared {undeclared}"
    missing = [k for k, h in declared.items() if h.get("required") and k.lower() not in sent]
    assert not missing, f"{operation_id} {r.status_code} lacks required {missing}"
    SEEN.setdefault(operation_id, set()).add(r.status_code)
    return r


@pytest.fixture
def finished(make_client):
    """A client whose jobs run, with a finished analysis and comparison."""
    c = make_client()
    jobs = {}
    for noun, op, body in (
        ("Analysis", "createAnalysis", {"reference": "ry-cz-ring", "options": SMALL}),
        (
            "Comparison",
            "createComparison",
            {"circuits": [{"reference": "rx-product"}, {"reference": "ry-cz-ring"}]}
            | {"options": SMALL},
        ),
    ):
        r = send(c, op, json=body)
        assert r.status_code == 202
        jobs[noun] = wait_for(c, r.headers["Location"], ("succeeded",), timeout=60)["id"]
    return c, jobs


def test_every_header_sent_is_declared(finished, make_client, tmp_path):
    from haarline.service.api.deps import get_store
    from haarline.service.jobs.store import Store

    c, jobs = finished
    for noun, job in jobs.items():
        for op in (f"get{noun}Report", f"get{noun}Summary", f"get{noun}Page"):
            tag = send(c, op, job=job).headers["ETag"]
            assert send(c, op, job=job, headers={"If-None-Match": tag}).status_code == 304
        name = c.get(f"{OPS[f'list{noun}Plots'][1].replace('{job_id}', job)}").json()[0]
        send(c, f"list{noun}Plots", job=job)
        png = send(c, f"get{noun}Plot", job=job, name=name)
        octets = send(
            c, f"get{noun}Plot", job=job, name=name, headers={"Accept": "application/octet-stream"}
        )
        # the same bytes under the generic type: a representation with a tag of its own
        assert png.headers["content-type"] == "image/png" and png.content[:4] == b"\x89PNG"
        assert octets.headers["content-type"] == "application/octet-stream"
        assert octets.content == png.content and octets.headers["ETag"] != png.headers["ETag"]
        for tag in (png.headers["ETag"], octets.headers["ETag"]):
            again = send(c, f"get{noun}Plot", job=job, name=name, headers={"If-None-Match": tag})
            assert again.status_code == 304
        send(c, f"get{noun}", job=job)
        send(c, f"get{noun}", job=job, params={"wait": 0.1})
        send(c, f"stream{noun}Events", job=job)  # a finished job: `end` at once, then closed
        send(c, f"list{noun}Deliveries", job=job)
        send(c, f"latest{noun}")
        listing = send(c, f"list{'Analyses' if noun == 'Analysis' else 'Comparisons'}")
        assert listing.status_code == 200
        link = send(c, f"share{noun}", job=job, json={"ttl_seconds": 600}).json()
        send(c, f"list{noun}Shares", job=job)
        send(c, f"revoke{noun}Share", job=job, link=link["id"])
        send(c, f"get{noun}Report", job=job, headers={"Authorization": ""})  # 401
        send(c, f"cancel{noun}", job=job)  # 204: deleted
    for seed in (1, 2):
        c.post("/v1/analyses", json={"reference": "rx-product", "options": SMALL | {"seed": seed}})
    page = send(c, "listAnalyses", params={"limit": 1})
    assert page.headers["Link"].endswith('>; rel="next"')
    send(c, "scoreCircuit", json={"reference": "rx-product", "options": SMALL})
    send(c, "checkCircuit", json={"reference": "rx-product"})
    send(c, "checkCircuit", content=b"x=1", headers={"Content-Type": "text/plain"})  # 415
    assert send(c, "getWebhookSecret").status_code == 404
    assert send(c, "createWebhookSecret").status_code == 201
    for op in ("getWebhookSecret", "getCircuitSchema", "listReferences", "health", "ready"):
        send(c, op)
    send(c, "getReference", name="rx-product")

    # jobs that stay queued: a running page (no-store), a full queue (429), no store (503)
    q = make_client(runner=False, queue_per_key=1)
    job = send(q, "createAnalysis", json={"reference": "rx-product"}).json()["id"]
    send(q, "getAnalysisPage", job=job)
    send(q, "cancelAnalysis", job=job)  # 202: cancelled
    send(q, "createAnalysis", json={"reference": "rx-product"})
    assert send(q, "createAnalysis", json={"reference": "ry-cz-ring"}).status_code == 429
    q.app.dependency_overrides[get_store] = lambda: Store(tmp_path)
    for op in ("getAnalysis", "listAnalyses", "ready"):
        assert send(q, op, job=job).status_code == 503

    untested = {op for op in OPS if op not in SEEN}
    assert not untested, f"no request reached {sorted(untested)}"

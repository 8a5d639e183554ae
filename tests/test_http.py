"""HTTP as clients expect it (issue 17): methods, Allow, HEAD, caching, compression, CORS,
media types, replays and the exact numbers of the OpenAPI document."""

import json
import time

import pytest

SMALL = {"reference": "rx-product", "options": {"pairs": 200, "samples": 50, "seed": 2}}


def finished(client, route="/v1/analyses", body=SMALL):
    url = client.post(route, json=body).headers["Location"]
    deadline = time.time() + 60
    while (state := client.get(url).json()["state"]) not in ("succeeded", "failed"):
        assert time.time() < deadline
        time.sleep(0.1)
    assert state == "succeeded"
    return url


# --- 405 names the methods; HEAD on every GET route ------------------------------------------


@pytest.mark.parametrize(
    "method,path,allowed",
    [
        ("PUT", "/v1/analyses", "GET, HEAD, POST"),
        ("DELETE", "/v1/references", "GET, HEAD"),
        ("POST", f"/v1/analyses/{'0' * 32}/report", "GET, HEAD"),
        ("PATCH", f"/v1/comparisons/{'0' * 32}", "DELETE, GET, HEAD"),
        ("GET", "/v1/score", "POST"),
        ("POST", "/healthz", "GET, HEAD"),
    ],
)
def test_405_names_every_method_of_the_path(quiet, method, path, allowed):
    r = quiet.request(method, path)
    assert r.status_code == 405 and r.headers["content-type"] == "application/problem+json"
    assert r.headers["Allow"] == allowed
    assert r.json()["instance"] == path


def test_head_answers_every_get_route_like_get_without_a_body(client):
    url = finished(client)
    job = url.rsplit("/", 1)[1]
    paths = [
        "/healthz",
        "/readyz",
        "/openapi.json",
        "/docs",
        "/v1/analyses",
        url,
        f"{url}/report",
        f"{url}/summary",
        f"{url}/plots",
        f"{url}/plots/fidelity.png",
        f"{url}/page",
        "/v1/schema",
        "/v1/references",
        "/v1/references/ry-cz-ring",
    ]
    for path in paths:
        got, head = client.get(path), client.head(path)
        assert head.status_code == got.status_code == 200, (path, head.status_code)
        assert head.content == b"", path
        assert head.headers["content-type"] == got.headers["content-type"], path
        assert head.headers.get("etag") == got.headers.get("etag"), path
    assert client.head(f"/v1/analyses/{'f' * 32}").status_code == 404
    assert (
        client.head(f"/v1/analyses/{job}", headers={"Authorization": "Bearer x"}).status_code == 401
    )


def test_the_document_lists_no_head_operations(quiet):
    doc = quiet.get("/openapi.json").json()
    assert not [p for p, ops in doc["paths"].items() if "head" in ops]


# --- finished results are immutable: strong ETag, Cache-Control, 304 --------------------------


def test_finished_results_carry_a_strong_etag_and_answer_304(client):
    url = finished(client)
    for path in (f"{url}/report", f"{url}/summary", f"{url}/plots/fidelity.png", f"{url}/page"):
        first = client.get(path)
        tag = first.headers["ETag"]
        assert tag.startswith('"') and tag.endswith('"') and not tag.startswith("W/"), path
        assert "immutable" in first.headers["Cache-Control"], path
        assert "private" in first.headers["Cache-Control"], path  # it needs the key
        again = client.get(path, headers={"If-None-Match": tag})
        assert again.status_code == 304 and again.content == b"", path
        assert again.headers["ETag"] == tag, path
        listed = client.get(path, headers={"If-None-Match": f'"other", {tag}'})
        assert listed.status_code == 304, path
        assert client.get(path, headers={"If-None-Match": '"other"'}).status_code == 200
        assert client.get(path, headers={"If-None-Match": "*"}).status_code == 304
    # the same content has the same tag in another job (a cached copy)
    copy = client.post("/v1/analyses", json=SMALL).json()
    assert copy["cached"]
    other = client.get(f"/v1/analyses/{copy['id']}/report").headers["ETag"]
    assert other == client.get(f"{url}/report").headers["ETag"]


def test_unfinished_jobs_and_status_are_not_cached(quiet):
    job = quiet.post("/v1/analyses", json=SMALL).json()
    r = quiet.get(f"/v1/analyses/{job['id']}")
    assert "ETag" not in r.headers and r.headers["Cache-Control"] == "no-store"
    page = quiet.get(f"/v1/analyses/{job['id']}/page")
    assert "ETag" not in page.headers and page.headers["Cache-Control"] == "no-store"


def test_a_page_opened_by_a_share_link_is_cached_too(client):
    url = finished(client)
    token = client.post(f"{url}/share").json()["url"].split("token=")[1]
    client.headers.pop("Authorization")
    first = client.get(f"{url}/page", params={"token": token})
    assert first.status_code == 200 and first.headers["ETag"]
    again = client.get(
        f"{url}/page", params={"token": token}, headers={"If-None-Match": first.headers["ETag"]}
    )
    assert again.status_code == 304


# --- gzip when the client accepts it -----------------------------------------------------------


def test_json_and_html_are_gzipped_when_accepted(client):
    url = finished(client)
    for path in (f"{url}/report", f"{url}/page", "/openapi.json"):
        raw = client.get(path, headers={"Accept-Encoding": "identity"})
        assert "content-encoding" not in raw.headers, path
        zipped = client.get(path, headers={"Accept-Encoding": "gzip"})
        assert zipped.headers["content-encoding"] == "gzip", path
        assert "Accept-Encoding" in zipped.headers["vary"], path
        assert zipped.content == raw.content, path  # the client decoded it: the same bytes
    png = client.get(f"{url}/plots/fidelity.png", headers={"Accept-Encoding": "gzip"})
    assert "content-encoding" not in png.headers  # already compressed


def test_gzip_keeps_the_etag_meaningful(client):
    url = finished(client)
    tag = client.get(f"{url}/report", headers={"Accept-Encoding": "identity"}).headers["ETag"]
    zipped = client.get(f"{url}/report", headers={"Accept-Encoding": "gzip"})
    assert zipped.headers["ETag"] != tag  # another representation, another strong tag
    again = client.get(
        f"{url}/report",
        headers={"Accept-Encoding": "gzip", "If-None-Match": zipped.headers["ETag"]},
    )
    assert again.status_code == 304


# --- CORS: off by default, an allow-list by setting ---------------------------------------------


def test_cors_is_off_by_default(quiet):
    r = quiet.options(
        "/v1/analyses",
        headers={"Origin": "https://wiki.example.org", "Access-Control-Request-Method": "GET"},
    )
    assert "access-control-allow-origin" not in r.headers
    r = quiet.get("/v1/analyses", headers={"Origin": "https://wiki.example.org"})
    assert "access-control-allow-origin" not in r.headers


def test_cors_allows_exactly_the_listed_origins(make_client):
    c = make_client(runner=False, cors_origins=("https://wiki.example.org",))
    pre = c.options(
        "/v1/analyses",
        headers={
            "Origin": "https://wiki.example.org",
            "Access-Control-Request-Method": "GET",
            "Access-Control-Request-Headers": "authorization",
        },
    )
    assert pre.status_code == 200
    assert pre.headers["access-control-allow-origin"] == "https://wiki.example.org"
    assert "authorization" in pre.headers["access-control-allow-headers"].lower()
    r = c.get("/v1/analyses", headers={"Origin": "https://wiki.example.org"})
    assert r.headers["access-control-allow-origin"] == "https://wiki.example.org"
    assert "ETag" in r.headers.get("access-control-expose-headers", "")
    other = c.get("/v1/analyses", headers={"Origin": "https://evil.example.net"})
    assert "access-control-allow-origin" not in other.headers


# --- 415 for bodies that are not JSON ----------------------------------------------------------


@pytest.mark.parametrize(
    "content_type",
    [
        "text/plain",
        "application/x-www-form-urlencoded",
        "multipart/form-data; boundary=zz",
        "application/yaml",
        "application/xml",
    ],
)
@pytest.mark.parametrize("route", ["/v1/analyses", "/v1/check", "/v1/score", "/v1/comparisons"])
def test_a_body_that_is_not_json_is_415(quiet, content_type, route):
    r = quiet.post(
        route, content=b'{"reference": "rx-product"}', headers={"Content-Type": content_type}
    )
    assert r.status_code == 415, r.text
    assert r.headers["content-type"] == "application/problem+json"
    assert "application/json" in r.json()["detail"] and r.json()["instance"] == route


@pytest.mark.parametrize(
    "content_type",
    ["application/json", "application/json; charset=utf-8", "application/problem+json"],
)
def test_json_media_types_are_accepted(quiet, content_type):
    r = quiet.post(
        "/v1/check", content=b'{"reference": "rx-product"}', headers={"Content-Type": content_type}
    )
    assert r.status_code == 200, r.text


# --- replays and problem bodies ---------------------------------------------------------------


def test_an_idempotent_replay_answers_like_the_first_request(quiet):
    body = {"reference": "rx-product", "options": {"seed": 9}}
    first = quiet.post("/v1/analyses", json=body, headers={"Idempotency-Key": "r-1"})
    again = quiet.post("/v1/analyses", json=body, headers={"Idempotency-Key": "r-1"})
    assert first.status_code == again.status_code == 202
    assert again.json()["id"] == first.json()["id"]
    assert again.headers["Idempotent-Replayed"] == "true"
    assert again.headers["Location"] == first.headers["Location"]
    doc = quiet.get("/openapi.json").json()
    responses = doc["paths"]["/v1/analyses"]["post"]["responses"]
    assert "200" not in responses and "Idempotent-Replayed" in responses["202"]["headers"]


def test_409_and_429_problems_name_their_instance(make_client):
    c = make_client(runner=False, queue_per_key=1)
    body = {"reference": "rx-product", "options": {"seed": 1}}
    c.post("/v1/analyses", json=body, headers={"Idempotency-Key": "k"})
    r = c.post(
        "/v1/analyses", json={**body, "options": {"seed": 2}}, headers={"Idempotency-Key": "k"}
    )
    assert r.status_code == 409 and r.json()["instance"] == "/v1/analyses"
    r = c.post("/v1/analyses", json={**body, "options": {"seed": 3}})
    assert r.status_code == 429 and r.json()["instance"] == "/v1/analyses"


# --- the document's numbers are exact ------------------------------------------------------


def integer_bounds(node, where=""):
    if isinstance(node, dict):
        if node.get("type") == "integer":
            for key in ("minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum"):
                if key in node:
                    yield f"{where}.{key}", node[key]
        for key, value in node.items():
            yield from integer_bounds(value, f"{where}.{key}")
    elif isinstance(node, list):
        for i, value in enumerate(node):
            yield from integer_bounds(value, f"{where}[{i}]")


def test_integer_bounds_in_the_document_are_exact_integers(quiet):
    doc = quiet.get("/openapi.json").json()
    seed = doc["components"]["schemas"]["JobOptions"]["properties"]["seed"]
    assert seed["maximum"] == 2**63 - 1 and type(seed["maximum"]) is int
    floats = [w for w, v in integer_bounds(doc) if not isinstance(v, int)]
    assert floats == []
    text = json.dumps(doc)
    assert "9223372036854775807" in text and "9.223372036854776e+18" not in text


def test_the_largest_seed_the_document_allows_is_accepted(quiet):
    ok = quiet.post("/v1/check", json={"reference": "rx-product"})
    assert ok.status_code == 200
    body = {"reference": "rx-product", "options": {"seed": 2**63 - 1}}
    assert quiet.post("/v1/analyses", json=body).status_code == 202
    body["options"]["seed"] = 2**63
    r = quiet.post("/v1/analyses", json=body)
    assert r.status_code == 422 and r.json()["errors"][0]["path"] == "options.seed"

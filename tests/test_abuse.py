"""Abuse: hostile paths, bodies, sizes, speeds, content types, replays, logs and key checks.

Each case must get a clear 4xx (problem+json where the service answers) and never a 5xx or
a hang. The slow-client and log cases run against a real server on loopback; the rest use
the test client.
"""

import re
import socket
import time
from concurrent.futures import ThreadPoolExecutor

import httpx2 as httpx
import pytest
from haarline.service.api import keys
from haarline.service.api.keys import issue_key, verify_key
from haarline.service.jobs.store import Store
from live_server import LiveServer

PNG = b"\x89PNG\r\n\x1a\n" + b"\0" * 16


@pytest.fixture
def app_client(make_client):
    """An app without a dispatcher, a key, and one finished job with a stored plot."""
    c = make_client(runner=False, key=None, raise_server_exceptions=False)
    store = c.app.state.store
    key_id, key = issue_key(store, "alice")
    c.headers["Authorization"] = f"Bearer {key}"
    job, _ = store.create_job(
        owner=key_id, kind="analysis", request={"reference": "x"}, request_hash="h"
    )
    store.claim(job["id"])
    store.finish(job["id"], report={"ok": 1}, markdown="# ok", artifacts={"fidelity.png": PNG})
    c.job = job["id"]
    return c


def is_problem(r, status):
    assert r.status_code == status, (r.status_code, r.text[:300])
    assert r.headers["content-type"] == "application/problem+json", r.headers
    body = r.json()
    assert body["status"] == status and body["detail"]
    return body


# --- paths ----------------------------------------------------------------------------------

TRAVERSALS = [
    "..%2Ffidelity.png",
    "..%2F..%2F..%2Fetc%2Fpasswd",
    "%2e%2e%2f%2e%2e%2fetc%2fpasswd",
    "..%5C..%5Cwindows%5Cwin.ini",
    "%2Fetc%2Fpasswd",
    "fidelity.png%00.txt",
    "fidelity.png%2F..%2Ffidelity.png",
    "....%2F%2Ffidelity.png",
    "FIDELITY.PNG",
    "%EF%AC%81delity.png",  # a ligature that folds to "fi"
    "." * 300 + ".png",
    "x" * 5000 + ".png",
]


@pytest.mark.parametrize("name", TRAVERSALS)
def test_plot_names_never_reach_outside_their_job(app_client, name):
    c = app_client
    assert c.get(f"/v1/analyses/{c.job}/plots/fidelity.png").content == PNG
    r = c.get(f"/v1/analyses/{c.job}/plots/{name}")
    assert r.status_code == 404 and r.content != PNG, (name, r.status_code)


@pytest.mark.parametrize(
    "path",
    [
        "/v1/analyses/..%2F..%2Fetc%2Fpasswd",
        "/v1/analyses/%2E%2E/report",
        "/v1/references/..%2F..%2Fanalysis%2F__init__.py",
        "/v1/references/%2Fetc%2Fpasswd",
    ],
)
def test_ids_and_reference_names_never_reach_files(app_client, path):
    assert app_client.get(path).status_code == 404


# --- bodies ---------------------------------------------------------------------------------


def test_huge_bodies_are_413_by_header_and_while_streaming(app_client):
    big = b'{"reference": "' + b"x" * 2_000_000 + b'"}'
    r = app_client.post("/v1/analyses", content=big, headers={"Content-Type": "application/json"})
    assert is_problem(r, 413)["detail"].endswith("1048576 bytes")

    def chunks():  # no Content-Length: the limit is enforced while reading
        for _ in range(200):
            yield b" " * 10_000

    r = app_client.post(
        "/v1/analyses", content=chunks(), headers={"Content-Type": "application/json"}
    )
    is_problem(r, 413)


@pytest.mark.parametrize("raw", [b"\xff\xfe{}", b'{"reference": "\xc3"}', b"{not json"])
def test_undecodable_bodies_are_422_not_400_or_500(app_client, raw):
    for route in ("/v1/analyses", "/v1/score", "/v1/check"):
        r = app_client.post(route, content=raw, headers={"Content-Type": "application/json"})
        is_problem(r, 422)


def test_wide_json_within_the_limit_is_a_quick_422(app_client):
    on = list(range(20_000))
    body = {"circuit": {"qubits": 4, "layer": [{"gate": "rx", "on": on}]}}
    started = time.perf_counter()
    r = app_client.post("/v1/analyses", json=body)
    assert time.perf_counter() - started < 5
    assert "circuit.layer[0].on" in is_problem(r, 422)["errors"][0]["path"]


@pytest.mark.parametrize("depth", [40, 500, 900, 5000, 100_000])
@pytest.mark.parametrize("route", ["/v1/analyses", "/v1/score", "/v1/check", "/v1/comparisons"])
def test_deeply_nested_json_is_refused_not_a_500(app_client, depth, route):
    nested = "[" * depth + "0" + "]" * depth
    if route == "/v1/comparisons":
        text = '{"circuits": [{"reference": "rx-product"}, {"reference": "rx-product"}], "x": %s}'
    else:
        text = '{"circuit": {"qubits": 2, "layer": [{"gate": "rx", "on": %s}]}}'
    r = app_client.post(route, content=text % nested, headers={"Content-Type": "application/json"})
    problem = is_problem(r, 422)
    assert "nests" in problem["detail"], problem  # past the parser's own limit, or ours


ENORMOUS = [
    ({"circuit": {"qubits": 10**30, "layer": [{"gate": "rx"}]}}, "circuit.qubits"),
    ({"circuit": {"qubits": 25, "layer": [{"gate": "rx"}]}}, "circuit.qubits"),
    ({"circuit": {"qubits": 2, "layers": 10**9, "layer": [{"gate": "rx"}]}}, "circuit.layers"),
    ({"reference": "rx-product", "options": {"pairs": 10**12}}, "options.pairs"),
    ({"reference": "rx-product", "options": {"samples": 10**300}}, "options.samples"),
    ({"reference": "rx-product", "options": {"pairs": 1e9}}, "options.pairs"),
    ({"reference": "rx-product", "options": {"seed": -1}}, "options.seed"),
    ({"reference": "rx-product", "options": {"scan": list(range(1, 31))}}, "options.scan"),
]


@pytest.mark.parametrize("body,path", ENORMOUS)
def test_enormous_counts_are_422_naming_the_field(app_client, body, path):
    problem = is_problem(app_client.post("/v1/analyses", json=body), 422)
    assert any(e["path"].startswith(path) for e in problem["errors"]), problem


@pytest.mark.parametrize(
    "body",
    [
        {"circuit": {"qubits": 24, "layer": [{"gate": "rx"}]}, "options": {"pairs": 10_000_000}},
        {
            "circuit": {"qubits": 24, "layer": [{"gate": "ry"}]},
            "options": {"metrics": ["capacity"]},
        },
        {"circuit": {"qubits": 24, "layers": 300, "layer": [{"gate": "rzz", "on": "all-to-all"}]}},
    ],
)
def test_enormous_work_is_422_with_the_limit_and_estimate(app_client, body):
    r = app_client.post("/v1/analyses", json=body)
    problem = is_problem(r, 422)
    if "limit" in problem:
        assert problem["estimate"] > problem["limit"]


@pytest.mark.parametrize(
    "content_type",
    [
        "text/plain",
        "application/x-www-form-urlencoded",
        "multipart/form-data; boundary=zz",
        "application/xml",
        "application/octet-stream",
        "application/yaml",
        "application/json-patch",
        "",
    ],
)
def test_wrong_content_types_are_415_never_500(app_client, content_type):
    body = b'{"reference": "rx-product"}'
    for route in ("/v1/analyses", "/v1/check", "/v1/score"):
        r = app_client.post(route, content=body, headers={"Content-Type": content_type})
        assert "application/json" in is_problem(r, 415)["detail"]


def test_a_body_without_a_content_type_is_415(app_client):
    r = app_client.post("/v1/check", content=b'{"reference": "rx-product"}')
    assert "no Content-Type" in is_problem(r, 415)["detail"]


def test_replayed_idempotency_key_with_another_body_is_409(app_client):
    c = app_client
    body = {"reference": "rx-product", "options": {"seed": 9}}
    first = c.post("/v1/analyses", json=body, headers={"Idempotency-Key": "k-1"})
    assert first.status_code == 202
    again = c.post("/v1/analyses", json=body, headers={"Idempotency-Key": "k-1"})
    assert again.status_code == 202 and again.json()["id"] == first.json()["id"]
    other = {"reference": "rx-product", "options": {"seed": 10}}
    is_problem(c.post("/v1/analyses", json=other, headers={"Idempotency-Key": "k-1"}), 409)
    # the key is scoped to its API key: someone else's identical key is a new job
    _, bob = issue_key(c.app.state.store, "bob")
    r = c.post(
        "/v1/analyses",
        json=other,
        headers={"Idempotency-Key": "k-1", "Authorization": f"Bearer {bob}"},
    )
    assert r.status_code == 202 and r.json()["id"] != first.json()["id"]


# --- key checks -----------------------------------------------------------------------------


class CountingStore(Store):
    """A store that counts hash look-ups."""

    lookups = 0

    def key_hash(self, key_id):
        self.lookups += 1
        return super().key_hash(key_id)


def test_key_checks_do_the_same_work_whatever_the_key(tmp_path, monkeypatch):
    """Constant time by construction, not by a stopwatch.

    Every check, valid or not, compares two SHA-256 hex digests of equal length with
    ``hmac.compare_digest``; a well-formed key always costs one store look-up, whether its
    id exists or not, so a wrong secret and an unknown id take the same path. Only a key
    that does not even look like one skips the look-up (its shape is public).
    """
    store = CountingStore(tmp_path / "k.sqlite3")
    store.initialize()
    key_id, key = issue_key(store, "alice")
    revoked_id, revoked = issue_key(store, "old")
    store.revoke_key(revoked_id)
    calls = []
    real = keys.hmac.compare_digest

    def spy(a, b):
        calls.append((a, b))
        return real(a, b)

    monkeypatch.setattr(keys.hmac, "compare_digest", spy)
    secret = key.split("_", 2)[2]
    cases = {
        "valid": (key, key_id),
        "wrong secret": (key[:-1] + ("A" if key[-1] != "A" else "B"), None),
        "unknown id": (f"hl_{'0' * 12}_{secret}", None),
        "revoked": (revoked, None),
        "malformed": ("not-a-key", None),
    }
    for name, (candidate, want) in cases.items():
        calls.clear()
        before = store.lookups
        assert verify_key(store, candidate) == want, name
        assert len(calls) == 1, name
        a, b = calls[0]
        assert re.fullmatch("[0-9a-f]{64}", a) and re.fullmatch("[0-9a-f]{64}", b), name
        assert store.lookups - before == (0 if name == "malformed" else 1), name


# --- a real server: slow clients and logs ---------------------------------------------------


@pytest.fixture(scope="module")
def live(tmp_path_factory):
    env = {"HAARLINE_READ_TIMEOUT": "1"}
    server = LiveServer(tmp_path_factory.mktemp("abuse"), env=env, log_level="debug")
    with server:
        yield server


def exchange(server, first: bytes, wait: float = 10.0) -> tuple[bytes, float]:
    """Send ``first`` and nothing more; return what comes back and after how long."""
    with socket.create_connection(("127.0.0.1", server.port)) as s:
        s.sendall(first)
        s.settimeout(wait)
        started = time.monotonic()
        data = b""
        try:
            while chunk := s.recv(65536):
                data += chunk
        except TimeoutError:
            pass
        return data, time.monotonic() - started


SLOW_CLIENTS = {
    "a body announced and never finished": (
        b"POST /v1/check HTTP/1.1\r\nHost: x\r\nContent-Type: application/json\r\n"
        b'Content-Length: 100\r\n\r\n{"refer',
        b"HTTP/1.1 408 ",
    ),
    "a chunked body that stops": (
        b"POST /v1/check HTTP/1.1\r\nHost: x\r\nContent-Type: application/json\r\n"
        b'Transfer-Encoding: chunked\r\n\r\n5\r\n{"ref\r\n',
        b"HTTP/1.1 408 ",
    ),
    "headers that stop": (b"POST /v1/check HTTP/1.1\r\nHost: x\r\nContent-", b""),
    "a connection that says nothing": (b"", b""),
}


def test_slow_clients_are_cut_off_and_others_are_served(live):
    started = time.monotonic()
    with ThreadPoolExecutor(len(SLOW_CLIENTS)) as pool:
        futures = {k: pool.submit(exchange, live, first) for k, (first, _) in SLOW_CLIENTS.items()}
        with httpx.Client(base_url=live.url) as other:  # served while they hang on
            assert other.get("/healthz").status_code == 200
            assert time.monotonic() - started < 0.9
        for name, future in futures.items():
            data, waited = future.result()
            answer = SLOW_CLIENTS[name][1]
            assert waited < 5, (name, waited)  # the read timeout is 1 s
            if answer:
                assert data.startswith(answer), (name, data[:100])
                assert b"application/problem+json" in data and b"did not arrive within" in data
            else:
                assert data == b"", (name, data[:100])  # closed without a word


def test_keys_never_appear_in_the_logs(live):
    good = live.key("logged")
    revoked_id, revoked = issue_key(live.store, "gone")
    live.store.revoke_key(revoked_id)
    secret = good.split("_", 2)[2]
    unknown = f"hl_{'0' * 12}_{secret}"
    with httpx.Client(base_url=live.url) as c:
        for key in (good, revoked, unknown, good + "x"):
            h = {"Authorization": f"Bearer {key}"}
            c.get("/v1/analyses", headers=h)
            c.get("/v1/analyses/nope", headers=h)
            c.post("/v1/analyses", json={"reference": "nope"}, headers=h)
            c.post("/v1/check", content=b"{bad", headers={**h, "Content-Type": "application/json"})
            c.get("/v1/references", headers={"Authorization": key})  # no scheme
    time.sleep(0.5)
    log = live.log.read_text()
    assert "GET /v1/analyses" in log  # the debug access log did record the requests
    for text in (good, revoked, unknown, secret, revoked.split("_", 2)[2]):
        assert text not in log

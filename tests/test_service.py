"""The REST service through FastAPI's test client: jobs, keys, errors, limits."""

import json
import time

import haarline
import pytest
from conftest import bearer
from haarline.service.api.keys import issue_key
from haarline.service.jobs.store import Store
from haarline.service.settings import Settings

SMALL = {"pairs": 300, "samples": 100, "seed": 5}


def wait(client, url, timeout=60):
    deadline = time.time() + timeout
    while time.time() < deadline:
        job = client.get(url).json()
        if job["state"] in ("succeeded", "failed", "cancelled"):
            return job
        time.sleep(0.1)
    raise AssertionError(f"{url} did not finish: {job}")


def test_submit_poll_fetch_and_equal_to_the_cli(client):
    body = {"reference": "ry-cz-ring", "options": SMALL}
    r = client.post("/v1/analyses", json=body)
    assert r.status_code == 202
    url = r.headers["Location"]
    job = wait(client, url)
    assert job["state"] == "succeeded" and job["progress"]["fraction"] == 1.0
    assert [e["state"] for e in job["events"]] == ["queued", "running", "succeeded"]
    report = client.get(f"{url}/report").json()
    cli_report = haarline.analyze(
        haarline.load_reference("ry-cz-ring"), haarline.AnalysisOptions(**SMALL)
    )
    strip = lambda r: {k: v for k, v in r.items() if k != "timings"}  # noqa: E731
    assert strip(report) == strip(json.loads(json.dumps(cli_report)))
    summary = client.get(f"{url}/summary")
    assert summary.headers["content-type"].startswith("text/markdown")
    assert f"{report['expressibility']['kl']:.4f}" in summary.text
    names = client.get(f"{url}/plots").json()
    for name in names:
        png = client.get(f"{url}/plots/{name}")
        assert (
            png.headers["content-type"] == "image/png" and png.content[:8] == b"\x89PNG\r\n\x1a\n"
        )
        assert f"(plots/{name})" in summary.text


def test_identical_request_is_answered_from_the_store(client):
    body = {"reference": "rx-product", "options": SMALL}
    first = wait(client, client.post("/v1/analyses", json=body).headers["Location"])
    second = client.post("/v1/analyses", json=body).json()
    assert second["id"] != first["id"] and second["state"] == "succeeded" and second["cached"]
    a = client.get(f"/v1/analyses/{first['id']}/report").json()
    b = client.get(f"/v1/analyses/{second['id']}/report").json()
    assert a == b


def test_keys_see_only_their_own_jobs(quiet):
    bob = bearer(quiet.app)
    job = quiet.post("/v1/analyses", json={"reference": "rx-product"}).json()
    for method, path in [
        ("get", ""),
        ("delete", ""),
        ("get", "/report"),
        ("get", "/summary"),
        ("get", "/plots"),
    ]:
        r = quiet.request(method, f"/v1/analyses/{job['id']}{path}", headers=bob)
        assert r.status_code == 404, (method, path)
        assert r.headers["content-type"] == "application/problem+json"
    assert quiet.get("/v1/analyses", headers=bob).json()["jobs"] == []
    assert [j["id"] for j in quiet.get("/v1/analyses").json()["jobs"]] == [job["id"]]


@pytest.mark.parametrize(
    "header", [None, "Bearer nonsense", "Bearer hl_000000000000_" + "A" * 43, "Basic abc"]
)
def test_missing_or_wrong_key_is_401(quiet, header):
    headers = {} if header is None else {"Authorization": header}
    quiet.headers.pop("Authorization")
    r = quiet.get("/v1/analyses", headers=headers)
    assert r.status_code == 401 and r.headers["content-type"] == "application/problem+json"
    assert quiet.get("/healthz").status_code == 200  # health needs no key


def test_revoked_key_is_401(quiet):
    store = quiet.app.state.store
    key_id, key = issue_key(store, "carol")
    assert (
        quiet.get("/v1/references", headers={"Authorization": f"Bearer {key}"}).status_code == 200
    )
    store.revoke_key(key_id)
    assert (
        quiet.get("/v1/references", headers={"Authorization": f"Bearer {key}"}).status_code == 401
    )


def test_keys_are_stored_only_as_hashes(quiet, tmp_path):
    _, key = issue_key(quiet.app.state.store, "dave")
    raw = (tmp_path / "data" / "haarline.sqlite3").read_bytes()
    secret = key[len("hl_") + 12 + 1 :]
    assert key.encode() not in raw and secret.encode() not in raw


@pytest.mark.parametrize(
    "body,path",
    [
        (
            {"circuit": {"qubits": 4, "layer": [{"gate": "rx", "on": [5]}]}},
            "circuit.layer[0].on[0]",
        ),
        ({"circuit": {"qubits": 4, "layer": [{"gate": "rq"}]}}, "circuit.layer[0].gate"),
        ({"circuit": {"qubits": "4", "layer": []}}, "circuit.qubits"),
        ({"reference": "ry-cz-ring", "options": {"pairs": 1}}, "options.pairs"),
        ({"reference": "ry-cz-ring", "options": {"metrics": ["speed"]}}, "options.metrics[0]"),
        ({"reference": "ry-cz-ring", "extra": 1}, "extra"),
        ({"reference": "nope"}, "reference"),
        ({}, "(root)"),
    ],
)
def test_bad_bodies_are_422_problems_with_the_field_path(quiet, body, path):
    r = quiet.post("/v1/analyses", json=body)
    assert r.status_code == 422, r.text
    problem = r.json()
    assert r.headers["content-type"] == "application/problem+json"
    assert problem["status"] == 422 and problem["title"] and problem["detail"]
    assert path in [e["path"] for e in problem["errors"]], problem


def test_malformed_json_is_422_not_500(quiet):
    r = quiet.post(
        "/v1/analyses", content=b"{not json", headers={"Content-Type": "application/json"}
    )
    assert r.status_code == 422 and r.headers["content-type"] == "application/problem+json"


def test_oversize_body_is_413(make_client):
    c = make_client(runner=False, max_body_bytes=2048)
    r = c.post("/v1/analyses", content=b"x" * 5000, headers={"Content-Type": "application/json"})
    assert r.status_code == 413 and "2048" in r.json()["detail"]


def test_work_over_the_cost_cap_is_rejected_with_the_estimate(quiet):
    wide = {"qubits": 20, "layers": 3, "layer": [{"gate": "ry"}, {"gate": "cz", "on": "ring"}]}
    # 2 * 1e6 pairs * 120 gates * 2^20 amplitudes = 2.5e14 updates, over the 2e11 default
    body = {"circuit": wide, "options": {"pairs": 1_000_000}}
    r = quiet.post("/v1/analyses", json=body)
    assert r.status_code == 422
    problem = r.json()
    assert problem["limit"] == quiet.app.state.settings.max_work
    assert problem["estimate"] > problem["limit"] and "exceeds the limit" in problem["detail"]
    assert "the expressibility metric accounts for 100% of it" in problem["detail"]
    r = quiet.post("/v1/score", json={"reference": "ry-cz-ring", "options": {"pairs": 1_000_000}})
    assert r.status_code == 422 and "POST /v1/analyses" in r.json()["detail"]
    lie = {"reference": "sim2019-03", "options": {"metrics": ["lie", "entanglement"]}}
    r = quiet.post("/v1/score", json=lie)
    assert r.status_code == 422 and "the lie metric accounts for 100% of it" in r.json()["detail"]


def test_queue_per_key_gives_429_with_retry_after(make_client):
    c = make_client(runner=False, queue_per_key=2)
    for seed in (1, 2):
        r = c.post("/v1/analyses", json={"reference": "rx-product", "options": {"seed": seed}})
        assert r.status_code == 202
    r = c.post("/v1/analyses", json={"reference": "rx-product", "options": {"seed": 3}})
    assert r.status_code == 429 and r.headers["Retry-After"] == "5"


def test_idempotency_key(quiet):
    body = {"reference": "rx-product", "options": {"seed": 9}}
    a = quiet.post("/v1/analyses", json=body, headers={"Idempotency-Key": "pr-17"})
    b = quiet.post("/v1/analyses", json=body, headers={"Idempotency-Key": "pr-17"})
    assert a.status_code == 202 and b.status_code == 202
    assert a.json()["id"] == b.json()["id"] and b.headers["Idempotent-Replayed"] == "true"
    c = quiet.post(
        "/v1/analyses", json={**body, "options": {"seed": 10}}, headers={"Idempotency-Key": "pr-17"}
    )
    assert c.status_code == 409


def test_cancel_a_queued_job(quiet):
    job = quiet.post("/v1/analyses", json={"reference": "rx-product"}).json()
    r = quiet.delete(f"/v1/analyses/{job['id']}")
    assert r.status_code == 202 and r.json()["state"] == "cancelled"
    r = quiet.get(f"/v1/analyses/{job['id']}/report")
    assert r.status_code == 409 and "cancelled" in r.json()["detail"]


def test_cancel_a_running_job_stops_it(client):
    body = {
        "reference": "ry-cz-ring",
        "options": {"pairs": 2_000_000, "metrics": ["expressibility"]},
    }
    job = client.post("/v1/analyses", json=body).json()
    url = f"/v1/analyses/{job['id']}"
    deadline = time.time() + 30
    # wait until the worker is computing (it reports its first stage), then cancel
    while (
        client.get(url).json()["progress"]["stage"] != "expressibility" and time.time() < deadline
    ):
        time.sleep(0.05)
    time.sleep(0.5)
    asked = time.time()
    client.delete(url)
    done = wait(client, url)
    assert done["state"] == "cancelled"
    assert time.time() - asked < 3.0  # stops within a second or two


def test_compare_job(client):
    body = {
        "circuits": [{"reference": "sim2019-01"}, {"reference": "sim2019-09"}],
        "options": SMALL,
    }
    r = client.post("/v1/comparisons", json=body)
    assert r.status_code == 202
    job = wait(client, r.headers["Location"])
    assert job["state"] == "succeeded"
    result = client.get(f"/v1/comparisons/{job['id']}/report").json()
    assert [row["name"] for row in result["ranking"]] == ["sim2019-01", "sim2019-09"]


def test_score_check_schema_references(client):
    r = client.post("/v1/score", json={"reference": "ry-cz-ring", "options": SMALL})
    assert r.status_code == 200 and r.json()["report_format"] == 1
    facts = client.post("/v1/check", json={"reference": "ry-cz-ring", "qubits": 6}).json()
    assert facts["qubits"] == 6 and facts["two_qubit_gates"] == 18
    assert client.get("/v1/schema").json()["title"].startswith("haarline circuit description")
    names = [r["name"] for r in client.get("/v1/references").json()]
    assert "sim2019-19" in names
    assert client.get("/v1/references/ry-cz-ring").json()["name"] == "ry-cz-ring"
    assert client.get("/readyz").json()["status"] == "ready"


def test_plot_names_cannot_escape(client):
    job = wait(
        client,
        client.post("/v1/analyses", json={"reference": "rx-product", "options": SMALL}).headers[
            "Location"
        ],
    )
    for name in ["..%2Freport", "..%2F..%2Fetc%2Fpasswd", "fidelity.PNG", "x" * 100 + ".png"]:
        r = client.get(f"/v1/analyses/{job['id']}/plots/{name}")
        assert r.status_code == 404, name


def test_dev_mode_refuses_a_public_address(tmp_path):
    from haarline.service.errors import SettingsError

    with pytest.raises(SettingsError, match="loopback"):
        Settings.from_env({}, data_dir=str(tmp_path), dev_mode=True, host="0.0.0.0")


def test_keys_commands(tmp_path, capsys):
    from haarline.service.api.keys import verify_key
    from haarline.service.cli import main as cli

    data = str(tmp_path / "keys")
    assert cli.main(["keys", "--data-dir", data, "add", "review-bot"]) == 0
    key = capsys.readouterr().out.strip()
    store = Store(tmp_path / "keys" / "haarline.sqlite3")
    key_id = verify_key(store, key)
    assert key_id is not None
    assert cli.main(["keys", "--data-dir", data, "list"]) == 0
    listing = capsys.readouterr().out
    assert key_id in listing and "active" in listing and key not in listing
    assert cli.main(["keys", "--data-dir", data, "revoke", key_id]) == 0
    assert verify_key(store, key) is None
    assert cli.main(["keys", "--data-dir", data, "revoke", key_id]) == 2


def test_huge_bin_counts_are_refused_by_the_memory_estimate(quiet):
    # 1000 bootstrap resamples x 100000 bins is gigabytes: admission says so up front
    r = quiet.post("/v1/analyses", json={"reference": "rx-product", "options": {"bins": 100_000}})
    assert r.status_code == 422 and "memory" in r.json()["detail"]


def test_listing_pages_by_kind(quiet):
    for seed in (1, 2, 3):
        quiet.post("/v1/analyses", json={"reference": "rx-product", "options": {"seed": seed}})
    quiet.post(
        "/v1/comparisons",
        json={"circuits": [{"reference": "rx-product"}, {"reference": "ry-cz-ring"}]},
    )
    page = quiet.get("/v1/analyses", params={"limit": 2}).json()
    assert len(page["jobs"]) == 2 and all(j["kind"] == "analysis" for j in page["jobs"])
    assert page["total"] == 3 and page["next"] is not None
    assert len(quiet.get(page["next"]).json()["jobs"]) == 1
    assert len(quiet.get("/v1/comparisons").json()["jobs"]) == 1


@pytest.mark.parametrize("offset", ["0", "2", "10"])
def test_listing_by_offset_is_refused_not_ignored(quiet, offset):
    # paging by offset was replaced by cursors; an old client must not loop on page one
    r = quiet.get("/v1/analyses", params={"offset": offset})
    assert r.status_code == 422, r.text
    assert r.json()["errors"][0]["path"] == "offset"
    assert "cursor" in r.json()["errors"][0]["message"]


SOURCE = "circuit, qasm, reference"  # the fields of every circuit source


@pytest.mark.parametrize(
    "route,body,path,allowed",
    [
        (
            "/v1/analyses",
            {"reference": "rx-product", "bogus": 1},
            "bogus",
            SOURCE + ", options, data, labels, callback_url",
        ),
        (
            "/v1/comparisons",
            {"circuits": [{"reference": "rx-product", "options": {}}, {"reference": "rx-product"}]},
            "circuits[0].options",  # options belong to the comparison, not to one circuit
            SOURCE,
        ),
        (
            "/v1/check",
            {"reference": "rx-product", "depth": 3},
            "depth",
            SOURCE + ", qubits, layers, diagram",
        ),
        (
            "/v1/score",
            {"reference": "rx-product", "seed": 3},
            "seed",
            SOURCE + ", options, data, labels, callback_url",
        ),
    ],
)
def test_an_unknown_field_names_the_allowed_ones(quiet, route, body, path, allowed):
    r = quiet.post(route, json=body)
    assert r.status_code == 422, r.text
    assert {"path": path, "message": f"unknown field; allowed: {allowed}"} in r.json()["errors"]


def test_the_result_cache_is_per_key_by_default(client):
    body = {"reference": "rx-product", "options": SMALL}
    first = wait(client, client.post("/v1/analyses", json=body).headers["Location"])
    # another key's identical request runs on its own: a cached answer would tell bob
    # that someone else analysed this circuit with these options and seed
    bob = client.post("/v1/analyses", json=body, headers=bearer(client.app)).json()
    assert not bob["cached"] and bob["state"] == "queued"
    again = client.post("/v1/analyses", json=body).json()
    assert again["cached"] and again["id"] != first["id"]


def test_a_shared_result_cache_is_a_setting(make_client):
    c = make_client(shared_result_cache=True)
    body = {"reference": "rx-product", "options": SMALL}
    wait(c, c.post("/v1/analyses", json=body).headers["Location"])
    bob = c.post("/v1/analyses", json=body, headers=bearer(c.app)).json()
    assert bob["cached"] and bob["state"] == "succeeded"


def test_keys_add_takes_the_data_dir_after_the_action(tmp_path, capsys):
    from haarline.service.api.keys import verify_key
    from haarline.service.cli import main as cli

    data = str(tmp_path / "after")
    assert cli.main(["keys", "add", "bot", "--data-dir", data]) == 0
    key = capsys.readouterr().out.strip()
    assert verify_key(Store(tmp_path / "after" / "haarline.sqlite3"), key) is not None
    assert cli.main(["keys", "list", "--data-dir", data]) == 0
    assert "bot" in capsys.readouterr().out

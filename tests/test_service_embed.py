"""Issue 16, parts 2 to 4: embeddable results, policies over REST, labels and listings.

A lab wiki embeds plots and summaries through share links (no key); a CI gate sends its
policy inline; a review bot tags jobs with the pull request and finds them again.
"""

from __future__ import annotations

import json
import re
import time
from concurrent.futures import ThreadPoolExecutor

import pytest
from conftest import bearer
from haarline.service.cli import main as cli

SMALL = {"pairs": 300, "samples": 100, "seed": 5, "metrics": ["expressibility", "entanglement"]}
SECRET = "a test secret, 16 characters or more"


@pytest.fixture
def wiki(make_client):
    """A service with a public URL, jobs that run, and no key sent unless given."""
    c = make_client(key=None, page_secret=SECRET, public_url="https://q.example.org/")
    c.key = bearer(c.app, "alice")
    return c


def finished(client, body, key):
    url = client.post("/v1/analyses", json=body, headers=key).headers["Location"]
    deadline = time.time() + 60
    while client.get(url, headers=key).json()["state"] not in ("succeeded", "failed"):
        assert time.time() < deadline
        time.sleep(0.05)
    return url


def share(client, url, key, **body):
    r = client.post(f"{url}/share", headers=key, json=body)
    assert r.status_code == 200, r.text
    return r.json()


# --- embeddable results -------------------------------------------------------------------


def test_a_share_token_opens_every_output_of_its_job_without_a_key(wiki):
    url = finished(wiki, {"reference": "ry-cz-ring", "options": SMALL}, wiki.key)
    link = share(wiki, url, wiki.key, ttl_seconds=3600)
    token = link["token"]
    assert link["state"] == "open" and link["url"].endswith(f"/page?token={token}")
    names = wiki.get(f"{url}/plots", params={"token": token}).json()
    assert "fidelity.png" in names
    for name in names:
        r = wiki.get(f"{url}/plots/{name}", params={"token": token})
        assert r.status_code == 200 and r.content.startswith(b"\x89PNG"), name
    report = wiki.get(f"{url}/report", params={"token": token})
    assert (
        report.status_code == 200
        and report.json() == wiki.get(f"{url}/report", headers=wiki.key).json()
    )
    assert wiki.get(f"{url}/page", params={"token": token}).status_code == 200
    # without a key or token: 401, as before
    assert wiki.get(f"{url}/plots/fidelity.png").status_code == 401


def test_summary_links_are_absolute_and_carry_the_token_it_was_fetched_with(wiki):
    url = finished(wiki, {"reference": "ry-cz-ring", "options": SMALL}, wiki.key)
    job_id = url.rsplit("/", 1)[1]
    root = f"https://q.example.org/v1/analyses/{job_id}/"
    token = share(wiki, url, wiki.key)["token"]
    shared = wiki.get(f"{url}/summary", params={"token": token}).text
    owned = wiki.get(f"{url}/summary", headers=wiki.key).text
    targets = re.findall(r"\]\(([^)]+)\)", shared)
    assert targets and all(t.startswith(root) and t.endswith(f"?token={token}") for t in targets)
    assert f"]({root}plots/fidelity.png?token={token})" in shared
    assert f"]({root}page?token={token})" in shared
    # the owner's summary: absolute, no token; every link then answers what it names
    assert f"]({root}plots/fidelity.png)" in owned and "token=" not in owned
    for target in targets:
        path = target.removeprefix("https://q.example.org")
        assert wiki.get(path).status_code == 200, target


def test_without_a_public_url_summary_links_stay_relative(make_client):
    c = make_client(key=None, page_secret=SECRET)
    key = bearer(c.app, "alice")
    url = finished(c, {"reference": "rx-product", "options": SMALL}, key)
    token = share(c, url, key)["token"]
    text = c.get(f"{url}/summary", params={"token": token}).text
    assert f"](plots/fidelity.png?token={token})" in text


def test_links_are_listed_revoked_and_die_with_their_key(wiki):
    store = wiki.app.state.store
    from haarline.service.api.keys import issue_key

    key_id, secret = issue_key(store, "carol")
    carol = {"Authorization": f"Bearer {secret}"}
    url = finished(wiki, {"reference": "rx-product", "options": SMALL}, carol)
    first, second = share(wiki, url, carol), share(wiki, url, carol)
    wiki_plot = f"{url}/plots/fidelity.png"
    assert wiki.get(wiki_plot, params={"token": first["token"]}).status_code == 200
    r = wiki.delete(f"{url}/share/{first['id']}", headers=carol)
    assert r.status_code == 204
    for route in ("page", "summary", "report", "plots/fidelity.png"):
        r = wiki.get(f"{url}/{route}", params={"token": first["token"]})
        assert r.status_code == 403 and "revoked" in r.json()["detail"], route
    listed = {li["id"]: li["state"] for li in wiki.get(f"{url}/share", headers=carol).json()}
    assert listed == {first["id"]: "revoked", second["id"]: "open"}
    assert wiki.delete(f"{url}/share/{first['id']}", headers=carol).status_code == 404
    assert wiki.get(f"{url}/share", headers=wiki.key).status_code == 404  # not alice's job
    store.revoke_key(key_id)
    r = wiki.get(wiki_plot, params={"token": second["token"]})
    assert r.status_code == 403 and "key that shared it was revoked" in r.json()["detail"]


def test_link_lifetime_is_bounded_by_the_configured_maximum(make_client):
    c = make_client(page_secret=SECRET, share_max_days=2)
    url = finished(c, {"reference": "rx-product", "options": SMALL}, {})
    assert share(c, url, {}, ttl_seconds=2 * 86_400)["expires"] <= time.time() + 2 * 86_400 + 1
    r = c.post(f"{url}/share", json={"ttl_seconds": 2 * 86_400 + 1})
    assert r.status_code == 422
    assert r.json()["errors"][0]["path"] == "ttl_seconds"
    assert "at most 172800 s (2 days" in r.json()["errors"][0]["message"]


def test_the_default_maximum_is_ninety_days(make_client):
    c = make_client(page_secret=SECRET)
    url = finished(c, {"reference": "rx-product", "options": SMALL}, {})
    assert share(c, url, {}, ttl_seconds=90 * 86_400)["state"] == "open"
    assert c.post(f"{url}/share", json={"ttl_seconds": 90 * 86_400 + 1}).status_code == 422


# --- policies over REST ---------------------------------------------------------------------

FAILING = {
    "name": "review gate",
    "rules": [
        {"metric": "expressibility.kl_corrected", "fail_above": 1e-6},
        {"metric": "entanglement.meyer_wallach", "warn_below": 0.99, "fail_below": 0.0},
    ],
}


def test_an_inline_policy_gives_the_cli_rule_results_and_a_job_verdict(client, tmp_path, capsys):
    body = {"reference": "ry-cz-ring", "options": {**SMALL, "policy": FAILING}}
    url = finished(client, body, {})
    status = client.get(url).json()
    assert status["policy"] == "failed"
    served = client.get(f"{url}/report").json()["policy"]
    # the same policy file through the CLI: the same rule results, exit code 1
    path = tmp_path / "gate.json"
    path.write_text(json.dumps(FAILING))
    flags = ["--pairs", "300", "--samples", "100", "--seed", "5"]
    flags += ["--metrics", "expressibility,entanglement", "--policy", str(path)]
    assert cli.main(["analyze", "ref:ry-cz-ring", *flags, "--format", "json"]) == 1
    assert json.loads(capsys.readouterr().out)["policy"] == served
    assert served["status"] == "fail" and [r["status"] for r in served["rules"]] == ["fail", "warn"]
    assert "review gate" in client.get(f"{url}/summary").text


def test_a_passing_policy_and_no_policy(client):
    passing = {"rules": [{"metric": "entanglement.meyer_wallach", "fail_below": 0.0}]}
    with_policy = finished(
        client, {"reference": "ry-cz-ring", "options": {**SMALL, "policy": passing}}, {}
    )
    assert client.get(with_policy).json()["policy"] == "passed"
    without = finished(client, {"reference": "ry-cz-ring", "options": SMALL}, {})
    assert client.get(without).json()["policy"] is None
    assert client.get(f"{without}/report").json()["policy"] is None


def test_the_score_route_evaluates_the_policy(client):
    r = client.post(
        "/v1/score", json={"reference": "rx-product", "options": {**SMALL, "policy": FAILING}}
    )
    assert r.status_code == 200, r.text
    assert r.json()["policy"]["status"] == "fail"


@pytest.mark.parametrize(
    ("policy", "path", "message"),
    [
        ({"rules": []}, "options.policy.rules", "at least 1 item"),
        (
            {"rules": [{"metric": "capacity.redundant", "fail_above": 2}]},
            "options.policy.rules[0].metric",
            "add it to options.metrics",
        ),
        (
            {"rules": [{"metric": "nothing.here", "expect": 1}]},
            "options.policy.rules[0].metric",
            "not a part of the report",
        ),
        (
            {"rules": [{"metric": "expressibility.kl", "fail_above": "x"}]},
            "options.policy.rules[0].fail_above",
            "expected a number",
        ),
        (
            {"rules": [], "extra": 1},
            "options.policy.extra",
            "unknown key; allowed keys: name, rules",
        ),
    ],
)
def test_a_bad_inline_policy_is_a_422_naming_the_rule(quiet, policy, path, message):
    r = quiet.post(
        "/v1/analyses", json={"reference": "rx-product", "options": {**SMALL, "policy": policy}}
    )
    assert r.status_code == 422, r.text
    errors = r.json()["errors"]
    assert any(e["path"] == path and message in e["message"] for e in errors), errors


def test_a_policy_is_part_of_the_request_identity(quiet):
    plain = quiet.post("/v1/analyses", json={"reference": "rx-product", "options": SMALL})
    gated = quiet.post(
        "/v1/analyses", json={"reference": "rx-product", "options": {**SMALL, "policy": FAILING}}
    )
    assert plain.json()["id"] != gated.json()["id"]


# --- labels and listings -------------------------------------------------------------------


def post(quiet, seed, labels=None, **extra):
    body = {"reference": "rx-product", "options": {"seed": seed}, **extra}
    if labels is not None:
        body["labels"] = labels
    r = quiet.post("/v1/analyses", json=body)
    assert r.status_code == 202, r.text
    return r.json()


def test_labels_are_stored_shown_and_filtered(quiet):
    a = post(quiet, 1, {"pr": "17", "commit": "ab12cd"})
    b = post(quiet, 2, {"pr": "17", "commit": "ff00ee"})
    c = post(quiet, 3, {"pr": "18"})
    assert quiet.get(f"/v1/analyses/{a['id']}").json()["labels"] == {"commit": "ab12cd", "pr": "17"}

    def ids(*params):
        page = quiet.get("/v1/analyses", params=list(params)).json()
        assert page["total"] == len(page["jobs"])
        return [j["id"] for j in page["jobs"]]

    assert ids(("label", "pr:17")) == [b["id"], a["id"]]
    assert ids(("label", "pr:17"), ("label", "commit:ab12cd")) == [a["id"]]
    assert ids(("label", "pr")) == [c["id"], b["id"], a["id"]]
    assert ids(("label", "pr:19")) == []
    assert ids(("state", "queued"), ("label", "pr:18")) == [c["id"]]
    assert ids(("state", "succeeded")) == []
    latest = quiet.get("/v1/analyses/latest", params={"label": "pr:17"})
    assert latest.status_code == 200 and latest.json()["id"] == b["id"]
    assert quiet.get("/v1/analyses/latest", params={"label": "pr:99"}).status_code == 404
    # another key sees none of them
    other = bearer(quiet.app)
    assert quiet.get("/v1/analyses", params={"label": "pr:17"}, headers=other).json()["total"] == 0


def test_cursor_pages_miss_and_repeat_nothing_while_jobs_arrive(quiet):
    first = [post(quiet, seed, {"run": "night"})["id"] for seed in range(7)]
    seen, url, pages = [], "/v1/analyses?label=run:night&limit=3", 0
    while url:
        r = quiet.get(url)
        page = r.json()
        assert page["total"] >= 7
        seen += [j["id"] for j in page["jobs"]]
        if page["next"]:
            assert r.headers["Link"] == f'<{page["next"]}>; rel="next"'
        else:
            assert "Link" not in r.headers
        post(quiet, 100 + pages, {"run": "night"})  # a newer job arrives between pages
        url, pages = page["next"], pages + 1
    assert seen == list(reversed(first))  # every job there at the start, once, newest first
    assert pages == 3


def test_listing_filters_and_cursors_are_checked(quiet):
    for params, path in [
        ({"label": "PR:17"}, "label[0]"),
        ({"label": "pr:"}, "label[0]"),
        ({"cursor": "not-a-cursor"}, "cursor"),
        ({"state": "done"}, "query.state[0]"),
    ]:
        r = quiet.get("/v1/analyses", params=params)
        assert r.status_code == 422, (params, r.text)
        assert r.json()["errors"][0]["path"] == path, (params, r.json())


@pytest.mark.parametrize(
    ("labels", "path"),
    [
        ({"PR": "1"}, "labels.PR"),
        ({"pr": ""}, "labels.pr"),
        ({"pr": "a\nb"}, "labels.pr"),
        ({f"k{i}": "v" for i in range(21)}, "labels"),
        ({"pr": 17}, "labels.pr"),
    ],
)
def test_bad_labels_are_a_422_naming_the_label(quiet, labels, path):
    r = quiet.post("/v1/analyses", json={"reference": "rx-product", "labels": labels})
    assert r.status_code == 422, r.text
    assert r.json()["errors"][0]["path"].startswith(path), r.json()


def test_labels_take_part_in_idempotency(quiet):
    headers = {"Idempotency-Key": "bot-run-1"}
    body = {"reference": "rx-product", "labels": {"pr": "1"}}
    first = quiet.post("/v1/analyses", json=body, headers=headers)
    again = quiet.post("/v1/analyses", json=body, headers=headers)
    assert again.json()["id"] == first.json()["id"]
    other = quiet.post("/v1/analyses", json={**body, "labels": {"pr": "2"}}, headers=headers)
    assert other.status_code == 409


def test_labelled_jobs_arrive_concurrently_without_loss(quiet):
    with ThreadPoolExecutor(4) as pool:
        made = list(pool.map(lambda s: post(quiet, s, {"batch": "b1"})["id"], range(12)))
    page = quiet.get("/v1/analyses", params={"label": "batch:b1", "limit": 200}).json()
    assert sorted(j["id"] for j in page["jobs"]) == sorted(made) and page["total"] == 12

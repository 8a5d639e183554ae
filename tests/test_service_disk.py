"""Disk space: /readyz reports it and fails below the minimum; a full disk is a 503, not a 500.

The full disk is SQLite's own: a store whose connections set ``PRAGMA max_page_count`` to
the file's size may not grow the file, so a write that needs a new page fails with
SQLITE_FULL ("database or disk is full") exactly where a full disk would fail it. It is
put in through the store dependency (``app.dependency_overrides``), nothing else changes.
"""

import errno
import re
import shutil
import sqlite3
from contextlib import closing, contextmanager

import pytest
from fastapi.testclient import TestClient
from haarline.service.api.deps import get_store
from haarline.service.api.keys import issue_key
from haarline.service.jobs.store import Store

SMALL = {"reference": "rx-product", "options": {"pairs": 100, "samples": 50}}


class FullDisk(Store):
    """The same database file, which may not grow past its present size."""

    def __init__(self, path):
        super().__init__(path)
        with closing(sqlite3.connect(path)) as conn:
            self.pages = conn.execute("PRAGMA page_count").fetchone()[0]

    @contextmanager
    def _connect(self):
        with super()._connect() as conn:
            conn.execute(f"PRAGMA max_page_count = {self.pages}")
            yield conn


def test_readiness_reports_the_free_space(make_app, tmp_path):
    with TestClient(make_app()) as c:
        r = c.get("/readyz")
        assert r.status_code == 200, r.text
        body = r.json()
        assert set(body) == {"status", "free_bytes", "min_free_bytes"}
        assert body["status"] == "ready" and body["min_free_bytes"] == 64 * 2**20
        free = shutil.disk_usage(tmp_path / "data").free
        assert body["free_bytes"] == pytest.approx(free, abs=256 * 2**20)  # others write too


def test_readiness_fails_below_the_minimum_free_space(make_app, tmp_path):
    free = shutil.disk_usage(tmp_path).free
    least = free + 2**40  # a tebibyte more than there is
    with TestClient(make_app(min_free_bytes=least, retry_after=9)) as c:
        r = c.get("/readyz")
        assert r.status_code == 503, r.text
        assert r.headers["content-type"] == "application/problem+json"
        assert r.headers["Retry-After"] == "9"
        problem = r.json()
        assert problem["type"].endswith("/low-disk-space")
        assert problem["min_free_bytes"] == least
        assert problem["free_bytes"] == pytest.approx(free, abs=256 * 2**20)
        detail = problem["detail"]
        assert (
            detail.startswith("the data directory has ") and " free, below the minimum " in detail
        )
        assert "(HAARLINE_MIN_FREE_BYTES)" in detail
        assert re.search(r"has \d+(\.\d)? (B|KiB|MiB|GiB|TiB) free", detail), detail
        assert f"minimum of {least / 2**40:.1f} TiB" in detail
        assert c.get("/healthz").status_code == 200  # the process itself is fine


def test_a_full_disk_is_a_clear_503_and_the_store_stays_whole(make_app, tmp_path):
    app = make_app(runner=False, retry_after=8, queue_per_key=1000)
    with TestClient(app) as c:
        store = c.app.state.store
        _, key = issue_key(store, "alice")
        c.headers["Authorization"] = f"Bearer {key}"
        full = FullDisk(store.path)
        app.dependency_overrides[get_store] = lambda: full
        accepted, refused = [], None
        for seed in range(200):
            r = c.post(
                "/v1/analyses", json={**SMALL, "options": {**SMALL["options"], "seed": seed}}
            )
            if r.status_code != 202:
                refused = r
                break
            accepted.append(r.json()["id"])
        assert refused is not None, "the file never filled up"
        assert refused.status_code == 503, refused.text
        assert refused.headers["content-type"] == "application/problem+json"
        assert refused.headers["Retry-After"] == "8"
        problem = refused.json()
        assert problem["type"].endswith("/store-unavailable")
        assert "the disk of the data directory is full" in problem["detail"]
        assert "database or disk is full" in problem["detail"]
        # reading still works, and every accepted job is there
        listed = {j["id"] for j in c.get("/v1/analyses", params={"limit": 200}).json()["jobs"]}
        assert listed == set(accepted)
        del app.dependency_overrides[get_store]  # space is back
        assert c.post("/v1/analyses", json=SMALL).status_code == 202
    with closing(sqlite3.connect(store.path)) as conn:
        assert conn.execute("PRAGMA integrity_check").fetchone()[0] == "ok"


@pytest.mark.parametrize("number", [errno.ENOSPC, errno.EDQUOT, errno.EFBIG])
def test_no_space_from_a_file_write_is_a_503(make_app, tmp_path, number):
    app = make_app(runner=False)

    def write() -> None:  # what a write under the data directory raises on a full disk
        raise OSError(number, "No space left on device")

    app.add_api_route("/test-write", write)
    with TestClient(app) as c:
        r = c.get("/test-write")
        assert r.status_code == 503 and r.headers["Retry-After"] == "5"
        assert r.json()["type"].endswith("/no-space")
        assert r.json()["detail"].startswith("the data directory has no space left")


def test_other_os_errors_stay_500(make_app, tmp_path):
    app = make_app(runner=False)

    def read() -> None:
        raise PermissionError(errno.EACCES, "Permission denied")

    app.add_api_route("/test-read", read)
    with TestClient(app, raise_server_exceptions=False) as c:
        r = c.get("/test-read")
        assert r.status_code == 500 and r.json()["detail"] == "internal error; it has been logged"


def test_new_jobs_are_refused_below_the_minimum_free_space(make_app, tmp_path):
    least = shutil.disk_usage(tmp_path).free + 2**40
    with TestClient(make_app(runner=False, min_free_bytes=least, retry_after=7)) as c:
        _, key = issue_key(c.app.state.store, "alice")
        c.headers["Authorization"] = f"Bearer {key}"
        for route, body in (
            ("/v1/analyses", SMALL),
            (
                "/v1/comparisons",
                {
                    "circuits": [{"reference": "rx-product"}, {"reference": "ry-cz-ring"}],
                    "options": SMALL["options"],
                },
            ),
        ):
            r = c.post(route, json=body)
            assert r.status_code == 503, r.text
            assert r.headers["Retry-After"] == "7"
            assert r.json()["type"].endswith("/low-disk-space")
        assert c.get("/v1/analyses").json()["jobs"] == []  # nothing was written

"""Store migrations: a data directory of the release before them opens, upgrades, keeps all.

``fixtures/store-before-migrations.sqlite3`` was written by commit 85f7828's own code
(``fixtures/make_release_store.txt`` says how); its ids are listed here as that script
printed them.
"""

import shutil
import sqlite3
import time
from contextlib import closing

import pytest
from conftest import FIXTURES
from fastapi.testclient import TestClient
from haarline.service.api.app import create_app
from haarline.service.errors import StoreTooNew, StoreUnavailable
from haarline.service.jobs import migrations
from haarline.service.jobs.migrations import MIGRATIONS, Migration
from haarline.service.jobs.states import JobState
from haarline.service.jobs.store import Store
from haarline.service.settings import Settings

RELEASE = FIXTURES / "store-before-migrations.sqlite3"
ALICE, BOB = "22b37fd16868", "7a18d6cb5253"
JOBS = {
    "1811ac7d60e14fbca34298e7365333d3": ("analysis", "succeeded", ALICE),  # ry-cz-ring
    "5c24c05404854a399ca062922a7ca6d8": ("analysis", "succeeded", ALICE),  # ry-cx-bricks
    "45e22095509a41fa94558382a371ebf3": ("analysis", "succeeded", ALICE),  # cached ring
    "d920121d9692463f81369b7af44dde34": ("compare", "succeeded", ALICE),
    "6b147ee2b5e143eea9db075e22f7bc31": ("analysis", "failed", BOB),
    "155a2d9a44fd4260a019b6596354ef07": ("analysis", "cancelled", ALICE),
    "42ee9c5e908347169e7aa5aa568aa78d": ("analysis", "queued", ALICE),
    "d070e0f06a2f479a9eee2868c9d74b47": ("analysis", "running", ALICE),
}
PLOTS = {
    "1811ac7d60e14fbca34298e7365333d3": ["circuit.png", "entanglement.png", "fidelity.png"],
    "5c24c05404854a399ca062922a7ca6d8": ["circuit.png", "entanglement.png", "fidelity.png"],
    "45e22095509a41fa94558382a371ebf3": ["circuit.png", "entanglement.png", "fidelity.png"],
    "d920121d9692463f81369b7af44dde34": ["comparison.png"],
}


def version(path) -> int:
    with closing(sqlite3.connect(path)) as conn:
        return int(conn.execute("PRAGMA user_version").fetchone()[0])


def schema(path) -> set[tuple[str, str]]:
    with closing(sqlite3.connect(path)) as conn:
        rows = conn.execute("SELECT type, name, sql FROM sqlite_master WHERE sql IS NOT NULL")
        return {(t, n) for t, n, _ in rows}


@pytest.fixture
def release_copy(tmp_path):
    data = tmp_path / "data"
    data.mkdir()
    shutil.copyfile(RELEASE, data / "haarline.sqlite3")
    return data


def test_migrations_are_numbered_in_order():
    assert [m.version for m in MIGRATIONS] == list(range(1, len(MIGRATIONS) + 1))


def test_the_release_file_upgrades_and_keeps_every_job_result_and_plot(release_copy):
    path = release_copy / "haarline.sqlite3"
    assert version(path) == 0
    store = Store(path)
    assert store.initialize() == [m.version for m in MIGRATIONS]
    assert version(path) == MIGRATIONS[-1].version
    assert store.initialize() == []  # a second start finds nothing to do
    for job_id, (kind, state, owner) in JOBS.items():
        job = store.get_job(job_id)
        assert job is not None, job_id
        assert (job["kind"], job["state"], job["owner"]) == (kind, JobState(state), owner)
        assert job["events"] and job["events"][0]["state"] == "queued"
        finished = state == "succeeded"
        result = store.result(job_id)
        assert (result is not None) == finished, job_id
        assert store.artifact_names(job_id) == PLOTS.get(job_id, [])
        for name in PLOTS.get(job_id, []):
            assert store.artifact(job_id, name)[:8] == b"\x89PNG\r\n\x1a\n"
    report, markdown = store.result("1811ac7d60e14fbca34298e7365333d3")
    assert report["report_format"] == 1 and report["circuit"]["name"] == "ry-cz-ring"
    assert "Expressibility" in markdown or "expressibility" in markdown
    cached = store.get_job("45e22095509a41fa94558382a371ebf3")
    assert cached["cached"] and store.result(cached["id"])[0] == report
    assert store.find_idempotent(ALICE, "pr-7")["id"] == "5c24c05404854a399ca062922a7ca6d8"
    assert store.key_active(ALICE) and not store.key_active(BOB)
    assert [j["id"] for j in store.list_jobs(ALICE, kind="compare")[0]] == [
        "d920121d9692463f81369b7af44dde34"
    ]


def test_an_upgraded_file_has_the_schema_of_a_new_one(release_copy, tmp_path):
    Store(release_copy / "haarline.sqlite3").initialize()
    Store(tmp_path / "new.sqlite3").initialize()
    assert schema(release_copy / "haarline.sqlite3") == schema(tmp_path / "new.sqlite3")


def test_the_service_runs_the_release_jobs_that_were_left_waiting(release_copy):
    settings = Settings.from_env({}, data_dir=str(release_copy), workers=1)
    with TestClient(create_app(settings)) as c:
        store = c.app.state.store
        deadline = time.time() + 60
        waiting = ("42ee9c5e908347169e7aa5aa568aa78d", "d070e0f06a2f479a9eee2868c9d74b47")
        while {store.get_job(i)["state"] for i in waiting} != {JobState.SUCCEEDED}:
            assert time.time() < deadline, [store.get_job(i)["state"] for i in waiting]
            time.sleep(0.1)
        assert all(store.result(i) is not None for i in waiting)


def test_a_failing_migration_leaves_the_file_as_it_was(release_copy, monkeypatch):
    path = release_copy / "haarline.sqlite3"
    before = schema(path)
    broken = Migration(len(MIGRATIONS) + 1, "broken", ("CREATE INDEX x ON jobs(id)", "BOGUS"))
    monkeypatch.setattr(migrations, "MIGRATIONS", (*MIGRATIONS, broken))
    with pytest.raises(StoreUnavailable):
        Store(path).initialize()
    assert version(path) == 0 and schema(path) == before


def test_a_file_from_a_newer_release_is_refused(tmp_path):
    store = Store(tmp_path / "h.sqlite3")
    store.initialize()
    with closing(sqlite3.connect(store.path)) as conn:
        conn.execute(f"PRAGMA user_version = {len(MIGRATIONS) + 1}")
    with pytest.raises(StoreTooNew, match="newer than this release"):
        store.initialize()

"""The Dask path: the same work units on a distributed.LocalCluster give the same report."""

import time

import pytest

distributed = pytest.importorskip("distributed", reason="the 'dask' extra is not installed")

from fastapi.testclient import TestClient  # noqa: E402
from haarline.service.api.app import create_app  # noqa: E402
from haarline.service.api.keys import issue_key  # noqa: E402
from haarline.service.settings import Settings  # noqa: E402

OPTS = {"pairs": 300, "samples": 100, "seed": 21}


def run_job(client) -> dict:
    url = client.post("/v1/analyses", json={"reference": "ry-cz-ring", "options": OPTS}).headers[
        "Location"
    ]
    deadline = time.time() + 120
    while time.time() < deadline:
        job = client.get(url).json()
        if job["state"] in ("succeeded", "failed"):
            break
        time.sleep(0.1)
    assert job["state"] == "succeeded", job
    return client.get(f"{url}/report").json()


def strip(report):
    return {k: v for k, v in report.items() if k != "timings"}


def test_dask_cluster_gives_the_same_report_as_the_process_pool(tmp_path):
    with distributed.LocalCluster(
        n_workers=1, threads_per_worker=1, processes=True, dashboard_address=None
    ) as cluster:
        settings = Settings.from_env(
            {}, data_dir=str(tmp_path / "dask"), dask_scheduler=cluster.scheduler_address
        )
        with TestClient(create_app(settings)) as c:
            _, key = issue_key(c.app.state.store, "dask")
            c.headers["Authorization"] = f"Bearer {key}"
            on_dask = run_job(c)
    settings = Settings.from_env({}, data_dir=str(tmp_path / "pool"), workers=1)
    with TestClient(create_app(settings)) as c:
        _, key = issue_key(c.app.state.store, "pool")
        c.headers["Authorization"] = f"Bearer {key}"
        in_pool = run_job(c)
    assert strip(on_dask) == strip(in_pool)

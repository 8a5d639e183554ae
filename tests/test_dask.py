"""The Dask path: the same work units on a distributed.LocalCluster give the same report."""

import time

import pytest

distributed = pytest.importorskip("distributed", reason="the 'dask' extra is not installed")

from conftest import bearer  # noqa: E402
from fastapi.testclient import TestClient  # noqa: E402

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


def test_dask_cluster_gives_the_same_report_as_the_process_pool(make_app, make_client):
    with distributed.LocalCluster(
        n_workers=1, threads_per_worker=1, processes=True, dashboard_address=None
    ) as cluster:
        # closed before the cluster is
        with TestClient(make_app(dask_scheduler=cluster.scheduler_address)) as c:
            c.headers.update(bearer(c.app, "dask"))
            on_dask = run_job(c)
    in_pool = run_job(make_client())
    assert strip(on_dask) == strip(in_pool)

"""One analysis across a real Dask cluster: its blocks as tasks, the same report (issue 19).

A ``dask scheduler`` and two single-thread ``dask worker`` processes run on 127.0.0.1
(``tests/dask_cluster.py``). Results are a pure function of circuit, options, seed and
version (DESIGN section 2: sample ``k`` always gets row ``k`` of its stream), so the report
with ``--dask`` must equal the local one bit for bit, whichever worker ran a block, also
when a worker is killed in the middle and Dask runs its blocks again on the other.
"""

from __future__ import annotations

import json
import subprocess
import sys
import time

import pytest

distributed = pytest.importorskip("distributed", reason="the 'dask' extra is not installed")

import haarline  # noqa: E402
from conftest import bearer  # noqa: E402
from dask_cluster import LocalDask  # noqa: E402
from fastapi.testclient import TestClient  # noqa: E402
from haarline.engine import cluster  # noqa: E402
from haarline.service.cli.main import main  # noqa: E402

# 8 qubits: every sampled call is above the in-process threshold and goes to the cluster
WIDE = {
    "name": "wide-ring",
    "qubits": 8,
    "layers": 2,
    "layer": [{"gate": "ry", "on": "all"}, {"gate": "cz", "on": "ring"}],
}
FLAGS = [
    "--metrics",
    "expressibility,entanglement,trainability",
    "--pairs",
    "600",
    "--samples",
    "300",
    "--scan",
    "4,8",
    "--grad-samples",
    "200",
    "--seed",
    "5",
    "--format",
    "json",
]


def strip(report: dict) -> dict:
    return {k: v for k, v in report.items() if k != "timings"}


def our_tasks(records: list[dict]) -> list[dict]:
    """The block tasks in the scheduler's record (not the one that holds shared arguments)."""
    return [
        r
        for r in records
        if str(r["key"]).startswith("haarline-") and not str(r["key"]).endswith("-shared")
    ]


@pytest.fixture
def dask_cluster(tmp_path):
    with LocalDask(tmp_path / "dask", workers=2) as local:
        yield local


@pytest.fixture
def wide(tmp_path):
    path = tmp_path / "wide.json"
    path.write_text(json.dumps(WIDE))
    return str(path)


def run_cli(capsys, *argv: str) -> dict:
    assert main(list(argv)) == 0, capsys.readouterr().err
    return json.loads(capsys.readouterr().out)


def test_analysis_with_dask_equals_the_local_run(dask_cluster, wide, capsys):
    with dask_cluster.client() as watcher:
        watcher.get_task_stream()  # starts the scheduler's record of finished tasks
        remote = run_cli(capsys, "analyze", wide, *FLAGS, "--dask", dask_cluster.address)
        records = our_tasks(watcher.get_task_stream())
    local = run_cli(capsys, "analyze", wide, *FLAGS)
    assert strip(remote) == strip(local)
    # the blocks ran as tasks of their own, on both workers
    assert len(records) > 1
    assert len({r["worker"] for r in records}) == 2
    stages = {str(r["key"]).rsplit("-", 2)[0] for r in records}
    assert {"haarline-expressibility", "haarline-entanglement"} <= stages
    assert any(s.startswith("haarline-gradients") for s in stages), stages
    assert "distributed" in sys.modules and not cluster._clients  # the CLI closed its client


def test_blocks_move_only_small_values(dask_cluster):
    program = haarline.expand(haarline.parse_circuit(WIDE))
    context = haarline.Context(scheduler=dask_cluster.address)
    try:
        with cluster.recording() as sent:
            fids = haarline.fidelities(program, pairs=600, seed=2, context=context)
    finally:
        cluster.disconnect()
    assert (fids == haarline.fidelities(program, pairs=600, seed=2)).all()
    (call,) = sent
    state_bytes = 16 << program.qubits
    # each block sends its first sample and count (not the program: that went once per
    # worker) and gets back one float per pair, never a state
    blocks = len(call.sent_bytes)
    assert blocks == len(call.returned_bytes) > 1
    assert max(call.sent_bytes) < 400 < call.shared_bytes
    assert sum(call.returned_bytes) < 600 * 8 + 200 * blocks
    assert max(call.returned_bytes) < state_bytes
    assert call.workers == 2 and all(s > 0 for s in call.compute_seconds)


KILL_FLAGS = [
    "--metrics",
    "expressibility",
    "--pairs",
    "256",
    "--seed",
    "9",
    "--memory-budget",
    "64MiB",
    "--format",
    "json",
]


def test_a_worker_killed_mid_run_costs_only_its_blocks(dask_cluster, tmp_path, capsys):
    # 16 qubits: four blocks of 64 pairs, each a second or more on one core
    path = tmp_path / "large.json"
    path.write_text(json.dumps({**WIDE, "qubits": 16, "layers": 3}))
    with dask_cluster.client() as watcher:
        watcher.get_task_stream()
        run = subprocess.Popen(
            [sys.executable, "-m", "haarline.service.cli.main", "analyze", str(path)]
            + KILL_FLAGS
            + ["--dask", dask_cluster.address],
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
        )
        try:
            names = {info["name"]: a for a, info in watcher.scheduler_info()["workers"].items()}
            victim, survivor = names["w1"], names["w0"]
            held: list[str] = []
            deadline = time.monotonic() + 120
            while not held and time.monotonic() < deadline and run.poll() is None:
                held = [
                    k
                    for k in watcher.processing([victim])[victim]
                    if k.startswith("haarline-") and not k.endswith("-shared")
                ]
                time.sleep(0.02)
            if held:
                dask_cluster.kill("w1")
        finally:
            if not held:
                run.kill()
            out, err = run.communicate(timeout=300)
        assert held, f"the victim never got a block: {err.decode()}"
        assert run.returncode == 0, err.decode()
        records = our_tasks(watcher.get_task_stream())
    # the blocks the victim held were computed again, by the survivor (a block whose
    # shared arguments were lost too is sent again as KEY-again1)
    finished = {r["key"]: r["worker"] for r in records}
    for k in held:
        again = [w for key, w in finished.items() if key == k or key.startswith(f"{k}-again")]
        assert again == [survivor], (k, finished)
    local = run_cli(capsys, "analyze", str(path), *KILL_FLAGS)
    assert strip(json.loads(out)) == strip(local)


def run_job(client: TestClient) -> dict:
    request = {"circuit": WIDE, "options": {"pairs": 600, "samples": 300, "seed": 21}}
    url = client.post("/v1/analyses", json=request).headers["Location"]
    deadline = time.time() + 120
    while time.time() < deadline:
        job = client.get(url).json()
        if job["state"] in ("succeeded", "failed"):
            break
        time.sleep(0.1)
    assert job["state"] == "succeeded", job
    return client.get(f"{url}/report").json()


def test_service_in_block_mode_gives_the_process_pool_report(dask_cluster, make_app, make_client):
    with dask_cluster.client() as watcher:
        watcher.get_task_stream()
        app = make_app(dask_scheduler=dask_cluster.address, dask_unit="block")
        with TestClient(app) as c:
            c.headers.update(bearer(c.app, "blocks"))
            in_blocks = run_job(c)
        records = our_tasks(watcher.get_task_stream())
    in_pool = run_job(make_client())
    assert strip(in_blocks) == strip(in_pool)
    assert len(records) > 1


def test_an_unreachable_scheduler_is_named_with_exit_code_2(wide, capsys):
    import socket

    with socket.socket() as s:  # a port that nothing listens on
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    address = f"tcp://127.0.0.1:{port}"
    assert main(["analyze", wide, "--dask", address]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"haarline: error: --dask: no Dask scheduler at {address} ("), err
    assert "Traceback" not in err


def test_cancelling_a_block_mode_job_cancels_its_outstanding_blocks(dask_cluster, make_app):
    # 16 qubits, 512 pairs: four blocks of 128 pairs, two running and two waiting
    request = {
        "circuit": {**WIDE, "qubits": 16, "layers": 3},
        "options": {"metrics": ["expressibility"], "pairs": 512, "seed": 3},
    }
    app = make_app(dask_scheduler=dask_cluster.address, dask_unit="block", memory_budget=64 << 20)
    with dask_cluster.client() as watcher, TestClient(app) as c:
        watcher.get_task_stream()
        c.headers.update(bearer(c.app, "blocks"))
        url = c.post("/v1/analyses", json=request).headers["Location"]
        running: list[str] = []
        deadline = time.monotonic() + 120
        while not running and time.monotonic() < deadline:
            running = [k for keys in watcher.processing().values() for k in keys]
            running = [k for k in running if k.startswith("haarline-expressibility")]
            time.sleep(0.05)
        assert running, c.get(url).json()
        asked = time.monotonic()
        c.delete(url)
        while c.get(url).json()["state"] != "cancelled" and time.monotonic() < deadline:
            time.sleep(0.05)
        assert c.get(url).json()["state"] == "cancelled"
        assert time.monotonic() - asked < 5.0

        def ours(dask_scheduler):  # run in the scheduler: the keys it still tracks
            return [str(k) for k in dask_scheduler.tasks if str(k).startswith("haarline-")]

        left = watcher.run_on_scheduler(ours)
        while left and time.monotonic() < deadline:
            time.sleep(0.1)
            left = watcher.run_on_scheduler(ours)
        # nothing of the job is left on the cluster, and not every block was computed
        assert left == []
        assert len(our_tasks(watcher.get_task_stream())) < 4


def test_a_block_mode_job_names_the_unreachable_scheduler(make_client):
    import socket

    with socket.socket() as s:  # a port that nothing listens on
        s.bind(("127.0.0.1", 0))
        address = f"tcp://127.0.0.1:{s.getsockname()[1]}"
    c = make_client(dask_scheduler=address, dask_unit="block")
    request = {"circuit": WIDE, "options": {"pairs": 600, "metrics": ["expressibility"]}}
    url = c.post("/v1/analyses", json=request).headers["Location"]
    deadline = time.time() + 60
    while (job := c.get(url).json())["state"] not in ("succeeded", "failed"):
        assert time.time() < deadline, job
        time.sleep(0.1)
    assert job["state"] == "failed"
    assert job["error"].startswith(f"HAARLINE_DASK_SCHEDULER: no Dask scheduler at {address}")


def test_blocks_whose_shared_arguments_were_lost_are_sent_again(dask_cluster):
    # what happens when a worker dies with the last copy of the program: the scheduler
    # cancels the blocks that need it; here the copies are cancelled on purpose at once
    import numpy as np
    from haarline.engine import batching
    from haarline.engine.sampling import Stream
    from haarline.metrics.expressibility import _pair_fidelities

    program = haarline.expand(haarline.parse_circuit({**WIDE, "qubits": 14, "layers": 3}))
    options = {
        "copies": 2,
        "seed": 4,
        "stream": Stream.EXPRESSIBILITY,
        "memory_budget": 64 << 20,
        "dtype": np.complex128,
        "draws": None,
    }
    cut = batching.blocks_for(256, 2)
    tasks = [(_pair_fidelities, program, s, c, options) for s, c in cut]
    try:
        blocks = cluster.Blocks(dask_cluster.address, batching._sample_block, tasks, "lost")
        blocks.client.cancel(blocks.shared, force=True)
        parts = batching._gather(blocks, sizes=[c for _, c in cut], progress=None, stage="lost")
        blocks.close()
    finally:
        cluster.disconnect()
    assert max(blocks.resent) == 1 and blocks.generation == 1
    assert (np.concatenate(parts) == haarline.fidelities(program, pairs=256, seed=4)).all()

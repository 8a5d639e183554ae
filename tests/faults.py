"""Fault injection: SIGKILL the whole server repeatedly while jobs run, and restart it.

``make faults`` runs ``python tests/faults.py`` (10 kill-and-restart cycles);
``tests/test_faults.py`` runs a 2-cycle variant in the suite. Jobs are submitted once;
each cycle waits until a job is running, lets it compute for a varying time (a seeded
pseudo-random 0.2 to 2.5 s, so some jobs finish between kills and others are cut off
mid-run), then kills the server and its workers with SIGKILL and starts it again on the
same data directory. At the end every accepted job must have succeeded (zero lost) with a
report identical, timings aside, to the same request analysed in this process.
"""

from __future__ import annotations

import argparse
import json
import random
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

sys.path.insert(0, str(Path(__file__).resolve().parent))

import haarline
from live_server import LiveServer, wait_for


def job(i: int) -> dict[str, Any]:
    """A job of about a second (8 qubits), each with its own seed."""
    circuit = {
        "name": f"cut-{i}",
        "qubits": 8,
        "layers": 3 + i % 2,
        "layer": [{"gate": "ry"}, {"gate": "rz"}, {"gate": "cz", "on": "ring"}],
    }
    options = {"pairs": 2500, "samples": 200, "seed": 500 + i}
    return {"circuit": circuit, "options": options}


def expected(body: dict[str, Any]) -> dict[str, Any]:
    report = haarline.analyze(
        haarline.parse_circuit(body["circuit"]), haarline.AnalysisOptions(**body["options"])
    )
    report.pop("timings")
    return json.loads(json.dumps(report))


def run_cycles(server: LiveServer, *, cycles: int, jobs: int, seed: int = 7) -> dict[str, Any]:
    """Submit ``jobs`` jobs, crash and restart ``cycles`` times, check every result."""
    pace = random.Random(seed)
    key = server.key("faults")
    bodies = {}
    with server.client(key) as c:
        for i in range(jobs):
            r = c.post("/v1/analyses", json=job(i))
            assert r.status_code == 202, r.text
            bodies[r.headers["location"]] = job(i)
    kills_mid_job = 0
    for _ in range(cycles):
        with server.client(key) as c:
            running = None
            deadline = time.time() + 60
            while running is None and time.time() < deadline:
                states = {u: c.get(u).json()["state"] for u in bodies}
                running = next((u for u, s in states.items() if s == "running"), None)
                if all(s == "succeeded" for s in states.values()):
                    break
                time.sleep(0.05)
        time.sleep(pace.uniform(0.2, 2.5))
        if running is not None:
            with server.client(key) as c:
                kills_mid_job += c.get(running).json()["state"] == "running"
        server.restart()
    results: dict[str, str] = {}
    requeued = 0
    with server.client(key) as c:
        for url in bodies:
            final = wait_for(c, url, ("succeeded", "failed", "cancelled"), timeout=300)
            requeued += sum(e["detail"] == "requeued after a restart" for e in final["events"])
            results[url] = final["state"]
        identical = 0
        for url, body in bodies.items():
            if results[url] != "succeeded":
                continue
            report = c.get(f"{url}/report").json()
            report.pop("timings")
            identical += report == expected(body)
    return {
        "cycles": cycles,
        "kills_mid_job": kills_mid_job,
        "jobs_accepted": len(bodies),
        "jobs_succeeded": sum(s == "succeeded" for s in results.values()),
        "jobs_lost": sum(s != "succeeded" for s in results.values()),
        "requeues_after_restart": requeued,
        "results_identical": identical,
    }


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cycles", type=int, default=10)
    parser.add_argument("--jobs", type=int, default=8)
    parser.add_argument("--workers", type=int, default=1)
    args = parser.parse_args(argv)
    with tempfile.TemporaryDirectory(prefix="haarline-faults-") as tmp:
        with LiveServer(Path(tmp), workers=args.workers) as server:
            figures = run_cycles(server, cycles=args.cycles, jobs=args.jobs)
    sys.stdout.write(json.dumps(figures, indent=2) + "\n")
    ok = figures["jobs_lost"] == 0 and figures["results_identical"] == figures["jobs_accepted"]
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())

"""Load test: concurrent clients submit small jobs to a real server on loopback.

``make load`` runs ``python tests/load.py`` (20 clients, 400 jobs, 4 keys shared by the
clients, 2 compute workers); ``tests/test_load.py`` runs a small variant in the suite.
Each client submits its share of jobs as fast as it can; a 429 is answered by sleeping
for its ``Retry-After`` and trying again, so every job is eventually accepted; then the
client polls its jobs until each is finished. Bounded in count (the jobs given) and in
time (``--deadline`` seconds, after which the run stops and reports what it saw).

Reported: accepted, rejected (429, each with ``Retry-After``), completed, lost (accepted
but not succeeded), 5xx and other statuses, submit and end-to-end latency percentiles,
and the peak resident memory of the server with its workers.
"""

from __future__ import annotations

import argparse
import collections
import json
import statistics
import sys
import tempfile
import threading
import time
from pathlib import Path
from typing import Any

sys.path.insert(0, str(Path(__file__).resolve().parent))

from live_server import LiveServer

FINAL = ("succeeded", "failed", "cancelled")


def small_job(i: int) -> dict[str, Any]:
    """A small analysis; each has its own seed, so none is answered from the store."""
    return {"reference": "rx-product", "options": {"pairs": 100, "samples": 50, "seed": 1000 + i}}


def percentile(values: list[float], q: float) -> float:
    if not values:
        return 0.0
    ordered = sorted(values)
    k = min(len(ordered) - 1, max(0, round(q / 100 * (len(ordered) - 1))))
    return ordered[k]


class Tally:
    """Counts shared by the client threads."""

    def __init__(self) -> None:
        self.lock = threading.Lock()
        self.status: collections.Counter[int] = collections.Counter()
        self.accepted: dict[str, float] = {}  # job url -> submit time
        self.finished: dict[str, tuple[str, float]] = {}  # job url -> (state, seen at)
        self.submit_latency: list[float] = []
        self.missing_retry_after = 0
        self.errors: list[str] = []


def client_run(
    server: LiveServer, key: str, jobs: list[int], tally: Tally, deadline: float
) -> None:
    with server.client(key, timeout=60) as c:
        mine: list[str] = []
        for i in jobs:
            while time.time() < deadline:
                t = time.perf_counter()
                try:
                    r = c.post("/v1/analyses", json=small_job(i))
                except Exception as exc:  # a transport failure is a finding, not a crash
                    with tally.lock:
                        tally.errors.append(f"submit {i}: {type(exc).__name__}: {exc}")
                    time.sleep(0.5)
                    continue
                with tally.lock:
                    tally.status[r.status_code] += 1
                    tally.submit_latency.append(time.perf_counter() - t)
                if r.status_code == 202:
                    url = r.headers["location"]
                    mine.append(url)
                    with tally.lock:
                        tally.accepted[url] = time.time()
                    break
                if r.status_code == 429:
                    after = r.headers.get("retry-after")
                    if after is None:
                        with tally.lock:
                            tally.missing_retry_after += 1
                    time.sleep(float(after or 1))
                    continue
                with tally.lock:
                    tally.errors.append(f"submit {i}: {r.status_code} {r.text[:200]}")
                break
        pending = list(mine)
        while pending and time.time() < deadline:
            for url in list(pending):
                try:
                    r = c.get(url)
                except Exception as exc:
                    with tally.lock:
                        tally.errors.append(f"poll: {type(exc).__name__}: {exc}")
                    continue
                with tally.lock:
                    tally.status[r.status_code] += 1
                if r.status_code == 200 and r.json()["state"] in FINAL:
                    with tally.lock:
                        tally.finished[url] = (r.json()["state"], time.time())
                    pending.remove(url)
            time.sleep(0.2)


def run_load(
    server: LiveServer,
    *,
    clients: int,
    jobs: int,
    keys: int,
    deadline_seconds: float,
) -> dict[str, Any]:
    """Drive a started server; return the figures."""
    tally = Tally()
    names = [server.key(f"load-{k}") for k in range(keys)]
    deadline = time.time() + deadline_seconds
    peak = [server.rss()]
    stop = threading.Event()

    def sample_memory() -> None:
        while not stop.wait(0.5):
            peak[0] = max(peak[0], server.rss())

    sampler = threading.Thread(target=sample_memory, daemon=True)
    sampler.start()
    threads = [
        threading.Thread(
            target=client_run,
            args=(server, names[c % keys], list(range(c, jobs, clients)), tally, deadline),
        )
        for c in range(clients)
    ]
    start = time.time()
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    stop.set()
    sampler.join()
    elapsed = time.time() - start
    done = [url for url, (state, _) in tally.finished.items() if state == "succeeded"]
    end_to_end = [tally.finished[u][1] - tally.accepted[u] for u in done]
    server_errors = sum(n for code, n in tally.status.items() if code >= 500)
    return {
        "clients": clients,
        "keys": keys,
        "jobs": jobs,
        "accepted": len(tally.accepted),
        "rejected_429": tally.status.get(429, 0),
        "rejected_without_retry_after": tally.missing_retry_after,
        "completed": len(done),
        "lost": len(tally.accepted) - len(done),
        "server_errors_5xx": server_errors,
        "statuses": {str(k): v for k, v in sorted(tally.status.items())},
        "transport_errors": tally.errors[:20],
        "submit_latency_ms": {
            f"p{q}": round(1000 * percentile(tally.submit_latency, q), 1) for q in (50, 95, 99)
        },
        "end_to_end_s": {f"p{q}": round(percentile(end_to_end, q), 2) for q in (50, 95, 99)}
        | {"mean": round(statistics.fmean(end_to_end), 2) if end_to_end else 0.0},
        "elapsed_s": round(elapsed, 1),
        "peak_rss_mb": round(peak[0] / 2**20, 1),
        "timed_out": time.time() >= deadline,
    }


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--clients", type=int, default=20)
    parser.add_argument("--jobs", type=int, default=400)
    parser.add_argument("--keys", type=int, default=4)
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--queue-per-key", type=int, default=8)
    parser.add_argument("--deadline", type=float, default=900.0)
    args = parser.parse_args(argv)
    with tempfile.TemporaryDirectory(prefix="haarline-load-") as tmp:
        env = {"HAARLINE_QUEUE_PER_KEY": str(args.queue_per_key), "HAARLINE_RETRY_AFTER": "1"}
        with LiveServer(Path(tmp), workers=args.workers, env=env) as server:
            figures = run_load(
                server,
                clients=args.clients,
                jobs=args.jobs,
                keys=args.keys,
                deadline_seconds=args.deadline,
            )
    sys.stdout.write(json.dumps(figures, indent=2) + "\n")
    ok = figures["lost"] == 0 and figures["server_errors_5xx"] == 0
    ok = ok and figures["accepted"] == args.jobs and not figures["rejected_without_retry_after"]
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())

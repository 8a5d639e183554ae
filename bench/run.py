"""haarline's benchmark suite: the figures of issue 6, measured in one run on this machine.

Each figure is a ratio or a wall time, written with its inputs and the baseline it is
divided by.

    python bench/run.py                      # the full suite (make bench), ~4 minutes
    python bench/run.py --smoke --out X.json # tiny sizes, a few seconds (the test suite)

Figures (medians of repeated runs):

* ``bandwidth``: logical gate applications x batch x 2^n x 32 bytes per second of the
  engine, divided by this machine's in-place streaming rate (``np.multiply(a, c, out=a)``
  on a complex128 array larger than the caches: 16 bytes read and 16 written per
  element), measured right before each point;
* ``naive``: per-pair cost of expressibility with a deliberately plain simulator
  (``bench/plain.py``: one state at a time, dense ``np.kron`` matrices) divided by ours;
* ``adjoint``: all-parameter gradients by parameter shift divided by adjoint
  differentiation, for 10..200 parameters;
* ``references``: wall time of expressibility (5000 pairs) and Meyer-Wallach (2000
  samples) for the nineteen ``sim2019-*`` circuits at layers 1..5, with 1 and 2 workers;
* ``scan``: wall time of a gradient-variance scan n = 2..14 (step 2), layers = n, 200
  samples, ``zz`` cost;
* ``memory``: peak resident memory of an n = 20 expressibility run against the budget;
* ``cluster``: one n = 20 expressibility run with its blocks on a real local Dask cluster
  (``dask scheduler`` and 1, then 2, single-thread ``dask worker`` processes), with the
  compute time and the bytes sent and returned per block, and from those the expected
  efficiency at 10 and 100 workers (the model is in :func:`cluster_model`).
* ``compiled`` and ``startup`` (issue 15, ``bench/compiled.py``): states per second of the
  fidelity workload against a compiled simulator (``bench/compiled_peer.py``) on one
  and both cores (skipped with a message when the ``bench`` extra is not installed), and
  whole-process times of the CLI.
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import statistics
import subprocess
import sys
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

import compiled  # noqa: E402
import haarline  # noqa: E402
import plain  # noqa: E402
from haarline.engine import cluster  # noqa: E402
from haarline.engine import statevector as engine  # noqa: E402
from haarline.engine.context import Context  # noqa: E402
from haarline.engine.sampling import Stream, draw_angles  # noqa: E402
from haarline.metrics.gradients import adjoint_gradients, shift_gradients  # noqa: E402
from haarline.metrics.observables import make_observable  # noqa: E402
from haarline.metrics.trainability import trainability  # noqa: E402

BENCH_FORMAT = 1

FULL = {
    "repeats": 3,
    "stream_bytes": 1 << 28,  # 256 MiB, well beyond the 32 MiB of L3
    "bandwidth_qubits": list(range(12, 23)),
    "bandwidth_circuit": "ry-cz-ring",
    "bandwidth_layers": 4,
    "bandwidth_amplitudes": 1 << 20,  # batch = max(1, 2**20 / 2**n)
    "naive_qubits": [2, 3, 4, 5, 6, 7, 8],
    "naive_circuit": "ry-cz-ring",
    "naive_pairs": {2: 40, 3: 40, 4: 30, 5: 20, 6: 8, 7: 4, 8: 2},
    "engine_pairs": 5000,
    "adjoint_circuit": "ry-cz-ring",
    "adjoint_qubits": 10,
    "adjoint_parameters": [10, 20, 50, 100, 200],
    "adjoint_batch": 8,
    "references_layers": [1, 2, 3, 4, 5],
    "references_pairs": 5000,
    "references_samples": 2000,
    "references_workers": [1, 2],
    "scan_qubits": [2, 4, 6, 8, 10, 12, 14],
    "scan_samples": 200,
    "scan_cost": "zz",
    "scan_circuit": "ry-cz-ring",
    "memory_qubits": 20,
    "memory_circuit": "ry-cz-ring",
    "memory_pairs": 12,
    "memory_budgets": [engine.DEFAULT_MEMORY_BUDGET, 128 << 20],
    "cluster_qubits": 20,
    "cluster_circuit": "ry-cz-ring",
    "cluster_layers": 1,
    "cluster_pairs": 128,  # two blocks of 64 pairs
    "cluster_budget": 256 << 20,  # per task
    "cluster_model_pairs": [5000, 20000],  # the default pair count and a large run
    "cluster_model_workers": [10, 100],
    "cluster_bandwidth": 125e6,  # bytes/s of a 1 Gbit/s network, for the model
    "compiled_qubits": [4, 8, 12, 16, 20],
    "compiled_pairs": {4: 5000, 8: 2000, 12: 100, 16: 8, 20: 1},
    "compiled_repeats": {20: 3},
    "compiled_cores": [1, 2],
    "startup_repeats": 9,
    "peer_qubits": 6,
    "peer_pairs": 20_000,
    "peer_repeats": 3,
    "peer_sample_pairs": 200,
}

SMOKE = {
    **FULL,
    "repeats": 1,
    "stream_bytes": 1 << 23,
    "bandwidth_qubits": [6, 9],
    "bandwidth_layers": 1,
    "bandwidth_amplitudes": 1 << 12,
    "naive_qubits": [2, 3],
    "naive_pairs": {2: 2, 3: 2},
    "engine_pairs": 64,
    "adjoint_qubits": 3,
    "adjoint_parameters": [3, 6],
    "adjoint_batch": 2,
    "references_layers": [1],
    "references_pairs": 50,
    "references_samples": 20,
    "references_workers": [1],
    "references_names": ["sim2019-01", "sim2019-13"],
    "scan_qubits": [2, 4],
    "scan_samples": 10,
    "memory_qubits": 6,
    "memory_pairs": 4,
    "memory_budgets": [256 << 20],
    "cluster_qubits": 8,
    "compiled_qubits": [4, 6],
    "compiled_pairs": {4: 20, 6: 10},
    "compiled_repeats": {},
    "compiled_cores": [1],
    "startup_repeats": 1,
    "peer_qubits": 4,
    "peer_pairs": 200,
    "peer_repeats": 1,
    "peer_sample_pairs": 5,
}

TARGETS = {
    "bandwidth": "ratio >= 1.0 for n >= 18",
    "naive": "ratio >= 100 at n = 4 and >= 2000 at n = 8",
    "adjoint": "ratio >= 25 at 100 parameters",
    "references": "<= 10 s with 2 workers",
    "scan": "<= 60 s",
    "memory": "peak resident memory <= 1.25 x budget",
    "cluster": "2 workers >= 1.6 x as fast as 1 (no target beyond this machine's 2 cores)",
    "compiled_one_core": "haarline / compiled simulator >= 1.0 at every n in 4..20, one core",
    "compiled_small": "haarline / compiled simulator >= 3 at n <= 8, one core",
    "compiled_two_cores": "haarline / compiled simulator >= 1.0 at every n in 4..20, both cores",
    "startup_version": "haarline --version, whole process <= 0.2 s",
    "startup_analyze": "haarline analyze ref:ry-cz-ring --metrics expressibility "
    "--pairs 100, whole process <= 0.3 s",
    "peer": "whole-process expressibility at n = 6, 20 000 pairs >= 100x the per-sample "
    "tensordot peer",
}


def log(message: str) -> None:
    """Progress line on stderr (stdout carries the table)."""
    print(message, file=sys.stderr, flush=True)


def timed(fn: Callable[..., object], repeats: int) -> tuple[float, list[float]]:
    """Median wall time of ``repeats`` calls, and every sample."""
    samples = []
    for _ in range(repeats):
        t = time.perf_counter()
        fn()
        samples.append(time.perf_counter() - t)
    return statistics.median(samples), samples


def logical_gates(program: haarline.Program) -> int:
    """Gates that do something: every operation except the identity."""
    return sum(1 for op in program.operations if op.gate != "i")


def bench_bandwidth(cfg: dict[str, Any]) -> list[dict[str, Any]]:
    """Engine throughput over the machine's streaming rate, one row per qubit count."""
    rows = []
    circuit = haarline.load_reference(cfg["bandwidth_circuit"])
    for n in cfg["bandwidth_qubits"]:
        program = haarline.expand(circuit, qubits=n, layers=cfg["bandwidth_layers"])
        plan = engine.compile_program(program)
        batch = max(1, cfg["bandwidth_amplitudes"] >> n)
        thetas = draw_angles(0, Stream.EXPRESSIBILITY, 0, batch, program.parameters)
        states = engine.zero_states(batch, n)

        def once(
            states: np.ndarray = states, plan: engine.Plan = plan, thetas: np.ndarray = thetas
        ) -> None:
            states.fill(0)
            states[:, 0] = 1.0
            engine.run(plan, thetas, states=states)

        once()  # builds and caches the schedule
        # stream and engine alternate, and each ratio pairs neighbouring measurements,
        # so that load from other processes drifting during the run cancels out
        a = np.ones(cfg["stream_bytes"] // 16, dtype=np.complex128)
        c = np.complex128(1.0 + 1e-12j)
        np.multiply(a, c, out=a)
        gates = logical_gates(program)
        work = gates * batch * (1 << n) * 32
        engine_times, stream_times, ratios = [], [], []
        for _ in range(max(3, cfg["repeats"] + 2)):
            t = time.perf_counter()
            np.multiply(a, c, out=a)
            stream_times.append(time.perf_counter() - t)
            t = time.perf_counter()
            once()
            engine_times.append(time.perf_counter() - t)
            ratios.append((work / engine_times[-1]) / (2 * a.nbytes / stream_times[-1]))
        del a
        median = statistics.median(engine_times)
        base = {
            "method": "np.multiply(a, c, out=a), complex128, 32 bytes per element (read + write)",
            "array_bytes": cfg["stream_bytes"],
            "bytes_per_second": 2 * cfg["stream_bytes"] / statistics.median(stream_times),
            "seconds": statistics.median(stream_times),
            "samples": stream_times,
        }
        ratio = statistics.median(ratios)
        rows.append(
            {
                "qubits": n,
                "circuit": cfg["bandwidth_circuit"],
                "layers": cfg["bandwidth_layers"],
                "logical_gates": gates,
                "kernels": sum(len(s.kernels) for s in engine.schedule(plan).segments),
                "segments": len(engine.schedule(plan).segments),
                "batch": batch,
                "seconds": median,
                "samples": engine_times,
                "bytes_per_second": work / median,
                "baseline": {"name": "streaming rate", **base},
                "ratio": ratio,
                "ratio_samples": ratios,
            }
        )
        log(f"bandwidth n={n}: {ratio:.2f} x streaming rate ({median:.3f} s)")
    return rows


def bench_naive(cfg: dict[str, Any]) -> list[dict[str, Any]]:
    """Per-pair time of the plain simulator over ours, one row per qubit count."""
    rows = []
    circuit = haarline.load_reference(cfg["naive_circuit"])
    for n in cfg["naive_qubits"]:
        program = haarline.expand(circuit, qubits=n)
        k = cfg["naive_pairs"][n]
        pairs = draw_angles(1, Stream.EXPRESSIBILITY, 0, k, 2 * program.parameters)
        plain_fids = plain.fidelities(program, pairs)
        ours = haarline.fidelities(program, pairs=k, seed=1)
        agree = float(np.max(np.abs(plain_fids - ours)))
        naive, naive_samples = timed(
            lambda p=program, x=pairs: plain.fidelities(p, x), cfg["repeats"]
        )
        m = cfg["engine_pairs"]
        fast, fast_samples = timed(
            lambda p=program, m=m: haarline.expressibility(p, pairs=m, seed=1), cfg["repeats"]
        )
        ratio = (naive / k) / (fast / m)
        rows.append(
            {
                "qubits": n,
                "circuit": cfg["naive_circuit"],
                "layers": program.layers,
                "logical_gates": logical_gates(program),
                "engine_pairs": m,
                "engine_seconds_per_pair": fast / m,
                "engine_samples": fast_samples,
                "baseline": {
                    "name": "plain per-sample dense np.kron simulator (bench/plain.py)",
                    "pairs": k,
                    "seconds_per_pair": naive / k,
                    "samples": naive_samples,
                    "max_fidelity_difference": agree,
                },
                "ratio": ratio,
            }
        )
        log(f"naive n={n}: {ratio:.0f}x (plain {naive / k * 1e3:.2f} ms/pair)")
    return rows


def bench_adjoint(cfg: dict[str, Any]) -> list[dict[str, Any]]:
    """Parameter-shift time over adjoint time, one row per parameter count."""
    rows = []
    circuit = haarline.load_reference(cfg["adjoint_circuit"])
    n = cfg["adjoint_qubits"]
    observable = make_observable("zz", n) if n >= 2 else make_observable("global", n)
    for p in cfg["adjoint_parameters"]:
        layers = max(1, p // n)
        program = haarline.expand(circuit, qubits=n, layers=layers)
        plan = engine.compile_program(program)
        thetas = draw_angles(2, Stream.GRADIENTS, 0, cfg["adjoint_batch"], program.parameters)
        _, adj = adjoint_gradients(plan, thetas, observable)
        shift = shift_gradients(plan, thetas, observable)
        agree = float(np.max(np.abs(adj - shift)))
        t_adj, s_adj = timed(
            lambda plan=plan, thetas=thetas: adjoint_gradients(plan, thetas, observable),
            cfg["repeats"],
        )
        t_shift, s_shift = timed(
            lambda plan=plan, thetas=thetas: shift_gradients(plan, thetas, observable),
            cfg["repeats"],
        )
        rows.append(
            {
                "parameters": program.parameters,
                "qubits": n,
                "layers": layers,
                "circuit": cfg["adjoint_circuit"],
                "cost": observable.label,
                "batch": cfg["adjoint_batch"],
                "seconds": t_adj,
                "samples": s_adj,
                "baseline": {
                    "name": "parameter shift (haarline.metrics.gradients.shift_gradients)",
                    "seconds": t_shift,
                    "samples": s_shift,
                    "max_gradient_difference": agree,
                },
                "ratio": t_shift / t_adj,
            }
        )
        log(f"adjoint P={program.parameters}: {t_shift / t_adj:.1f}x")
    return rows


def reference_table(cfg: dict[str, Any], workers: int) -> None:
    """Expressibility and Meyer-Wallach of every reference circuit at every layer count."""
    names = cfg.get("references_names") or [
        r for r in haarline.reference_names() if r.startswith("sim2019-")
    ]
    for name in names:
        circuit = haarline.load_reference(name)
        for layers in cfg["references_layers"]:
            program = haarline.expand(circuit, layers=layers)
            haarline.expressibility(
                program, pairs=cfg["references_pairs"], seed=1, context=Context(workers=workers)
            )
            haarline.entangling_capability(
                program, samples=cfg["references_samples"], seed=1, context=Context(workers=workers)
            )


def bench_references(cfg: dict[str, Any]) -> dict[str, Any]:
    """Wall time of :func:`reference_table` for each worker count."""
    names = cfg.get("references_names") or [
        r for r in haarline.reference_names() if r.startswith("sim2019-")
    ]
    out: dict[str, Any] = {
        "circuits": len(names),
        "layers": cfg["references_layers"],
        "pairs": cfg["references_pairs"],
        "samples": cfg["references_samples"],
        "baseline": None,
        "unit": "seconds",
        "runs": [],
    }
    for workers in cfg["references_workers"]:
        start = None
        if workers > 1:  # start the pool once, outside the timing (work big enough for it)
            t = time.perf_counter()
            program = haarline.expand(haarline.load_reference("ry-cz-ring"), qubits=10)
            haarline.fidelities(program, pairs=512, seed=1, context=Context(workers=workers))
            start = time.perf_counter() - t
        median, samples = timed(lambda w=workers: reference_table(cfg, w), cfg["repeats"])
        out["runs"].append(
            {"workers": workers, "seconds": median, "samples": samples, "pool_start_seconds": start}
        )
        log(f"references, {workers} worker(s): {median:.2f} s")
    return out


def bench_scan(cfg: dict[str, Any]) -> dict[str, Any]:
    """Wall time of one gradient-variance scan over qubit counts (layers = n)."""
    circuit = haarline.load_reference(cfg["scan_circuit"])

    def once() -> None:
        trainability(
            circuit,
            cost=cfg["scan_cost"],
            scan=cfg["scan_qubits"],
            scan_layers="n",
            samples=cfg["scan_samples"],
            seed=1,
        )

    median, samples = timed(once, cfg["repeats"])
    log(f"scan: {median:.2f} s")
    return {
        "circuit": cfg["scan_circuit"],
        "qubits": cfg["scan_qubits"],
        "layers": "n",
        "samples": cfg["scan_samples"],
        "cost": cfg["scan_cost"],
        "gradients": "adjoint",
        "workers": 1,
        "seconds": median,
        "run_samples": samples,
        "baseline": None,
        "unit": "seconds",
    }


MEMORY_CHILD = """
import json, resource, sys
import haarline
n, pairs, budget, name = int(sys.argv[1]), int(sys.argv[2]), int(sys.argv[3]), sys.argv[4]
program = haarline.expand(haarline.load_reference(name), qubits=n)
def status(field):  # this process's own figures (ru_maxrss would include the parent's)
    with open("/proc/self/status") as f:
        for line in f:
            if line.startswith(field + ":"):
                return int(line.split()[1]) * 1024
before = status("VmRSS")
haarline.expressibility(
    program, pairs=pairs, seed=1, context=haarline.Context(memory_budget=budget)
)
print(json.dumps({"rss_before": before, "peak_rss": status("VmHWM"), "layers": program.layers}))
"""


def bench_memory(cfg: dict[str, Any]) -> list[dict[str, Any]]:
    """Peak resident memory of an expressibility run in a fresh process, per budget."""
    rows = []
    n = cfg["memory_qubits"]
    for budget in cfg["memory_budgets"]:
        t = time.perf_counter()
        result = subprocess.run(
            [
                sys.executable,
                "-c",
                MEMORY_CHILD,
                str(n),
                str(cfg["memory_pairs"]),
                str(budget),
                cfg["memory_circuit"],
            ],
            check=True,
            capture_output=True,
            text=True,
            env={**os.environ, "PYTHONPATH": str(HERE.parent)},
        )
        seconds = time.perf_counter() - t
        child = json.loads(result.stdout.strip().splitlines()[-1])
        grown = child["peak_rss"] - child["rss_before"]
        rows.append(
            {
                "qubits": n,
                "circuit": cfg["memory_circuit"],
                "layers": child["layers"],
                "pairs": cfg["memory_pairs"],
                "state_bytes": 16 << n,
                "peak_rss_bytes": child["peak_rss"],
                "rss_before_run_bytes": child["rss_before"],
                "run_bytes": grown,
                "seconds": seconds,
                "baseline": {"name": "memory budget", "bytes": budget},
                "ratio": child["peak_rss"] / budget,
                "run_ratio": grown / budget,
            }
        )
        log(
            f"memory n={n}, budget {budget >> 20} MiB: peak {child['peak_rss'] / 2**20:.0f} MiB,"
            f" the run itself {grown / 2**20:.0f} MiB"
        )
    return rows


def cluster_model(
    one: dict[str, Any], *, pairs: int, workers: int, bandwidth: float
) -> dict[str, Any]:
    """Expected run time and efficiency of ``pairs`` pairs on ``workers`` Dask workers.

    From the one-worker run: ``t`` the compute time per pair (a block's median compute
    time over its pairs), ``o`` the cluster's overhead per block (the gather's wall time
    beyond the blocks' compute, per block: scheduling, loopback transfer), ``s`` the
    serial part (the call's wall time beyond the gather: the histogram, the bootstrap,
    the KL), and the bytes a block sends and returns. The run is cut as haarline cuts it
    (``blocks_for(pairs, max(2, workers))``: two blocks per worker, whole blocks of 64), a
    block of ``c`` pairs costs ``c t + o + bytes / bandwidth``, and each worker takes the
    next block as soon as it is free (as Dask's scheduler does), so

        T(w) = s + (the last worker's finishing time) + w shared / bandwidth

    (Amdahl's law with whole blocks as the unit of work, plus the shared arguments sent
    to every worker); the efficiency is ``T(1) / (w T(w))``.
    """
    import heapq

    from haarline.engine.batching import blocks_for

    per_pair = one["block_seconds"] / one["block_pairs"]
    back_per_pair = one["returned_bytes_per_block"] / one["block_pairs"]

    def wall(w: int) -> tuple[float, int]:
        blocks = blocks_for(pairs, max(2, w))
        free = [0.0] * w
        for _, count in blocks:
            start = heapq.heappop(free)
            message = one["sent_bytes_per_block"] + back_per_pair * count
            cost = count * per_pair + one["overhead_seconds_per_block"] + message / bandwidth
            heapq.heappush(free, start + cost)
        seconds = one["serial_seconds"] + max(free) + w * one["shared_bytes"] / bandwidth
        return seconds, len(blocks)

    seconds, blocks = wall(workers)
    return {
        "workers": workers,
        "pairs": pairs,
        "blocks": blocks,
        "seconds": seconds,
        "efficiency": wall(1)[0] / (workers * seconds),
        "busy_workers": min(workers, blocks),
    }


def bench_cluster(cfg: dict[str, Any]) -> dict[str, Any]:
    """One expressibility run with its blocks on 1, then 2, local Dask workers."""
    import tempfile

    sys.path.insert(0, str(HERE.parent / "tests"))
    from dask_cluster import LocalDask

    n = cfg["cluster_qubits"]
    circuit = haarline.load_reference(cfg["cluster_circuit"])
    program = haarline.expand(circuit, qubits=n, layers=cfg["cluster_layers"])
    pairs = cfg["cluster_pairs"]
    warm = haarline.expand(circuit, qubits=4, layers=1)
    runs = []
    with tempfile.TemporaryDirectory() as folder, LocalDask(Path(folder), workers=1) as local:
        context = Context(
            scheduler=local.address, memory_budget=cfg["cluster_budget"], parallel_from=0
        )
        try:
            for workers in (1, 2):
                if workers == 2:
                    local.add_worker("w1")
                    local.wait_for_workers(2)
                # every worker imports the engine and runs a block before the timing
                haarline.expressibility(warm, pairs=128, seed=2, context=context)
                walls, calls = [], []
                for _ in range(cfg["repeats"]):
                    with cluster.recording() as sent:
                        t = time.perf_counter()
                        haarline.expressibility(program, pairs=pairs, seed=1, context=context)
                        walls.append(time.perf_counter() - t)
                    calls.append(sent[0])
                median = statistics.median(walls)
                call = calls[walls.index(sorted(walls)[len(walls) // 2])]
                compute = statistics.median(s for c in calls for s in c.compute_seconds)
                runs.append(
                    {
                        "workers": workers,
                        "seconds": median,
                        "samples": walls,
                        "blocks": len(call.compute_seconds),
                        "block_pairs": -(-pairs // len(call.compute_seconds)),
                        "block_seconds": compute,
                        "gather_seconds": call.wall_seconds,
                        "overhead_seconds_per_block": max(
                            0.0,
                            (call.wall_seconds - sum(call.compute_seconds) / workers)
                            / len(call.compute_seconds),
                        ),
                        "serial_seconds": max(0.0, median - call.wall_seconds),
                        "sent_bytes_per_block": statistics.median(call.sent_bytes),
                        "returned_bytes_per_block": statistics.median(call.returned_bytes),
                        "shared_bytes": call.shared_bytes,
                        "state_bytes": 16 << n,
                    }
                )
                log(
                    f"cluster, {workers} worker(s): {median:.2f} s, "
                    f"{compute:.2f} s per block, {call.sent_bytes[0]} B sent and "
                    f"{call.returned_bytes[0]} B returned per block"
                )
        finally:
            cluster.disconnect()
    one, two = runs
    model = [
        cluster_model(one, pairs=m, workers=w, bandwidth=cfg["cluster_bandwidth"])
        for m in cfg["cluster_model_pairs"]
        for w in cfg["cluster_model_workers"]
    ]
    return {
        "qubits": n,
        "circuit": cfg["cluster_circuit"],
        "layers": program.layers,
        "pairs": pairs,
        "memory_budget_per_task": cfg["cluster_budget"],
        "runs": runs,
        "baseline": {"name": "the same run on 1 worker", "seconds": one["seconds"]},
        "ratio": one["seconds"] / two["seconds"],
        "model": {
            "bandwidth_bytes_per_second": cfg["cluster_bandwidth"],
            "method": cluster_model.__doc__,
            "points": model,
        },
    }


def check_targets(figures: dict[str, Any]) -> list[dict[str, Any]]:
    """Each figure against its target in :data:`TARGETS` (``met`` is None if not measured)."""
    out = []

    def add(name: str, value: Any, met: bool | None) -> None:
        out.append({"figure": name, "target": TARGETS[name], "value": value, "met": met})

    bw = [r for r in figures["bandwidth"] if r["qubits"] >= 18]
    add(
        "bandwidth",
        {r["qubits"]: round(r["ratio"], 3) for r in bw} or None,
        all(r["ratio"] >= 1.0 for r in bw) if bw else None,
    )
    nv = {r["qubits"]: r["ratio"] for r in figures["naive"]}
    add(
        "naive",
        {k: round(v) for k, v in nv.items() if k in (4, 8)} or None,
        (nv[4] >= 100 and nv[8] >= 2000) if 4 in nv and 8 in nv else None,
    )
    ad = {r["parameters"]: r["ratio"] for r in figures["adjoint"]}
    add("adjoint", round(ad[100], 1) if 100 in ad else None, ad[100] >= 25 if 100 in ad else None)
    two = [r for r in figures["references"]["runs"] if r["workers"] == 2]
    add(
        "references",
        round(two[0]["seconds"], 2) if two else None,
        two[0]["seconds"] <= 10 if two else None,
    )
    full_scan = figures["scan"]["qubits"] == list(range(2, 15, 2))
    add(
        "scan",
        round(figures["scan"]["seconds"], 2),
        figures["scan"]["seconds"] <= 60 if full_scan else None,
    )
    mem = figures["memory"]
    add("memory", [round(r["ratio"], 3) for r in mem], all(r["ratio"] <= 1.25 for r in mem))
    cl = figures["cluster"]
    add("cluster", round(cl["ratio"], 2), cl["ratio"] >= 1.6 if cl["qubits"] >= 20 else None)
    measured = {r["qubits"] for r in figures["compiled"]["rows"]}
    full = {4, 8, 12, 16, 20} <= measured  # smoke sizes judge nothing
    for name, cores, sizes, bar in (
        ("compiled_one_core", 1, range(4, 21), 1.0),
        ("compiled_small", 1, range(4, 9), 3.0),
        ("compiled_two_cores", 2, range(4, 21), 1.0),
    ):
        rows = [
            r for r in figures["compiled"]["rows"] if r["cores"] == cores and r["qubits"] in sizes
        ]
        add(
            name,
            {r["qubits"]: round(r["ratio"], 2) for r in rows} or None,
            all(r["ratio"] >= bar for r in rows) if rows and full else None,
        )
    start = figures["startup"]
    judged = start["repeats"] >= 5  # a single smoke run judges nothing
    version = start["version"]["seconds"]
    add("startup_version", round(version, 3), version <= 0.2 if judged else None)
    small = start["analyze_small"]["seconds"]
    add("startup_analyze", round(small, 3), small <= 0.3 if judged else None)
    whole = start["expressibility_whole"]
    at_size = whole["qubits"] == 6 and whole["pairs"] == 20_000
    add("peer", round(whole["ratio"]), whole["ratio"] >= 100 if at_size else None)
    return out


def table(results: dict[str, Any]) -> str:
    """The results as two Markdown tables: the figures, then the targets."""
    f = results["figures"]
    lines = ["| figure | inputs | value | baseline |", "| --- | --- | --- | --- |"]
    for r in f["bandwidth"]:
        lines.append(
            f"| bandwidth ratio | n = {r['qubits']}, {r['circuit']} x{r['layers']}, "
            f"{r['logical_gates']} gates, batch {r['batch']} | {r['ratio']:.2f} | "
            f"{r['baseline']['bytes_per_second'] / 1e9:.1f} GB/s streaming |"
        )
    for r in f["naive"]:
        lines.append(
            f"| naive ratio | n = {r['qubits']}, {r['circuit']} x{r['layers']} | "
            f"{r['ratio']:.0f}x | {r['baseline']['seconds_per_pair'] * 1e3:.2f} ms/pair plain |"
        )
    for r in f["adjoint"]:
        lines.append(
            f"| adjoint ratio | P = {r['parameters']}, n = {r['qubits']}, batch {r['batch']} | "
            f"{r['ratio']:.1f}x | {r['baseline']['seconds']:.3f} s parameter shift |"
        )
    ref = f["references"]
    for r in ref["runs"]:
        lines.append(
            f"| reference table | {ref['circuits']} circuits x layers "
            f"{ref['layers'][0]}..{ref['layers'][-1]}, {ref['pairs']} pairs + {ref['samples']} "
            f"samples, {r['workers']} worker(s) | {r['seconds']:.2f} s | - |"
        )
    s = f["scan"]
    lines.append(
        f"| scan | n = {s['qubits'][0]}..{s['qubits'][-1]}, layers = n, {s['samples']} samples, "
        f"{s['cost']} | {s['seconds']:.2f} s | - |"
    )
    for r in f["memory"]:
        lines.append(
            f"| memory | n = {r['qubits']}, {r['pairs']} pairs | "
            f"{r['run_bytes'] / 2**20:.0f} MiB run, {r['peak_rss_bytes'] / 2**20:.0f} MiB peak | "
            f"budget {r['baseline']['bytes'] / 2**20:.0f} MiB |"
        )
    c = f["cluster"]
    for r in c["runs"]:
        lines.append(
            f"| Dask cluster | n = {c['qubits']}, {c['circuit']} x{c['layers']}, {c['pairs']} "
            f"pairs, {r['workers']} worker(s), {r['blocks']} blocks: "
            f"{r['block_seconds']:.2f} s, {r['sent_bytes_per_block']:.0f} B sent and "
            f"{r['returned_bytes_per_block']:.0f} B back per block | {r['seconds']:.2f} s | "
            f"{c['baseline']['seconds']:.2f} s on 1 worker |"
        )
    for m in c["model"]["points"]:
        lines.append(
            f"| Dask model | {m['pairs']} pairs, {m['blocks']} blocks, {m['workers']} workers "
            f"| efficiency {m['efficiency']:.2f} | {m['seconds']:.1f} s expected |"
        )
    comp = f["compiled"]
    if comp["skipped"]:
        lines.append(f"| compiled ratio | - | {comp['skipped']} | compiled simulator |")
    for r in comp["rows"]:
        lines.append(
            f"| compiled ratio | n = {r['qubits']}, {r['circuit']} x{r['layers']}, "
            f"{r['states']} states, {r['cores']} core(s) | {r['ratio']:.2f}x | "
            f"{r['baseline']['states_per_second']:.0f} states/s compiled simulator |"
        )
    s = f["startup"]
    lines.append(f"| start-up | {s['command']} --version | {s['version']['seconds']:.3f} s | - |")
    lines.append(
        f"| start-up | {s['command']} analyze {s['analyze_small']['args']} | "
        f"{s['analyze_small']['seconds']:.3f} s | - |"
    )
    w = s["expressibility_whole"]
    lines.append(
        f"| peer ratio | whole-process expressibility, n = {w['qubits']}, {w['pairs']} pairs "
        f"({w['seconds']:.2f} s) | {w['ratio']:.0f}x | "
        f"{w['baseline']['seconds_per_pair'] * 1e3:.2f} ms/pair tensordot peer |"
    )
    lines.append("")
    lines.append("| target | value | met |")
    lines.append("| --- | --- | --- |")
    for t in results["targets"]:
        lines.append(f"| {t['figure']}: {t['target']} | {t['value']} | {t['met']} |")
    return "\n".join(lines)


SECTIONS = (
    "bandwidth",
    "naive",
    "adjoint",
    "references",
    "scan",
    "memory",
    "cluster",
    "compiled",
    "startup",
)


def main(argv: list[str] | None = None) -> dict[str, Any]:
    """Run every figure, write the JSON results, print the tables and return the results."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--smoke", action="store_true", help="tiny sizes (seconds)")
    parser.add_argument("--out", default=str(HERE / "results.json"), help="JSON output")
    args = parser.parse_args(argv)
    cfg = SMOKE if args.smoke else FULL
    load_at_start = list(os.getloadavg())
    started = time.time()
    t0 = time.perf_counter()
    figures = {
        "bandwidth": bench_bandwidth(cfg),
        "naive": bench_naive(cfg),
        "adjoint": bench_adjoint(cfg),
        "references": bench_references(cfg),
        "scan": bench_scan(cfg),
        "memory": bench_memory(cfg),
        "cluster": bench_cluster(cfg),
        "compiled": compiled.bench_compiled(cfg),
        "startup": compiled.bench_startup(cfg),
    }
    results: dict[str, Any] = {
        "bench_format": BENCH_FORMAT,
        "mode": "smoke" if args.smoke else "full",
        "haarline_version": haarline.__version__,
        "started": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime(started)),
        "machine": {
            "cpus": os.cpu_count(),
            "processor": platform.processor() or platform.machine(),
            "python": platform.python_version(),
            "numpy": np.__version__,
            "load_average_at_start": load_at_start,
        },
        "repeats": cfg["repeats"],
        "statistic": "median",
        "figures": figures,
    }
    results["targets"] = check_targets(figures)
    results["machine"]["load_average_at_end"] = list(os.getloadavg())
    results["wall_seconds"] = time.perf_counter() - t0
    Path(args.out).write_text(json.dumps(results, indent=1) + "\n")
    print(table(results))
    print(f"\nwrote {args.out} in {results['wall_seconds']:.0f} s")
    return results


if __name__ == "__main__":
    main()

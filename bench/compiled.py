"""The figures of issue 15: the engine against a compiled simulator, and start-up.

* ``compiled``: states per second of the fidelity-histogram workload (``2 x pairs``
  states of ``ry-cz-ring`` with layers = n, and the pairs' overlaps) through
  ``haarline.fidelities``, divided by the same workload written as a loop over a compiled
  general-purpose statevector simulator (``bench/compiled_peer.py``; one state at a time
  with its parametric circuit updated in place). Both run in fresh child processes, on
  the same angles; before timing, the child checks that the simulator's states equal
  haarline's (``max_state_difference``). On one core the baseline has one OpenMP thread
  and haarline one worker (both with one BLAS thread); on both cores the baseline has its
  default threads and haarline two worker processes. The simulator comes from the
  ``bench`` extra (``pip install -e '.[bench]'``): without it the figure is skipped with a
  message, never failed.
* ``startup``: wall time of whole ``haarline`` processes (``--version``; a one-metric
  ``analyze``), bytecode cached, medians of repeated runs; and the whole-process
  expressibility at n = 6, 20 000 pairs, against a per-sample numpy peer
  (``bench/plain.py``'s ``tensordot_fidelities``: one state at a time, each gate
  contracted into the state with ``np.tensordot``), timed on fewer pairs and scaled.
"""

from __future__ import annotations

import json
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

import compiled_peer

HERE = Path(__file__).resolve().parent

BASELINE = "compiled"
"""The child side that runs the compiled simulator (``bench/compiled_peer.py``)."""

CHILD = r"""
import json, sys, time
import numpy as np
import haarline
from haarline.engine.sampling import Stream, draw_angles

side, n, pairs, repeats, workers = sys.argv[1], *map(int, sys.argv[2:6])
program = haarline.expand(haarline.load_reference("ry-cz-ring"), qubits=n, layers=n)
P = program.parameters
out = {"qubits": n, "pairs": pairs, "states": 2 * pairs, "logical_gates": len(program.operations)}
if side == "haarline":
    context = haarline.Context(workers=workers)
    # first call outside the timing: builds the plan and, for 2 workers, starts the pool
    haarline.fidelities(program, pairs=pairs, seed=1, context=context)
    times = []
    for _ in range(repeats):
        t = time.perf_counter()
        f = haarline.fidelities(program, pairs=pairs, seed=1, context=context)
        times.append(time.perf_counter() - t)
else:
    import compiled_peer

    peer = compiled_peer.Loop(program)
    rows = draw_angles(1, Stream.EXPRESSIBILITY, 0, pairs, 2 * P)  # haarline's own angles
    first = np.stack([rows[0, :P], rows[0, P:]])  # both states of the first pair
    want = haarline.run(program, first)
    diff = max(float(np.max(np.abs(peer.state(first[k]) - want[k]))) for k in range(2))
    out["max_state_difference"] = diff
    if diff > 1e-12:
        raise SystemExit(f"the {compiled_peer.NAME}'s and haarline's states differ by {diff}")

    def loop():
        f = np.empty(pairs)
        for k in range(pairs):
            f[k] = peer.fidelity(rows[k, :P], rows[k, P:])
        return f

    loop()
    times = []
    for _ in range(repeats):
        t = time.perf_counter()
        f = loop()
        times.append(time.perf_counter() - t)
    ours = haarline.fidelities(program, pairs=pairs, seed=1)
    out["max_fidelity_difference"] = float(np.max(np.abs(f - ours)))
out["seconds"] = sorted(times)[len(times) // 2]
out["samples"] = times
out["states_per_second"] = 2 * pairs / out["seconds"]
print(json.dumps(out))
"""


def log(message: str) -> None:
    """Progress line on stderr (stdout carries the table)."""
    print(message, file=sys.stderr, flush=True)


def _environment(threads: int | None) -> dict[str, str]:
    """The child's environment: bytecode cached, and ``threads`` OpenMP/BLAS threads."""
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    env["PYTHONPATH"] = os.pathsep.join([str(HERE.parent), str(HERE)])
    for name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
        env.pop(name, None)
        if threads is not None:
            env[name] = str(threads)
    return env


def _child(side: str, n: int, pairs: int, repeats: int, workers: int, threads: int | None) -> Any:
    done = subprocess.run(
        [sys.executable, "-c", CHILD, side, str(n), str(pairs), str(repeats), str(workers)],
        capture_output=True,
        text=True,
        env=_environment(threads),
        check=False,
    )
    if done.returncode != 0:
        raise RuntimeError(f"{side} child failed at n = {n}: {done.stderr.strip()[-800:]}")
    return json.loads(done.stdout.strip().splitlines()[-1])


def bench_compiled(cfg: dict[str, Any]) -> dict[str, Any]:
    """States per second of haarline over the compiled simulator, per qubit count and core."""
    if not compiled_peer.installed():
        message = (
            f"skipped: the {compiled_peer.NAME} is not installed (pip install -e '.[bench]' "
            "installs it; make bench does)"
        )
        log(f"compiled: {message}")
        return {"skipped": message, "rows": []}
    rows = []
    for cores in cfg["compiled_cores"]:
        threads = 1 if cores == 1 else None
        for n in cfg["compiled_qubits"]:
            pairs = cfg["compiled_pairs"][n]
            repeats = cfg["compiled_repeats"].get(n, cfg["repeats"])
            ours = _child("haarline", n, pairs, repeats, cores, threads)
            base = _child(BASELINE, n, pairs, repeats, 1, threads)
            ratio = ours["states_per_second"] / base["states_per_second"]
            rows.append(
                {
                    "qubits": n,
                    "layers": n,
                    "circuit": "ry-cz-ring",
                    "cores": cores,
                    "pairs": pairs,
                    "states": 2 * pairs,
                    "logical_gates": ours["logical_gates"],
                    "workers": cores,
                    "seconds": ours["seconds"],
                    "samples": ours["samples"],
                    "states_per_second": ours["states_per_second"],
                    "baseline": {
                        "name": f"{compiled_peer.NAME} {compiled_peer.version()}, one state "
                        "at a time (parametric circuit)",
                        "threads": "1 (OMP_NUM_THREADS=1)" if cores == 1 else "default",
                        "seconds": base["seconds"],
                        "samples": base["samples"],
                        "states_per_second": base["states_per_second"],
                        "max_state_difference": base["max_state_difference"],
                        "max_fidelity_difference": base["max_fidelity_difference"],
                    },
                    "ratio": ratio,
                }
            )
            log(
                f"compiled n={n}, {cores} core(s): {ratio:.2f}x "
                f"({ours['states_per_second']:.0f} against {base['states_per_second']:.0f} "
                "states/s)"
            )
    return {"skipped": None, "rows": rows}


# -- start-up ------------------------------------------------------------------------------


def _command() -> list[str]:
    """The installed ``haarline`` script beside this Python, or the module as a fallback."""
    script = Path(sys.executable).with_name("haarline")
    if script.exists():
        return [str(script)]
    found = shutil.which("haarline")
    return [found] if found else [sys.executable, "-m", "haarline.service.cli.main"]


def _wall(args: list[str], repeats: int) -> tuple[float, list[float]]:
    """Median wall time of a whole process (one untimed run first fills the bytecode cache)."""
    env = _environment(None)
    subprocess.run(args, check=True, capture_output=True, env=env)
    samples = []
    for _ in range(repeats):
        t = time.perf_counter()
        subprocess.run(args, check=True, capture_output=True, env=env)
        samples.append(time.perf_counter() - t)
    return statistics.median(samples), samples


def bench_startup(cfg: dict[str, Any]) -> dict[str, Any]:
    """Whole-process times of the CLI, and whole-process expressibility against a peer."""
    import haarline
    import plain
    from haarline.engine.sampling import Stream, draw_angles

    command = _command()
    runs = cfg["startup_repeats"]
    version, version_samples = _wall([*command, "--version"], runs)
    small_args = ["ref:ry-cz-ring", "--metrics", "expressibility", "--pairs", "100"]
    small, small_samples = _wall([*command, "analyze", *small_args], runs)
    log(f"startup: --version {version:.3f} s, analyze --pairs 100 {small:.3f} s")
    n, pairs = cfg["peer_qubits"], cfg["peer_pairs"]
    with tempfile.TemporaryDirectory() as tmp:
        description = json.loads(
            (HERE.parent / "analysis/circuit/references/ry-cz-ring.json").read_text()
        )
        description.update(name=f"ry-cz-ring-{n}", qubits=n)
        path = Path(tmp) / "circuit.json"
        path.write_text(json.dumps(description))
        args = [*command, "analyze", str(path), "--metrics", "expressibility"]
        whole, whole_samples = _wall([*args, "--pairs", str(pairs)], cfg["peer_repeats"])
    program = haarline.expand(haarline.load_reference("ry-cz-ring"), qubits=n)
    k = cfg["peer_sample_pairs"]
    rows = draw_angles(1, Stream.EXPRESSIBILITY, 0, k, 2 * program.parameters)
    agree = float(
        abs(
            plain.tensordot_fidelities(program, rows)
            - haarline.fidelities(program, pairs=k, seed=1)
        ).max()
    )
    t = time.perf_counter()
    plain.tensordot_fidelities(program, rows)
    per_pair = (time.perf_counter() - t) / k
    ratio = per_pair * pairs / whole
    log(f"startup: whole-process expressibility n={n}, {pairs} pairs: {ratio:.0f}x the peer")
    return {
        "command": " ".join(Path(c).name for c in command),
        "repeats": runs,
        "version": {"seconds": version, "samples": version_samples, "baseline": None},
        "analyze_small": {
            "args": " ".join(small_args),
            "seconds": small,
            "samples": small_samples,
            "baseline": None,
        },
        "expressibility_whole": {
            "qubits": n,
            "layers": program.layers,
            "pairs": pairs,
            "seconds": whole,
            "samples": whole_samples,
            "baseline": {
                "name": "per-sample np.tensordot simulator (bench/plain.py), in-process",
                "pairs_timed": k,
                "seconds_per_pair": per_pair,
                "seconds_for_all_pairs": per_pair * pairs,
                "max_fidelity_difference": agree,
            },
            "ratio": ratio,
        },
    }

"""Accuracy and speed of single precision (complex64) against double, measured.

    python bench/precision.py [--out bench/precision.json]

For the same seeds, every metric is computed in both precisions: expressibility (KL,
largest fidelity difference), Meyer-Wallach (mean, largest per-sample difference),
gradient variances of a scan (relative difference, largest gradient difference), and the
engine's time for one large state.
"""

from __future__ import annotations

import argparse
import json
import sys
import time
from pathlib import Path

import haarline
import numpy as np
from haarline.metrics.gradient_variance import gradient_samples, summarize_gradients

HERE = Path(__file__).resolve().parent
SINGLE, DOUBLE = np.complex64, np.complex128
DOUBLE_CONTEXT = haarline.Context(precision="double")
SINGLE_CONTEXT = haarline.Context(precision="single")


def expressibility_rows() -> list[dict]:
    """KL and fidelities in both precisions, per circuit and size."""
    rows = []
    cases = [("sim2019-02", None, 3), ("sim2019-11", None, 3), ("ry-cz-ring", 4, 3)]
    cases += [("ry-cz-ring", 8, 8), ("rx-rz-cx-chain", 12, 12)]
    for name, n, layers in cases:
        program = haarline.expand(haarline.load_reference(name), qubits=n, layers=layers)
        f2 = haarline.fidelities(program, pairs=5000, seed=1, context=DOUBLE_CONTEXT)
        f1 = haarline.fidelities(program, pairs=5000, seed=1, context=SINGLE_CONTEXT)
        with np.errstate(divide="ignore", invalid="ignore"):  # plugin_bias at n = 12
            e2 = haarline.divergence_from_haar(f2, program.qubits, seed=1)
            e1 = haarline.divergence_from_haar(f1, program.qubits, seed=1)
        rows.append(
            {
                "circuit": name,
                "qubits": program.qubits,
                "layers": layers,
                "pairs": 5000,
                "kl_double": e2.kl,
                "kl_single": e1.kl,
                "kl_difference": abs(e1.kl - e2.kl),
                "kl_interval_width_double": e2.interval[1] - e2.interval[0],
                "max_fidelity_difference": float(np.max(np.abs(f1 - f2))),
            }
        )
    return rows


def meyer_wallach_rows() -> list[dict]:
    """Meyer-Wallach values in both precisions, per circuit and size."""
    rows = []
    from haarline.metrics.entanglement import meyer_wallach

    for name, n, layers in [("sim2019-11", None, 3), ("ry-cz-ring", 8, 8), ("ry-cz-ring", 12, 12)]:
        program = haarline.expand(haarline.load_reference(name), qubits=n, layers=layers)
        thetas = haarline.draw_angles(1, haarline.Stream.ENTANGLEMENT, 0, 2000, program.parameters)
        q2 = meyer_wallach(haarline.run(program, thetas, dtype=DOUBLE), program.qubits)
        q1 = meyer_wallach(haarline.run(program, thetas, dtype=SINGLE), program.qubits)
        m2 = haarline.entangling_capability(program, samples=2000, seed=1, context=DOUBLE_CONTEXT)
        rows.append(
            {
                "circuit": name,
                "qubits": program.qubits,
                "layers": layers,
                "samples": 2000,
                "mean_double": float(q2.mean()),
                "mean_single": float(q1.mean()),
                "mean_difference": float(abs(q1.mean() - q2.mean())),
                "interval_half_width_double": (m2.interval[1] - m2.interval[0]) / 2,
                "max_sample_difference": float(np.max(np.abs(q1 - q2))),
            }
        )
    return rows


def gradient_rows() -> list[dict]:
    """Gradient variances in both precisions, per qubit count and cost."""
    rows = []
    circuit = haarline.load_reference("ry-cz-ring")
    for n in (2, 4, 6, 8, 10, 12):
        for cost in ("zz", "global"):
            program = haarline.expand(circuit, qubits=n, layers=n)
            c2, g2 = gradient_samples(program, cost, samples=200, seed=1, context=DOUBLE_CONTEXT)
            c1, g1 = gradient_samples(program, cost, samples=200, seed=1, context=SINGLE_CONTEXT)
            v2 = summarize_gradients(n, n, c2, g2)
            v1 = summarize_gradients(n, n, c1, g1)
            rows.append(
                {
                    "circuit": "ry-cz-ring",
                    "qubits": n,
                    "layers": n,
                    "cost": cost,
                    "samples": 200,
                    "variance_double": v2.variance,
                    "variance_single": v1.variance,
                    "relative_variance_difference": abs(v1.variance - v2.variance) / v2.variance,
                    "relative_standard_error_double": v2.standard_error / v2.variance,
                    "max_gradient_difference": float(np.max(np.abs(g1 - g2))),
                }
            )
    return rows


def speed_rows() -> list[dict]:
    """Engine time of one batch in both precisions (median of three), per size."""
    rows = []
    circuit = haarline.load_reference("ry-cz-ring")
    for n, batch in [(8, 2048), (14, 32), (20, 1), (22, 1)]:
        program = haarline.expand(circuit, qubits=n, layers=4)
        plan = haarline.compile_program(program)
        thetas = np.random.default_rng(0).uniform(0, 2 * np.pi, (batch, program.parameters))
        times = {}
        for label, dtype in (("double", DOUBLE), ("single", SINGLE)):
            haarline.run(plan, thetas, dtype=dtype)
            best = []
            for _ in range(3):
                t = time.perf_counter()
                haarline.run(plan, thetas, dtype=dtype)
                best.append(time.perf_counter() - t)
            times[label] = sorted(best)[1]
        rows.append(
            {
                "qubits": n,
                "batch": batch,
                "seconds_double": times["double"],
                "seconds_single": times["single"],
                "speedup": times["double"] / times["single"],
            }
        )
    return rows


def main(argv: list[str] | None = None) -> dict:
    """Measure every section, write the JSON and print one line per row."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", default=str(HERE / "precision.json"))
    args = parser.parse_args(argv)
    out = {
        "expressibility": expressibility_rows(),
        "meyer_wallach": meyer_wallach_rows(),
        "gradients": gradient_rows(),
        "speed": speed_rows(),
    }
    Path(args.out).write_text(json.dumps(out, indent=1) + "\n")
    for section, rows in out.items():
        print(section, file=sys.stdout)
        for row in rows:
            print(
                "  "
                + ", ".join(
                    f"{k}={v:.3g}" if isinstance(v, float) else f"{k}={v}" for k, v in row.items()
                )
            )
    return out


if __name__ == "__main__":
    main()

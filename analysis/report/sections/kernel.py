"""Registry row: the quantum kernel of a circuit with inputs.

Thanasilp, Wang, Cerezo & Holmes 2024 (concentration); Huang et al. 2021 (projected
kernel, geometric difference); Cristianini et al. 2001 (alignment).
"""

from __future__ import annotations

from dataclasses import replace
from typing import TYPE_CHECKING, Any

import numpy as np
from haarline.circuit.program import expand_at
from haarline.engine.statevector import batch_bytes
from haarline.metrics.kernel import (
    GEOMETRIC_REGULARIZATION,
    PROJECTED_GAMMA,
    alignment,
    geometric_difference,
    kernel_matrix,
    kernel_values,
    projected_values,
    rbf_kernel,
    summarize_kernel,
)
from haarline.metrics.plateau import Wording, fit_decay, verdict
from haarline.metrics.trainability import default_scan, layers_at, uses_only_patterns
from haarline.report.inputs import draws_for, input_law, labelled_rows
from haarline.report.metric_row import MetricRow, Request, Section, TableRow, Work
from haarline.report.text import interval_text, sentence

if TYPE_CHECKING:
    from haarline.circuit.model import Circuit
    from haarline.circuit.program import Program
    from haarline.report.options import AnalysisOptions

__all__ = ["ROW"]

WORDING = Wording(
    quantity="kernel variance",
    positive="concentrated",
    negative="not concentrated",
    more="--kernel-pairs",
)


def _scan(circuit: Circuit, options: AnalysisOptions) -> list[int]:
    return options.scan or default_scan(circuit, "global")


def _law_facts(request: Request) -> dict[str, Any]:
    law = input_law(request.options, request.data)
    if law.kind == "data":
        return {"kind": "data", "rows": request.data.rows if request.data else 0}
    if law.kind == "normal":
        return {"kind": "normal", "mean": law.mean, "std": law.std}
    return {"kind": "uniform", "low": law.low, "high": law.high}


def _compute(request: Request) -> Section:
    circuit, program, options, context = (
        request.circuit,
        request.program,
        request.options,
        request.context,
    )
    draws = draws_for(request, "inputs")
    values = kernel_values(
        program, pairs=options.kernel_pairs, seed=options.seed, draws=draws, context=context
    )
    own = summarize_kernel(values, program)
    projected = summarize_kernel(
        projected_values(
            program, pairs=options.kernel_pairs, seed=options.seed, draws=draws, context=context
        ),
        program,
    )
    # the concentration scan draws inputs from the stated law (a data set has one width)
    scan_request = request if request.data is None else _without_data(request)
    scan_draws = draws_for(scan_request, "inputs")
    points = []
    for n in _scan(circuit, options):
        layers = layers_at(options.scan_layers, n, circuit)
        if n == program.qubits and layers == program.layers and request.data is None:
            points.append(own)
            continue
        p = expand_at(circuit, n, layers, during=" (kernel scan)")
        points.append(
            summarize_kernel(
                kernel_values(
                    p,
                    pairs=options.kernel_pairs,
                    seed=options.seed,
                    draws=scan_draws,
                    context=context,
                ),
                p,
            )
        )
    fits = fit_decay(points)
    concentrated, reason = verdict(points, fits, WORDING)
    section: dict[str, Any] = {
        **own.to_dict(),
        "law": _law_facts(request),
        "projected": {"gamma": PROJECTED_GAMMA, **_stats(projected.to_dict())},
        "points": [p.to_dict() for p in points],
        "fit": {k: f.to_dict() for k, f in fits.items()} if fits else None,
        "decay_per_qubit": -fits["exponential"].slope if fits else None,
        "decay_per_qubit_stderr": fits["exponential"].slope_stderr if fits else None,
        "concentrated": concentrated,
        "reason": reason,
        "alignment": None,
        "geometric_difference": None,
        "regularization": GEOMETRIC_REGULARIZATION,
        "rbf_gamma": None,
        "matrix": None,
        "scan_note": None
        if uses_only_patterns(circuit) or options.scan
        else "The kernel scan ran at the circuit's own qubit count only: the description "
        "lists explicit qubits. Write it with placement patterns to scan it.",
    }
    labelled = labelled_rows(request.data, options.kernel_rows)
    if labelled is not None:
        x, labels = labelled
        matrix = kernel_matrix(program, x, seed=options.seed, context=context)
        classical, gamma = rbf_kernel(x)
        section.update(
            alignment=alignment(matrix, labels),
            geometric_difference=geometric_difference(classical, matrix),
            rbf_gamma=gamma,
            matrix={
                "rows": len(x),
                "labels": labels.tolist(),
                "values": np.round(matrix, 6).tolist(),
            },
        )
    return section


def _stats(point: dict[str, Any]) -> dict[str, Any]:
    keys = ("mean", "mean_interval", "variance", "interval", "standard_error")
    return {k: point[k] for k in keys}


def _without_data(request: Request) -> Request:
    return replace(request, data=None)


def _work(circuit: Circuit, program: Program, options: AnalysisOptions, budget: int) -> Work:
    updates, memory = 0.0, 0
    own = 2.0 * 2.0 * options.kernel_pairs * len(program.operations) * (1 << program.qubits)
    updates += own + options.kernel_rows * len(program.operations) * (1 << program.qubits)
    memory = max(batch_bytes(program.qubits, budget), options.kernel_rows**2 * 8 * 4)
    for n in _scan(circuit, options):
        p = expand_at(
            circuit, n, layers_at(options.scan_layers, n, circuit), during=" (kernel scan)"
        )
        updates += 2.0 * options.kernel_pairs * len(p.operations) * (1 << n)
        memory = max(memory, batch_bytes(n, budget))
    return Work(updates, memory)


def _stages(circuit: Circuit, options: AnalysisOptions) -> int:
    return 2 + len(_scan(circuit, options))


def _haar(qubits: int) -> tuple[float, float]:
    """Mean and variance of ``|⟨a|b⟩|²`` for independent Haar states: Beta(1, N-1)."""
    n = float(2**qubits)
    return 1 / n, (n - 1) / (n * n * (n + 1))


def _cautions(k: Section, report: dict[str, Any]) -> list[str]:
    out = []
    if k["concentrated"] is None:
        out.append(f"Kernel: {k['reason']}.")
    last = k["points"][-1] if k["points"] else None
    if k["concentrated"] and last is not None and last["variance"] > 0:
        out.append(
            f"The kernel values concentrate: at {last['qubits']} qubits they differ by about "
            f"{np.sqrt(last['variance']):.2g}, so a shot-based estimate needs of the order of "
            f"{1 / last['variance']:.2g} shots per entry to tell two inputs apart, and the "
            f"variance falls by x{np.exp(-k['decay_per_qubit']):.2g} per added qubit."
        )
    if k["pairs"] < 1000:
        out.append(f"Only {k['pairs']} input pairs: the kernel variance interval is wide.")
    g = k.get("geometric_difference")
    if g is not None and g < 2:
        out.append(
            f"Geometric difference g = {g:.3g}: on these data the quantum kernel is close to "
            "what the classical RBF kernel already offers (an advantage needs g of the order "
            f"of sqrt(N) = {np.sqrt(k['matrix']['rows']):.2g})."
        )
    if k.get("scan_note"):
        out.append(k["scan_note"])
    return out


def _text(k: Section, report: dict[str, Any]) -> list[str]:
    mean, var = _haar(k["qubits"])
    p = k["projected"]
    lines = [
        f"Quantum kernel (fidelity kernel over {k['pairs']} random input pairs, "
        f"inputs {k['law']['kind']})",
        f"  mean     {k['mean']:.4g}   95% interval {interval_text(k['mean_interval'], '.4g')}"
        f"   Haar {mean:.4g}",
        f"  variance {k['variance']:.4g}   95% interval {interval_text(k['interval'], '.4g')}"
        f"   Haar {var:.4g}",
        f"  projected kernel (gamma {p['gamma']:g}): mean {p['mean']:.4g}, variance "
        f"{p['variance']:.4g} ({interval_text(p['interval'], '.3g')})",
    ]
    if len(k["points"]) > 1:
        lines.append(f"  {'qubits':>6} {'mean':>10} {'variance':>10} {'95% interval':>23}")
        for q in k["points"]:
            lines.append(
                f"  {q['qubits']:>6} {q['mean']:>10.3e} {q['variance']:>10.3e} "
                f"{q['interval'][0]:>10.3e} .. {q['interval'][1]:>9.3e}"
            )
    lines.append(f"  verdict: {k['reason']}")
    if k["alignment"] is not None:
        lines.append(
            f"  on {k['matrix']['rows']} labelled rows: alignment {k['alignment']:.4f}, "
            f"geometric difference g = {k['geometric_difference']:.4g} against an RBF kernel "
            f"(gamma {k['rbf_gamma']:.3g}, regularization {k['regularization']:g})"
        )
    return lines


def _table(k: Section, report: dict[str, Any]) -> list[TableRow]:
    mean, var = _haar(k["qubits"])
    rows = [
        TableRow(
            label=f"Kernel variance at n = {k['qubits']}",
            value=f"{k['variance']:.3e}",
            interval=interval_text(k["interval"], ".3e"),
            reference=f"{var:.3e}",
            key="kernel.variance",
            interval_key="kernel.interval",
        ),
        TableRow(
            label="Kernel mean",
            value=f"{k['mean']:.4g}",
            interval=interval_text(k["mean_interval"], ".4g"),
            reference=f"{mean:.4g}",
            key="kernel.mean",
            interval_key="kernel.mean_interval",
        ),
    ]
    if k["alignment"] is not None:
        rows.append(
            TableRow(
                label="Kernel-target alignment",
                value=f"{k['alignment']:.4f}",
                key="kernel.alignment",
            )
        )
        rows.append(
            TableRow(
                label="Geometric difference g (RBF vs quantum)",
                value=f"{k['geometric_difference']:.4g}",
                reference="1 = nothing new",
                key="kernel.geometric_difference",
            )
        )
    return rows


def _verdict(k: Section) -> str:
    return sentence(k["reason"])


ROW = MetricRow(
    name="kernel",
    title="Kernel",
    about="mean and variance of the fidelity kernel over random inputs against qubit count, "
    "a concentration verdict (Thanasilp et al., Nat. Commun. 2024), the projected kernel, "
    "and with labels the alignment and the geometric difference to an RBF kernel",
    options=(
        "kernel_pairs",
        "kernel_rows",
        "inputs_uniform",
        "inputs_normal",
        "scan",
        "scan_layers",
    ),
    compute=_compute,
    work=_work,
    stages=_stages,
    cautions=_cautions,
    text=_text,
    table=_table,
    verdict=_verdict,
    plots=("kernel.png", "kernel_matrix.png"),
    policy_paths=("kernel.variance", "kernel.concentrated", "kernel.mean"),
)

"""Assemble the report: one JSON-ready dict with stable keys (``report_format: 1``).

Keys: ``report_format``, ``haarline_version``, ``circuit`` (static facts), ``options``
(resolved, seed included), ``expressibility``, ``entanglement``, ``trainability``,
``capacity``, ``sweep``, ``cautions`` and ``timings``. A metric that was not asked for
is ``null``. Everything but ``timings`` is a pure function of (circuit, options,
version): never of the memory budget, chunk size or machine.
"""

from __future__ import annotations

import time
from typing import Any

import numpy as np
from haarline._version import __version__
from haarline.circuit.model import Circuit
from haarline.circuit.program import Program, expand, facts
from haarline.engine.batching import Progress
from haarline.engine.statevector import DEFAULT_MEMORY_BUDGET
from haarline.lie.diagnosis import lie_diagnosis
from haarline.metrics.capacity import capacity
from haarline.metrics.entanglement import Entanglement, entangling_capability
from haarline.metrics.expressibility import Expressibility, expressibility
from haarline.metrics.sampled_loss import LIE_SAMPLE_QUBITS, deep_loss_variance
from haarline.metrics.trainability import default_scan, trainability, uses_only_patterns
from haarline.report.options import AnalysisOptions

__all__ = ["REPORT_FORMAT", "analyze", "cautions"]

REPORT_FORMAT = 1


def _dtype(options: AnalysisOptions) -> type:
    return np.complex64 if options.precision == "single" else np.complex128


def _metrics(
    program: Program,
    options: AnalysisOptions,
    memory_budget: int,
    progress: Progress | None,
    timings: dict[str, float],
    workers: int = 1,
) -> tuple[Expressibility | None, Entanglement | None]:
    expr = ent = None
    if "expressibility" in options.metrics:
        t = time.perf_counter()
        expr = expressibility(
            program,
            pairs=options.pairs,
            bins=options.bins,
            seed=options.seed,
            memory_budget=memory_budget,
            progress=progress,
            dtype=_dtype(options),
            workers=workers,
        )
        timings["expressibility"] = timings.get("expressibility", 0.0) + time.perf_counter() - t
    if "entanglement" in options.metrics:
        t = time.perf_counter()
        ent = entangling_capability(
            program,
            samples=options.samples,
            seed=options.seed,
            memory_budget=memory_budget,
            progress=progress,
            dtype=_dtype(options),
            workers=workers,
        )
        timings["entanglement"] = timings.get("entanglement", 0.0) + time.perf_counter() - t
    return expr, ent


def cautions(report: dict[str, Any]) -> list[str]:
    """Plain-language warnings where the numbers could mislead a reader."""
    out: list[str] = []
    expr = report.get("expressibility")
    circuit = report["circuit"]
    if expr:
        m, k = expr["pairs"], expr["bins"]
        if expr["kl"] <= 2 * expr["bias"] or expr["interval"][0] <= expr["bias"]:
            out.append(
                f"Expressibility KL {expr['kl']:.4g} is within reach of the plug-in bias "
                f"{expr['bias']:.4g} that an exactly Haar-random circuit shows at {m} pairs: "
                "at this sample size the circuit cannot be told apart from Haar. Raise "
                "--pairs to resolve smaller differences."
            )
        if m < 1000:
            out.append(
                f"Only {m} fidelity pairs: the KL interval is wide and its bias "
                f"({expr['bias']:.3g}) is large; 5000 pairs is the usual minimum."
            )
        if m < 5 * k:
            out.append(
                f"{k} bins for {m} pairs leaves fewer than 5 pairs per bin on average; the KL "
                "mostly measures noise. Use fewer bins or more pairs."
            )
    tr = report.get("trainability")
    if tr:
        if tr["barren_plateau"] is None:
            out.append(f"Trainability: {tr['reason']}.")
        for p in tr["points"] + tr["layer_points"]:
            if p["top_sample_share"] > 0.1:
                out.append(
                    f"At {p['qubits']} qubits and {p['layers']} layers one of {p['samples']} "
                    f"gradient samples carries {p['top_sample_share']:.0%} of the variance "
                    "estimate: the squared gradients are heavy-tailed and the interval is "
                    "likely too narrow. Raise --grad-samples."
                )
        if tr.get("scan_note"):
            out.append(tr["scan_note"])
    lie = report.get("lie")
    if lie:
        for p in lie["points"]:
            if not p["complete"]:
                out.append(
                    f"Lie algebra at {p['qubits']} qubits: the closure stopped at a cap; the "
                    f"dimension is at least {p['dimension']}."
                )
            s = p.get("sampled")
            if s is not None and s.get("settled") is False:
                out.append(
                    f"At {p['qubits']} qubits the sampled deep-circuit loss variance had not "
                    "settled between half and full depth; compare it with the prediction "
                    "with care."
                )
    cap = report.get("capacity")
    if cap and cap["points"] < 3:
        out.append(
            f"The QFI rank comes from {cap['points']} random point(s); special parameter "
            "values lower the rank, so use at least 3 points."
        )
    ent = report.get("entanglement")
    if ent:
        if circuit["qubits"] == 1:
            out.append("Meyer-Wallach is 0 for a single qubit by definition.")
        elif ent["samples"] < 200:
            out.append(
                f"Only {ent['samples']} Meyer-Wallach samples: the mean has a wide interval."
            )
    return out


def analyze(
    circuit: Circuit,
    options: AnalysisOptions | None = None,
    *,
    memory_budget: int = DEFAULT_MEMORY_BUDGET,
    progress: Progress | None = None,
    workers: int = 1,
) -> dict[str, Any]:
    """Analyze a description and return the report dict.

    Parameters
    ----------
    circuit : Circuit
        Validated description.
    options : AnalysisOptions, optional
        Defaults: expressibility and entanglement, 5000 pairs, 75 bins, 2000 samples, seed 1.
    memory_budget : int
        Bytes for state batches; affects speed only.
    workers : int
        Processes that share the sampled work (blocks of samples); the numbers are
        identical for any count.
    progress : callable, optional
        ``progress(stage, done, total)``.

    Returns
    -------
    dict
        JSON-ready report (see module docstring for the keys).
    """
    options = options or AnalysisOptions()
    start = time.perf_counter()
    timings: dict[str, float] = {}
    program = expand(circuit)
    expr, ent = _metrics(program, options, memory_budget, progress, timings, workers)
    train = None
    if "trainability" in options.metrics:
        t = time.perf_counter()
        scan, note = options.scan, None
        if scan is None:
            scan = default_scan(circuit, options.cost)
            if isinstance(options.cost, str) and not uses_only_patterns(circuit):
                note = (
                    "The trainability scan ran at the circuit's own qubit count only: the "
                    "description lists explicit qubits, so it does not exist at other counts. "
                    "Write it with placement patterns to scan it."
                )
        result = trainability(
            circuit,
            cost=options.cost,
            scan=scan,
            scan_layers=options.scan_layers,
            layer_scan=options.depth_scan,
            samples=options.grad_samples,
            seed=options.seed,
            memory_budget=memory_budget,
            progress=progress,
            method=options.gradients,
            dtype=_dtype(options),
            workers=workers,
        )
        train = result.to_dict()
        train["scan_note"] = note
        timings["trainability"] = time.perf_counter() - t
    cap = None
    if "capacity" in options.metrics:
        t = time.perf_counter()
        cap = capacity(program, points=options.capacity_points, seed=options.seed).to_dict()
        timings["capacity"] = time.perf_counter() - t
    lie = None
    if "lie" in options.metrics:
        t = time.perf_counter()
        diagnosis = lie_diagnosis(
            circuit,
            cost=options.cost,
            scan=options.scan,
            layers=options.scan_layers,
            progress=progress,
        )
        lie = diagnosis.to_dict()
        # beside each prediction, the sampled loss variance of a deep circuit (small n only)
        for point in lie["points"]:
            pred = point.get("prediction") or {}
            point["sampled"] = None
            if (
                pred.get("applies")
                and point.get("complete")
                and point["qubits"] <= LIE_SAMPLE_QUBITS
            ):
                sampled = deep_loss_variance(
                    circuit,
                    point["qubits"],
                    point["dimension"],
                    options.cost,
                    samples=max(options.grad_samples, 500),
                    seed=options.seed,
                    memory_budget=memory_budget,
                    progress=progress,
                )
                point["sampled"] = sampled.to_dict()
        timings["lie"] = time.perf_counter() - t
    sweep = None
    if options.layers_sweep:
        t = time.perf_counter()
        sweep = []
        for layers in options.layers_sweep:
            p = expand(circuit, layers=layers)
            e, m = _metrics(p, options, memory_budget, progress, {}, workers)
            f = facts(p)
            row: dict[str, Any] = {
                "layers": layers,
                "parameters": f["parameters"],
                "gates": f["gates"],
                "depth": f["depth"],
            }
            if e is not None:
                row.update(
                    kl=e.kl,
                    kl_interval=list(e.interval),
                    bias=e.bias,
                    second_moment=e.second_moment,
                )
            if m is not None:
                row.update(meyer_wallach=m.meyer_wallach, meyer_wallach_interval=list(m.interval))
            sweep.append(row)
        timings["sweep"] = time.perf_counter() - t
    report: dict[str, Any] = {
        "report_format": REPORT_FORMAT,
        "haarline_version": __version__,
        "circuit": facts(program),
        "options": options.model_dump(),
        "expressibility": expr.to_dict() if expr else None,
        "entanglement": ent.to_dict() if ent else None,
        "trainability": train,
        "capacity": cap,
        "lie": lie,
        "sweep": sweep,
        "policy": None,
    }
    report["cautions"] = cautions(report)
    timings["total"] = time.perf_counter() - start
    report["timings"] = {k: round(v, 6) for k, v in timings.items()}
    _check_finite(report)
    return report


def _check_finite(value: Any, path: str = "report") -> None:
    """Guard: a report never carries NaN or infinity (JSON has no such numbers)."""
    if isinstance(value, float) and not np.isfinite(value):
        raise ArithmeticError(f"{path} is {value}; this is a bug in haarline, please report it")
    if isinstance(value, dict):
        for k, v in value.items():
            _check_finite(v, f"{path}.{k}")
    elif isinstance(value, list):
        for i, v in enumerate(value):
            _check_finite(v, f"{path}[{i}]")

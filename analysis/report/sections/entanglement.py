"""Registry row: entangling capability (Meyer & Wallach 2002; Brennen 2003)."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from haarline.engine.statevector import batch_bytes
from haarline.metrics.entanglement import entangling_capability
from haarline.report.inputs import draws_for
from haarline.report.metric_row import MetricRow, Request, Section, TableRow, Work
from haarline.report.text import interval_text

if TYPE_CHECKING:
    from haarline.circuit.model import Circuit
    from haarline.circuit.program import Program
    from haarline.report.options import AnalysisOptions

__all__ = ["ROW"]


def _compute(request: Request) -> Section:
    options = request.options
    result = entangling_capability(
        request.program,
        samples=options.samples,
        seed=options.seed,
        context=request.context,
        draws=draws_for(request),
    )
    return result.to_dict()


def _work(circuit: Circuit, program: Program, options: AnalysisOptions, budget: int) -> Work:
    n = program.qubits
    updates = float(options.samples * (len(program.operations) + n) * (1 << n))
    return Work(updates, batch_bytes(n, budget))


def _cautions(m: Section, report: dict[str, Any]) -> list[str]:
    if report["circuit"]["qubits"] == 1:
        return ["Meyer-Wallach is 0 for a single qubit by definition."]
    if m["samples"] < 200:
        return [f"Only {m['samples']} Meyer-Wallach samples: the mean has a wide interval."]
    return []


def _text(m: Section, report: dict[str, Any]) -> list[str]:
    return [
        "Entangling capability (Meyer-Wallach, 0 = product states, 1 = maximal)",
        f"  mean     {m['meyer_wallach']:.4f}   95% interval {interval_text(m['interval'])}   "
        f"std {m['std']:.4f}   Haar {m['haar_meyer_wallach']:.4f}",
        f"  {m['samples']} samples",
    ]


def _table(m: Section, report: dict[str, Any]) -> list[TableRow]:
    return [
        TableRow(
            label="Meyer-Wallach",
            value=f"{m['meyer_wallach']:.4f}",
            interval=interval_text(m["interval"]),
            reference=f"{m['haar_meyer_wallach']:.4f}",
            key="entanglement.meyer_wallach",
            interval_key="entanglement.interval",
        )
    ]


def _sweep(m: Section) -> dict[str, Any]:
    return {"meyer_wallach": m["meyer_wallach"], "meyer_wallach_interval": list(m["interval"])}


ROW = MetricRow(
    name="entanglement",
    title="Entangling capability",
    about="mean Meyer-Wallach entanglement over random parameters (Meyer & Wallach, "
    "J. Math. Phys. 2002), beside its Haar value",
    options=("samples", "vary", "inputs_uniform", "inputs_normal"),
    compute=_compute,
    work=_work,
    stages=lambda circuit, options: 1,
    cautions=_cautions,
    text=_text,
    table=_table,
    plots=("entanglement.png",),
    policy_paths=("entanglement.meyer_wallach", "entanglement.std"),
    sweep=_sweep,
)

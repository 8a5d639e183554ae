"""Registry row: capacity, the rank of the quantum Fisher information.

Haug, Bharti & Kim 2021.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from haarline.circuit.program import place_text
from haarline.metrics.capacity import capacity
from haarline.report.inputs import draws_for
from haarline.report.metric_row import MetricRow, Request, Section, TableRow, Work

if TYPE_CHECKING:
    from haarline.circuit.model import Circuit
    from haarline.circuit.program import Program
    from haarline.report.options import AnalysisOptions

__all__ = ["ROW"]

_BYTES = 16  # complex128: the QFI is always computed in double precision


def _compute(request: Request) -> Section:
    options = request.options
    result = capacity(
        request.program,
        points=options.capacity_points,
        seed=options.seed,
        context=request.context,
        draws=draws_for(request, "parameters"),
    )
    return result.to_dict()


def _work(circuit: Circuit, program: Program, options: AnalysisOptions, budget: int) -> Work:
    dim = 1 << program.qubits
    occurrences = sum(1 for op in program.operations if op.param is not None)
    updates = float(options.capacity_points * (occurrences + 1) * len(program.operations) * dim)
    return Work(updates, (occurrences + 1) * dim * _BYTES * 2)


def _cautions(c: Section, report: dict[str, Any]) -> list[str]:
    out = []
    if c["points"] < 3:
        out.append(
            f"The QFI rank comes from {c['points']} random point(s); special parameter "
            "values lower the rank, so use at least 3 points."
        )
    if report["options"].get("precision") == "single":
        out.append(
            "Capacity was computed in double precision, as always: its rank threshold "
            f"({c['tolerance']:g} of the largest eigenvalue) is below the rounding of single "
            "precision."
        )
    return out


def _text(c: Section, report: dict[str, Any]) -> list[str]:
    lines = [
        "Capacity (rank of the quantum Fisher information)",
        f"  rank {c['qfi_rank']} of {c['parameters']} parameters, {c['redundant']} redundant;"
        f" pure-state ceiling 2^(n+1)-2 = {c['max_rank']} (largest over {c['points']} "
        f"points, eigenvalues below {c['tolerance']:g} x largest count as zero)",
    ]
    if c["redundant_parameters"]:
        shown = ", ".join(
            f"{place_text(r)} {r['kind']}" if r.get("gate") else f"θ{r['parameter']} {r['kind']}"
            for r in c["redundant_parameters"][:8]
        )
        more = len(c["redundant_parameters"]) - 8
        lines.append(f"  redundant: {shown}" + (f" and {more} more" if more > 0 else ""))
    return lines


def _table(c: Section, report: dict[str, Any]) -> list[TableRow]:
    return [
        TableRow(
            label="QFI rank / parameters",
            value=f"{c['qfi_rank']} / {c['parameters']}",
            reference=f"ceiling {c['max_rank']}",
            key="capacity.qfi_rank",
        ),
        TableRow(label="Redundant parameters", value=f"{c['redundant']}", key="capacity.redundant"),
    ]


ROW = MetricRow(
    name="capacity",
    title="Capacity",
    about="rank of the quantum Fisher information and the redundant parameters it implies "
    "(Haug, Bharti & Kim, PRX Quantum 2021)",
    options=("capacity_points",),
    compute=_compute,
    work=_work,
    stages=lambda circuit, options: 1,
    cautions=_cautions,
    text=_text,
    table=_table,
    policy_paths=("capacity.qfi_rank", "capacity.redundant"),
)

"""Registry row: the dynamical Lie algebra and its prediction of deep circuits.

Ragone et al. 2024; Fontana et al. 2024; Larocca et al. 2022.

The Lie modules are imported by the functions that use them (only when the metric is
requested), not with the registry: a command that asks for other metrics never loads them.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from haarline.circuit.program import Program, expand_at
from haarline.engine.statevector import batch_bytes
from haarline.metrics.sampled_loss import LIE_SAMPLE_QUBITS, deep_layers, deep_loss_variance
from haarline.metrics.trainability import layers_at
from haarline.report.metric_row import MetricRow, Request, Section, TableRow, Work

if TYPE_CHECKING:
    from haarline.circuit.model import Circuit
    from haarline.report.options import AnalysisOptions

__all__ = ["PRODUCT_COST", "ROW"]

PRODUCT_COST = 8.0
"""Amplitude-gate updates that take as long as one Pauli product of the Lie closure.

Measured on the 2-core reference machine (2026-12-01): the Pauli-sum closure of
``ref:sim2019-03`` at n = 2..7 does about 1.5e8 products in 19 s, while the engine
applies about 5e7 amplitude-gate updates per second on small circuits.
"""


def _deep_samples(options: AnalysisOptions) -> int:
    return max(options.grad_samples, 500)


def _compute(request: Request) -> Section:
    from haarline.lie import diagnosis as lie

    circuit, options, context = request.circuit, request.options, request.context
    diagnosis = lie.lie_diagnosis(
        circuit, cost=options.cost, scan=options.scan, layers=options.scan_layers, context=context
    )
    section = diagnosis.to_dict()
    # beside each prediction, the sampled loss variance of a deep circuit (small n only)
    for point in section["points"]:
        prediction = point.get("prediction") or {}
        point["sampled"] = None
        if prediction.get("applies") and point.get("complete"):
            if point["qubits"] <= LIE_SAMPLE_QUBITS:
                sampled = deep_loss_variance(
                    circuit,
                    point["qubits"],
                    point["dimension"],
                    options.cost,
                    samples=_deep_samples(options),
                    seed=options.seed,
                    context=context,
                )
                point["sampled"] = sampled.to_dict()
    return section


def _as_sums(program: Program) -> bool:
    """Whether the closure works on Pauli sums (the slow case), read off the gate names.

    Controlled rotations and cphase have generators of several Pauli strings, non-Clifford
    fixed gates conjugate later generators into sums, and a shared parameter's generator
    is a sum.
    """
    from haarline.lie.pauli import is_clifford

    used: set[int] = set()
    for op in program.operations:
        if op.param is not None:
            if op.gate.startswith("c") or op.param in used:
                return True
            used.add(op.param)
        elif not is_clifford(op.gate, op.angle):
            return True
    return False


def _work(circuit: Circuit, program: Program, options: AnalysisOptions, budget: int) -> Work:
    """Work and memory of the diagnosis at every qubit count it may visit.

    The closure of ``D`` elements from ``K`` generators takes ``D · K`` products of
    Pauli strings, or for Pauli sums up to ``D² K`` string products (the Gram-Schmidt
    step), never more than the closure's own stop at ``WORK_FACTOR × budget``. ``D`` is
    bounded by ``min(cap, 4^n - 1)``. Points with n <= LIE_SAMPLE_QUBITS add the sampled
    loss variance of a deep version (and its half-depth check) at that bound.
    """
    from haarline.lie import algebra
    from haarline.lie import diagnosis as lie

    updates, memory = 0.0, 0
    stop = algebra.WORK_FACTOR * algebra.DEFAULT_BUDGET
    for n in lie.lie_scan(circuit, options.scan, widest=True):
        layers = layers_at(options.scan_layers, n, circuit)
        p = expand_at(circuit, n, layers)
        k = max(1, p.parameters)
        bound = min(algebra.DEFAULT_CAP, 4**n - 1)
        if n > lie.DEFAULT_LIE_SCAN[-1] and options.scan is None:
            bound = min(bound, lie.EXTEND_BELOW)
        if _as_sums(p):
            products = min(float(stop), float(bound) ** 2 * k)
            memory = max(memory, algebra.DEFAULT_BUDGET * 8 * 4)
        else:
            products = float(bound) * k * n
            memory = max(memory, bound * (k + n) * 8)
        updates += PRODUCT_COST * products
        if n <= LIE_SAMPLE_QUBITS:
            deep = deep_layers(circuit, n, bound)
            gates = len(expand_at(circuit, n, deep).operations)
            updates += 1.5 * _deep_samples(options) * gates * (1 << n)
            memory = max(memory, batch_bytes(n, budget))
    return Work(updates, int(memory))


def _stages(circuit: Circuit, options: AnalysisOptions) -> int:
    from haarline.lie import diagnosis as lie

    # the closure reports one stage; each sampled point two (deep and half depth)
    counts = lie.lie_scan(circuit, options.scan, widest=True)
    return 1 + 2 * sum(1 for n in counts if n <= LIE_SAMPLE_QUBITS)


def _cautions(section: Section, report: dict[str, Any]) -> list[str]:
    out = []
    for p in section["points"]:
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
    return out


def _text(section: Section, report: dict[str, Any]) -> list[str]:
    lines = [
        "Dynamical Lie algebra (of the generators; predicts deep circuits at any n)",
        f"  {'qubits':>6} {'dim':>8} {'of 4^n-1':>9}  {'predicted Var[C]':>16}  "
        f"{'sampled Var[C] (95% interval)':>30}",
    ]
    for p in section["points"]:
        dim = f"{p['dimension']}" + ("" if p["complete"] else "+")
        pred = p.get("prediction") or {}
        predicted = f"{pred['variance']:.4g}" if pred.get("applies") else "-"
        s = p.get("sampled")
        sampled = (
            f"{s['variance']:.4g} ({s['interval'][0]:.3g} .. {s['interval'][1]:.3g})" if s else "-"
        )
        lines.append(
            f"  {p['qubits']:>6} {dim:>8} {p['maximum']:>9}  {predicted:>16}  {sampled:>30}"
        )
    if section.get("summary"):
        lines.append(f"  {section['summary']}")
    return lines


def _table(section: Section, report: dict[str, Any]) -> list[TableRow]:
    if not section["points"]:
        return []
    last = section["points"][-1]
    return [
        TableRow(
            label=f"DLA dimension at n = {last['qubits']}",
            value=f"{last['dimension']}" + ("" if last["complete"] else " (at least)"),
            reference=f"4^n - 1 = {last['maximum']}",
            key="lie.dimension",
        )
    ]


ROW = MetricRow(
    name="lie",
    title="Dynamical Lie algebra",
    about="dimension of the dynamical Lie algebra against qubit count and its prediction "
    "of the deep-circuit loss variance (Ragone et al., Nat. Commun. 2024)",
    options=("cost", "scan", "scan_layers", "grad_samples"),
    compute=_compute,
    work=_work,
    stages=_stages,
    cautions=_cautions,
    text=_text,
    table=_table,
    plots=("algebra.png",),
    policy_paths=("lie.points[0].dimension", "lie.points[0].full"),
)

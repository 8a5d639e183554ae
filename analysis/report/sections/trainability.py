"""Registry row: trainability, the gradient-variance scan.

McClean et al. 2018; Cerezo et al. 2021.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from haarline.circuit.program import expand_at, inputs_at, parameter_places, place_text
from haarline.engine.statevector import batch_bytes
from haarline.metrics.trainability import default_scan, layers_at, trainability, uses_only_patterns
from haarline.report.inputs import draws_for
from haarline.report.metric_row import MetricRow, Request, Section, TableRow, Work
from haarline.report.text import count_text, interval_text, sentence

if TYPE_CHECKING:
    from haarline.circuit.model import Circuit
    from haarline.circuit.program import Program
    from haarline.report.options import AnalysisOptions

__all__ = ["ROW"]

_OWN_COUNT_NOTE = (
    "The trainability scan ran at the circuit's own qubit count only: the description "
    "lists explicit qubits, so it does not exist at other counts. Write it with placement "
    "patterns to scan it."
)


def _scan(circuit: Circuit, options: AnalysisOptions) -> list[int]:
    return options.scan or default_scan(circuit, options.cost)


def _compute(request: Request) -> Section:
    circuit, options = request.circuit, request.options
    note = None
    if options.scan is None and isinstance(options.cost, str) and not uses_only_patterns(circuit):
        note = _OWN_COUNT_NOTE
    result = trainability(
        circuit,
        cost=options.cost,
        scan=_scan(circuit, options),
        scan_layers=options.scan_layers,
        layer_scan=options.depth_scan,
        samples=options.grad_samples,
        seed=options.seed,
        method=options.gradients,
        context=request.context,
        # with inputs, every gradient sample draws its own inputs too
        draws=draws_for(request, "both" if request.program.encodings else "parameters"),
    )
    section = result.to_dict()
    data = request.data
    if data is not None:
        other = [n for n in _scan(circuit, options) if inputs_at(circuit, n) != data.features]
        if other:
            law = "normal" if options.inputs_normal else "uniform"
            note = (
                (note + " " if note else "")
                + f"At n = {', '.join(map(str, other))} the circuit has another number of "
                f"inputs than the data's {data.features} columns: those points drew their "
                f"inputs from the {law} law."
            )
    section["scan_note"] = note
    for point in section["points"] + section["layer_points"]:
        if point["flat_parameters"]:
            p = expand_at(circuit, point["qubits"], point["layers"])
            places = {pl["parameter"]: pl for pl in parameter_places(p)}
            point["flat_places"] = [place_text(places[k]) for k in point["flat_parameters"]]
    return section


def _work(circuit: Circuit, program: Program, options: AnalysisOptions, budget: int) -> Work:
    sizes = [(q, layers_at(options.scan_layers, q, circuit)) for q in _scan(circuit, options)]
    sizes += [(circuit.qubits, layers) for layers in options.depth_scan or []]
    updates, memory = 0.0, 0
    for q, layers in sizes:
        p = expand_at(circuit, q, layers, during=" (trainability scan)")
        # adjoint differentiation: about four passes; the shift rule: four per parameter
        passes = 4.0 if options.gradients == "adjoint" else 4.0 * p.parameters
        updates += options.grad_samples * passes * len(p.operations) * (1 << q)
        memory = max(memory, batch_bytes(q, budget, copies=3))
    return Work(updates, memory)


def _stages(circuit: Circuit, options: AnalysisOptions) -> int:
    return len(_scan(circuit, options)) + len(options.depth_scan or [])


def _cautions(t: Section, report: dict[str, Any]) -> list[str]:
    out = []
    if t["barren_plateau"] is None:
        out.append(f"Trainability: {t['reason']}.")
    for p in t["points"] + t["layer_points"]:
        if p["top_sample_share"] > 0.1:
            out.append(
                f"At {p['qubits']} qubits and {p['layers']} layers one of {p['samples']} "
                f"gradient samples carries {p['top_sample_share']:.0%} of the variance "
                "estimate: the squared gradients are heavy-tailed and the interval is "
                "likely too narrow. Raise --grad-samples."
            )
    for p in t["points"] + t["layer_points"]:
        flat = p.get("flat_places") or []
        if flat:
            shown = ", ".join(flat[:6]) + (f" and {len(flat) - 6} more" if len(flat) > 6 else "")
            out.append(
                f"At {p['qubits']} qubits and {count_text(p['layers'], 'layer')}, "
                f"{len(flat)} parameter(s) have no gradient (variance 0 up to rounding): "
                "they lie outside the cost's light cone, so their gates cannot change the "
                f"cost: {shown}."
            )
    if t.get("scan_note"):
        out.append(t["scan_note"])
    return out


def _cost_name(t: Section) -> str:
    return t["cost"] if isinstance(t["cost"], str) else "Pauli sum"


def _text(t: Section, report: dict[str, Any]) -> list[str]:
    lines = [
        f"Trainability (variance of dC/dtheta, {_cost_name(t)} cost, {t['samples']} samples "
        f"per point, {t['layers_rule']})",
        f"  {'qubits':>6} {'layers':>6} {'params':>6} {'variance':>10} "
        f"{'95% interval':>23} {'smallest':>10} {'largest':>10}",
    ]
    rows: list[tuple[str, dict[str, Any] | None]] = [("", p) for p in t["points"]]
    if t["layer_points"]:
        rows.append(("  depth scan", None))
        rows += [("", p) for p in t["layer_points"]]
    for label, p in rows:
        if p is None:
            lines.append(label)
            continue
        lines.append(
            f"  {p['qubits']:>6} {p['layers']:>6} {p['parameters']:>6} {p['variance']:>10.3e}"
            f" {p['interval'][0]:>10.3e} .. {p['interval'][1]:>9.3e} {p['smallest']:>10.3e}"
            f" {p['largest']:>10.3e}"
        )
    if t["fit"]:
        e, pw = t["fit"]["exponential"], t["fit"]["power"]
        lines.append(
            f"  fits: exponential decay {-e['slope']:.3g} ± {e['slope_stderr']:.2g} nats/qubit "
            f"(AIC {e['aic']:.3g}); power law exponent {pw['slope']:.3g} ± "
            f"{pw['slope_stderr']:.2g} (AIC {pw['aic']:.3g})"
        )
    lines.append(f"  verdict: {t['reason']}")
    return lines


def _table(t: Section, report: dict[str, Any]) -> list[TableRow]:
    if not t["points"]:
        return []
    last = t["points"][-1]
    rows = [
        TableRow(
            label=f"Gradient variance at n = {last['qubits']} ({_cost_name(t)} cost)",
            value=f"{last['variance']:.3e}",
            interval=interval_text(last["interval"], ".3e"),
            key="trainability.variance",
            interval_key="trainability.interval",
        )
    ]
    if t.get("decay_per_qubit") is not None:
        d, se = t["decay_per_qubit"], t["decay_per_qubit_stderr"]
        rows.append(
            TableRow(
                label="Variance decay per qubit (nats)",
                value=f"{d:.3f}",
                interval=interval_text([d - 1.96 * se, d + 1.96 * se], ".3f"),
                key="trainability.decay_per_qubit",
            )
        )
    return rows


def _verdict(t: Section) -> str:
    return sentence(t["reason"])


ROW = MetricRow(
    name="trainability",
    title="Trainability",
    about="variance of the cost gradient against qubit count, with exponential and "
    "power-law fits and a barren-plateau verdict (McClean et al., Nat. Commun. 2018)",
    options=("cost", "scan", "scan_layers", "depth_scan", "grad_samples", "gradients"),
    compute=_compute,
    work=_work,
    stages=_stages,
    cautions=_cautions,
    text=_text,
    table=_table,
    verdict=_verdict,
    plots=("trainability.png",),
    policy_paths=(
        "trainability.barren_plateau",
        "trainability.decay_per_qubit",
        "trainability.points[0].variance",
    ),
)

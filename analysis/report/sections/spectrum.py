"""Registry row: the Fourier spectrum of a model with inputs (Schuld, Sweke & Meyer 2021)."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from haarline.engine.statevector import batch_bytes
from haarline.metrics.spectrum import MAX_GRID, feature_frequencies, spectrum
from haarline.report.inputs import draws_for
from haarline.report.metric_row import MetricRow, Request, Section, TableRow, Work

if TYPE_CHECKING:
    from haarline.circuit.model import Circuit
    from haarline.circuit.program import Program
    from haarline.report.options import AnalysisOptions

__all__ = ["ROW"]


def _compute(request: Request) -> Section:
    program, options = request.program, request.options
    features = spectrum(
        program,
        options.cost,
        samples=options.spectrum_samples,
        seed=options.seed,
        draws=draws_for(request, "both"),
        context=request.context,
    )
    cost = options.cost if isinstance(options.cost, str) else "Pauli sum"
    return {"cost": cost, "features": [f.to_dict() for f in features]}


def _work(circuit: Circuit, program: Program, options: AnalysisOptions, budget: int) -> Work:
    updates = 0.0
    per_run = len(program.operations) * (1 << program.qubits)
    for feature in range(program.inputs):
        frequencies, _, _ = feature_frequencies(program, feature)
        top = frequencies[-1] if frequencies else 0.0
        grid = min(MAX_GRID, 2 * max(1, int(round(2 * top))) + 1)  # steps of 1/2 at worst
        updates += options.spectrum_samples * grid * per_run
    return Work(updates, batch_bytes(program.qubits, budget))


def _stages(circuit: Circuit, options: AnalysisOptions) -> int:
    return max(1, circuit.inputs)


def _cautions(section: Section, report: dict[str, Any]) -> list[str]:
    notes: dict[str, list[int]] = {}
    for f in section["features"]:
        if f["note"]:
            notes.setdefault(
                f["note"].split(": ", 1)[-1] if "enters" not in f["note"] else "product", []
            ).append(f["input"])
    out = []
    for note, features in notes.items():
        names = ", ".join(f"x_{k}" for k in features)
        if note == "product":
            out.append(
                f"Spectrum: {names} enter a product encoding (pi - x_a)(pi - x_b), which is "
                "not linear in the features, so they have no spectrum of eigenvalue differences."
            )
        else:
            out.append(f"Spectrum of {names}: {note}.")
    return out


def _listing(frequencies: list[float], limit: int = 12) -> str:
    shown = ", ".join(f"{f:g}" for f in frequencies[:limit])
    return shown + (f", … ({len(frequencies)} in all)" if len(frequencies) > limit else "")


def _text(section: Section, report: dict[str, Any]) -> list[str]:
    lines = [
        f"Fourier spectrum (frequencies each input can reach; mean |c_w|^2 of "
        f"<{section['cost']}> over random parameters)"
    ]
    for f in section["features"]:
        if f["frequencies"] is None:
            lines.append(f"  x_{f['input']}: no spectrum (see the cautions)")
            continue
        lines.append(
            f"  x_{f['input']}: {f['count']} frequencies up to {f['max_frequency']:g} from "
            f"{f['gates']} gate(s): {_listing(f['frequencies'])}"
        )
        if f["weights"] is not None:
            pairs = ", ".join(
                f"{w:g}: {c:.3g}" for w, c in zip(f["frequencies"], f["weights"], strict=True)
            )
            lines.append(f"       weights ({f['samples']} samples) {pairs[:300]}")
    return lines


def _table(section: Section, report: dict[str, Any]) -> list[TableRow]:
    rows = []
    for f in section["features"][:8]:
        if f["frequencies"] is None:
            continue
        rows.append(
            TableRow(
                label=f"Largest frequency of x_{f['input']}",
                value=f"{f['max_frequency']:g}",
                reference=f"{f['count']} frequencies",
                key=f"spectrum.features[{f['input']}].max_frequency",
            )
        )
    return rows


ROW = MetricRow(
    name="spectrum",
    title="Spectrum",
    about="the Fourier frequencies each input feature can reach and the mean weight of each "
    "coefficient over random parameters (Schuld, Sweke & Meyer, Phys. Rev. A 2021)",
    options=("spectrum_samples", "cost", "inputs_uniform", "inputs_normal"),
    compute=_compute,
    work=_work,
    stages=_stages,
    cautions=_cautions,
    text=_text,
    table=_table,
    plots=("spectrum.png",),
    policy_paths=("spectrum.features[input=0].max_frequency", "spectrum.features[0].count"),
)

"""Registry row: expressibility (Sim, Johnson & Aspuru-Guzik 2019)."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from haarline.engine.statevector import batch_bytes
from haarline.metrics.expressibility import BOOTSTRAP_RESAMPLES, expressibility
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
    result = expressibility(
        request.program,
        pairs=options.pairs,
        bins=options.bins,
        seed=options.seed,
        context=request.context,
        draws=draws_for(request),
    )
    return result.to_dict()


def _work(circuit: Circuit, program: Program, options: AnalysisOptions, budget: int) -> Work:
    updates = 2.0 * options.pairs * len(program.operations) * (1 << program.qubits)
    # the bootstrap holds resamples x bins counts, plus float copies while taking the KL
    bootstrap = BOOTSTRAP_RESAMPLES * options.bins * 8 * 4
    return Work(updates, max(batch_bytes(program.qubits, budget), bootstrap))


def _cautions(e: Section, report: dict[str, Any]) -> list[str]:
    out = []
    m, k = e["pairs"], e["bins"]
    if e["kl"] <= 2 * e["bias"] or e["interval"][0] <= e["bias"]:
        out.append(
            f"Expressibility KL {e['kl']:.4g} is within reach of the plug-in bias "
            f"{e['bias']:.4g} that an exactly Haar-random circuit shows at {m} pairs: "
            "at this sample size the circuit cannot be told apart from Haar. Raise "
            "--pairs to resolve smaller differences."
        )
    if m < 1000:
        out.append(
            f"Only {m} fidelity pairs: the KL interval is wide and its bias "
            f"({e['bias']:.3g}) is large; 5000 pairs is the usual minimum."
        )
    if m < 5 * k:
        out.append(
            f"{k} bins for {m} pairs leaves fewer than 5 pairs per bin on average; the KL "
            "mostly measures noise. Use fewer bins or more pairs."
        )
    return out


def _text(e: Section, report: dict[str, Any]) -> list[str]:
    lo, hi = e["second_moment_interval"]
    return [
        "Expressibility (KL divergence from Haar, nats; lower is more expressive)",
        f"  KL       {e['kl_corrected']:.4f}   95% interval {interval_text(e['interval'])}"
        "   (bias-corrected)",
        f"           plug-in KL {e['kl']:.4f} (the convention of Sim et al. 2019); an exactly "
        f"Haar circuit would show {e['bias']:.4f} here",
        f"  E[F^2]   {e['second_moment']:.4g}   95% interval {lo:.4g} .. {hi:.4g}   "
        f"Haar {e['haar_second_moment']:.4g}",
        f"  {e['pairs']} pairs, {e['bins']} bins",
    ]


def _table(e: Section, report: dict[str, Any]) -> list[TableRow]:
    return [
        TableRow(
            label="Expressibility (KL from Haar, nats, bias-corrected)",
            value=f"{e['kl_corrected']:.4f}",
            interval=interval_text(e["interval"]),
            reference="0",
            key="expressibility.kl_corrected",
            interval_key="expressibility.interval",
        ),
        TableRow(
            label="Plug-in KL (convention of Sim et al. 2019)",
            value=f"{e['kl']:.4f}",
            reference=f"{e['bias']:.4f} for a Haar circuit at {e['pairs']} pairs",
            key="expressibility.kl",
        ),
        TableRow(
            label="Fidelity second moment E[F²]",
            value=f"{e['second_moment']:.4g}",
            interval=interval_text(e["second_moment_interval"], ".4g"),
            reference=f"{e['haar_second_moment']:.4g}",
            key="expressibility.second_moment",
            interval_key="expressibility.second_moment_interval",
        ),
    ]


def _sweep(e: Section) -> dict[str, Any]:
    return {
        "kl": e["kl"],
        "kl_corrected": e["kl_corrected"],
        "kl_interval": list(e["interval"]),
        "bias": e["bias"],
        "second_moment": e["second_moment"],
    }


ROW = MetricRow(
    name="expressibility",
    title="Expressibility",
    about="KL divergence of the fidelity histogram from Haar (Sim, Johnson & "
    "Aspuru-Guzik, Adv. Quantum Technol. 2019); lower is more expressive",
    options=("pairs", "bins", "vary", "inputs_uniform", "inputs_normal"),
    compute=_compute,
    work=_work,
    stages=lambda circuit, options: 1,
    cautions=_cautions,
    text=_text,
    table=_table,
    plots=("fidelity.png",),
    policy_paths=(
        "expressibility.kl_corrected",
        "expressibility.kl",
        "expressibility.second_moment",
    ),
    sweep=_sweep,
)

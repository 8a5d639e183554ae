"""The work estimate: amplitude-gate updates and peak memory, before anything runs.

The unit of work is one *amplitude-gate update*: one gate applied to one amplitude of one
state. A metric that simulates ``S`` states of a ``G``-gate circuit on ``n`` qubits does
about ``S · G · 2^n`` (DESIGN section 6: samples × gates × 2^n); each registry row
(:mod:`haarline.report.sections`) counts its own. The estimate is an upper-bound-style
count, not a time; the service's admission control refuses work above its limits on it.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from haarline.circuit.model import Circuit
from haarline.circuit.program import expand
from haarline.report.inputs import check_inputs
from haarline.report.options import AnalysisOptions
from haarline.report.registry import requested
from haarline.report.sections.lie import PRODUCT_COST

__all__ = ["PRODUCT_COST", "UPDATES_PER_SECOND", "Estimate", "estimate"]

UPDATES_PER_SECOND = 1.0e9
"""Amplitude-gate updates per second of one worker on states of 8 qubits or more.

Measured on this project's 2-core machine (2026-12-05, ``ry-cz-ring`` expressibility):
9e8 to 1.2e9 per second from 8 to 20 qubits, and about 2e8 at 4 qubits, where the work
per sample is too small to amortise the per-chunk overhead; :meth:`Estimate.seconds`
scales the rate by ``2^((n - 8) / 2)`` below 8 qubits. The Lie estimate is an upper bound
(its closures often finish several times sooner). A rough figure, good to a factor of a
few."""


@dataclass(frozen=True)
class Estimate:
    """Estimated work (amplitude-gate updates) and peak memory (bytes) of an analysis."""

    work: float
    memory: int
    parts: dict[str, float] = field(default_factory=dict)
    """Work by metric (and ``layers_sweep``), in the same unit; they sum to ``work``."""
    qubits: int = 8
    """The circuit's own qubit count (the throughput depends on it)."""

    def largest(self) -> str | None:
        """The metric that accounts for most of the work, if any."""
        return max(self.parts, key=self.parts.__getitem__) if self.parts else None

    def seconds(self, workers: int = 1) -> float:
        """Rough wall time on a machine like this project's (see :data:`UPDATES_PER_SECOND`)."""
        rate = UPDATES_PER_SECOND * min(1.0, float(2.0 ** ((self.qubits - 8) / 2)))
        return float(0.05 + self.work / (rate * max(1, workers)))


def estimate(circuit: Circuit, options: AnalysisOptions, *, memory_budget: int) -> Estimate:
    """Estimate the work and peak working memory of ``analyze(circuit, options)``.

    Raises
    ------
    CircuitError
        If the description cannot be expanded at a size the options ask for.
    OptionError
        If the options ask for something the circuit cannot do (a kernel without inputs).

    Examples
    --------
    >>> from haarline.circuit.model import parse_circuit
    >>> c = parse_circuit({"qubits": 2, "layer": [{"gate": "ry"}]})
    >>> estimate(c, AnalysisOptions(pairs=10, samples=10), memory_budget=1 << 30).work
    320.0
    """
    program = expand(circuit)
    check_inputs(program, options, None)
    parts: dict[str, float] = {}
    memory = 0
    rows = requested(options)
    for row in rows:
        work = row.work(circuit, program, options, memory_budget)
        parts[row.name] = work.updates
        memory = max(memory, work.memory)
    if options.layers_sweep:
        parts["layers_sweep"] = 0.0
        for layers in options.layers_sweep:
            swept = expand(circuit, layers=layers)
            for row in rows:
                if row.sweep is not None:
                    parts["layers_sweep"] += row.work(
                        circuit, swept, options, memory_budget
                    ).updates
    return Estimate(
        work=sum(parts.values()), memory=int(memory), parts=parts, qubits=program.qubits
    )

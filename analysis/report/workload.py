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

__all__ = ["PRODUCT_COST", "Estimate", "estimate"]


@dataclass(frozen=True)
class Estimate:
    """Estimated work (amplitude-gate updates) and peak memory (bytes) of an analysis."""

    work: float
    memory: int
    parts: dict[str, float] = field(default_factory=dict)
    """Work by metric (and ``layers_sweep``), in the same unit; they sum to ``work``."""

    def largest(self) -> str | None:
        """The metric that accounts for most of the work, if any."""
        return max(self.parts, key=self.parts.__getitem__) if self.parts else None


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
    return Estimate(work=sum(parts.values()), memory=int(memory), parts=parts)

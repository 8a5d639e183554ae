"""Estimated cost and memory of an analysis, for admission control before any work.

The unit of cost is one *amplitude-gate update*: one gate applied to one amplitude of one
state. A metric that simulates ``S`` states of a ``G``-gate circuit on ``n`` qubits costs
about ``S · G · 2^n`` (DESIGN section 6: samples × gates × 2^n). Adjoint gradients cost
about four forward passes; the capacity pass carries one derivative state per
parameterized gate. The estimate is an upper-bound-style count, not a time.
"""

from __future__ import annotations

from dataclasses import dataclass

from .circuit import Circuit
from .engine import CHUNK_AMPLITUDES, WORK_FACTOR, rows_per_chunk
from .expressibility import BOOTSTRAP_RESAMPLES
from .options import AnalysisOptions
from .program import expand
from .trainability import default_scan, layers_at

__all__ = ["Estimate", "estimate"]

_BYTES = 16  # complex128


@dataclass(frozen=True)
class Estimate:
    """Estimated work (amplitude-gate updates) and peak memory (bytes) of an analysis."""

    cost: float
    memory: int


def estimate(circuit: Circuit, options: AnalysisOptions, *, memory_budget: int) -> Estimate:
    """Estimate the cost and peak working memory of ``analyze(circuit, options)``.

    Raises
    ------
    CircuitError
        If the description cannot be expanded at a size the options ask for.

    Examples
    --------
    >>> from analysis.circuit import parse_circuit
    >>> c = parse_circuit({"qubits": 2, "layer": [{"gate": "ry"}]})
    >>> estimate(c, AnalysisOptions(pairs=10, samples=10), memory_budget=1 << 30).cost
    320.0
    """
    program = expand(circuit)
    n, g = program.qubits, len(program.operations)
    dim = 1 << n
    cost = 0.0
    memory = 0

    def batch_memory(qubits: int, copies: int = 1) -> int:
        rows = rows_per_chunk(qubits, memory_budget)
        return (
            WORK_FACTOR
            * copies
            * min(rows, max(1, CHUNK_AMPLITUDES >> qubits))
            * (1 << qubits)
            * _BYTES
        )

    metrics = set(options.metrics)
    if "expressibility" in metrics:
        cost += 2.0 * options.pairs * g * dim
        # the bootstrap holds resamples x bins counts, plus float copies while taking the KL
        bootstrap = BOOTSTRAP_RESAMPLES * options.bins * 8 * 4
        memory = max(memory, batch_memory(n), bootstrap)
    if "entanglement" in metrics:
        cost += options.samples * (g + n) * dim
        memory = max(memory, batch_memory(n))
    if "trainability" in metrics:
        scan = options.scan or default_scan(circuit, options.cost)
        sizes = [(q, layers_at(options.scan_layers, q, circuit)) for q in scan]
        sizes += [(circuit.qubits, layers) for layers in options.depth_scan or []]
        per_gate = 4.0 if options.gradients == "adjoint" else None
        for q, layers in sizes:
            p = expand(circuit, qubits=q, layers=layers)
            gates = len(p.operations)
            passes = per_gate if per_gate is not None else 4.0 * p.parameters
            cost += options.grad_samples * passes * gates * (1 << q)
            memory = max(memory, batch_memory(q, copies=3))
    if "capacity" in metrics:
        occurrences = sum(1 for op in program.operations if op.param is not None)
        cost += options.capacity_points * (occurrences + 1) * g * dim
        memory = max(memory, (occurrences + 1) * dim * _BYTES * 2)
    if options.layers_sweep:
        for layers in options.layers_sweep:
            gl = len(expand(circuit, layers=layers).operations)
            if "expressibility" in metrics:
                cost += 2.0 * options.pairs * gl * dim
            if "entanglement" in metrics:
                cost += options.samples * (gl + n) * dim
    return Estimate(cost=cost, memory=int(memory))

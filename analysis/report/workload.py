"""Estimated cost and memory of an analysis, for admission control before any work.

The unit of cost is one *amplitude-gate update*: one gate applied to one amplitude of one
state. A metric that simulates ``S`` states of a ``G``-gate circuit on ``n`` qubits costs
about ``S · G · 2^n`` (DESIGN section 6: samples × gates × 2^n). Adjoint gradients cost
about four forward passes; the capacity pass carries one derivative state per
parameterized gate. The Lie-algebra diagnosis is counted in Pauli products of its
closure, converted at :data:`PRODUCT_COST` updates per product, plus the sampled loss
variance of its deep versions. The estimate is an upper-bound-style count, not a time.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from haarline.circuit.model import Circuit
from haarline.circuit.program import Program, expand, expand_at
from haarline.engine.statevector import CHUNK_AMPLITUDES, WORK_FACTOR, rows_per_chunk
from haarline.lie import algebra
from haarline.lie import diagnosis as lie
from haarline.lie.pauli import is_clifford
from haarline.metrics.expressibility import BOOTSTRAP_RESAMPLES
from haarline.metrics.sampled_loss import LIE_SAMPLE_QUBITS, deep_layers
from haarline.metrics.trainability import default_scan, layers_at
from haarline.report.options import AnalysisOptions

__all__ = ["PRODUCT_COST", "Estimate", "estimate"]

_BYTES = 16  # complex128

PRODUCT_COST = 8.0
"""Amplitude-gate updates that take as long as one Pauli product of the Lie closure.

Measured on the 2-core reference machine (2026-12-01): the Pauli-sum closure of
``ref:sim2019-03`` at n = 2..7 does about 1.5e8 products in 19 s, while the engine
applies about 5e7 amplitude-gate updates per second on small circuits.
"""


@dataclass(frozen=True)
class Estimate:
    """Estimated work (amplitude-gate updates) and peak memory (bytes) of an analysis."""

    cost: float
    memory: int
    parts: dict[str, float] = field(default_factory=dict)
    """Cost by metric (and ``layers_sweep``), in the same unit; they sum to ``cost``."""

    def largest(self) -> str | None:
        """The metric that accounts for most of the cost, if any."""
        return max(self.parts, key=self.parts.__getitem__) if self.parts else None


def estimate(circuit: Circuit, options: AnalysisOptions, *, memory_budget: int) -> Estimate:
    """Estimate the cost and peak working memory of ``analyze(circuit, options)``.

    Raises
    ------
    CircuitError
        If the description cannot be expanded at a size the options ask for.

    Examples
    --------
    >>> from haarline.circuit.model import parse_circuit
    >>> c = parse_circuit({"qubits": 2, "layer": [{"gate": "ry"}]})
    >>> estimate(c, AnalysisOptions(pairs=10, samples=10), memory_budget=1 << 30).cost
    320.0
    """
    program = expand(circuit)
    n, g = program.qubits, len(program.operations)
    dim = 1 << n
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
    parts: dict[str, float] = {}
    if "expressibility" in metrics:
        parts["expressibility"] = 2.0 * options.pairs * g * dim
        # the bootstrap holds resamples x bins counts, plus float copies while taking the KL
        bootstrap = BOOTSTRAP_RESAMPLES * options.bins * 8 * 4
        memory = max(memory, batch_memory(n), bootstrap)
    if "entanglement" in metrics:
        parts["entanglement"] = options.samples * (g + n) * dim
        memory = max(memory, batch_memory(n))
    if "trainability" in metrics:
        scan = options.scan or default_scan(circuit, options.cost)
        sizes = [(q, layers_at(options.scan_layers, q, circuit)) for q in scan]
        sizes += [(circuit.qubits, layers) for layers in options.depth_scan or []]
        per_gate = 4.0 if options.gradients == "adjoint" else None
        parts["trainability"] = 0.0
        for q, layers in sizes:
            p = expand(circuit, qubits=q, layers=layers)
            gates = len(p.operations)
            passes = per_gate if per_gate is not None else 4.0 * p.parameters
            parts["trainability"] += options.grad_samples * passes * gates * (1 << q)
            memory = max(memory, batch_memory(q, copies=3))
    if "capacity" in metrics:
        occurrences = sum(1 for op in program.operations if op.param is not None)
        parts["capacity"] = options.capacity_points * (occurrences + 1) * g * dim
        memory = max(memory, (occurrences + 1) * dim * _BYTES * 2)
    if "lie" in metrics:
        parts["lie"], lie_memory = _lie(circuit, options, batch_memory)
        memory = max(memory, lie_memory)
    if options.layers_sweep:
        parts["layers_sweep"] = 0.0
        for layers in options.layers_sweep:
            gl = len(expand(circuit, layers=layers).operations)
            if "expressibility" in metrics:
                parts["layers_sweep"] += 2.0 * options.pairs * gl * dim
            if "entanglement" in metrics:
                parts["layers_sweep"] += options.samples * (gl + n) * dim
    return Estimate(cost=sum(parts.values()), memory=int(memory), parts=parts)


def _as_sums(program: Program) -> bool:
    """Whether the closure works on Pauli sums (the slow case), read off the gate names.

    Controlled rotations have two-string generators, non-Clifford fixed gates conjugate
    later generators into sums, and a shared parameter's generator is a sum.
    """
    used: set[int] = set()
    for op in program.operations:
        if op.param is not None:
            if op.gate.startswith("c") or op.param in used:
                return True
            used.add(op.param)
        elif not is_clifford(op.gate, op.angle):
            return True
    return False


def _lie(circuit: Circuit, options: AnalysisOptions, batch_memory: Any) -> tuple[float, int]:
    """Cost and memory of the Lie diagnosis at every qubit count it may visit.

    The closure of ``D`` elements from ``K`` generators takes ``D · K`` products of
    Pauli strings, or for Pauli sums up to ``D² K`` string products (the Gram-Schmidt
    step), never more than the closure's own stop at ``WORK_FACTOR × budget``. ``D`` is
    bounded by ``min(cap, 4^n - 1)``. Points with n <= LIE_SAMPLE_QUBITS add the sampled
    loss variance of a deep version (and its half-depth check) at that bound.
    """
    counts = lie.lie_scan(circuit, options.scan, widest=True)
    cost, memory = 0.0, 0
    stop = algebra.WORK_FACTOR * algebra.DEFAULT_BUDGET
    for n in counts:
        layers = layers_at(options.scan_layers, n, circuit)
        program = expand_at(circuit, n, layers)
        k = max(1, program.parameters)
        bound = min(algebra.DEFAULT_CAP, 4**n - 1)
        if n > lie.DEFAULT_LIE_SCAN[-1] and options.scan is None:
            bound = min(bound, lie.EXTEND_BELOW)
        if _as_sums(program):
            products = min(float(stop), float(bound) ** 2 * k)
            memory = max(memory, algebra.DEFAULT_BUDGET * 8 * 4)
        else:
            products = float(bound) * k * n
            memory = max(memory, bound * (k + n) * 8)
        cost += PRODUCT_COST * products
        if n <= LIE_SAMPLE_QUBITS:
            deep = deep_layers(circuit, n, bound)
            gates = len(expand_at(circuit, n, deep).operations)
            cost += 1.5 * max(options.grad_samples, 500) * gates * (1 << n)
            memory = max(memory, batch_memory(n))
    return cost, int(memory)

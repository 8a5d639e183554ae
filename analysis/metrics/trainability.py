"""Trainability: how the variance of cost gradients scales with qubit count and depth.

For each point of a scan (a qubit count, or a layer count at fixed qubits) the
description is re-instantiated and the gradient variance measured
(:mod:`haarline.metrics.gradient_variance`); the points over qubit counts are fitted and judged
for a barren plateau (:mod:`haarline.metrics.plateau`). This module owns the scan: which qubit
and layer counts are visited, and the report's ``trainability`` object.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from haarline.circuit.model import Circuit
from haarline.circuit.program import expand_at
from haarline.engine.context import Context
from haarline.engine.draws import Draws
from haarline.errors import OptionError, Problem
from haarline.metrics.gradient_variance import VariancePoint, gradient_samples, summarize_gradients
from haarline.metrics.plateau import Fit, fit_decay, verdict

__all__ = [
    "DEFAULT_SCAN",
    "Trainability",
    "default_scan",
    "layers_at",
    "trainability",
    "uses_only_patterns",
]


DEFAULT_SCAN = (2, 4, 6, 8)
"""Qubit counts of the trainability scan when none are given (pattern-only circuits)."""


@dataclass(frozen=True, kw_only=True)
class Trainability:
    """The report's ``trainability`` object."""

    cost: Any
    samples: int
    layers_rule: str
    points: list[VariancePoint]
    fit: dict[str, Fit] | None
    barren_plateau: bool | None
    reason: str
    layer_points: list[VariancePoint] = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        """Return the report object (plain JSON types)."""
        return {
            "cost": self.cost if isinstance(self.cost, str) else [list(t) for t in self.cost],
            "samples": self.samples,
            "layers_rule": self.layers_rule,
            "points": [p.to_dict() for p in self.points],
            "fit": {k: f.to_dict() for k, f in self.fit.items()} if self.fit else None,
            "decay_per_qubit": -self.fit["exponential"].slope if self.fit else None,
            "decay_per_qubit_stderr": self.fit["exponential"].slope_stderr if self.fit else None,
            "barren_plateau": self.barren_plateau,
            "reason": self.reason,
            "layer_points": [p.to_dict() for p in self.layer_points],
        }


def uses_only_patterns(circuit: Circuit) -> bool:
    """Whether every step places its gate by pattern, so the circuit exists at any n."""
    steps = [*circuit.prepare, *circuit.layer, *circuit.finish]
    return all(isinstance(step.on, str) for step in steps)


def default_scan(circuit: Circuit, cost: Any) -> list[int]:
    """Qubit counts scanned when none are given.

    ``DEFAULT_SCAN`` (2, 4, 6, 8) for a circuit written with placement patterns and a named
    cost; the circuit's own count otherwise (explicit qubit lists do not exist at other
    counts, and a Pauli-sum cost is fixed to its length).
    """
    if isinstance(cost, str) and uses_only_patterns(circuit):
        return list(DEFAULT_SCAN)
    return [circuit.qubits]


def layers_at(rule: int | str | None, n: int, circuit: Circuit) -> int:
    """Layers of a scan point at ``n`` qubits: as described (``None``), ``n``, or a count."""
    if rule is None:
        return circuit.layers
    if rule == "n":
        return n
    return int(rule)


def trainability(
    circuit: Circuit,
    *,
    cost: Any = "global",
    scan: list[int] | None = None,
    scan_layers: int | str | None = None,
    layer_scan: list[int] | None = None,
    samples: int = 200,
    seed: int = 1,
    method: str = "adjoint",
    context: Context | None = None,
    draws: Draws | None = None,
) -> Trainability:
    """Gradient-variance scan over qubit counts (and, optionally, over layer counts).

    Parameters
    ----------
    circuit : Circuit
        The description; its patterns are re-resolved at every qubit count.
    cost : str or list
        ``"global"``, ``"local"``, ``"zz"`` or a Pauli sum (fixed qubit count; no scan).
    scan : list of int, optional
        Qubit counts; default the description's own count only.
    scan_layers : int or "n", optional
        Layers at each point: as described (default), a fixed count, or ``"n"``.
    layer_scan : list of int, optional
        Layer counts for a variance-against-depth scan at the description's qubit count.
    samples : int
        Parameter vectors per point (default 200).
    seed : int
        Seed.
    method : str
        ``"adjoint"`` (default) or ``"shift"``.
    context : Context, optional
        Memory budget, precision, workers (sharing each point's samples; same numbers)
        and progress (one stage per point).

    Returns
    -------
    Trainability
    """
    qubit_counts = sorted(set(scan or [circuit.qubits]))
    if not isinstance(cost, str) and qubit_counts != [circuit.qubits]:
        raise OptionError(
            [
                Problem(
                    "scan",
                    "a Pauli-sum cost is fixed to its qubit count; "
                    "scan qubit counts only with a named cost (global, local, "
                    "zz)",
                )
            ]
        )
    rule = (
        "as described"
        if scan_layers is None
        else ("layers = n" if scan_layers == "n" else f"layers = {scan_layers}")
    )
    work = [(n, layers_at(scan_layers, n, circuit)) for n in qubit_counts]
    depth_work = [(circuit.qubits, L) for L in sorted(set(layer_scan or []))]
    points: list[VariancePoint] = []
    layer_points: list[VariancePoint] = []
    for target, todo in ((points, work), (layer_points, depth_work)):
        for n, layers in todo:
            program = expand_at(circuit, n, layers, during=" (trainability scan)")
            c, g = gradient_samples(
                program,
                cost,
                samples=samples,
                seed=seed,
                stage=f"gradients n={n} L={layers}",
                method=method,
                context=context,
                draws=draws,
            )
            target.append(summarize_gradients(n, layers, c, g))
    fits = fit_decay(points)
    bp, reason = verdict(points, fits)
    return Trainability(
        cost=cost,
        samples=samples,
        layers_rule=rule,
        points=points,
        fit=fits,
        barren_plateau=bp,
        reason=reason,
        layer_points=layer_points,
    )

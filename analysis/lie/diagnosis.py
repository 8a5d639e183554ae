"""Lie-algebraic diagnosis: the dynamical Lie algebra of an ansatz at each qubit count.

For each qubit count of a scan the description is expanded, its generators are taken in
the frame where fixed gates sit at the end (:mod:`haarline.lie.generators`), their
dynamical Lie algebra is closed with its centre and simple ideals
(:mod:`haarline.lie.algebra`, :mod:`haarline.lie.ideals`), and the loss variance of a deep
circuit is predicted where the theory applies (:mod:`haarline.lie.variance`; Ragone et
al., Nat. Commun. 15, 2024, arXiv:2309.09342). An algebra that grows like ``4**n`` (all
of su(2**n)) means a barren plateau for deep circuits; one that grows polynomially, with
the state or observable inside it, means variances that fall only polynomially (Fontana
et al., Nat. Commun. 15, 2024, arXiv:2309.07902; Larocca et al., Quantum 6, 824, 2022).

Unless told otherwise, each point uses the described layer count, raised until one more
layer adds no new generator direction: fixed gates inside a layer conjugate the
generators of later layers, so a deep circuit can have more generators than a shallow
one. The growth of ``dim g`` with ``n`` is fitted as a polynomial (``ln D`` against
``ln n``) and as an exponential (``ln D`` against ``n``); the smaller residual wins.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from haarline.circuit.model import MAX_QUBITS, Circuit
from haarline.circuit.program import expand_at
from haarline.engine.context import Context
from haarline.lie.algebra import (
    DEFAULT_BUDGET,
    DEFAULT_CAP,
    Algebra,
    generate_algebra,
    independent_count,
)
from haarline.lie.generators import CircuitGenerators, circuit_generators
from haarline.lie.ideals import SPLIT_LIMIT
from haarline.lie.variance import VariancePrediction, observable_expansion, predict_variance
from haarline.metrics.trainability import uses_only_patterns

__all__ = [
    "DEFAULT_LIE_SCAN",
    "EXTEND_BELOW",
    "EXTEND_TO",
    "SATURATION_LAYERS",
    "AlgebraPoint",
    "LieDiagnosis",
    "growth_fit",
    "lie_diagnosis",
    "lie_scan",
]

DEFAULT_LIE_SCAN = (2, 3, 4, 5, 6, 7)
"""Qubit counts scanned by default (pattern-only circuits)."""
EXTEND_BELOW = 256
"""After the default scan, add qubit counts while the algebra stays at most this large."""
EXTEND_TO = 10
"""Largest qubit count the default scan extends to."""
SATURATION_LAYERS = 32
"""Most layers added beyond the described count while the generators keep growing."""


@dataclass(frozen=True, eq=False, kw_only=True)
class AlgebraPoint:
    """The algebra of the circuit at one qubit count, and its prediction."""

    qubits: int
    layers: int
    layers_note: str
    generators: CircuitGenerators
    algebra: Algebra
    prediction: VariancePrediction | None
    prediction_note: str

    def to_dict(self) -> dict[str, Any]:
        """Return the report object (plain JSON types)."""
        g = self.generators
        return {
            "qubits": self.qubits,
            "layers": self.layers,
            "layers_note": self.layers_note,
            "parameters": len(g.generators),
            "sharing": g.sharing,
            "shared_parameters": list(g.shared),
            "interleaved_parameters": list(g.interleaved),
            "moved_gates": len(g.moved),
            "clifford_moves": g.clifford_moves,
            "input_state": {
                "prefix_gates": g.prefix_gates,
                "stabilizers": None if g.stabilizers is None else list(g.stabilizers),
            },
            **self.algebra.to_dict(),
            "prediction": None if self.prediction is None else self.prediction.to_dict(),
            "prediction_note": self.prediction_note,
        }


def growth_fit(qubits: list[int], dimensions: list[int]) -> dict[str, Any] | None:
    """Fit ``ln D`` against ``ln n`` (polynomial) and against ``n`` (exponential).

    Ordinary least squares on exact dimensions; ``better`` names the fit with the smaller
    residual sum of squares. ``None`` with fewer than 3 points of positive dimension.

    Examples
    --------
    >>> f = growth_fit([2, 3, 4, 5], [4**n - 1 for n in (2, 3, 4, 5)])
    >>> f["better"], round(f["exponential"]["base"], 2)
    ('exponential', 4.08)
    """
    pts = [(n, d) for n, d in zip(qubits, dimensions, strict=True) if d > 0]
    if len({n for n, _ in pts}) < 3:
        return None
    n = np.array([p[0] for p in pts], dtype=float)
    y = np.log([float(p[1]) for p in pts])

    def line(x: np.ndarray) -> tuple[float, float, float]:
        a = np.stack([np.ones_like(x), x], axis=1)
        beta, *_ = np.linalg.lstsq(a, y, rcond=None)
        rss = float(np.sum((y - a @ beta) ** 2))
        return float(beta[0]), float(beta[1]), rss

    pa, pk, pr = line(np.log(n))
    ea, ek, er = line(n)
    better = "polynomial" if pr < er else "exponential" if er < pr else None
    return {
        "points": len(pts),
        "polynomial": {"degree": pk, "intercept": pa, "rss": pr},
        "exponential": {"base": math.exp(ek), "intercept": ea, "rss": er},
        "better": better,
    }


@dataclass(frozen=True, eq=False, kw_only=True)
class LieDiagnosis:
    """The report's ``lie`` object: the algebra at each qubit count of a scan."""

    cost: Any
    cap: int
    layers_rule: str
    points: tuple[AlgebraPoint, ...]
    growth: dict[str, Any] | None
    summary: str

    def to_dict(self) -> dict[str, Any]:
        """Return the report object (plain JSON types)."""
        return {
            "cost": self.cost if isinstance(self.cost, str) else [list(t) for t in self.cost],
            "cap": self.cap,
            "layers_rule": self.layers_rule,
            "points": [p.to_dict() for p in self.points],
            "growth": self.growth,
            "summary": self.summary,
        }


def _layers(circuit: Circuit, n: int, rule: int | str | None) -> tuple[int, str, CircuitGenerators]:
    """Layer count, a note on why, and the generators there."""
    if rule is not None:
        layers = n if rule == "n" else int(rule)
        return layers, "", circuit_generators(expand_at(circuit, n, layers))
    layers = circuit.layers
    here = circuit_generators(expand_at(circuit, n, layers))
    for _ in range(SATURATION_LAYERS):
        after = circuit_generators(expand_at(circuit, n, layers + 1))
        rank = independent_count(list(here.generators))
        if independent_count([*here.generators, *after.generators]) == rank:
            note = "" if layers == circuit.layers else f"generators stop growing at {layers}"
            return layers, note, here
        layers, here = layers + 1, after
    return layers, f"generators still growing at {layers} layers (search stopped)", here


def lie_scan(circuit: Circuit, scan: list[int] | None = None, *, widest: bool = False) -> list[int]:
    """Qubit counts the diagnosis starts from: ``scan``, or the default for the circuit.

    With ``widest``, the default scan also holds every count it may be extended to (while
    the algebras stay small, up to :data:`EXTEND_TO`).
    """
    if scan is not None:
        return sorted(set(scan))
    if not uses_only_patterns(circuit):
        return [circuit.qubits]
    top = min(EXTEND_TO, MAX_QUBITS) if widest else DEFAULT_LIE_SCAN[-1]
    return [*DEFAULT_LIE_SCAN, *range(DEFAULT_LIE_SCAN[-1] + 1, top + 1)]


def lie_diagnosis(
    circuit: Circuit,
    *,
    cost: Any = "global",
    scan: list[int] | None = None,
    layers: int | str | None = None,
    cap: int = DEFAULT_CAP,
    budget: int = DEFAULT_BUDGET,
    split_limit: int = SPLIT_LIMIT,
    context: Context | None = None,
) -> LieDiagnosis:
    """Dynamical Lie algebra of the circuit at each qubit count, and its predictions.

    Parameters
    ----------
    circuit : Circuit
        The description; patterns are re-resolved at every qubit count.
    cost : str or list
        ``"global"``, ``"local"``, ``"zz"`` or a Pauli sum (predicted only at its own
        qubit count).
    scan : list of int, optional
        Qubit counts. Default: 2..7 for pattern-only circuits, extended one qubit at a
        time while the closure is complete and at most :data:`EXTEND_BELOW` large (up to
        :data:`EXTEND_TO`); the description's own count otherwise.
    layers : int or "n", optional
        Layers at each point. Default: the described count, raised until one more layer
        adds no new generator direction (so that the algebra is that of a deep circuit).
    cap, budget, split_limit : int
        Closure limits, see :func:`haarline.lie.algebra.generate_algebra`.
    context : Context, optional
        Only its progress callback is used: ``("lie", done, total)`` after each qubit
        count (the closure is not sampled).

    Returns
    -------
    LieDiagnosis
    """
    explicit = scan is not None
    counts = lie_scan(circuit, scan)
    rule = "saturate" if layers is None else ("layers = n" if layers == "n" else f"{layers}")
    points: list[AlgebraPoint] = []
    i = 0
    while i < len(counts):
        n = counts[i]
        i += 1
        depth, note, gens = _layers(circuit, n, layers)
        algebra = generate_algebra(
            list(gens.generators), cap=cap, budget=budget, split_limit=split_limit
        )
        prediction, why = None, ""
        if isinstance(cost, str) or len(cost[0][1]) == n:
            prediction = predict_variance(gens, algebra, observable_expansion(cost, n))
        else:
            why = f"the Pauli-sum cost acts on {len(cost[0][1])} qubits, not {n}"
        points.append(
            AlgebraPoint(
                qubits=n,
                layers=depth,
                layers_note=note,
                generators=gens,
                algebra=algebra,
                prediction=prediction,
                prediction_note=why,
            )
        )
        if context is not None:
            context.report("lie", i, len(counts))
        grow = algebra.complete and algebra.dimension <= EXTEND_BELOW
        if not explicit and i == len(counts) and len(counts) > 1 and grow:
            if n < min(EXTEND_TO, MAX_QUBITS):
                counts.append(n + 1)
    done = [p for p in points if p.algebra.complete]
    growth = growth_fit([p.qubits for p in done], [p.algebra.dimension for p in done])
    return LieDiagnosis(
        cost=cost,
        cap=cap,
        layers_rule=rule,
        points=tuple(points),
        growth=growth,
        summary=_summary(points, growth),
    )


def _summary(points: list[AlgebraPoint], growth: dict[str, Any] | None) -> str:
    span = f"n = {points[0].qubits}..{points[-1].qubits}"
    dims = ", ".join(
        f"{p.algebra.dimension}" if p.algebra.complete else f"≥{p.algebra.dimension}"
        for p in points
    )
    out = f"DLA dimension {dims} over {span}"
    if all(p.algebra.full for p in points):
        out += "; all of su(2^n) at every n: a deep version has a barren plateau"
    elif growth is not None and growth["better"] == "polynomial":
        out += f"; grows polynomially, about n^{growth['polynomial']['degree']:.2g}"
    elif growth is not None and growth["better"] == "exponential":
        out += f"; grows exponentially, about {growth['exponential']['base']:.3g}^n"
    return out

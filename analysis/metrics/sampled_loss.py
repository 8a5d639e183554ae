"""Sampled loss variance: the variance of the cost over random parameters, and of a deep version.

:func:`loss_variance` estimates ``Var_θ[C(θ)]`` at the program's own depth, with an interval;
:func:`deep_loss_variance` does so for a deep version of the description
(:func:`deep_layers` layers) with a check at half that depth, so that the prediction of
:mod:`haarline.lie.variance` can be compared with what the circuit does.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, replace
from typing import Any

import numpy as np
from haarline.circuit.model import Circuit
from haarline.circuit.program import Program, expand_at
from haarline.engine.batching import block_map, blocks_for, worker_count
from haarline.engine.context import Context, Progress
from haarline.engine.draws import Draws
from haarline.engine.sampling import Stream
from haarline.engine.statevector import compile_program, rows_per_chunk
from haarline.metrics.gradients import cost_values
from haarline.metrics.intervals import log_symmetric_interval, variance_standard_error
from haarline.metrics.observables import make_observable
from numpy.typing import NDArray

__all__ = [
    "LIE_SAMPLE_QUBITS",
    "LOSS_STREAM",
    "LossVariance",
    "deep_layers",
    "deep_loss_variance",
    "loss_variance",
]

LIE_SAMPLE_QUBITS = 4
"""Largest qubit count at which the deep-circuit loss variance is sampled beside the
Lie-algebraic prediction (the deep circuit needs about 8 × dim g parameters)."""

LOSS_STREAM = int(Stream.LOSS)
"""Random stream of the loss samples (:attr:`haarline.engine.sampling.Stream.LOSS`)."""


def deep_layers(
    circuit: Circuit, qubits: int, dimension: int, *, factor: float = 8.0, limit: int = 2000
) -> int:
    """Layers for a deep version: ``factor × dim g`` parameters, at least as described.

    A circuit needs at least ``dim g`` parameters to reach every element of
    ``exp(g)``; spreading evenly over the group takes more (with ``factor = 2`` the
    loss variance of the open Ising chain at n = 4 is still 14% above its deep value; with
    8 it agrees within 2%, see ``tests/test_lie.py``). Capped at ``limit``.

    Examples
    --------
    >>> from haarline.circuit.model import parse_circuit
    >>> c = parse_circuit({"qubits": 3, "layer": [{"gate": "rx"}, {"gate": "rzz", "on": "chain"}]})
    >>> deep_layers(c, 3, 15)  # 5 parameters per layer, 8 x 15 = 120 parameters
    24
    """
    one = expand_at(circuit, qubits, 1).parameters
    per = expand_at(circuit, qubits, 2).parameters - one
    if per <= 0:
        return circuit.layers
    want = math.ceil(max(0.0, factor * dimension - (one - per)) / per)
    return int(min(limit, max(circuit.layers, want, 1)))


@dataclass(frozen=True, kw_only=True)
class LossVariance:
    """Sampled variance of the cost ``C(θ)`` over uniform random parameters.

    ``half_depth`` holds the same estimate at half the layers (``layers``, ``variance``,
    ``interval``) when a depth check was made; ``settled`` says whether the two intervals
    overlap, i.e. whether more depth changed nothing the samples can resolve.
    """

    qubits: int
    layers: int
    parameters: int
    samples: int
    variance: float
    interval: tuple[float, float]
    standard_error: float
    confidence: float
    mean_cost: float
    half_depth: dict[str, Any] | None = None
    settled: bool | None = None

    def to_dict(self) -> dict[str, Any]:
        """Return the report object (plain JSON types)."""
        out = asdict(self)
        out["interval"] = list(self.interval)
        return out


def _loss_block(
    program: Program,
    cost: Any,
    start: int,
    count: int,
    seed: int,
    memory_budget: int,
    dtype: type,
    draws: Draws | None = None,
    progress: Progress | None = None,
) -> NDArray[np.float64]:
    """Costs of samples ``start .. start+count-1`` (also run in worker processes)."""
    draws = draws or Draws()
    observable = make_observable(cost, program.qubits)
    plan = compile_program(program)
    stream = (LOSS_STREAM, program.qubits, program.layers)
    rows = rows_per_chunk(program.qubits, memory_budget, dtype)
    costs = np.empty(count)
    done = 0
    while done < count:
        k = min(rows, count - done)
        thetas = draws.angles(program, seed, stream, start + done, k)
        costs[done : done + k] = cost_values(plan, thetas, observable, dtype=dtype)
        done += k
        if progress is not None:
            progress(_stage(program), done, count)
    return costs


def _stage(program: Program) -> str:
    return f"loss variance n={program.qubits} L={program.layers}"


def loss_variance(
    program: Program,
    cost: Any = "global",
    *,
    samples: int = 2000,
    seed: int = 1,
    confidence: float = 0.95,
    context: Context | None = None,
    draws: Draws | None = None,
) -> LossVariance:
    """Variance of the cost over random parameters at the program's own depth.

    Parameters
    ----------
    program : Program
        The circuit.
    cost : str or list
        As in :func:`haarline.metrics.observables.make_observable`.
    samples : int
        Parameter vectors; sample ``k`` uses row ``k`` of stream
        ``(LOSS_STREAM, n, layers)``, whatever the chunk size.
    seed : int
        Seed.
    confidence : float
        Coverage of the interval.
    context : Context, optional
        Memory budget, precision, workers (same numbers for any count) and progress.

    Returns
    -------
    LossVariance

    Notes
    -----
    ``v`` is the unbiased sample variance of ``C``; with ``y_s = (C_s - C̄)²`` it is
    ``S/(S-1)`` times the mean of ``y``, so its standard error is ``S/(S-1) · sd(y)/√S``
    (:func:`~haarline.metrics.intervals.variance_standard_error`, as for the gradient variances;
    formula and source there). The interval
    is ``v · exp(±t · se / v)`` with the Student ``t`` quantile at ``S - 1`` degrees of
    freedom. Cost: ``samples`` circuit runs.
    """
    if samples < 2:
        raise ValueError(f"samples must be at least 2, got {samples}")
    context = context or Context()
    make_observable(cost, program.qubits)  # bad costs fail here, not in a worker
    workers = worker_count(context, program, samples)
    share = context.for_workers(workers)
    budget, dtype = share.memory_budget, share.dtype
    if workers == 1:
        context.report(_stage(program), 0, samples)
        costs = _loss_block(program, cost, 0, samples, seed, budget, dtype, draws, context.progress)
    else:
        blocks = blocks_for(samples, workers)
        costs = np.concatenate(
            block_map(
                _loss_block,
                [(program, cost, b, c, seed, budget, dtype, draws) for b, c in blocks],
                context=context,
                stage=_stage(program),
                sizes=[c for _, c in blocks],
            )
        )
    s = samples
    y = (costs - costs.mean()) ** 2
    v = float(s / (s - 1) * y.mean())
    se = variance_standard_error(y)
    interval = log_symmetric_interval(v, se, s - 1, confidence)
    return LossVariance(
        qubits=program.qubits,
        layers=program.layers,
        parameters=program.parameters,
        samples=s,
        variance=v,
        interval=interval,
        standard_error=se,
        confidence=confidence,
        mean_cost=float(costs.mean()),
    )


def deep_loss_variance(
    circuit: Circuit,
    qubits: int,
    dimension: int,
    cost: Any = "global",
    *,
    factor: float = 8.0,
    limit: int = 2000,
    samples: int = 2000,
    seed: int = 1,
    confidence: float = 0.95,
    context: Context | None = None,
    draws: Draws | None = None,
) -> LossVariance:
    """Loss variance of a deep version of the circuit, with a half-depth check.

    The depth is :func:`deep_layers` ``(circuit, qubits, dimension, factor, limit)``; the
    same estimate at half that depth (independent samples) fills ``half_depth`` and
    ``settled``. Other parameters as in :func:`loss_variance`.

    Examples
    --------
    >>> from haarline.circuit.model import parse_circuit
    >>> c = parse_circuit({"qubits": 2, "layer": [{"gate": "rx"}, {"gate": "rz"},
    ...                                           {"gate": "rzz", "on": "chain"}]})
    >>> v = deep_loss_variance(c, 2, 15, [[1.0, "ZI"]], samples=400)
    >>> v.layers, v.interval[0] < 1 / 5 < v.interval[1]  # su(4): 1/(2^n + 1)
    (24, True)
    """
    layers = deep_layers(circuit, qubits, dimension, factor=factor, limit=limit)
    options: dict[str, Any] = {
        "samples": samples,
        "seed": seed,
        "confidence": confidence,
        "context": context,
        "draws": draws,
    }
    deep = loss_variance(expand_at(circuit, qubits, layers), cost, **options)
    if layers < 2:
        return deep
    half = loss_variance(expand_at(circuit, qubits, layers // 2), cost, **options)
    settled = half.interval[0] <= deep.interval[1] and deep.interval[0] <= half.interval[1]
    check = {"layers": half.layers, "variance": half.variance, "interval": list(half.interval)}
    return replace(deep, half_depth=check, settled=settled)

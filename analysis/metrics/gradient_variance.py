"""Gradient variance at one scan point: exact gradients at random parameters, and their spread.

:func:`gradient_samples` draws ``S`` parameter vectors uniformly on [0, 2π) and computes
every gradient exactly (:func:`haarline.metrics.gradients.adjoint_gradients`, or the
parameter-shift rule as a cross-check), in chunks and optionally in worker processes;
:func:`summarize_gradients` turns them into a :class:`VariancePoint`: the mean over
parameters of the sample variance of ∂C/∂θ_k with a 95% interval, and the largest and
smallest per-parameter variance. The scans over qubit and layer counts are in
:mod:`haarline.metrics.trainability`.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass
from typing import Any

import numpy as np
from haarline.circuit.program import Program
from haarline.engine.batching import block_map, blocks_for, worker_count
from haarline.engine.context import Context, Progress
from haarline.engine.draws import Draws
from haarline.engine.sampling import Stream
from haarline.engine.statevector import compile_program, rows_per_chunk
from haarline.errors import CircuitError, Problem
from haarline.metrics.gradients import adjoint_gradients, cost_values, shift_gradients
from haarline.metrics.intervals import log_symmetric_interval, variance_standard_error
from haarline.metrics.observables import make_observable
from numpy.typing import NDArray

__all__ = [
    "FLAT_ABSOLUTE",
    "FLAT_RELATIVE",
    "VariancePoint",
    "gradient_samples",
    "summarize_gradients",
]

FLAT_RELATIVE = 1e-20
"""A parameter whose gradient variance is at most this fraction of the largest one has no
gradient at all: in exact arithmetic it is 0 (the parameter lies outside the cost's light
cone), and in double precision rounding leaves about 1e-34. Such variances are reported as
0 and the parameters listed in ``flat_parameters``."""

FLAT_ABSOLUTE = 1e-28
"""A gradient variance at most this is 0 whatever the others are: double-precision
rounding of gradients of order 1 (about 1e-16) squared, with a margin."""


@dataclass(frozen=True, kw_only=True)
class VariancePoint:
    """Gradient statistics at one (qubits, layers) point."""

    qubits: int
    layers: int
    parameters: int
    samples: int
    variance: float
    interval: tuple[float, float]
    standard_error: float
    largest: float
    smallest: float
    mean_cost: float
    top_sample_share: float
    flat_parameters: list[int]

    def to_dict(self) -> dict[str, Any]:
        """Return the report object (plain JSON types)."""
        out = asdict(self)
        out["interval"] = list(self.interval)
        return out


def _gradient_block(
    program: Program,
    cost: Any,
    start: int,
    count: int,
    seed: int,
    memory_budget: int,
    method: str,
    dtype: type,
    draws: Draws | None = None,
    progress: Progress | None = None,
    stage: str = "",
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Costs and gradients of samples ``start .. start+count-1`` (also run in workers).

    Gradients are taken with respect to the trainable parameters only (an input angle's
    column is left out).
    """
    draws = draws or Draws()
    observable = make_observable(cost, program.qubits)
    plan = compile_program(program)
    stream = (Stream.GRADIENTS, program.qubits, program.layers)
    # adjoint differentiation holds three state batches
    rows = max(1, rows_per_chunk(program.qubits, memory_budget, dtype) // 2)
    costs = np.empty(count)
    grads = np.empty((count, program.parameters))
    done = 0
    while done < count:
        k = min(rows, count - done)
        thetas = draws.angles(program, seed, stream, start + done, k)
        if method == "adjoint":
            c, g = adjoint_gradients(plan, thetas, observable, dtype=dtype)
        else:
            c = cost_values(plan, thetas, observable, dtype=dtype)
            g = shift_gradients(plan, thetas, observable, dtype=dtype)
        costs[done : done + k] = c
        grads[done : done + k] = g[:, : program.parameters]
        done += k
        if progress is not None:
            progress(stage, done, count)
    return costs, grads


def gradient_samples(
    program: Program,
    cost: Any,
    *,
    samples: int,
    seed: int,
    stage: str = "gradients",
    method: str = "adjoint",
    context: Context | None = None,
    draws: Draws | None = None,
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Costs ``(S,)`` and gradients ``(S, P)`` at ``samples`` random parameter vectors.

    Sample ``k`` at ``(n, L)`` uses row ``k`` of stream ``(GRADIENTS, n, L)``, so points of a
    scan are independent and the numbers never depend on chunking. The context's worker
    processes share the samples (blocks of 64, each with its share of the memory budget);
    the numbers are bit-identical to one worker's.
    """
    context = context or Context()
    # adjoint differentiation costs about five circuit runs per sample
    workers = worker_count(context, program, samples, 5)
    make_observable(cost, program.qubits)  # bad costs fail here, not in a worker
    share = context.for_workers(workers)
    budget, dtype = share.memory_budget, share.dtype
    if workers == 1:
        context.report(stage, 0, samples)
        return _gradient_block(
            program, cost, 0, samples, seed, budget, method, dtype, draws, context.progress, stage
        )
    blocks = blocks_for(samples, workers)
    parts = block_map(
        _gradient_block,
        [(program, cost, s, c, seed, budget, method, dtype, draws) for s, c in blocks],
        context=context,
        stage=stage,
        sizes=[c for _, c in blocks],
    )
    return (
        np.concatenate([c for c, _ in parts]),
        np.concatenate([g for _, g in parts]),
    )


def summarize_gradients(
    qubits: int, layers: int, costs: NDArray[np.float64], grads: NDArray[np.float64]
) -> VariancePoint:
    """Mean per-parameter variance with a 95% interval.

    The estimate ``v = (1/P) Σ_k s_k²`` (``s_k²`` the unbiased sample variance of ∂C/∂θ_k)
    equals ``S/(S-1)`` times the sample mean of ``y_s = (1/P) Σ_k (g_sk - ḡ_k)²``; its
    standard error is ``S/(S-1) · sd(y)/√S`` (formula and source at
    :func:`~haarline.metrics.intervals.variance_standard_error`). The interval is
    ``v · exp(±t · se / v)``, symmetric in ``ln v`` (so it stays positive on a log axis).
    ``top_sample_share`` is the largest single sample's share of ``Σ y``: when one sample
    carries a large share the squared gradients are heavy-tailed and the interval is
    likely too narrow (the report then says so).
    """
    s, p = grads.shape
    if p == 0:
        raise CircuitError(
            [
                Problem(
                    "layer",
                    "the circuit has no trainable parameters; there are no gradients to analyze",
                )
            ]
        )
    centred = grads - grads.mean(axis=0)
    per_param = (centred**2).sum(axis=0) / (s - 1)
    y = (centred**2).mean(axis=1)
    v = float(per_param.mean())
    se = variance_standard_error(y)
    interval = log_symmetric_interval(v, se, s - 1)
    top = float(per_param.max())
    flat = per_param <= max(FLAT_RELATIVE * top, FLAT_ABSOLUTE)
    share = float(y.max() / y.sum()) if y.sum() > 0 else 0.0
    if flat.all():  # no parameter has a gradient: every number is rounding noise
        top, v, se, interval, share = 0.0, 0.0, 0.0, (0.0, 0.0), 0.0
    return VariancePoint(
        qubits=qubits,
        layers=layers,
        parameters=p,
        samples=s,
        variance=v,
        interval=interval,
        standard_error=se,
        largest=top,
        smallest=0.0 if flat.any() else float(per_param.min()),
        mean_cost=float(costs.mean()),
        top_sample_share=share,
        flat_parameters=[int(k) for k in np.flatnonzero(flat)],
    )

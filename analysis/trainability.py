"""Trainability: how the variance of cost gradients scales with qubit count and depth.

For each point of a scan (a qubit count, or a layer count at fixed qubits) the
description is re-instantiated, ``S`` parameter vectors are drawn uniformly on
[0, 2π), all gradients are computed exactly (:func:`analysis.gradients.adjoint_gradients`)
and the point reports the mean over parameters of the sample variance of ∂C/∂θ_k, with a
95% interval, and the largest and smallest per-parameter variance.

A barren plateau is a variance that decays exponentially with the qubit count (McClean
et al., Nat. Commun. 9, 4812, 2018; Cerezo et al., Nat. Commun. 12, 1791, 2021).
:func:`fit_decay` fits ``ln Var`` against ``n`` (exponential) and against ``ln n``
(power law) by weighted least squares and applies the rule documented in
:func:`verdict`.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ._batching import Progress, block_map, blocks_for, check_workers, worker_count
from ._intervals import log_symmetric_interval
from .circuit import Circuit
from .engine import DEFAULT_MEMORY_BUDGET, compile_program, rows_per_chunk
from .errors import CircuitError, OptionError, Problem
from .gradients import adjoint_gradients, cost_values, shift_gradients
from .observables import make_observable
from .program import Program, expand
from .sampling import Stream, draw_angles

__all__ = [
    "MIN_FIT_POINTS",
    "MIN_FIT_QUBITS",
    "Fit",
    "Trainability",
    "VariancePoint",
    "fit_decay",
    "gradient_samples",
    "summarize_gradients",
    "trainability",
    "uses_only_patterns",
    "verdict",
    "default_scan",
    "layers_at",
]

MIN_FIT_POINTS = 4
"""Fewest qubit counts for a verdict."""
MIN_FIT_QUBITS = 6
"""Smallest largest-qubit-count for a verdict."""
DECISIVE_AIC = 2.0
"""AIC difference above which one model is called favoured (Burnham & Anderson, 2002)."""
FLAT_DECAY = 0.25
"""Decay per qubit (nats) below which a non-significant decay is called flat."""


@dataclass(frozen=True)
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
    progress: Progress | None = None,
    stage: str = "",
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Costs and gradients of samples ``start .. start+count-1`` (also run in workers)."""
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
        thetas = draw_angles(seed, stream, start + done, k, program.parameters)
        if method == "adjoint":
            c, g = adjoint_gradients(plan, thetas, observable, dtype=dtype)
        else:
            c = cost_values(plan, thetas, observable, dtype=dtype)
            g = shift_gradients(plan, thetas, observable, dtype=dtype)
        costs[done : done + k] = c
        grads[done : done + k] = g
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
    memory_budget: int = DEFAULT_MEMORY_BUDGET,
    progress: Progress | None = None,
    stage: str = "gradients",
    method: str = "adjoint",
    dtype: type = np.complex128,
    workers: int = 1,
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Costs ``(S,)`` and gradients ``(S, P)`` at ``samples`` random parameter vectors.

    Sample ``k`` at ``(n, L)`` uses row ``k`` of stream ``(GRADIENTS, n, L)``, so points of a
    scan are independent and the numbers never depend on chunking. ``workers`` processes
    share the samples (blocks of 64, each with ``memory_budget / workers``); the numbers
    are bit-identical to one worker's. ``dtype`` is the engine precision.
    """
    # adjoint differentiation costs about five circuit runs per sample
    workers = worker_count(check_workers(workers), program, samples, 5)
    make_observable(cost, program.qubits)  # bad costs fail here, not in a worker
    if workers == 1:
        if progress is not None:
            progress(stage, 0, samples)
        return _gradient_block(
            program, cost, 0, samples, seed, memory_budget, method, dtype, progress, stage
        )
    blocks = blocks_for(samples, workers)
    budget = memory_budget // workers
    parts = block_map(
        _gradient_block,
        [(program, cost, s, c, seed, budget, method, dtype) for s, c in blocks],
        workers=workers,
        progress=progress,
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
    standard error is ``S/(S-1) · sd(y)/√S`` (delta method, common practice). The interval
    is ``v · exp(±t · se / v)``, symmetric in ``ln v`` (so it stays positive on a log axis).
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
    se = float(s / (s - 1) * y.std(ddof=1) / math.sqrt(s))
    interval = log_symmetric_interval(v, se, s - 1)
    return VariancePoint(
        qubits=qubits,
        layers=layers,
        parameters=p,
        samples=s,
        variance=v,
        interval=interval,
        standard_error=se,
        largest=float(per_param.max()),
        smallest=float(per_param.min()),
        mean_cost=float(costs.mean()),
        top_sample_share=float(y.max() / y.sum()) if y.sum() > 0 else 0.0,
    )


@dataclass(frozen=True)
class Fit:
    """Weighted least squares of ``ln Var = intercept + slope · x``."""

    model: str
    slope: float
    slope_stderr: float
    intercept: float
    chi2: float
    aic: float

    def to_dict(self) -> dict[str, Any]:
        """Return the report object."""
        return asdict(self)


def _wls(x: NDArray, y: NDArray, sigma: NDArray, model: str) -> Fit:
    w = 1.0 / sigma**2
    a = np.stack([np.ones_like(x), x], axis=1)
    cov = np.linalg.inv(a.T @ (a * w[:, None]))
    beta = cov @ (a.T @ (w * y))
    resid = y - a @ beta
    chi2 = float(np.sum(w * resid**2))
    dof = len(x) - 2
    scale = max(1.0, chi2 / dof) if dof > 0 else 1.0  # inflate when the model misfits
    return Fit(
        model=model,
        slope=float(beta[1]),
        slope_stderr=float(math.sqrt(cov[1, 1] * scale)),
        intercept=float(beta[0]),
        chi2=chi2,
        aic=chi2 + 2 * 2,
    )


def fit_decay(points: list[VariancePoint]) -> dict[str, Fit] | None:
    """Fit ``ln Var`` against ``n`` and against ``ln n``; ``None`` if fewer than 3 usable points.

    Each point is weighted by ``1/σ²`` with ``σ = se/Var``, the standard error of ``ln Var``.
    """
    use = [p for p in points if p.variance > 0 and p.standard_error > 0]
    if len(use) < 3:
        return None
    n = np.array([p.qubits for p in use], dtype=float)
    y = np.log([p.variance for p in use])
    sigma = np.array([p.standard_error / p.variance for p in use])
    return {
        "exponential": _wls(n, y, sigma, "exponential"),
        "power": _wls(np.log(n), y, sigma, "power"),
    }


def verdict(points: list[VariancePoint], fits: dict[str, Fit] | None) -> tuple[bool | None, str]:
    """The barren-plateau verdict and the one-line reason for it.

    Rule (also in the README):

    1. Fewer than 4 qubit counts, or a largest qubit count below 6: ``None``.
    2. A zero variance anywhere: ``None`` (the cost ignores the parameters there).
    3. Decay per qubit ``d = -slope`` of the exponential fit, standard error ``se``. If
       ``d - 2 se ≤ 0`` (no significant decrease with n): ``False`` when ``d + 2 se`` is
       below 0.25 nats per qubit (the variance is flat), else ``None`` (too noisy to tell).
    4. If the exponential fit has the lower AIC by more than 2: ``True``.
    5. If the power-law fit has the lower AIC by more than 2: ``False`` (polynomial decay).
    6. Otherwise: ``None`` (the data do not tell the two apart).
    """
    qs = sorted({p.qubits for p in points})
    if len(qs) < MIN_FIT_POINTS or qs[-1] < MIN_FIT_QUBITS:
        return None, (
            f"no verdict: the scan has {len(qs)} qubit count(s) up to n = {qs[-1] if qs else 0}; "
            f"a verdict needs at least {MIN_FIT_POINTS} counts and a largest n of at least "
            f"{MIN_FIT_QUBITS}"
        )
    zero = [p.qubits for p in points if p.variance <= 0]
    if zero or fits is None:
        return None, f"no verdict: the gradient variance is exactly zero at n = {zero}"
    e, pw = fits["exponential"], fits["power"]
    d, se = -e.slope, e.slope_stderr
    span = f"n = {qs[0]}..{qs[-1]}"
    rate = f"{d:.3g} ± {se:.2g} nats per qubit (x{math.exp(-d):.3g} per qubit)"
    if d - 2 * se <= 0:
        if d + 2 * se <= FLAT_DECAY:
            return False, (
                f"not a barren plateau: the variance does not fall significantly with n over "
                f"{span} (exponential decay {rate})"
            )
        return None, (
            f"no verdict: the variances are too noisy to tell a decay from none over {span} "
            f"(exponential decay {rate}); draw more --grad-samples"
        )
    delta = pw.aic - e.aic
    if delta > DECISIVE_AIC:
        return True, (
            f"barren plateau: exponential decay favoured over a power law (AIC "
            f"{e.aic:.3g} vs {pw.aic:.3g}) over {span}; the variance falls by {rate}"
        )
    if delta < -DECISIVE_AIC:
        return False, (
            f"not a barren plateau: power-law decay favoured (AIC {pw.aic:.3g} vs "
            f"{e.aic:.3g}), Var ~ n^{pw.slope:.3g} ± {pw.slope_stderr:.2g} over {span}"
        )
    return None, (
        f"no verdict: exponential (AIC {e.aic:.3g}) and power-law (AIC {pw.aic:.3g}) fits "
        f"are equally good over {span}; decay {rate}. Scan more qubit counts."
    )


@dataclass(frozen=True)
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
    from .options import DEFAULT_SCAN

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
    memory_budget: int = DEFAULT_MEMORY_BUDGET,
    progress: Progress | None = None,
    method: str = "adjoint",
    dtype: type = np.complex128,
    workers: int = 1,
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
    memory_budget : int
        Bytes for state batches; changes speed, never the numbers.
    progress : callable, optional
        ``progress(stage, done, total)``.
    method : str
        ``"adjoint"`` (default) or ``"shift"``.
    dtype : numpy complex dtype
        Engine precision, ``complex128`` (default) or ``complex64``.
    workers : int
        Worker processes sharing each point's samples (default 1); same numbers.

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
            try:
                program = expand(circuit, qubits=n, layers=layers)
            except CircuitError as exc:
                raise CircuitError(
                    [
                        Problem(
                            p.path,
                            f"at {n} qubits, {layers} layers (trainability scan): {p.message}",
                        )
                        for p in exc.problems
                    ],
                    source=exc.source,
                ) from exc
            c, g = gradient_samples(
                program,
                cost,
                samples=samples,
                seed=seed,
                memory_budget=memory_budget,
                progress=progress,
                stage=f"gradients n={n} L={layers}",
                method=method,
                dtype=dtype,
                workers=workers,
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

"""Quantum kernels of a data-encoding circuit: concentration, projected kernel, fit to labels.

The fidelity kernel of a circuit with inputs is ``k(x, x') = |⟨ψ(x, θ)|ψ(x', θ)⟩|²`` at
fixed trainable parameters θ (one random draw; none for a pure feature map). Its values
over random pairs of inputs concentrate when the variance ``Var_{x,x'} k`` falls
exponentially with the qubit count: telling two data points apart then takes
exponentially many shots (Thanasilp, Wang, Cerezo & Holmes, "Exponential concentration
in quantum kernel methods", Nat. Commun. 15, 5200, 2024). This module estimates

- the mean and the variance of ``k`` over ``M`` random input pairs, the variance with a
  95% interval (the same estimator and interval as the gradient variances,
  :mod:`haarline.metrics.intervals`), at the circuit's size and over a scan of qubit
  counts, whose decay is judged by the rule of :mod:`haarline.metrics.plateau`;
- the projected quantum kernel ``k_P(x, x') = exp(-γ Σ_q ‖ρ_q(x) - ρ_q(x')‖_F²`` of Huang
  et al. ("Power of data in quantum machine learning", Nat. Commun. 12, 2631, 2021,
  eq. 9), built from the one-qubit reduced states, with ``γ = 1``;
- with labelled data, the kernel matrix of the data set, its kernel-target alignment
  ``A = ⟨K, Y⟩_F / (‖K‖_F ‖Y‖_F)`` with ``Y_ij = +1`` for equal labels and ``-1`` otherwise
  (Cristianini, Shawe-Taylor, Elisseeff & Kandola, "On kernel-target alignment", NIPS
  2001; for two classes ``Y = y yᵀ`` with ``y = ±1``), and the geometric difference
  ``g(K_C ‖ K_Q) = sqrt(‖ sqrt(K_Q) (K_C + λ I)^{-1} sqrt(K_Q) ‖_∞)`` between a classical
  RBF kernel ``K_C`` and the quantum kernel ``K_Q``, both normalised to trace ``N`` (Huang
  et al. 2021, eq. 5, with the regularisation ``λ`` stated in the report).
"""

from __future__ import annotations

from dataclasses import asdict, dataclass
from typing import Any

import numpy as np
from haarline.circuit.program import Program
from haarline.engine.batching import sample_map
from haarline.engine.context import Context
from haarline.engine.draws import Draws
from haarline.engine.sampling import Stream
from haarline.engine.statevector import Complexes, compile_program, rows_per_chunk, run
from haarline.metrics.intervals import (
    log_symmetric_interval,
    mean_interval,
    variance_standard_error,
)
from numpy.typing import NDArray

__all__ = [
    "GEOMETRIC_REGULARIZATION",
    "PROJECTED_GAMMA",
    "KernelPoint",
    "alignment",
    "geometric_difference",
    "kernel_matrix",
    "kernel_values",
    "projected_values",
    "rbf_kernel",
    "summarize_kernel",
]

PROJECTED_GAMMA = 1.0
"""The ``γ`` of the projected kernel (Huang et al. 2021 leave it a hyperparameter)."""

GEOMETRIC_REGULARIZATION = 1e-3
"""``λ`` added to the classical kernel before inverting it in the geometric difference."""


@dataclass(frozen=True, kw_only=True)
class KernelPoint:
    """Kernel statistics over random input pairs at one (qubits, layers) point."""

    qubits: int
    layers: int
    inputs: int
    pairs: int
    mean: float
    mean_interval: tuple[float, float]
    variance: float
    interval: tuple[float, float]
    standard_error: float

    def to_dict(self) -> dict[str, Any]:
        """Return the report object (plain JSON types)."""
        out = asdict(self)
        out["mean_interval"] = list(self.mean_interval)
        out["interval"] = list(self.interval)
        return out


def _overlaps(states: Complexes, qubits: int) -> NDArray[np.float64]:
    """``|⟨a|b⟩|²`` for a chunk of state pairs ``(rows, 2, 2**n)``."""
    overlap = np.einsum("ij,ij->i", states[:, 0].conj(), states[:, 1])
    return np.asarray(overlap.real**2 + overlap.imag**2, dtype=np.float64)


def one_qubit_states(states: Complexes, qubits: int) -> NDArray[np.complex128]:
    """Reduced density matrices of every qubit: ``(rows, n, 2, 2)`` from ``(rows, 2**n)``."""
    rows = states.shape[0]
    out = np.empty((rows, qubits, 2, 2), dtype=complex)
    for q in range(qubits):
        psi = states.reshape(rows, 1 << q, 2, 1 << (qubits - q - 1))
        out[:, q] = np.einsum("baic,bajc->bij", psi, psi.conj())
    return out


def _projected(states: Complexes, qubits: int) -> NDArray[np.float64]:
    """Projected-kernel values for a chunk of state pairs ``(rows, 2, 2**n)``."""
    a = one_qubit_states(states[:, 0], qubits)
    b = one_qubit_states(states[:, 1], qubits)
    distance = np.sum(np.abs(a - b) ** 2, axis=(1, 2, 3))
    return np.asarray(np.exp(-PROJECTED_GAMMA * distance), dtype=np.float64)


def _stream(program: Program) -> tuple[int, int, int]:
    return (Stream.KERNEL, program.qubits, program.layers)


def kernel_values(
    program: Program,
    *,
    pairs: int,
    seed: int,
    draws: Draws,
    context: Context | None = None,
    projected: bool = False,
) -> NDArray[np.float64]:
    """Fidelity (or projected) kernel values of ``pairs`` random input pairs, ``(pairs,)``.

    Pair ``k`` draws its two inputs from row ``k`` of the stream ``(KERNEL, n, L)`` by
    ``draws`` (which must vary the inputs); the two kernels use the same pairs.
    """
    return sample_map(
        _projected if projected else _overlaps,
        program,
        count=pairs,
        copies=2,
        seed=seed,
        stream=_stream(program),
        context=context or Context(),
        stage=f"kernel n={program.qubits}" + (" projected" if projected else ""),
        draws=draws,
    )


def summarize_kernel(values: NDArray[np.float64], program: Program) -> KernelPoint:
    """Mean with its t interval, and the unbiased variance with its log-symmetric interval."""
    s = len(values)
    mean = float(values.mean())
    y = (values - mean) ** 2
    v = float(s / (s - 1) * y.mean())
    se = variance_standard_error(y)
    return KernelPoint(
        qubits=program.qubits,
        layers=program.layers,
        inputs=program.inputs,
        pairs=s,
        mean=mean,
        mean_interval=mean_interval(values),
        variance=v,
        interval=log_symmetric_interval(v, se, s - 1) if v > 0 else (0.0, 0.0),
        standard_error=se,
    )


def kernel_matrix(
    program: Program, x: NDArray[np.float64], *, seed: int, context: Context | None = None
) -> NDArray[np.float64]:
    """The fidelity kernel matrix ``K_ij = |⟨ψ(x_i)|ψ(x_j)⟩|²`` of the rows of ``x``.

    θ is the draw the kernel statistics hold fixed (:meth:`Draws.fixed_parameters`).
    Cost: ``N`` circuit runs and an ``N × N`` Gram matrix.
    """
    context = context or Context()
    n = len(x)
    theta = Draws(vary="inputs").fixed_parameters(program, seed)
    plan = compile_program(program)
    rows = max(1, rows_per_chunk(program.qubits, context.memory_budget, context.dtype))
    states: NDArray[Any] = np.empty((n, program.dimension), dtype=context.dtype)
    for start in range(0, n, rows):
        chunk = x[start : start + rows]
        angles = program.angles(np.repeat(theta, len(chunk), axis=0), chunk)
        states[start : start + len(chunk)] = run(plan, angles, dtype=context.dtype)
    gram = states.conj() @ states.T
    return np.asarray(np.abs(gram) ** 2, dtype=float)


def label_matrix(labels: NDArray[Any]) -> NDArray[np.float64]:
    """``Y_ij = +1`` for equal labels, ``-1`` otherwise (``y yᵀ`` for two ±1 classes)."""
    labels = np.asarray(labels)
    return np.where(labels[:, None] == labels[None, :], 1.0, -1.0)


def alignment(kernel: NDArray[np.float64], labels: NDArray[Any]) -> float:
    """Kernel-target alignment ``⟨K, Y⟩_F / (‖K‖_F ‖Y‖_F)`` (Cristianini et al. 2001).

    Examples
    --------
    >>> y = np.array([1, 1, -1])
    >>> round(alignment(np.outer(y, y).astype(float), y), 12)
    1.0
    """
    target = label_matrix(labels)
    return float(np.sum(kernel * target) / (np.linalg.norm(kernel) * np.linalg.norm(target)))


def rbf_kernel(x: NDArray[np.float64]) -> tuple[NDArray[np.float64], float]:
    """The RBF kernel ``exp(-γ ‖x - x'‖²)`` with ``γ = 1 / (D · Var(x))``, and that ``γ``.

    The width is scikit-learn's ``gamma="scale"`` rule (common practice): one over the
    number of features times the variance of all feature values.
    """
    x = np.asarray(x, dtype=float)
    spread = float(x.var()) * x.shape[1]
    gamma = 1.0 / spread if spread > 0 else 1.0
    square = np.sum(x**2, axis=1)
    distance = np.maximum(square[:, None] + square[None, :] - 2 * x @ x.T, 0.0)
    return np.exp(-gamma * distance), gamma


def _psd_sqrt(m: NDArray[np.float64]) -> NDArray[np.float64]:
    w, v = np.linalg.eigh((m + m.T) / 2)
    return np.asarray((v * np.sqrt(np.clip(w, 0.0, None))) @ v.T, dtype=float)


def geometric_difference(
    classical: NDArray[np.float64],
    quantum: NDArray[np.float64],
    regularization: float = GEOMETRIC_REGULARIZATION,
) -> float:
    """``g(K_C ‖ K_Q) = sqrt(‖ sqrt(K_Q) (K_C + λI)^{-1} sqrt(K_Q) ‖_∞)`` (Huang et al. 2021).

    Both kernels are first normalised to trace ``N``; ``‖·‖_∞`` is the spectral norm. A
    value near 1 means the quantum kernel offers the classical one nothing new on these
    data; a large ``g`` (order ``sqrt(N)``) is needed for a possible advantage.

    Examples
    --------
    >>> k = np.array([[1.0, 0.3], [0.3, 1.0]])
    >>> round(geometric_difference(k, k, 1e-9), 6)
    1.0
    """
    from scipy import linalg  # on first use, not with the module

    n = len(quantum)
    kc = classical * (n / np.trace(classical))
    kq = quantum * (n / np.trace(quantum))
    root = _psd_sqrt(kq)
    inner = root @ linalg.solve(kc + regularization * np.eye(n), root, assume_a="pos")
    return float(np.sqrt(np.linalg.norm((inner + inner.T) / 2, ord=2)))


def projected_values(
    program: Program, *, pairs: int, seed: int, draws: Draws, context: Context | None = None
) -> NDArray[np.float64]:
    """Projected-kernel values of the same random input pairs as :func:`kernel_values`."""
    return kernel_values(
        program, pairs=pairs, seed=seed, draws=draws, context=context, projected=True
    )

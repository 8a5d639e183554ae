"""Entangling capability: the Meyer-Wallach measure averaged over random parameters.

``Q(ψ) = 2 (1 - (1/n) Σ_k Tr ρ_k²)`` with ``ρ_k`` the reduced state of qubit ``k``
(Meyer & Wallach, J. Math. Phys. 43, 4273, 2002, in the purity form of Brennen, Quantum
Inf. Comput. 3, 619, 2003). ``Q = 0`` for product states, 1 for GHZ, and its mean over
Haar-random states is ``(2^n - 2)/(2^n + 1)``. Used as "entangling capability" by Sim,
Johnson & Aspuru-Guzik (Adv. Quantum Technol. 2, 1900070, 2019).
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
from haarline.engine.statevector import Complexes
from haarline.metrics.haar import haar_meyer_wallach
from haarline.metrics.intervals import mean_interval
from numpy.typing import NDArray

__all__ = [
    "DISTRIBUTION_BINS",
    "Entanglement",
    "entangling_capability",
    "meyer_wallach",
    "qubit_purities",
    "summarize_meyer_wallach",
]

DISTRIBUTION_BINS = 20
"""Bins of the reported Meyer-Wallach distribution on [0, 1]."""


def qubit_purities(states: Complexes, qubits: int) -> NDArray[np.float64]:
    """Purity ``Tr ρ_k²`` of every one-qubit reduced state.

    Parameters
    ----------
    states : ndarray of complex, shape (B, 2**n)
        Normalized pure states, textbook qubit order.
    qubits : int
        ``n``.

    Returns
    -------
    ndarray of float, shape (B, n)

    Examples
    --------
    >>> bell = np.array([[1, 0, 0, 1]]) / np.sqrt(2)
    >>> qubit_purities(bell, 2)
    array([[0.5, 0.5]])
    """
    states = np.asarray(states)
    b = states.shape[0]
    out = np.empty((b, qubits), dtype=float)
    for k in range(qubits):
        v = states.reshape(b, 1 << k, 2, 1 << (qubits - k - 1))
        s0, s1 = v[:, :, 0, :], v[:, :, 1, :]
        r00 = np.einsum("bij,bij->b", s0.conj(), s0).real
        r11 = np.einsum("bij,bij->b", s1.conj(), s1).real
        r01 = np.einsum("bij,bij->b", s0, s1.conj())
        out[:, k] = r00**2 + r11**2 + 2 * (r01.real**2 + r01.imag**2)
    return out


def meyer_wallach(states: Complexes, qubits: int) -> NDArray[np.float64]:
    """Meyer-Wallach value of each state, shape ``(B,)``; 0 for a single qubit.

    Examples
    --------
    >>> ghz = np.zeros((1, 8)); ghz[0, [0, 7]] = 2 ** -0.5
    >>> np.round(meyer_wallach(ghz, 3), 12)
    array([1.])
    """
    q: NDArray[np.float64] = 2.0 * (1.0 - qubit_purities(states, qubits).mean(axis=1))
    return np.clip(q, 0.0, 1.0)


@dataclass(frozen=True, kw_only=True)
class Entanglement:
    """Entangling capability (the report's ``entanglement`` object)."""

    meyer_wallach: float
    interval: tuple[float, float]
    std: float
    samples: int
    haar_meyer_wallach: float
    distribution: list[float]

    def to_dict(self) -> dict[str, Any]:
        """Return the report object (plain JSON types)."""
        out = asdict(self)
        out["interval"] = list(self.interval)
        return out


def summarize_meyer_wallach(values: NDArray[np.float64], qubits: int) -> Entanglement:
    """Mean, t-based 95% interval, std and distribution of per-sample Meyer-Wallach values."""
    values = np.asarray(values, dtype=float)
    s = len(values)
    mean = float(values.mean())
    std = float(values.std(ddof=1)) if s > 1 else 0.0
    lo, hi = mean_interval(values)
    counts, _ = np.histogram(values, bins=DISTRIBUTION_BINS, range=(0.0, 1.0))
    return Entanglement(
        meyer_wallach=mean,
        interval=(max(0.0, lo), min(1.0, hi)),
        std=std,
        samples=s,
        haar_meyer_wallach=haar_meyer_wallach(qubits),
        distribution=(counts / s).tolist(),
    )


def entangling_capability(
    program: Program,
    *,
    samples: int = 2000,
    seed: int = 1,
    context: Context | None = None,
    draws: Draws | None = None,
) -> Entanglement:
    """Mean Meyer-Wallach value of a program over ``samples`` random parameter vectors.

    The ``context`` (:mod:`haarline.engine.context`) sets the engine precision, the
    memory budget and the worker processes that share the samples (bit-identical results
    for any count).

    Notes
    -----
    Cost: ``S`` simulations plus ``O(S n 2**n)`` for the purities.

    References
    ----------
    .. [1] D. A. Meyer, N. R. Wallach, J. Math. Phys. 43, 4273 (2002).
    .. [2] G. K. Brennen, Quantum Inf. Comput. 3, 619 (2003).
    .. [3] S. Sim, P. D. Johnson, A. Aspuru-Guzik, Adv. Quantum Technol. 2, 1900070 (2019).

    Examples
    --------
    >>> from haarline.circuit.model import parse_circuit
    >>> from haarline.circuit.program import expand
    >>> product = expand(parse_circuit({"qubits": 3, "layer": [{"gate": "ry"}]}))
    >>> round(entangling_capability(product, samples=50).meyer_wallach, 12)
    0.0
    """
    values = sample_map(
        _chunk_meyer_wallach,
        program,
        count=samples,
        copies=1,
        seed=seed,
        stream=Stream.ENTANGLEMENT,
        context=context or Context(),
        stage="entanglement",
        draws=draws,
    )
    return summarize_meyer_wallach(values, program.qubits)


def _chunk_meyer_wallach(states: Complexes, qubits: int) -> NDArray[np.float64]:
    """Meyer-Wallach values of a chunk of states ``(rows, 1, 2**n)``."""
    return meyer_wallach(states[:, 0], qubits)

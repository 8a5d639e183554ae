"""The Haar baseline: exact fidelity bin masses, moments and Meyer-Wallach value.

For two independent Haar-random pure states of dimension ``N`` the fidelity
``F = |⟨ψ|φ⟩|²`` has density ``P(F) = (N-1)(1-F)^(N-2)`` and CDF ``1 - (1-F)^(N-1)``
(Życzkowski & Sommers, J. Phys. A 38, 2005; used for expressibility by Sim, Johnson &
Aspuru-Guzik, Adv. Quantum Technol. 2, 1900070, 2019).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

__all__ = [
    "haar_bin_log_masses",
    "haar_bin_masses",
    "haar_meyer_wallach",
    "haar_second_moment",
]


def haar_bin_log_masses(qubits: int, bins: int) -> NDArray[np.float64]:
    """Natural log of the Haar probability of each of ``bins`` equal fidelity bins.

    Bin ``j`` is ``[a, b) = [j/K, (j+1)/K)``; its mass is
    ``q_j = (1-a)^(N-1) - (1-b)^(N-1)``, computed as
    ``(N-1) ln(1-a) + log1p(-((1-b)/(1-a))^(N-1))`` so it stays finite where the plain
    difference underflows (high-fidelity bins from about 4 qubits on).

    Returns
    -------
    ndarray of float, shape (bins,)

    Examples
    --------
    >>> np.allclose(np.exp(haar_bin_log_masses(1, 4)), 0.25)
    True
    >>> bool(np.isfinite(haar_bin_log_masses(20, 75)).all())
    True
    """
    n_minus_1 = float(2**qubits - 1)
    edges = np.arange(bins + 1, dtype=float) / bins
    one_minus_a = 1.0 - edges[:-1]
    one_minus_b = 1.0 - edges[1:]
    log_a = np.log(one_minus_a)
    with np.errstate(divide="ignore"):
        log_b = np.log(one_minus_b)  # -inf in the last bin, handled below
    ratio = np.exp(n_minus_1 * (log_b - log_a))
    return n_minus_1 * log_a + np.log1p(-ratio)


def haar_bin_masses(qubits: int, bins: int) -> NDArray[np.float64]:
    """Haar probability of each fidelity bin (may underflow to 0; use logs for KL)."""
    return np.exp(haar_bin_log_masses(qubits, bins))


def haar_second_moment(qubits: int) -> float:
    """``E[F²] = 2 / (N (N + 1))`` for Haar-random pairs (a state 2-design reaches it).

    Examples
    --------
    >>> haar_second_moment(1)
    0.3333333333333333
    """
    n = 2.0**qubits
    return 2.0 / (n * (n + 1.0))


def haar_meyer_wallach(qubits: int) -> float:
    """Mean Meyer-Wallach value of Haar-random states, ``(2^n - 2) / (2^n + 1)``.

    From the mean one-qubit purity ``(2 + 2^(n-1)) / (2^(n-1)·2 + 1)`` of a random pure
    state (Lubkin, J. Math. Phys. 19, 1978; Page, PRL 71, 1993).

    Examples
    --------
    >>> haar_meyer_wallach(2)
    0.4
    """
    n = 2.0**qubits
    return (n - 2.0) / (n + 1.0)

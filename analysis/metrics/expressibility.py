"""Expressibility: KL divergence of the fidelity histogram from the Haar distribution.

Sim, Johnson & Aspuru-Guzik, "Expressibility and entangling capability of parameterized
quantum circuits for hybrid quantum-classical algorithms", Adv. Quantum Technol. 2,
1900070 (2019). Draw ``M`` pairs of independent parameter vectors, take
``F = |⟨ψ(θ)|ψ(φ)⟩|²``, histogram ``F`` on [0, 1] in ``K`` equal bins (masses ``p_j``)
and report ``KL = Σ_j p_j ln(p_j / q_j)`` against the exact Haar bin masses ``q_j``
(natural log; empty bins add 0). Lower is more expressive.

Besides the plug-in value this module reports what a reader needs to judge it:

* ``interval``: a 95% basic (bias-corrected) bootstrap interval for the KL of the
  circuit's true binned distribution (multinomial resampling of the histogram;
  Efron & Tibshirani, *An Introduction to the Bootstrap*, 1993, §13.4), clipped at 0.
  Because it corrects for the plug-in bias it can lie below ``kl``;
* ``kl_corrected``: the bootstrap bias-corrected estimate ``2 kl - mean(bootstrap KL)``,
  clipped at 0, the centre of that interval;
* ``bias``: the exact expected plug-in KL of a circuit whose fidelities are exactly
  Haar-distributed, for the same ``M`` and ``K`` (by linearity, a sum over bins of
  binomial expectations). A ``kl`` near ``bias`` means "indistinguishable from Haar at
  this sample size";
* the second moment ``E[F²]`` beside its Haar value ``2/(N(N+1))``: equal for a state
  2-design (Holmes et al., PRX Quantum 3, 010313, 2022).
"""

from __future__ import annotations

from dataclasses import asdict, dataclass
from typing import Any

import numpy as np
from haarline.circuit.program import Program
from haarline.engine.batching import sample_map
from haarline.engine.context import Context
from haarline.engine.draws import Draws
from haarline.engine.sampling import Stream, block_rng
from haarline.engine.statevector import Complexes
from haarline.metrics._special import log_gamma
from haarline.metrics.haar import haar_bin_log_masses, haar_second_moment
from haarline.metrics.intervals import mean_interval
from numpy.typing import NDArray

__all__ = [
    "BOOTSTRAP_RESAMPLES",
    "Expressibility",
    "divergence_from_haar",
    "expressibility",
    "fidelities",
    "kl_from_counts",
    "plugin_bias",
]

BOOTSTRAP_RESAMPLES = 1000
"""Bootstrap resamples behind the KL interval."""


@dataclass(frozen=True, kw_only=True)
class Expressibility:
    """Expressibility of a circuit (the report's ``expressibility`` object)."""

    kl: float
    interval: tuple[float, float]
    kl_corrected: float
    bias: float
    pairs: int
    bins: int
    second_moment: float
    second_moment_interval: tuple[float, float]
    haar_second_moment: float
    mean_fidelity: float
    histogram: list[float]
    haar: list[float]

    def to_dict(self) -> dict[str, Any]:
        """Return the report object (plain JSON types)."""
        out = asdict(self)
        out["interval"] = list(self.interval)
        out["second_moment_interval"] = list(self.second_moment_interval)
        return out


def _pair_fidelities(states: Complexes, qubits: int) -> NDArray[np.float64]:
    """``|⟨a|b⟩|²`` for a chunk of state pairs ``(rows, 2, 2**n)``."""
    overlap: Complexes = np.einsum("ij,ij->i", states[:, 0].conj(), states[:, 1])
    return (overlap.real**2 + overlap.imag**2).astype(float)


def fidelities(
    program: Program,
    *,
    pairs: int,
    seed: int,
    context: Context | None = None,
    draws: Draws | None = None,
    stream: int | tuple[int, ...] = Stream.EXPRESSIBILITY,
    stage: str = "expressibility",
) -> NDArray[np.float64]:
    """Fidelities ``|⟨ψ(θ)|ψ(φ)⟩|²`` of ``pairs`` independent random parameter pairs.

    The context's worker processes share the pairs (blocks of 64); the values are
    bit-identical to one worker's. ``draws`` says what varies between the two states of a
    pair for a circuit with inputs (:class:`~haarline.engine.draws.Draws`; the fidelity
    kernel is the case of varying inputs).

    Returns
    -------
    ndarray of float, shape (pairs,)
    """
    return sample_map(
        _pair_fidelities,
        program,
        count=pairs,
        copies=2,
        seed=seed,
        stream=stream,
        context=context or Context(),
        stage=stage,
        draws=draws,
    )


def kl_from_counts(
    counts: NDArray[np.integer[Any]] | NDArray[np.float64], log_q: NDArray[np.float64]
) -> NDArray[np.float64]:
    """Plug-in KL ``Σ p ln(p/q)`` of histogram counts (last axis = bins) from log masses.

    Examples
    --------
    >>> float(kl_from_counts(np.array([5, 5]), np.log([0.5, 0.5])))
    0.0
    """
    counts = np.asarray(counts, dtype=float)
    total = counts.sum(axis=-1, keepdims=True)
    p = counts / total
    with np.errstate(divide="ignore", invalid="ignore"):
        terms = np.where(p > 0, p * (np.log(np.where(p > 0, p, 1.0)) - log_q), 0.0)
    kl: NDArray[np.float64] = terms.sum(axis=-1)
    return kl


def plugin_bias(qubits: int, bins: int, pairs: int) -> float:
    """Exact expected plug-in KL of a Haar-exact circuit with ``pairs`` samples.

    ``E[Σ p̂ ln(p̂/q)] = Σ_j (E[p̂_j ln p̂_j] - q_j ln q_j)`` with ``M p̂_j ~ Binomial(M, q_j)``.
    For large ``M`` it approaches ``(K-1)/(2M)`` (common practice, the Miller-Madow
    correction) when every bin is well filled.

    Examples
    --------
    >>> round(plugin_bias(1, 10, 100_000) * 2 * 100_000, 2)
    9.0
    """
    log_q = haar_bin_log_masses(qubits, bins)
    q = np.exp(log_q)
    m = float(pairs)
    terms = []
    for qj, lqj in zip(q, log_q, strict=True):
        if qj <= 0.0 or qj >= 1.0:
            continue  # an empty or a certain bin: p̂ = q exactly, so it adds no bias
        mean = m * qj
        sd = np.sqrt(mean * (1.0 - qj))
        lo = max(1, int(np.floor(mean - 12 * sd - 12)))
        hi = min(pairs, int(np.ceil(mean + 12 * sd + 12)))
        terms.append((qj, lqj, np.arange(lo, hi + 1)))
    # ln j! for every j the binomial masses use, each evaluated once (bins overlap)
    used = np.unique(
        np.concatenate([[pairs], *(t[2] for t in terms), *(pairs - t[2] for t in terms)])
    )
    log_factorial = np.zeros(pairs + 1)
    log_factorial[used] = log_gamma(used + 1.0)
    total = 0.0
    for qj, lqj, ks in terms:
        k = ks.astype(float)
        pmf = np.exp(
            log_factorial[pairs]
            - log_factorial[ks]
            - log_factorial[pairs - ks]
            + k * lqj
            + (m - k) * np.log1p(-qj)
        )
        x = k / m
        total += float(np.sum(pmf * x * np.log(x))) - qj * lqj
    return float(max(total, 0.0))


def divergence_from_haar(
    fids: NDArray[np.float64],
    qubits: int,
    *,
    bins: int = 75,
    seed: int = 0,
    resamples: int = BOOTSTRAP_RESAMPLES,
) -> Expressibility:
    """Expressibility statistics of a sample of fidelities against Haar on ``qubits``.

    Parameters
    ----------
    fids : ndarray of float, shape (M,)
        Fidelities in [0, 1] (values a rounding error outside are clipped).
    qubits : int
        Number of qubits ``n``; the Haar reference has dimension ``N = 2**n``.
    bins : int
        Number ``K`` of equal bins on [0, 1].
    seed : int
        Seed of the bootstrap stream.
    resamples : int
        Bootstrap resamples.

    Returns
    -------
    Expressibility
    """
    fids = np.clip(np.asarray(fids, dtype=float), 0.0, 1.0)
    m = len(fids)
    if m < 2:
        raise ValueError(f"need at least 2 fidelities, got {m}")
    counts, _ = np.histogram(fids, bins=bins, range=(0.0, 1.0))
    log_q = haar_bin_log_masses(qubits, bins)
    kl = float(kl_from_counts(counts, log_q))
    rng = block_rng(seed, Stream.BOOTSTRAP, 0)
    boot = rng.multinomial(m, counts / m, size=resamples)
    boot_kl = kl_from_counts(boot, log_q)
    lo_q, hi_q = np.quantile(boot_kl, [0.025, 0.975])
    interval = (max(0.0, 2 * kl - float(hi_q)), max(0.0, 2 * kl - float(lo_q)))
    return Expressibility(
        kl=kl,
        interval=interval,
        kl_corrected=max(0.0, 2 * kl - float(boot_kl.mean())),
        bias=plugin_bias(qubits, bins, m),
        pairs=m,
        bins=bins,
        second_moment=float(np.mean(fids**2)),
        second_moment_interval=mean_interval(fids**2),
        haar_second_moment=haar_second_moment(qubits),
        mean_fidelity=float(fids.mean()),
        histogram=(counts / m).tolist(),
        haar=np.exp(log_q).tolist(),
    )


def expressibility(
    program: Program,
    *,
    pairs: int = 5000,
    bins: int = 75,
    seed: int = 1,
    context: Context | None = None,
    draws: Draws | None = None,
) -> Expressibility:
    """Expressibility of a program (Sim, Johnson & Aspuru-Guzik 2019).

    Parameters
    ----------
    program : Program
        The expanded circuit.
    pairs : int
        Number ``M`` of independent parameter pairs (default 5000).
    bins : int
        Number ``K`` of fidelity bins (default 75).
    seed : int
        Seed; pair ``k`` always gets the same parameters (see :mod:`haarline.engine.sampling`).
    context : Context, optional
        Memory budget, precision, workers and progress (:mod:`haarline.engine.context`);
        only the precision can move the numbers, by rounding (``bench/precision.json``).

    Returns
    -------
    Expressibility

    Notes
    -----
    Cost: ``2 M`` circuit simulations of ``G`` gates on ``2**n`` amplitudes each,
    ``O(M G 2**n)`` time; memory ``min(M, budget)`` states.

    References
    ----------
    .. [1] S. Sim, P. D. Johnson, A. Aspuru-Guzik, Adv. Quantum Technol. 2, 1900070 (2019).
    .. [2] Z. Holmes, K. Sharma, M. Cerezo, P. J. Coles, PRX Quantum 3, 010313 (2022).

    Examples
    --------
    >>> from haarline.circuit.model import parse_circuit
    >>> from haarline.circuit.program import expand
    >>> fixed = expand(parse_circuit({"qubits": 2, "layer": [{"gate": "h"}]}))
    >>> e = expressibility(fixed, pairs=100, bins=10)
    >>> bool(np.isclose(e.kl, 3 * np.log(10)))
    True
    """
    fids = fidelities(program, pairs=pairs, seed=seed, context=context, draws=draws)
    return divergence_from_haar(fids, program.qubits, bins=bins, seed=seed)

"""Loss variance of deep circuits predicted from the dynamical Lie algebra (g-purities).

A deep circuit spreads its unitaries over the group ``exp(g)`` of its dynamical Lie
algebra ``g``. Ragone et al. (Nat. Commun. 15, 2024, arXiv:2309.09342, Theorem 1)
show that when the observable ``O`` or the input state ``ρ`` lies in ``g``, the loss
``ℓ = Tr(U ρ U† O)`` of such a circuit has variance

``Var[ℓ] = Σ_j P_gj(ρ) P_gj(O) / dim g_j``

over the simple ideals ``g_j`` (the centre adds no variance), with the g-purity
``P_g(H) = Tr(H_g²)`` and ``H_g`` the orthogonal projection of ``H``, in the
Hilbert-Schmidt inner product ``⟨A, B⟩ = Tr(AB)``, onto the Hermitian span of the ideal.

Derivation of the normalization used here. ``Ad_U: H ↦ U H U†`` is orthogonal for
``⟨·,·⟩`` and keeps ``g`` and its orthogonal complement, so with ``O ∈ g`` (or ``ρ ∈ g``)
only ``ρ_g`` meets ``O_g`` and ``ℓ - const = Σ_j ⟨Ad_U ρ_j, O_j⟩``. Each ``g_j`` is an
absolutely irreducible real representation and no two are equivalent, so for ``U``
Haar-random on the group, Schur orthogonality gives
``E[⟨Ad_U a, b⟩⟨Ad_U c, d⟩] = ⟨a, c⟩⟨b, d⟩ / dim g_j`` within one ideal and zero across
ideals, and the mean of each term is zero. Hence ``Var[ℓ] = Σ_j ‖ρ_j‖² ‖O_j‖² / dim g_j``
with ``‖H‖² = Tr(H²)``. In an orthonormal basis ``u_a`` of Pauli-coefficient vectors
(``Σ_P u_a(P) u_b(P) = δ_ab``, so ``B_a = Σ_P u_a(P) P / √(2**n)`` has
``Tr(B_a B_b) = δ_ab``): ``P(H) = 2**n Σ_a (Σ_P u_a(P) h_P)²`` with
``h_P = Tr(H P) / 2**n``; for a pure state ``h_P = ⟨ψ|P|ψ⟩ / 2**n``. Check: su(2**n),
a Pauli observable (``P(O) = 2**n``) and a pure state (``P(ρ) = 1 - 2**-n``) give
``(2**n - 1)/(4**n - 1) = 1/(2**n + 1)``, the Haar value.

:func:`haarline.metrics.sampled_loss.deep_loss_variance` samples the cost of a deep version of
the circuit so that the prediction can be compared with what the circuit does.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

import numpy as np
from haarline.lie.algebra import Algebra
from haarline.lie.generators import CircuitGenerators
from haarline.lie.pauli import PauliExpansion, diagonal_expansion, pauli_values
from haarline.metrics.observables import make_observable

__all__ = [
    "INSIDE",
    "VariancePrediction",
    "observable_expansion",
    "predict_variance",
]

INSIDE = 1e-9
"""An operator lies in the algebra when less than this share of it is outside."""


def observable_expansion(cost: Any, qubits: int) -> PauliExpansion:
    """The cost observable ``H`` of :func:`~haarline.metrics.observables.make_observable` in Paulis.

    Examples
    --------
    >>> observable_expansion("zz", 3).labels()
    [(1.0, 'ZZI')]
    """
    obs = make_observable(cost, qubits)
    if obs.diagonal is not None:
        return diagonal_expansion(obs.diagonal)
    return PauliExpansion.from_labels(obs.terms, qubits)


def _at(expansion: PauliExpansion, x: np.ndarray, z: np.ndarray) -> np.ndarray:
    """Coefficients of ``expansion`` on the strings ``(x, z)`` (zero where absent)."""
    e = expansion.merged()
    keys = e.keys
    if keys.size == 0:
        return np.zeros(np.shape(x))
    want = (x << e.qubits) | z
    pos = np.clip(np.searchsorted(keys, want), 0, keys.size - 1)
    return np.where(keys[pos] == want, e.coef[pos], 0.0)


@dataclass(frozen=True, kw_only=True)
class VariancePrediction:
    """Predicted loss variance of a deep circuit from the g-purities (Ragone et al.).

    Attributes
    ----------
    variance : float or None
        ``Σ_j P_gj(ρ) P_gj(O) / dim g_j``; ``None`` when the theory does not apply.
    applies : bool
        Whether it applies; ``reason`` says why or why not, in one sentence.
    state_purity, observable_purity : float
        ``P_g(ρ)`` and ``P_g(O)`` over the whole algebra (centre included).
    state_share, observable_share : float
        ``P_g(H) / Tr(H_0²)``: the share of the traceless part ``H_0`` inside ``g``.
    ideals : tuple of dict
        Per simple ideal: ``dimension``, ``names``, ``state_purity``,
        ``observable_purity`` and its ``variance`` term.
    parameters : int
        Trainable parameters of the circuit the algebra came from.
    deep_enough : bool
        ``parameters >= dim g``, necessary for the circuit to reach all of ``exp(g)``;
        the prediction is for a deep circuit either way.
    """

    variance: float | None
    applies: bool
    reason: str
    state_purity: float
    observable_purity: float
    state_share: float
    observable_share: float
    ideals: tuple[dict[str, Any], ...]
    parameters: int
    deep_enough: bool

    def to_dict(self) -> dict[str, Any]:
        """Return the report object (plain JSON types)."""
        return {
            "variance": self.variance,
            "applies": self.applies,
            "reason": self.reason,
            "state_purity": self.state_purity,
            "observable_purity": self.observable_purity,
            "state_share": self.state_share,
            "observable_share": self.observable_share,
            "ideals": [dict(t) for t in self.ideals],
            "parameters": self.parameters,
            "deep_enough": self.deep_enough,
        }


def _purity(values: np.ndarray, basis: np.ndarray | None, scale: float) -> float:
    """``scale · Σ_a (u_a · values)²`` (the strings themselves when ``basis`` is None)."""
    proj = values if basis is None else basis @ values
    return float(scale * (proj @ proj))


def predict_variance(
    generators: CircuitGenerators, algebra: Algebra, observable: PauliExpansion
) -> VariancePrediction:
    """Deep-circuit loss variance ``Σ_j P_gj(ρ) P_gj(O) / dim g_j``, or why it does not apply.

    Parameters
    ----------
    generators : CircuitGenerators
        The circuit's generators, input state ``ρ = |ψ_in⟩⟨ψ_in|`` and moved gates.
    algebra : Algebra
        Their dynamical Lie algebra.
    observable : PauliExpansion
        The cost observable ``O`` (before the moved gates; they are applied here).

    Returns
    -------
    VariancePrediction
        ``state_share`` and ``observable_share`` are ``P_g(H) / Tr(H_0²)``, the part of
        the traceless part ``H_0`` inside ``g`` (1 when ``H_0`` lies in ``g``).

    Notes
    -----
    ``P(H) = 2**n Σ_a (u_a · h)²`` over an orthonormal basis ``u_a`` of Pauli-coefficient
    vectors, ``h_P = Tr(H P) / 2**n``; see the module notes for the derivation.

    References
    ----------
    .. [1] M. Ragone et al., "A Lie algebraic theory of barren plateaus for deep
       parameterized quantum circuits", Nat. Commun. 15 (2024), arXiv:2309.09342.
    """
    n = generators.qubits
    dim = 1 << n
    parameters = len(generators.generators)
    psi = generators.input_state
    o = generators.moved_observable(observable).merged()
    traceless = (o.x != 0) | (o.z != 0)
    o_norm = dim * float(o.coef[traceless] @ o.coef[traceless])
    rho_norm = float(np.vdot(psi, psi).real) ** 2 - 1.0 / dim
    deep = parameters >= algebra.dimension
    blank = VariancePrediction(
        variance=None,
        applies=False,
        reason="",
        state_purity=0.0,
        observable_purity=0.0,
        state_share=0.0,
        observable_share=0.0,
        ideals=(),
        parameters=parameters,
        deep_enough=deep,
    )
    if not algebra.complete:
        return _with(blank, f"the closure stopped at a lower bound ({algebra.stop_reason})")
    sv = pauli_values(psi, algebra.x, algebra.z)
    ov = _at(o, algebra.x, algebra.z)
    p_rho = _purity(sv, algebra.basis, 1.0 / dim)
    p_obs = _purity(ov, algebra.basis, float(dim))
    s_rho = p_rho / rho_norm if rho_norm > 0 else 1.0
    s_obs = p_obs / o_norm if o_norm > 0 else 1.0
    base = replace(
        blank,
        state_purity=p_rho,
        observable_purity=p_obs,
        state_share=s_rho,
        observable_share=s_obs,
    )
    if generators.interleaved:
        names = ", ".join(generators.interleaved)
        return _with(
            base,
            f"shared parameters ({names}) act at non-adjacent places or through "
            "non-commuting gates, so the circuit is not a product of one exponential per "
            "parameter and the theory does not apply directly",
        )
    inside = [w for w, s in (("observable", s_obs), ("input state", s_rho)) if s >= 1 - INSIDE]
    if not inside:
        return _with(
            base,
            f"neither the observable ({100 * s_obs:.3g}% inside) nor the input state "
            f"({100 * s_rho:.3g}% inside) lies in the algebra; the formula needs one of them "
            "inside it",
        )
    if not algebra.split:
        big = max((i.dimension for i in algebra.ideals if not i.simple), default=0)
        return _with(
            base,
            f"the semisimple part could not be split into simple ideals (an ideal of "
            f"dimension {big} is beyond the splitting limit)",
        )
    terms = []
    total = 0.0
    for ideal in sorted(algebra.ideals, key=lambda i: -i.dimension):
        pr = _purity(pauli_values(psi, ideal.x, ideal.z), ideal.basis, 1.0 / dim)
        po = _purity(_at(o, ideal.x, ideal.z), ideal.basis, float(dim))
        part = pr * po / ideal.dimension
        total += part
        terms.append(
            {
                "dimension": ideal.dimension,
                "names": list(ideal.names),
                "state_purity": pr,
                "observable_purity": po,
                "variance": part,
            }
        )
    reason = f"the {' and the '.join(inside)} lie{'s' if len(inside) == 1 else ''} in the algebra"
    if not deep:
        reason += (
            f"; the prediction is for a deep circuit, and this one has {parameters} "
            f"parameters, fewer than dim g = {algebra.dimension}"
        )
    return replace(base, variance=total, applies=True, reason=reason, ideals=tuple(terms))


def _with(p: VariancePrediction, reason: str) -> VariancePrediction:
    return replace(p, reason=reason, variance=None, applies=False)

"""Capacity: independent parameter directions from the quantum Fisher information.

For a pure state the quantum Fisher information matrix is
``F_ij = 4 Re[⟨∂_iψ|∂_jψ⟩ - ⟨∂_iψ|ψ⟩⟨ψ|∂_jψ⟩]``; its rank is the number of directions in
parameter space that move the state, so ``P - rank`` parameters are redundant, and the
rank can never exceed ``2^(n+1) - 2``, the real dimension of the manifold of pure states
(Haug, Bharti & Kim, "Capacity and quantum geometry of parametrized quantum circuits",
PRX Quantum 2, 040309, 2021). Special parameter values can lower the rank, so the largest
rank over several random points is reported.

The state Jacobian comes from one pass that carries, beside ``ψ``, one derivative state
per parameterized gate (created as ``-i/2 G φ_k`` at gate ``k`` and propagated through the
rest of the circuit); shared parameters sum their gates' columns.

The QFI is always computed in double precision, whatever the context's precision: the
rank counts eigenvalues above ``1e-8`` times the largest, below the rounding of single
precision (about ``1e-7``), so single-precision amplitudes would count rounding noise as
independent directions. The context's workers share the random points.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass
from typing import Any

import numpy as np
from haarline.circuit.program import Program, parameter_places
from haarline.engine.batching import block_map, worker_count
from haarline.engine.context import Context
from haarline.engine.draws import Draws
from haarline.engine.sampling import Stream
from haarline.engine.statevector import apply_generator, apply_step, compile_program
from numpy.typing import NDArray

__all__ = [
    "DEFAULT_RANK_TOLERANCE",
    "Capacity",
    "capacity",
    "quantum_fisher",
    "state_jacobian",
]

DEFAULT_RANK_TOLERANCE = 1e-8
"""Eigenvalues below this fraction of the largest QFI eigenvalue count as zero."""


def state_jacobian(
    program: Program, theta: NDArray[np.float64]
) -> tuple[NDArray[np.complex128], NDArray[np.complex128]]:
    """The state ``ψ(θ)`` (shape ``(2**n,)``) and ``∂ψ/∂θ`` (shape ``(2**n, P)``).

    Examples
    --------
    >>> from haarline.circuit.model import parse_circuit
    >>> from haarline.circuit.program import expand
    >>> p = expand(parse_circuit({"qubits": 1, "layer": [{"gate": "ry"}]}))
    >>> psi, jac = state_jacobian(p, np.array([0.4]))
    >>> np.allclose(jac[:, 0], [-np.sin(0.2) / 2, np.cos(0.2) / 2])
    True
    """
    plan = compile_program(program)
    n = plan.qubits
    theta = np.asarray(theta, dtype=float).reshape(1, -1)
    if theta.shape[1] != plan.parameters:
        raise ValueError(f"theta must have {plan.parameters} angles, got {theta.shape[1]}")
    occurrences = [s for s in plan.steps if s.param is not None]
    rows = np.zeros((1 + len(occurrences), 1 << n), dtype=complex)
    rows[0, 0] = 1.0
    owner = np.empty(len(occurrences), dtype=int)
    r = 1
    for step in plan.steps:
        angles = None
        if step.param is not None:
            angles = np.full(r, theta[0, step.param])
        apply_step(rows[:r], n, step, angles)
        if step.param is not None:
            rows[r] = rows[0]
            apply_generator(rows[r : r + 1], n, step)
            rows[r] *= -0.5j
            owner[r - 1] = step.param
            r += 1
    jac = np.zeros((1 << n, plan.parameters), dtype=complex)
    np.add.at(jac.T, owner, rows[1:])
    # only the trainable parameters: the columns after them are input angles
    return rows[0], jac[:, : program.parameters]


def quantum_fisher(program: Program, theta: NDArray[np.float64]) -> NDArray[np.float64]:
    """Quantum Fisher information matrix at ``theta``, shape ``(P, P)``."""
    psi, jac = state_jacobian(program, theta)
    overlap = psi.conj() @ jac
    gram = jac.conj().T @ jac
    return 4.0 * (gram - np.outer(overlap.conj(), overlap)).real


@dataclass(frozen=True, kw_only=True)
class Capacity:
    """The report's ``capacity`` object."""

    parameters: int
    qfi_rank: int
    redundant: int
    max_rank: int
    tolerance: float
    points: int
    ranks: list[int]
    redundant_parameters: list[dict[str, Any]]
    eigenvalues: list[float]

    def to_dict(self) -> dict[str, Any]:
        """Return the report object (plain JSON types)."""
        return asdict(self)


def _fisher_block(program: Program, thetas: NDArray[np.float64]) -> list[NDArray[np.float64]]:
    """The QFI at each row of ``thetas`` (also run in worker processes)."""
    return [quantum_fisher(program, theta) for theta in thetas]


def _rank(f: NDArray[np.float64], tol: float) -> tuple[int, NDArray[np.floating]]:
    eig = np.linalg.eigvalsh((f + f.T) / 2)[::-1]
    top = eig[0] if eig.size else 0.0
    if top <= 0:
        return 0, eig
    return int(np.sum(eig > tol * top)), eig


def capacity(
    program: Program,
    *,
    points: int = 4,
    seed: int = 1,
    tolerance: float = DEFAULT_RANK_TOLERANCE,
    context: Context | None = None,
    draws: Draws | None = None,
) -> Capacity:
    """QFI rank, redundant parameters and the pure-state ceiling.

    The rank is the largest over ``points`` random parameter vectors. At the point of
    largest rank, a QR factorization with column pivoting of the QFI orders the parameters
    from most to least independent (Golub & Van Loan, Matrix Computations, §5.4.2); the last
    ``P - rank`` pivots are reported as redundant, marked ``"inactive"`` when their column is
    zero (the parameter does not move the state) and ``"dependent"`` otherwise (its
    direction is a combination of the others). Which member of a dependent group is named
    is a choice of the factorization.

    References
    ----------
    .. [1] T. Haug, K. Bharti, M. S. Kim, PRX Quantum 2, 040309 (2021).

    Examples
    --------
    >>> from haarline.circuit.model import parse_circuit
    >>> from haarline.circuit.program import expand
    >>> p = expand(parse_circuit({"qubits": 2, "layer": [{"gate": "rz"}, {"gate": "ry"}]}))
    >>> c = capacity(p)
    >>> c.qfi_rank, c.redundant, [r["parameter"] for r in c.redundant_parameters]
    (2, 2, [0, 1])
    """
    p = program.parameters
    ceiling = 2 ** (program.qubits + 1) - 2
    if p == 0:
        return Capacity(
            parameters=0,
            qfi_rank=0,
            redundant=0,
            max_rank=ceiling,
            tolerance=tolerance,
            points=0,
            ranks=[],
            redundant_parameters=[],
            eigenvalues=[],
        )
    context = context or Context()
    # the QFI is with respect to θ: the inputs (if any) stay at one draw
    fixed = Draws(vary="parameters", law=(draws or Draws()).law)
    thetas = fixed.angles(
        program, seed, (Stream.CAPACITY, program.qubits, program.layers), 0, points
    )
    # one Jacobian pass carries P + 1 states
    workers = min(worker_count(context, program, points, p + 1), points)
    groups = np.array_split(np.arange(points), workers)
    parts = block_map(
        _fisher_block,
        [(program, thetas[g]) for g in groups],
        context=context if workers > 1 else Context(progress=context.progress),
        stage="capacity",
        sizes=[len(g) for g in groups],
    )
    best_rank, best_f, best_eig, ranks = -1, None, None, []
    for f in (f for part in parts for f in part):
        rank, eig = _rank(f, tolerance)
        ranks.append(rank)
        if rank > best_rank:
            best_rank, best_f, best_eig = rank, f, eig
    assert best_f is not None and best_eig is not None
    from scipy import linalg  # on first use, not with the module

    _, _, piv = linalg.qr(best_f, pivoting=True)
    top = best_eig[0] if best_eig.size and best_eig[0] > 0 else 1.0
    redundant = []
    places = {p["parameter"]: p for p in parameter_places(program)}
    for index in sorted(int(i) for i in piv[best_rank:]):
        inactive = bool(np.linalg.norm(best_f[:, index]) <= tolerance * top)
        place = places.get(index, {})
        redundant.append(
            {
                "parameter": index,
                "step": program.parameter_steps[index] if program.parameter_steps else "",
                "layer": place.get("layer"),
                "gate": place.get("gate"),
                "qubits": place.get("qubits"),
                "kind": "inactive" if inactive else "dependent",
            }
        )
    return Capacity(
        parameters=p,
        qfi_rank=best_rank,
        redundant=p - best_rank,
        max_rank=ceiling,
        tolerance=tolerance,
        points=points,
        ranks=ranks,
        redundant_parameters=redundant,
        eigenvalues=[float(x) for x in best_eig],
    )

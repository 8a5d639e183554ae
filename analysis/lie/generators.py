"""The Hermitian generators of a circuit, with its fixed gates moved out of the way.

A rotation ``exp(-iθG/2)`` has generator ``G``: the gate table's Pauli string for
``rx … rzz``, ``|1⟩⟨1|_c ⊗ P_t = (P_t - Z_c P_t)/2`` for the controlled rotations and
``-2|11⟩⟨11| = (-II + IZ + ZI - ZZ)/2`` for ``cphase`` (the table's ``generator_sum``).

Fixed gates (and fixed-angle rotations) before the first parameterized gate prepare the
input state ``|ψ_in⟩ = W_0 |0…0⟩``. Every later fixed gate is moved to the end of the
circuit. Moving a fixed gate ``V`` that acts *before* a rotation ``R = exp(-iθG/2)``
past it uses ``R V = V (V† R V) = V exp(-iθ V†GV/2)``: the rotation keeps its angle
and its generator becomes ``V† G V``. Doing this for every fixed gate, a rotation whose
earlier fixed gates (after the input part) are ``F_1, …, F_j`` in time order gets
``G' = W† G W`` with ``W = F_j … F_1``, and the circuit becomes
``U(θ) = W_end · Π_k exp(-iθ_k G'_k/2)`` with ``W_end`` the product of all moved gates.
The cost ``⟨ψ_in|U† O U|ψ_in⟩`` then sees the observable ``O' = W_end† O W_end``
(:meth:`CircuitGenerators.moved_observable`). The conjugations are applied walking the
circuit backwards: each fixed gate met conjugates every generator after it (and ``O``).
Clifford gates map Pauli strings to signed Pauli strings; other fixed gates (t, tdg,
rotations at a fixed angle) give Pauli sums.

A parameter used by several gates (``share``, ``param``) gets one generator, the sum of
its occurrences' generators. That is exact when the occurrences are adjacent among the
parameterized gates and commute (then their product is the exponential of the sum);
otherwise the parameter is listed in :attr:`CircuitGenerators.interleaved` and the
one-generator model is only an approximation of the circuit.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from haarline.circuit.gates import lookup
from haarline.circuit.program import Operation, Program
from haarline.engine.statevector import run
from haarline.errors import CircuitError, Problem
from haarline.lie.pauli import PauliExpansion, bracket, conjugate, is_clifford, pauli_label
from numpy.typing import NDArray

__all__ = ["CircuitGenerators", "circuit_generators", "rotation_generator"]


def rotation_generator(gate: str, qubits: tuple[int, ...], n: int) -> PauliExpansion:
    """Generator ``G`` of the rotation ``gate`` on ``qubits`` (gate ``exp(-iθG/2)``).

    The gate table's ``generator_sum`` placed on ``qubits`` of ``n``. An identity term
    (``cphase`` has one) is kept, so ``exp(-iθG/2)`` is the gate itself; it turns only
    the global phase, and the closure ignores it.

    Examples
    --------
    >>> rotation_generator("crx", (0, 1), 2).labels()
    [(0.5, 'IX'), (-0.5, 'ZX')]
    >>> rotation_generator("cphase", (1, 0), 2).labels()
    [(-0.5, 'II'), (0.5, 'IZ'), (0.5, 'ZI'), (-0.5, 'ZZ')]
    """
    spec = lookup(gate)
    if not spec.generator_sum:
        raise ValueError(f"gate {gate!r} has no generator")
    terms = []
    for coefficient, string in spec.generator_sum:
        letters = ["I"] * n
        for q, letter in zip(qubits, string, strict=True):
            letters[q] = letter
        terms.append((coefficient, "".join(letters)))
    return PauliExpansion.from_labels(terms, n)


@dataclass(frozen=True, eq=False, kw_only=True)
class CircuitGenerators:
    """Generators of a program's parameters in the frame with fixed gates moved to the end.

    Attributes
    ----------
    qubits : int
        Qubit count ``n``.
    generators : tuple of PauliExpansion
        ``G'_p`` for each trainable parameter ``p`` (in parameter order).
    input_state : ndarray of complex, shape (2**n,)
        ``|ψ_in⟩``, the fixed gates before the first parameterized gate applied to |0…0⟩.
    stabilizers : tuple of str or None
        Signed Pauli strings (``"+XII"``) stabilizing ``|ψ_in⟩`` when those gates are
        Clifford gates; ``None`` otherwise.
    prefix_gates : int
        Fixed gates folded into the input state.
    moved : tuple of Operation
        The fixed gates moved to the end, in time order.
    clifford_moves : bool
        Whether every moved gate maps Pauli strings to Pauli strings.
    shared : tuple of str
        Names (or step paths) of parameters used by more than one gate.
    interleaved : tuple of str
        Shared parameters whose occurrences are not adjacent or do not commute.
    """

    qubits: int
    generators: tuple[PauliExpansion, ...]
    input_state: NDArray[np.complex128]
    stabilizers: tuple[str, ...] | None
    prefix_gates: int
    moved: tuple[Operation, ...]
    clifford_moves: bool
    shared: tuple[str, ...]
    interleaved: tuple[str, ...]

    @property
    def sharing(self) -> str:
        """``"independent"``, ``"shared"`` (exact sums) or ``"shared-interleaved"``."""
        if self.interleaved:
            return "shared-interleaved"
        return "shared" if self.shared else "independent"

    def moved_observable(self, observable: PauliExpansion) -> PauliExpansion:
        """``O' = W_end† O W_end``: the observable seen by the moved-frame circuit."""
        out = observable
        for op in reversed(self.moved):
            out = conjugate(out, op.gate, op.qubits, op.angle)
        return out


def _is_clifford(op: Operation) -> bool:
    return is_clifford(op.gate, op.angle)


def _stabilizers(prefix: list[Operation], n: int) -> tuple[str, ...] | None:
    """``W Z_q W†`` for each qubit (``W`` the prefix), when the prefix is Clifford."""
    if not all(_is_clifford(op) for op in prefix):
        return None
    q = np.arange(n, dtype=np.int64)
    # qubit q's Z string, tagged with q in the bits above the string bits
    s = PauliExpansion(n, q << n, np.left_shift(1, n - 1 - q), np.ones(n))
    for op in prefix:  # W Z_q W† with W = F_m … F_1: F_1 first
        s = conjugate(s, op.gate, op.qubits, op.angle, adjoint=True)
    strings = s.x & ((1 << n) - 1)
    return tuple(
        ("+" if c > 0 else "-") + pauli_label(int(x), int(z), n)
        for _, x, z, c in sorted(zip((s.x >> n).tolist(), strings, s.z, s.coef, strict=True))
    )


def circuit_generators(program: Program) -> CircuitGenerators:
    """Generators of every trainable parameter, the input state and the moved gates.

    Parameters
    ----------
    program : Program
        An expanded circuit with at least one trainable parameter.

    Returns
    -------
    CircuitGenerators

    Raises
    ------
    CircuitError
        If the circuit has no trainable parameter.

    Notes
    -----
    Cost: one conjugation per fixed gate after the first parameterized gate, applied at
    once to the terms of every generator after it; the generators are tagged by owner in
    the bits above the ``n`` string bits of ``x``, which no conjugation touches.

    Examples
    --------
    >>> from haarline.circuit.model import parse_circuit
    >>> from haarline.circuit.program import expand
    >>> p = expand(parse_circuit({"qubits": 2, "layer": [
    ...     {"gate": "rz", "on": [1]}, {"gate": "cx", "on": [[0, 1]]}, {"gate": "rz", "on": [1]}]}))
    >>> [g.labels() for g in circuit_generators(p).generators]
    [[(1.0, 'IZ')], [(1.0, 'ZZ')]]
    """
    n = program.qubits
    ops = [op for op in program.operations if op.gate != "i"]
    first = next((k for k, op in enumerate(ops) if op.param is not None), None)
    if first is None:
        raise CircuitError(
            [Problem("layer", "the circuit has no trainable parameters; it has no generators")]
        )
    prefix = ops[:first]
    head = Program(
        name=program.name, qubits=n, layers=program.layers, operations=tuple(prefix), parameters=0
    )
    state = run(head, np.zeros((1, 0)))[0]
    rotations = [op for op in ops[first:] if op.param is not None]
    owners = len(rotations)
    if owners >= 1 << max(0, 62 - 2 * n):
        raise ValueError(f"too many parameterized gates ({owners}) to tag at {n} qubits")
    # walk backwards: collect each rotation's generator, conjugate those after a fixed gate
    xs, zs, cs = [], [], []
    tagged = PauliExpansion(n, np.zeros(0, np.int64), np.zeros(0, np.int64), np.zeros(0))
    moved: list[Operation] = []
    slot = owners
    for op in reversed(ops[first:]):
        if op.param is None:
            moved.append(op)
            tagged = conjugate(tagged, op.gate, op.qubits, op.angle)
            continue
        slot -= 1
        g = rotation_generator(op.gate, op.qubits, n)
        xs.append(g.x | (slot << n))
        zs.append(g.z)
        cs.append(g.coef)
        tagged = PauliExpansion(
            n,
            np.concatenate([tagged.x, xs[-1]]),
            np.concatenate([tagged.z, zs[-1]]),
            np.concatenate([tagged.coef, cs[-1]]),
        )
    owner = tagged.x >> n
    strings = tagged.x & ((1 << n) - 1)
    per_gate = []
    for k in range(owners):
        sel = owner == k
        per_gate.append(PauliExpansion(n, strings[sel], tagged.z[sel], tagged.coef[sel]))
    moved.reverse()

    uses: dict[int, list[int]] = {}
    for k, op in enumerate(rotations):
        uses.setdefault(op.param or 0, []).append(k)
    generators = []
    shared, interleaved = [], []
    for p in range(program.parameters):
        ks = uses.get(p, [])
        if not ks:
            generators.append(PauliExpansion(n, strings[:0], strings[:0], tagged.coef[:0]))
            continue
        total = per_gate[ks[0]]
        for k in ks[1:]:
            total = total.plus(per_gate[k])
        generators.append(total)
        if len(ks) > 1:
            name = _parameter_name(program, p)
            shared.append(name)
            adjacent = ks == list(range(ks[0], ks[0] + len(ks)))
            if not adjacent or any(
                len(bracket(per_gate[a], per_gate[b])) for a in ks for b in ks if a < b
            ):
                interleaved.append(name)
    return CircuitGenerators(
        qubits=n,
        generators=tuple(generators),
        input_state=state,
        stabilizers=_stabilizers(prefix, n),
        prefix_gates=len(prefix),
        moved=tuple(moved),
        clifford_moves=all(_is_clifford(op) for op in moved),
        shared=tuple(dict.fromkeys(shared)),
        interleaved=tuple(dict.fromkeys(interleaved)),
    )


def _parameter_name(program: Program, p: int) -> str:
    names = program.parameter_names
    if p < len(names) and names[p]:
        return str(names[p])
    steps = program.parameter_steps
    return f"{steps[p]} parameter {p}" if p < len(steps) else f"parameter {p}"

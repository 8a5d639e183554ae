"""Cost observables H for C(θ) = ⟨ψ(θ)|H|ψ(θ)⟩.

Named costs scale with the qubit count (DESIGN section 4; Cerezo et al., Nat. Commun.
12, 1791, 2021):

=========  ==========================================================================
``global``  C = 1 - |⟨0…0|ψ⟩|²: ``H = I - |0…0⟩⟨0…0|``
``local``   C = 1 - (1/n) Σ_j ⟨ψ| |0⟩⟨0|_j |ψ⟩: diagonal, ``H_ii = (number of 1 bits of i) / n``
``zz``      Z on qubits 0 and 1 (needs at least two qubits)
=========  ==========================================================================

A user cost is a Pauli sum ``[[coefficient, "ZZIX"], …]`` whose strings have one letter
per qubit (qubit 0 first); it is fixed to that qubit count.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from haarline.engine.statevector import Complexes, apply_pauli
from haarline.errors import OptionError, Problem
from numpy.typing import NDArray

__all__ = ["NAMED_COSTS", "Observable", "make_observable", "validate_cost"]

NAMED_COSTS = ("global", "local", "zz")


@dataclass(frozen=True)
class Observable:
    """A Hermitian cost operator on ``qubits`` qubits.

    Either ``diagonal`` (real, shape ``(2**n,)``) is set, or ``terms`` holds a Pauli sum.
    """

    label: str
    qubits: int
    diagonal: NDArray[np.float64] | None
    terms: tuple[tuple[float, str], ...] = ()

    def apply(self, states: Complexes) -> Complexes:
        """Return ``H @ state`` for every row of ``states`` (shape ``(B, 2**n)``)."""
        if self.diagonal is not None:
            return states * self.diagonal.astype(states.real.dtype, copy=False)
        out = np.zeros_like(states)
        for coef, paulis in self.terms:
            tmp = states.copy()
            apply_pauli(tmp, self.qubits, paulis, tuple(range(self.qubits)))
            out += coef * tmp
        return out

    def expectation(self, states: Complexes) -> NDArray[np.floating[Any]]:
        """⟨ψ|H|ψ⟩ of every row, shape ``(B,)``."""
        if self.diagonal is not None:
            return (states.real**2 + states.imag**2) @ self.diagonal
        values: Complexes = np.einsum("ij,ij->i", states.conj(), self.apply(states))
        return values.real


def _bit_counts(n: int) -> NDArray[np.int64]:
    idx = np.arange(1 << n)
    ones = np.zeros(1 << n, dtype=np.int64)
    for q in range(n):
        ones += (idx >> q) & 1
    return ones


def validate_cost(cost: Any, *, path: str = "cost") -> str | tuple[tuple[float, str], ...]:
    """Check a cost spec: a named cost or a Pauli sum; return its normalized form.

    Raises
    ------
    OptionError
        Naming the entry, the value and what is allowed.
    """
    if isinstance(cost, str):
        if cost not in NAMED_COSTS:
            raise OptionError(
                [
                    Problem(
                        path,
                        f"got {cost!r}; expected one of "
                        f"{', '.join(NAMED_COSTS)} or a Pauli sum "
                        '[[coefficient, "ZZI…"], …]',
                    )
                ]
            )
        return cost
    if not isinstance(cost, list | tuple) or not cost:
        raise OptionError(
            [
                Problem(
                    path,
                    "expected a named cost or a non-empty list of "
                    f"[coefficient, pauli-string] terms, got {cost!r}",
                )
            ]
        )
    terms = []
    length = None
    for i, term in enumerate(cost):
        where = f"{path}[{i}]"
        if not isinstance(term, list | tuple) or len(term) != 2:
            raise OptionError(
                [Problem(where, f"expected [coefficient, pauli-string], got {term!r}")]
            )
        coef, paulis = term
        if isinstance(coef, bool) or not isinstance(coef, int | float) or not math.isfinite(coef):
            raise OptionError(
                [Problem(f"{where}[0]", f"expected a finite real coefficient, got {coef!r}")]
            )
        if not isinstance(paulis, str) or not paulis or set(paulis) - set("IXYZ"):
            raise OptionError(
                [
                    Problem(
                        f"{where}[1]",
                        "expected a string of the letters I, X, "
                        f"Y, Z (one per qubit, qubit 0 first), got {paulis!r}",
                    )
                ]
            )
        if length is None:
            length = len(paulis)
        elif len(paulis) != length:
            raise OptionError(
                [
                    Problem(
                        f"{where}[1]",
                        f"{paulis!r} has {len(paulis)} letters; the first term has {length}",
                    )
                ]
            )
        terms.append((float(coef), paulis))
    return tuple(terms)


def make_observable(cost: Any, qubits: int) -> Observable:
    """Build the observable of a cost spec at ``qubits`` qubits.

    Examples
    --------
    >>> obs = make_observable("local", 2)
    >>> obs.diagonal.tolist()
    [0.0, 0.5, 0.5, 1.0]
    >>> make_observable([[1.0, "ZZ"]], 2).diagonal.tolist()
    [1.0, -1.0, -1.0, 1.0]
    """
    spec = validate_cost(cost)
    n = qubits
    if spec == "global":
        d = np.ones(1 << n)
        d[0] = 0.0
        return Observable("global", n, d)
    if spec == "local":
        return Observable("local", n, (_bit_counts(n) / n).astype(np.float64))
    if spec == "zz":
        if n < 2:
            raise OptionError([Problem("cost", f"'zz' needs at least 2 qubits; got {n}")])
        idx = np.arange(1 << n)
        b0 = (idx >> (n - 1)) & 1
        b1 = (idx >> (n - 2)) & 1
        return Observable("zz", n, (1.0 - 2.0 * (b0 ^ b1)).astype(np.float64))
    assert isinstance(spec, tuple)
    if len(spec[0][1]) != n:
        raise OptionError(
            [
                Problem(
                    "cost",
                    f"the Pauli sum acts on {len(spec[0][1])} qubits; "
                    f"the circuit has {n} (a Pauli sum does not scale with n)",
                )
            ]
        )
    label = " + ".join(f"{c:g}*{p}" for c, p in spec)
    if all(set(p) <= {"I", "Z"} for _, p in spec):
        idx = np.arange(1 << n)
        d = np.zeros(1 << n)
        for coef, paulis in spec:
            sign = np.ones(1 << n)
            for q, letter in enumerate(paulis):
                if letter == "Z":
                    sign *= 1.0 - 2.0 * ((idx >> (n - 1 - q)) & 1)
            d += coef * sign
        return Observable(label, n, d)
    return Observable(label, n, None, spec)

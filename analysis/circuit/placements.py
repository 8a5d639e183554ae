"""Placement: where a step's gates go on ``n`` qubits.

:func:`placement` lists the pairs of a two-qubit pattern; :func:`step_targets` resolves a
step's ``on`` (a pattern or an explicit list) to qubit tuples at a given qubit count and
checks everything that depends on that count, naming the JSON path of a bad entry.

Placement patterns on ``n`` qubits (pairs are ``(first, second)``; for controlled
gates ``(control, target)``):

=============  ==========================================
``chain``      (0,1), (1,2), …, (n-2,n-1)
``ring``       ``chain`` plus (n-1,0) when n > 2
``all-to-all`` every (i,j) with i < j, in lexicographic order
``brick-even`` (0,1), (2,3), …
``brick-odd``  (1,2), (3,4), … (empty for n = 2)
=============  ==========================================

``reverse`` walks the list from its last pair to its first and swaps each pair.
"""

from __future__ import annotations

from typing import Any

from haarline.circuit.gates import lookup
from haarline.circuit.model import (
    ONE_QUBIT_PATTERNS,
    RENAMED_PATTERNS,
    TWO_QUBIT_PATTERNS,
    Step,
    _describe,
)
from haarline.errors import CircuitError, Problem

__all__ = ["placement", "step_targets"]


def placement(pattern: str, qubits: int) -> list[tuple[int, int]]:
    """Return the ordered pairs of a two-qubit placement pattern on ``qubits`` qubits.

    Examples
    --------
    >>> placement("ring", 4)
    [(0, 1), (1, 2), (2, 3), (3, 0)]
    >>> placement("brick-odd", 5)
    [(1, 2), (3, 4)]
    """
    n = qubits
    if pattern == "chain":
        return [(i, i + 1) for i in range(n - 1)]
    if pattern == "ring":
        return [(i, i + 1) for i in range(n - 1)] + ([(n - 1, 0)] if n > 2 else [])
    if pattern == "all-to-all":
        return [(i, j) for i in range(n) for j in range(i + 1, n)]
    if pattern == "brick-even":
        return [(i, i + 1) for i in range(0, n - 1, 2)]
    if pattern == "brick-odd":
        return [(i, i + 1) for i in range(1, n - 1, 2)]
    raise ValueError(f"unknown pattern {pattern!r}")


_MEANING = {"all-to-all": "every pair i < j"}
"""What a pattern that replaced an old name places, for the message that names it."""


def _is_int(value: Any) -> bool:
    return type(value) is int


def step_targets(step: Step, path: str, n: int) -> list[tuple[int, ...]]:
    """Resolve ``step.on`` to the qubit tuples its gate is applied to on ``n`` qubits.

    Parameters
    ----------
    step : Step
        The step; its gate's arity decides how ``on`` is read.
    path : str
        JSON path of the step (``"layer[1]"``), the prefix of every error path.
    n : int
        Qubit count.

    Returns
    -------
    list of tuple of int
        One tuple per application, in placement order (control first for controlled gates).

    Raises
    ------
    CircuitError
        Naming ``{path}.on[...]`` (or ``{path}.reverse``), the value and what is allowed.
    """
    spec = lookup(step.gate)
    on = step.on
    where = f"{path}.on"
    rng = f"for {n} qubit{'s' if n != 1 else ''} (0..{n - 1})"
    if spec.qubits == 1:
        if step.reverse:
            raise CircuitError(
                [
                    Problem(
                        f"{path}.reverse",
                        "applies only to two-qubit "
                        f"placement patterns; {step.gate!r} is a one-qubit gate",
                    )
                ]
            )
        if on == "all":
            return [(q,) for q in range(n)]
        if isinstance(on, str):
            raise CircuitError(
                [
                    Problem(
                        where,
                        f"got {_describe(on)}; the one-qubit gate {step.gate!r} "
                        "takes 'all' or a list of qubit indices",
                    )
                ]
            )
        if not isinstance(on, list) or not on:
            raise CircuitError(
                [
                    Problem(
                        where,
                        f"expected 'all' or a non-empty list of qubit indices, got {_describe(on)}",
                    )
                ]
            )
        seen: set[int] = set()
        out: list[tuple[int, ...]] = []
        for i, q in enumerate(on):
            if not _is_int(q):
                raise CircuitError(
                    [
                        Problem(
                            f"{where}[{i}]", f"expected a qubit index (integer), got {_describe(q)}"
                        )
                    ]
                )
            if not 0 <= q < n:
                raise CircuitError([Problem(f"{where}[{i}]", f"qubit {q} is out of range {rng}")])
            if q in seen:
                raise CircuitError([Problem(f"{where}[{i}]", f"qubit {q} is listed twice")])
            seen.add(q)
            out.append((q,))
        return out
    # two-qubit gate
    patterns = ", ".join(repr(p) for p in TWO_QUBIT_PATTERNS)
    if isinstance(on, str):
        if on in RENAMED_PATTERNS:
            new = RENAMED_PATTERNS[on]
            renamed = f"{_describe(on)} was renamed; use {_describe(new)} ({_MEANING[new]})"
            raise CircuitError([Problem(where, renamed)])
        if on not in TWO_QUBIT_PATTERNS:
            hint = " ('all' is for one-qubit gates)" if on in ONE_QUBIT_PATTERNS else ""
            got = f"got {_describe(on)}"
            if "on" not in step.model_fields_set:
                got = f"'on' is missing, so it defaults to {on!r}"
            raise CircuitError(
                [
                    Problem(
                        where,
                        f"{got}; the two-qubit gate {step.gate!r} "
                        f"takes one of {patterns} or a list of pairs{hint}",
                    )
                ]
            )
        if n < 2:
            raise CircuitError(
                [Problem(where, f"pattern {on!r} needs at least 2 qubits; the circuit has {n}")]
            )
        pairs = placement(on, n)
        if step.reverse:
            pairs = [(b, a) for a, b in reversed(pairs)]
        return list(pairs)
    if step.reverse:
        raise CircuitError(
            [
                Problem(
                    f"{path}.reverse",
                    "applies only to a placement pattern, not to an explicit list of pairs",
                )
            ]
        )
    if not isinstance(on, list) or not on:
        raise CircuitError(
            [
                Problem(
                    where,
                    f"expected one of {patterns} or a non-empty list of "
                    f"[first, second] pairs, got {_describe(on)}",
                )
            ]
        )
    out = []
    for i, pair in enumerate(on):
        if not isinstance(pair, list) or len(pair) != 2:
            raise CircuitError(
                [
                    Problem(
                        f"{where}[{i}]",
                        f"expected a pair [first, second] of qubit indices, got {_describe(pair)}",
                    )
                ]
            )
        for j, q in enumerate(pair):
            if not _is_int(q):
                raise CircuitError(
                    [
                        Problem(
                            f"{where}[{i}][{j}]",
                            f"expected a qubit index (integer), got {_describe(q)}",
                        )
                    ]
                )
            if not 0 <= q < n:
                raise CircuitError(
                    [Problem(f"{where}[{i}][{j}]", f"qubit {q} is out of range {rng}")]
                )
        if pair[0] == pair[1]:
            raise CircuitError(
                [
                    Problem(
                        f"{where}[{i}]",
                        f"pair {_describe(pair)} uses qubit "
                        f"{pair[0]} twice; a two-qubit gate needs two "
                        "different qubits",
                    )
                ]
            )
        out.append((pair[0], pair[1]))
    return out

"""Placement: where a step's gates go on ``n`` qubits.

:func:`placement` lists the pairs of a two-qubit pattern and :func:`pattern_qubits` the
qubits of a one-qubit pattern; :func:`step_targets` resolves a step's ``on`` (a pattern or
an explicit list) to qubit tuples at a given qubit count and checks everything that depends
on that count, naming the JSON path of a bad entry.

Two-qubit patterns on ``n`` qubits, in the order their gates are placed. Pairs are
``(first, second)``, for controlled gates ``(control, target)``. Qubit 0 is the top wire,
so a pair points up when its first qubit is the higher-numbered one.

========================  ===============================================================
``chain``                 (0,1), (1,2), …, (n-2,n-1)
``ring``                  ``chain``, then (n-1,0) when n > 2
``all-to-all``            every (i,j) with i < j, in lexicographic order
``brick-even``            (0,1), (2,3), …
``brick-odd``             (1,2), (3,4), … (none for n = 2)
``brick-even-up``         the pairs of ``brick-even`` pointing up: (1,0), (3,2), …
``brick-odd-up``          the pairs of ``brick-odd`` pointing up: (2,1), (4,3), …
``ring-up``               the pairs of ``ring``, all pointing up: (n-1,n-2), …, (1,0) from
                          the bottom wire, then (n-1,0) when n > 2
``ring-backward``         the pairs of ``ring`` from its last to its first, each kept:
                          (n-1,0), (n-2,n-1), …, (0,1)
``ring-to-previous``      each qubit i > 0 to i-1 and qubit 0 to n-1, from the last qubit:
                          (n-1,n-2), (0,n-1), (1,0), …, (n-2,n-3); only (1,0) for n = 2
``all-to-all-both-ways``  every (i,j) with i != j: i from n-1 down to 0 and, for each i,
                          j from n-1 down to 0
========================  ===============================================================

The last six on 4 qubits::

    brick-even-up         (1,0) (3,2)
    brick-odd-up          (2,1)
    ring-up               (3,2) (2,1) (1,0) (3,0)
    ring-backward         (3,0) (2,3) (1,2) (0,1)
    ring-to-previous      (3,2) (0,3) (1,0) (2,1)
    all-to-all-both-ways  (3,2) (3,1) (3,0) (2,3) (2,1) (2,0) (1,3) (1,2) (1,0) (0,3) (0,2) (0,1)

``reverse`` walks the list of any two-qubit pattern from its last pair to its first and
swaps each pair.

One-qubit patterns: ``all`` (every qubit), ``brick-even`` and ``brick-odd`` (the qubits
that the pairs of the two-qubit pattern of the same name touch, in increasing order:
0..3 and 1..2 on 4 qubits, 0..3 and 1..4 on 5).
"""

from __future__ import annotations

from collections.abc import Callable
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

__all__ = ["pattern_qubits", "placement", "step_targets"]

Pairs = list[tuple[int, int]]


def _chain(n: int) -> Pairs:
    return [(i, i + 1) for i in range(n - 1)]


def _ring(n: int) -> Pairs:
    return _chain(n) + ([(n - 1, 0)] if n > 2 else [])


def _bricks(n: int, first: int) -> Pairs:
    return [(i, i + 1) for i in range(first, n - 1, 2)]


def _ring_up(n: int) -> Pairs:
    return [(i + 1, i) for i in reversed(range(n - 1))] + ([(n - 1, 0)] if n > 2 else [])


def _ring_to_previous(n: int) -> Pairs:
    if n == 2:
        return [(1, 0)]
    return [(n - 1, n - 2)] + [(i, (i - 1) % n) for i in range(n - 1)]


def _both_ways(n: int) -> Pairs:
    return [(i, j) for i in reversed(range(n)) for j in reversed(range(n)) if j != i]


_TWO_QUBIT: dict[str, Callable[[int], Pairs]] = {
    "chain": _chain,
    "ring": _ring,
    "all-to-all": lambda n: [(i, j) for i in range(n) for j in range(i + 1, n)],
    "brick-even": lambda n: _bricks(n, 0),
    "brick-odd": lambda n: _bricks(n, 1),
    "brick-even-up": lambda n: [(b, a) for a, b in _bricks(n, 0)],
    "brick-odd-up": lambda n: [(b, a) for a, b in _bricks(n, 1)],
    "ring-up": _ring_up,
    "ring-backward": lambda n: _ring(n)[::-1],
    "ring-to-previous": _ring_to_previous,
    "all-to-all-both-ways": _both_ways,
}
"""Every two-qubit pattern: its name and the rule that lists its pairs on n qubits."""


def placement(pattern: str, qubits: int) -> list[tuple[int, int]]:
    """Return the ordered pairs of a two-qubit placement pattern on ``qubits`` qubits.

    Raises
    ------
    ValueError
        For a name that is not a two-qubit pattern.

    Examples
    --------
    >>> placement("ring", 4)
    [(0, 1), (1, 2), (2, 3), (3, 0)]
    >>> placement("brick-odd", 5)
    [(1, 2), (3, 4)]
    >>> placement("ring-to-previous", 4)
    [(3, 2), (0, 3), (1, 0), (2, 1)]
    """
    rule = _TWO_QUBIT.get(pattern)
    if rule is None:
        raise ValueError(f"unknown pattern {pattern!r}")
    return rule(qubits)


def pattern_qubits(pattern: str, qubits: int) -> list[int]:
    """Return the qubits of a one-qubit placement pattern on ``qubits`` qubits, in order.

    Raises
    ------
    ValueError
        For a name that is not a one-qubit pattern.

    Examples
    --------
    >>> pattern_qubits("all", 3)
    [0, 1, 2]
    >>> pattern_qubits("brick-odd", 4), pattern_qubits("brick-odd", 5)
    ([1, 2], [1, 2, 3, 4])
    """
    if pattern == "all":
        return list(range(qubits))
    if pattern in ("brick-even", "brick-odd"):
        return sorted({q for pair in placement(pattern, qubits) for q in pair})
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
        singles = ", ".join(repr(p) for p in ONE_QUBIT_PATTERNS)
        if isinstance(on, str) and on in ONE_QUBIT_PATTERNS:
            return [(q,) for q in pattern_qubits(on, n)]
        if isinstance(on, str):
            raise CircuitError(
                [
                    Problem(
                        where,
                        f"got {_describe(on)}; the one-qubit gate {step.gate!r} "
                        f"takes one of {singles} or a list of qubit indices",
                    )
                ]
            )
        if not isinstance(on, list) or not on:
            raise CircuitError(
                [
                    Problem(
                        where,
                        f"expected one of {singles} or a non-empty list of qubit indices, "
                        f"got {_describe(on)}",
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

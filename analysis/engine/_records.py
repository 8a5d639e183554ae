"""The engine's records: plans, fused schedules and kernel forms, and the kinds they name.

These small types are shared by :mod:`haarline.engine.statevector` (which builds plans and
runs them) and the fused path (:mod:`haarline.engine._fusion`,
:mod:`haarline.engine._coefficients`, :mod:`haarline.engine._execute`,
:mod:`haarline.engine._tiles`, :mod:`haarline.engine._ops`), which all read them; keeping
them here lets every one of those modules import them without an import cycle.

Kinds are closed sets of names (``Literal`` aliases), so a misspelt kind is a type error:

* :data:`KernelKind`: how a :class:`Kernel` fuses gates (``"one"``, ``"two"``, ``"perm"``,
  ``"phase"``);
* :data:`BlockKind`: the operation sequences of a one-qubit block, ``(a, b) <- M (a, b)``
  on two halves of a tile (:func:`haarline.engine._ops.ops_2x2`);
* :data:`PairKind`: the operation sequences of a two-qubit gate that is not a controlled
  one-qubit gate;
* :data:`FormKind`: every :class:`Form`'s kind, the union of those with ``"perm"`` and
  ``"phase"``. A controlled gate's form has the block kind of its target and
  ``controlled=True``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Literal, TypeAlias, TypeGuard, get_args

import numpy as np
from haarline.circuit.gates import GateSpec
from numpy.typing import NDArray

__all__ = [
    "BLOCK_KINDS",
    "Amplitudes",
    "BlockKind",
    "Coef",
    "Complexes",
    "Form",
    "FormKind",
    "Kernel",
    "KernelKind",
    "PairKind",
    "Plan",
    "PlanMemo",
    "PlanStep",
    "Schedule",
    "Segment",
    "is_block",
]

Complexes = NDArray[np.complexfloating[Any, Any]]
"""A complex array of either precision: ``complex128``, or ``complex64`` in single precision."""

# quoted: numpy's runtime `inexact` takes one type argument, its stubs two
Amplitudes: TypeAlias = "NDArray[np.inexact[Any, Any]]"
"""A tile's array or coefficient table: complex, or real (``float64``/``float32``) while a
segment whose every coefficient is real runs on real states (:mod:`haarline.engine._execute`)."""

KernelKind = Literal["one", "two", "perm", "phase"]
"""How a kernel fuses its gates (see :class:`Kernel`)."""

BlockKind = Literal["diag1", "diag", "diag2", "shear", "shear_diag", "general"]
"""Operation sequences of a one-qubit block (documented in :mod:`haarline.engine._coefficients`)."""

PairKind = Literal["diag4", "pairs", "swap", "general4"]
"""Operation sequences of a two-qubit gate other than a controlled one-qubit gate."""

FormKind = Literal["perm", "phase", BlockKind, PairKind]
"""Every kind a :class:`Form` may have."""

BLOCK_KINDS: frozenset[str] = frozenset(get_args(BlockKind))
"""The names of :data:`BlockKind`, for :func:`is_block`."""


def is_block(kind: FormKind) -> TypeGuard[BlockKind]:
    """Whether a form's kind is a one-qubit block's operation sequence.

    Examples
    --------
    >>> is_block("shear"), is_block("diag4")
    (True, False)
    """
    return kind in BLOCK_KINDS


Coef = complex | int
"""A coefficient of a form: a Python complex constant (fixed gates), or an ``int``, the
slot (row) of the block's per-sample coefficient table that holds it. ``"phase"`` forms
also give their row count as an ``int``."""


@dataclass(frozen=True)
class PlanStep:
    """One gate of a plan: its table row, qubits, parameter index and fixed matrix."""

    spec: GateSpec
    qubits: tuple[int, ...]
    param: int | None
    fixed: NDArray[np.complex128] | None  # matrix of a fixed gate or fixed-angle rotation


@dataclass(frozen=True, kw_only=True)
class Kernel:
    """One fused operation of a segment.

    Attributes
    ----------
    kind : KernelKind
        ``"one"`` (fused one-qubit gates on ``qubits[0]``), ``"two"`` (one two-qubit
        gate), ``"perm"`` (a run of fixed basis-permuting gates) or ``"phase"`` (a run
        of diagonal kernels, fixed or per-sample, applied as one multiply by a table of
        per-sample phases over the segment's local index; segmented schedules only).
    qubits : tuple of int
        Qubits acted on (gate order: control first for controlled gates).
    steps : tuple of int
        Indices into ``plan.steps`` of the fused gates, in application order.
    perm, phase : ndarray or None
        For ``"perm"``: ``out[j] = phase[j] * in[perm[j]]`` over the segment's local index.
    members : tuple of Kernel
        For ``"phase"``: the diagonal kernels it joins.
    """

    kind: KernelKind
    qubits: tuple[int, ...]
    steps: tuple[int, ...]
    perm: NDArray[np.intp] | None = None
    phase: NDArray[np.complex128] | None = None
    members: tuple[Kernel, ...] = ()


@dataclass(frozen=True)
class Segment:
    """Kernels applied together to one tile; ``qubits`` (sorted) are the tile's rows."""

    qubits: tuple[int, ...]
    kernels: tuple[Kernel, ...]


@dataclass(frozen=True)
class Schedule:
    """A plan compiled for the fast engine.

    ``slots`` holds the number of per-sample coefficient slots of each segment, and
    ``real`` whether a segment's constants (fixed matrices, permutation phases) are all
    real, both found on first use (:mod:`haarline.engine._execute`); they never take part in
    comparisons.
    """

    qubits: int
    segments: tuple[Segment, ...]
    slots: dict[int, int] = field(default_factory=dict, compare=False, repr=False)
    real: dict[int, bool] = field(default_factory=dict, compare=False, repr=False)


@dataclass(eq=False)
class PlanMemo:
    """What the fast path derives from a plan, built on first use and kept with it."""

    schedule: Schedule | None = None


@dataclass(frozen=True)
class Plan:
    """A program prepared for the engine (matrices of fixed gates precomputed).

    ``steps`` holds one step per gate, for code that needs every gate on its own (adjoint
    differentiation, the state Jacobian); :func:`haarline.engine.statevector.run` applies
    the fused schedule built from them once and kept in ``memo``.
    """

    qubits: int
    parameters: int
    steps: tuple[PlanStep, ...]
    memo: PlanMemo = field(default_factory=PlanMemo, compare=False, repr=False)


@dataclass(frozen=True)
class Form:
    """How one kernel is applied.

    ``kind`` picks the operation sequence; ``coefs`` holds constants or slot numbers;
    ``factor`` (constant, slot or None) is the per-sample factor the operations leave
    out, multiplied in when the tile is written back. ``controlled`` marks the form of a
    controlled one-qubit gate: its block kind acts where the control is |1⟩.
    """

    kind: FormKind
    kernel: Kernel
    coefs: tuple[Coef, ...] = ()
    factor: Coef | None = None
    controlled: bool = False
